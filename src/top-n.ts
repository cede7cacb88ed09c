/**
 * The first `n` items in the order `before` gives, by insertion into a short sorted list:
 * for picking a few from many without sorting them all. Items `before` does not put ahead
 * keep their arrival order.
 */
export function topN<T>(items: Iterable<T>, n: number, before: (a: T, b: T) => boolean): T[] {
  const top: T[] = [];
  if (n <= 0) return top;
  for (const x of items) {
    if (top.length === n && !before(x, top[n - 1]!)) continue;
    let i = top.length === n ? n - 1 : top.length;
    if (top.length < n) top.push(x);
    while (i > 0 && before(x, top[i - 1]!)) {
      top[i] = top[i - 1]!;
      i--;
    }
    top[i] = x;
  }
  return top;
}
