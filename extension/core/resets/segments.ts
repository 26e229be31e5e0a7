/**
 * Segments of a run: a filter restart (a `reset` record or metadata line of the log, or a reset the user confirmed)
 * starts a new segment at the first record whose time is at or after the reset time. Convergence and consistency are
 * computed per segment, and no averaging window straddles a segment boundary.
 *
 * Conventions: times are seconds in the log's time base; boundaries are record indices; a reset before the first
 * record or after the last one starts no segment.
 */

/** Sorted, de-duplicated finite reset times from any number of lists. */
export function mergeResetTimes(...lists: readonly (readonly number[] | undefined)[]): number[] {
  const all: number[] = [];
  for (const l of lists) if (l) for (const t of l) if (Number.isFinite(t)) all.push(t);
  all.sort((a, b) => a - b);
  return all.filter((t, i) => i === 0 || t !== all[i - 1]);
}

/**
 * Indices in (i0, i1) where a new segment starts: for each reset time, the first index at or after it whose time is
 * at least the reset time (times non-decreasing; a record with a NaN time is stepped over). Sorted, unique.
 * @param t_s record times
 * @param i0 first record of the range
 * @param i1 one past the last record
 * @param resets_s reset times, any order
 */
export function segmentBreaks(t_s: ArrayLike<number>, i0: number, i1: number, resets_s: readonly number[]): number[] {
  const out: number[] = [];
  const rs = mergeResetTimes(resets_s);
  let k = i0;
  for (const r of rs) {
    while (k < i1 && !(t_s[k] >= r)) k++;
    if (k >= i1) break;
    if (k > i0 && (out.length === 0 || out[out.length - 1] < k)) out.push(k);
  }
  return out;
}
