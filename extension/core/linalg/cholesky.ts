/**
 * Small dense Cholesky factorisation for innovation and state covariances (n up to ~30).
 *
 * Written by hand because mathjs (our runtime matrix library) has LU, QR and eigen decompositions but no Cholesky,
 * and because the NIS hot path runs once per update on millions of updates: these routines work on flat
 * `Float64Array`s at an offset, allocate nothing, and report failure instead of throwing.
 *
 * Conventions (stated once, here):
 * - Matrices are row-major, `n * n` values starting at an offset; element (r, c) is at `off + r * n + c`.
 * - `A = L L^T` with `L` lower triangular; only the lower triangle of `A` is read, the upper triangle of `L`
 *   is written as zeros.
 * - "Not SPD" means a pivot that is not strictly positive (relative to the diagonal's scale) or a non-finite value.
 */

/**
 * Factor the symmetric matrix `a` (n x n at `aOff`) into `l` (n x n at `lOff`, may be the same buffer and offset as
 * `a` for an in-place factorisation). Returns false, leaving `l` partly written, when `a` is not symmetric positive
 * definite or holds a non-finite value. No allocation.
 */
export function choleskyFactor(a: Float64Array, aOff: number, n: number, l: Float64Array, lOff: number): boolean {
  for (let j = 0; j < n; j++) {
    const rowJ = lOff + j * n;
    let d = a[aOff + j * n + j];
    for (let k = 0; k < j; k++) d -= l[rowJ + k] * l[rowJ + k];
    // A pivot that is not positive, or one lost to cancellation below round-off of the original diagonal,
    // means the matrix is not (numerically) positive definite.
    const diagScale = Math.abs(a[aOff + j * n + j]);
    if (!(d > diagScale * 1e-14) || !Number.isFinite(d)) return false;
    const ljj = Math.sqrt(d);
    l[rowJ + j] = ljj;
    for (let i = j + 1; i < n; i++) {
      const rowI = lOff + i * n;
      let s = a[aOff + i * n + j];
      for (let k = 0; k < j; k++) s -= l[rowI + k] * l[rowJ + k];
      const v = s / ljj;
      if (!Number.isFinite(v)) return false;
      l[rowI + j] = v;
    }
    for (let c = j + 1; c < n; c++) l[rowJ + c] = 0;
  }
  return true;
}

/**
 * Solve `L y = b` by forward substitution (L from {@link choleskyFactor}); writes `y` (length n at `yOff`, may alias
 * `b`). No allocation.
 */
export function choleskyForward(
  l: Float64Array, lOff: number, n: number,
  b: Float64Array, bOff: number, y: Float64Array, yOff: number,
): void {
  for (let i = 0; i < n; i++) {
    const row = lOff + i * n;
    let s = b[bOff + i];
    for (let k = 0; k < i; k++) s -= l[row + k] * y[yOff + k];
    y[yOff + i] = s / l[row + i];
  }
}

/**
 * Solve `A x = b` with `A = L L^T` (L from {@link choleskyFactor}); writes `x` (length n at `xOff`, may alias `b`).
 * No allocation.
 */
export function choleskySolve(
  l: Float64Array, lOff: number, n: number,
  b: Float64Array, bOff: number, x: Float64Array, xOff: number,
): void {
  choleskyForward(l, lOff, n, b, bOff, x, xOff);
  for (let i = n - 1; i >= 0; i--) {
    let s = x[xOff + i];
    for (let k = i + 1; k < n; k++) s -= l[lOff + k * n + i] * x[xOff + k];
    x[xOff + i] = s / l[lOff + i * n + i];
  }
}

/** log det A = 2 * sum log L_ii for `A = L L^T` (L from {@link choleskyFactor}). */
export function choleskyLogDet(l: Float64Array, lOff: number, n: number): number {
  let s = 0;
  for (let i = 0; i < n; i++) s += Math.log(l[lOff + i * n + i]);
  return 2 * s;
}

/**
 * The quadratic form `v^T A^-1 v` for symmetric positive definite `A` (n x n at `aOff`), computed as `|L^-1 v|^2`.
 * `work` must hold at least `n * n + n` values (factor and forward-substituted vector). Returns NaN when `A` is not
 * SPD or a value is not finite. No allocation.
 */
export function inverseQuadraticForm(
  a: Float64Array, aOff: number, n: number,
  v: Float64Array, vOff: number, work: Float64Array,
): number {
  if (n === 1) {
    const s = a[aOff];
    const x = v[vOff];
    return s > 0 && Number.isFinite(s) ? (x * x) / s : NaN;
  }
  if (!choleskyFactor(a, aOff, n, work, 0)) return NaN;
  const yOff = n * n;
  choleskyForward(work, 0, n, v, vOff, work, yOff);
  let q = 0;
  for (let i = 0; i < n; i++) q += work[yOff + i] * work[yOff + i];
  return q;
}

/**
 * Largest relative asymmetry max |a_rc - a_cr| / max(|a_rr|, |a_cc|) of the n x n matrix at `aOff`; 0 for a
 * symmetric matrix, NaN when a value is not finite.
 */
export function asymmetry(a: Float64Array, aOff: number, n: number): number {
  let worst = 0;
  for (let r = 0; r < n; r++) {
    for (let c = 0; c < n; c++) {
      const x = a[aOff + r * n + c];
      if (!Number.isFinite(x)) return NaN;
      if (c <= r) continue;
      const scale = Math.max(Math.abs(a[aOff + r * n + r]), Math.abs(a[aOff + c * n + c]), Number.MIN_VALUE);
      const d = Math.abs(x - a[aOff + c * n + r]) / scale;
      if (d > worst) worst = d;
    }
  }
  return worst;
}

/**
 * Convenience (allocating) form: the lower-triangular Cholesky factor of the n x n row-major matrix `a`, or
 * undefined when it is not symmetric positive definite. For tests and cold paths; hot loops use
 * {@link choleskyFactor}.
 */
export function cholesky(a: ArrayLike<number>, n: number): Float64Array | undefined {
  const src = Float64Array.from(a);
  const l = new Float64Array(n * n);
  return choleskyFactor(src, 0, n, l, 0) ? l : undefined;
}
