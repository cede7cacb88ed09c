/**
 * An rxjs operator like concatMap that runs up to `concurrency` projections at once and
 * still emits their results in input order: the pipeline can keep analysis threads busy
 * ahead of the serial link stage without reordering the stream. Results that finish early
 * wait in a buffer of at most `concurrency` entries.
 */
import { type OperatorFunction, Observable, from, map, mergeMap } from 'rxjs';

export function orderedMergeMap<A, B>(project: (a: A) => Promise<B>, concurrency: number): OperatorFunction<A, B> {
  return (source) =>
    new Observable<B>((subscriber) => {
      const ready = new Map<number, B>();
      let next = 0;
      return source.pipe(mergeMap((a, i) => from(project(a)).pipe(map((b) => [i, b] as const)), Math.max(1, concurrency))).subscribe({
        next: ([i, b]) => {
          ready.set(i, b);
          while (ready.has(next)) {
            const value = ready.get(next) as B;
            ready.delete(next++);
            subscriber.next(value);
          }
        },
        error: (err: unknown) => subscriber.error(err),
        complete: () => subscriber.complete(),
      });
    });
}
