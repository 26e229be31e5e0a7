/**
 * Medians by selection (Hoare's quickselect, expected O(n)) instead of a full sort: the same value a sort would
 * give (the middle element, or the mean of the two middle ones), without the O(n log n) sort of long columns.
 * Hand-written: the typed-array sort of the platform is the only alternative, and it sorts everything.
 */
import { giveBack, takeFloat64 } from '../scratch';

/**
 * The k-th smallest of a[0..n) (0-based), partially reordering `a` in place: afterwards a[0..k) <= a[k] <= a[k+1..n).
 * Values must not be NaN.
 */
export function selectInPlace(a: Float64Array, k: number, n = a.length): number {
  let lo = 0;
  let hi = n - 1;
  while (hi > lo) {
    const pivot = a[(lo + hi) >> 1];
    let i = lo;
    let j = hi;
    while (i <= j) {
      while (a[i] < pivot) i++;
      while (a[j] > pivot) j--;
      if (i <= j) { const tmp = a[i]; a[i] = a[j]; a[j] = tmp; i++; j--; }
    }
    if (k <= j) hi = j;
    else if (k >= i) lo = i;
    else return a[k];
  }
  return a[k];
}

/** Median of a[0..n) (no NaN), reordering `a` in place; NaN when n = 0. */
export function medianInPlace(a: Float64Array, n = a.length): number {
  if (n === 0) return NaN;
  const h = n >> 1;
  const upper = selectInPlace(a, h, n);
  return n % 2 ? upper : meanWithLowerMiddle(a, h, upper);
}

/**
 * (largest of a[0..h) + upper) / 2: the even-length median after the partition. A function of its own: inlined in
 * medianInPlace, a first even length after many odd ones made V8 drop the optimised code hundreds of times in one
 * run (--trace-deopt: "insufficient type feedback for binary operation").
 */
function meanWithLowerMiddle(a: Float64Array, h: number, upper: number): number {
  let lower = -Infinity;
  for (let i = 0; i < h; i++) if (a[i] > lower) lower = a[i];
  return (lower + upper) / 2;
}

/**
 * Median of the positive finite steps of a time column (the upper middle value, as after a sort), from at most about
 * `maxSamples` steps taken at an even stride: exact enough for a summary or a tolerance, and cheap on a long log.
 * 0 when there is no positive step.
 */
export function sampledMedianStep(t: Float64Array, n: number, maxSamples = 100_000): number {
  const stride = Math.max(1, Math.floor(n / maxSamples));
  const steps = takeFloat64(Math.ceil(n / stride)); // a work column: fresh memory costs more than the selection
  let m = 0;
  for (let i = stride; i < n; i += stride) {
    const d = t[i] - t[i - 1];
    if (d > 0 && Number.isFinite(d)) steps[m++] = d;
  }
  const median = m === 0 ? 0 : selectInPlace(steps, m >> 1, m);
  giveBack(steps);
  return median;
}

/**
 * One small selection when the module loads, so that every branch of {@link selectInPlace} has run once before the
 * first long column reaches it. Without it the engine optimised the partition loop of that first call while the code
 * after the loop had never run, dropped the optimised code on leaving the loop ("insufficient type feedback") and
 * compiled it again: eleven compilations of this function on the benchmark log. A few microseconds here.
 */
function primeSelection(): void {
  const a = Float64Array.of(5, 1, 4, 1, 5, 9, 2, 6, 5, 3, 5, 8, 9, 7, 9, 3);
  for (let k = 0; k < a.length; k++) selectInPlace(a.slice(), k);
}
primeSelection();
