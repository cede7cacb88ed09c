/**
 * An rxjs operator for a serial stage that works on groups: items that arrive while the
 * stage is busy wait, and the stage takes them as its next group once it is free and
 * either `limit()` items are waiting or the oldest has waited `lingerMs`. A flood forms
 * full groups; a trickle waits at most `lingerMs`. Unlike a fixed window (bufferTime), a
 * group's size can follow the stage's own state (the link stage ends a group where a
 * consolidation pass is due, which commits what is pending anyway).
 *
 * Results are emitted in input order; an error in `work` or in the source ends the stream.
 */
import { type ObservableInput, type OperatorFunction, Observable, type Subscription, from } from 'rxjs';

export function groupWhileBusy<T, R>(
  limit: () => number,
  lingerMs: number,
  work: (group: T[]) => ObservableInput<R>,
): OperatorFunction<T, R> {
  return (source) =>
    new Observable<R>((subscriber) => {
      const waiting: T[] = [];
      /** When the oldest waiting item arrived (performance.now()). */
      let oldestAt = 0;
      let running: Subscription | null = null;
      let timer: ReturnType<typeof setTimeout> | null = null;
      let sourceDone = false;

      const next = (): void => {
        if (running || subscriber.closed) return;
        if (waiting.length === 0) {
          if (sourceDone) subscriber.complete();
          return;
        }
        const max = Math.max(1, Math.floor(limit()));
        const wait = oldestAt + lingerMs - performance.now();
        if (waiting.length < max && !sourceDone && wait > 0) {
          timer ??= setTimeout(() => {
            timer = null;
            next();
          }, wait);
          return;
        }
        if (timer) clearTimeout(timer);
        timer = null;
        const group = waiting.splice(0, max);
        // Those left behind have waited their time already.
        oldestAt = -Infinity;
        let finished = false;
        const sub = from(work(group)).subscribe({
          next: (r) => subscriber.next(r),
          error: (err: unknown) => subscriber.error(err),
          complete: () => {
            finished = true;
            running = null;
            next();
          },
        });
        // A work that completed at once has already started the next group.
        if (!finished) running = sub;
      };

      const upstream = source.subscribe({
        next: (item) => {
          if (waiting.length === 0) oldestAt = performance.now();
          waiting.push(item);
          next();
        },
        error: (err: unknown) => subscriber.error(err),
        complete: () => {
          sourceDone = true;
          next();
        },
      });

      return () => {
        if (timer) clearTimeout(timer);
        upstream.unsubscribe();
        running?.unsubscribe();
      };
    });
}
