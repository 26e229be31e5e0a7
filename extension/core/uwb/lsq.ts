/**
 * Dense linear least squares min |A x - b| for the small systems of the position fixes (rows = measurements,
 * columns = 3 or 4 unknowns), by Householder QR.
 *
 * Hand-written because the fixes run once per UWB epoch on 4..30 x 3..4 systems (millions of calls on a long log),
 * must not allocate matrices per call beyond their inputs, and must report a rank-deficient geometry instead of
 * returning garbage; QR keeps the conditioning of A itself (normal equations would square it), which the
 * noise-free checks at 1e-9 m need. Row-major storage, `m * n` values.
 */

/**
 * Solve min |A x - b| for A (m x n, row-major, m >= n). `A` and `b` are overwritten (pass copies if you need them).
 * Returns x (length n), or undefined when A is rank-deficient: some |R_kk| at or below `relTol` times the largest
 * column norm of A, or a non-finite value.
 */
export function solveLeastSquares(
  A: Float64Array,
  b: Float64Array,
  m: number,
  n: number,
  relTol = 1e-10,
): Float64Array | undefined {
  if (m < n || n === 0) return undefined;
  let scale = 0;
  for (let c = 0; c < n; c++) {
    let s = 0;
    for (let r = 0; r < m; r++) s += A[r * n + c] * A[r * n + c];
    scale = Math.max(scale, Math.sqrt(s));
  }
  if (!(scale > 0) || !Number.isFinite(scale)) return undefined;
  const diag = new Float64Array(n);
  for (let k = 0; k < n; k++) {
    let norm2 = 0;
    for (let r = k; r < m; r++) norm2 += A[r * n + k] * A[r * n + k];
    const norm = Math.sqrt(norm2);
    if (!(norm > relTol * scale)) return undefined;
    const akk = A[k * n + k];
    const alpha = akk > 0 ? -norm : norm;
    // v = a[k:, k] - alpha e_1, stored in place in column k; v^T v = 2 norm (norm + |akk|).
    A[k * n + k] = akk - alpha;
    const vtv = 2 * norm * (norm + Math.abs(akk));
    for (let c = k + 1; c < n; c++) {
      let s = 0;
      for (let r = k; r < m; r++) s += A[r * n + k] * A[r * n + c];
      const f = (2 * s) / vtv;
      for (let r = k; r < m; r++) A[r * n + c] -= f * A[r * n + k];
    }
    let sb = 0;
    for (let r = k; r < m; r++) sb += A[r * n + k] * b[r];
    const fb = (2 * sb) / vtv;
    for (let r = k; r < m; r++) b[r] -= fb * A[r * n + k];
    diag[k] = alpha;
  }
  const x = new Float64Array(n);
  for (let k = n - 1; k >= 0; k--) {
    let s = b[k];
    for (let c = k + 1; c < n; c++) s -= A[k * n + c] * x[c];
    x[k] = s / diag[k];
    if (!Number.isFinite(x[k])) return undefined;
  }
  return x;
}
