/**
 * Least-squares similarity or rigid alignment of two point sets in any dimension (Umeyama 1991,
 * "Least-squares estimation of transformation parameters between two point patterns", IEEE TPAMI 13(4)).
 *
 * Finds R (rotation, det +1), t and, optionally, c minimising (1/n) sum |y_i - (c R x_i + t)|^2:
 *   mu_x, mu_y the means; sigma_x^2 = (1/n) sum |x_i - mu_x|^2; Sigma_xy = (1/n) sum (y_i - mu_y)(x_i - mu_x)^T;
 *   Sigma_xy = U D V^T (SVD, from ml-matrix); S = I, except S_dd = -1 when det(U) det(V) < 0 (the reflection
 *   guard); R = U S V^T; c = tr(D S) / sigma_x^2 (1 for a rigid fit); t = mu_y - c R mu_x.
 * Points are flat, row-major: point i is [i*d, (i+1)*d).
 */
import { Matrix, SingularValueDecomposition, determinant } from 'ml-matrix';

/** Result of an alignment y ≈ c R x + t. */
export interface Alignment {
  /** Dimension d. */
  dim: number;
  /** Rotation, d x d row-major. */
  R: Float64Array;
  t: Float64Array;
  /** Scale c (1 for a rigid fit). */
  scale: number;
  /** Mean squared residual (1/n) sum |y_i - (c R x_i + t)|^2. */
  meanSquaredError: number;
  /** Singular values of Sigma_xy, descending. */
  singularValues: Float64Array;
  /** sigma_x^2. */
  varianceX: number;
}

/**
 * Align x onto y (both n points of dimension d, flat row-major). Points where either set has a non-finite
 * coordinate are skipped. Returns undefined with fewer than d usable points or a degenerate spread.
 * @param withScale fit a similarity (Umeyama's c) instead of a rigid transform
 */
export function umeyama(x: ArrayLike<number>, y: ArrayLike<number>, n: number, dim: number, withScale: boolean): Alignment | undefined {
  const use: number[] = [];
  for (let i = 0; i < n; i++) {
    let ok = true;
    for (let k = 0; k < dim; k++) if (!Number.isFinite(x[i * dim + k]) || !Number.isFinite(y[i * dim + k])) ok = false;
    if (ok) use.push(i);
  }
  const m = use.length;
  if (m < dim || m < 2) return undefined;
  const mx = new Float64Array(dim), my = new Float64Array(dim);
  for (const i of use) for (let k = 0; k < dim; k++) { mx[k] += x[i * dim + k]; my[k] += y[i * dim + k]; }
  for (let k = 0; k < dim; k++) { mx[k] /= m; my[k] /= m; }
  let varX = 0;
  const cov = Matrix.zeros(dim, dim);
  for (const i of use) {
    for (let r = 0; r < dim; r++) {
      const yr = y[i * dim + r] - my[r];
      const xr = x[i * dim + r] - mx[r];
      varX += xr * xr;
      for (let c = 0; c < dim; c++) cov.set(r, c, cov.get(r, c) + yr * (x[i * dim + c] - mx[c]));
    }
  }
  varX /= m;
  for (let r = 0; r < dim; r++) for (let c = 0; c < dim; c++) cov.set(r, c, cov.get(r, c) / m);
  if (!(varX > 0)) return undefined;
  const svd = new SingularValueDecomposition(cov, { autoTranspose: false });
  const U = svd.leftSingularVectors, V = svd.rightSingularVectors, d = svd.diagonal;
  const s = new Float64Array(dim).fill(1);
  if (determinant(U) * determinant(V) < 0) s[dim - 1] = -1;
  const R = new Float64Array(dim * dim);
  for (let r = 0; r < dim; r++) {
    for (let c = 0; c < dim; c++) {
      let v = 0;
      for (let k = 0; k < dim; k++) v += U.get(r, k) * s[k] * V.get(c, k);
      R[r * dim + c] = v;
    }
  }
  let trDS = 0;
  for (let k = 0; k < dim; k++) trDS += d[k] * s[k];
  const scale = withScale ? trDS / varX : 1;
  const t = new Float64Array(dim);
  for (let r = 0; r < dim; r++) {
    let v = 0;
    for (let c = 0; c < dim; c++) v += R[r * dim + c] * mx[c];
    t[r] = my[r] - scale * v;
  }
  let sse = 0;
  const res = new Float64Array(dim);
  for (const i of use) {
    applyAlignmentTo(res, { dim, R, t, scale }, x, i * dim);
    for (let k = 0; k < dim; k++) { const e = y[i * dim + k] - res[k]; sse += e * e; }
  }
  return {
    dim, R, t, scale, meanSquaredError: sse / m,
    singularValues: Float64Array.from(d), varianceX: varX,
  };
}

/** out = c R p + t for the point starting at `offset` in `points`. */
export function applyAlignmentTo(
  out: Float64Array, a: Pick<Alignment, 'dim' | 'R' | 't' | 'scale'>, points: ArrayLike<number>, offset: number,
): Float64Array {
  for (let r = 0; r < a.dim; r++) {
    let v = 0;
    for (let c = 0; c < a.dim; c++) v += a.R[r * a.dim + c] * points[offset + c];
    out[r] = a.scale * v + a.t[r];
  }
  return out;
}
