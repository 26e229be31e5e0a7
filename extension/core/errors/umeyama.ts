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
  const cov = new Float64Array(dim * dim);
  for (const i of use) {
    for (let r = 0; r < dim; r++) {
      const yr = y[i * dim + r] - my[r];
      const xr = x[i * dim + r] - mx[r];
      varX += xr * xr;
      for (let c = 0; c < dim; c++) cov[r * dim + c] += yr * (x[i * dim + c] - mx[c]);
    }
  }
  const fit = fitFromMoments(dim, m, mx, my, cov, varX, withScale);
  if (!fit) return undefined;
  const { R, t, scale, d } = fit;
  let sse = 0;
  const res = new Float64Array(dim);
  for (const i of use) {
    applyAlignmentTo(res, { dim, R, t, scale }, x, i * dim);
    for (let k = 0; k < dim; k++) { const e = y[i * dim + k] - res[k]; sse += e * e; }
  }
  return {
    dim, R, t, scale, meanSquaredError: sse / m,
    singularValues: Float64Array.from(d), varianceX: fit.varianceX,
  };
}

/**
 * R, t and c from the means, the summed cross-covariance (row-major d x d, divided by m here) and the summed
 * squared spread of x of m points; undefined for a degenerate spread.
 */
function fitFromMoments(dim: number, m: number, mx: Float64Array, my: Float64Array, covSum: Float64Array, varXSum: number, withScale: boolean):
  { R: Float64Array; t: Float64Array; scale: number; d: number[]; varianceX: number } | undefined {
  const varX = varXSum / m;
  const cov = Matrix.zeros(dim, dim);
  for (let r = 0; r < dim; r++) for (let c = 0; c < dim; c++) cov.set(r, c, covSum[r * dim + c] / m);
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
  return { R, t, scale, d, varianceX: varX };
}

/** An alignment of column-stored points with the residual figures of the absolute trajectory error. */
export interface ColumnAlignment extends Alignment {
  /** Points used (both sets finite). */
  count: number;
  /** Residual norm |y_i - (c R x_i + t)| of each used point, in order (its first `count` values). */
  residualNorms: Float64Array;
  /** Largest residual norm. */
  maxResidual: number;
}

/**
 * {@link umeyama} of points stored as coordinate columns (x[c][i], y[c][i]), over the epochs `use` (ascending),
 * without a row-major copy of either set; the same arithmetic in the same order, so the same alignment. Points where
 * either set has a non-finite coordinate are skipped. Also returns each used point's residual norm (into
 * `residuals` when it is long enough), whose mean square is `meanSquaredError`.
 */
export function umeyamaColumns(x: Float64Array[], y: Float64Array[], use: ArrayLike<number>, useCount: number, withScale: boolean,
  residuals?: Float64Array): ColumnAlignment | undefined {
  const dim = x.length;
  let m = 0;
  const mx = new Float64Array(dim), my = new Float64Array(dim);
  for (let u = 0; u < useCount; u++) {
    const i = use[u];
    if (!finitePoint(x, y, i)) continue;
    for (let k = 0; k < dim; k++) { mx[k] += x[k][i]; my[k] += y[k][i]; }
    m++;
  }
  if (m < dim || m < 2) return undefined;
  for (let k = 0; k < dim; k++) { mx[k] /= m; my[k] /= m; }
  let varX = 0;
  const cov = new Float64Array(dim * dim);
  for (let u = 0; u < useCount; u++) {
    const i = use[u];
    if (!finitePoint(x, y, i)) continue;
    for (let r = 0; r < dim; r++) {
      const yr = y[r][i] - my[r];
      const xr = x[r][i] - mx[r];
      varX += xr * xr;
      for (let c = 0; c < dim; c++) cov[r * dim + c] += yr * (x[c][i] - mx[c]);
    }
  }
  const fit = fitFromMoments(dim, m, mx, my, cov, varX, withScale);
  if (!fit) return undefined;
  const { R, t, scale } = fit;
  const norms = residuals && residuals.length >= m ? residuals : new Float64Array(m);
  let sse = 0, maxResidual = 0, j = 0;
  for (let u = 0; u < useCount; u++) {
    const i = use[u];
    if (!finitePoint(x, y, i)) continue;
    let q = 0;
    for (let r = 0; r < dim; r++) {
      let v = 0;
      for (let c = 0; c < dim; c++) v += R[r * dim + c] * x[c][i];
      const e = y[r][i] - (scale * v + t[r]);
      q += e * e;
    }
    sse += q;
    const nrm = Math.sqrt(q);
    norms[j++] = nrm;
    if (nrm > maxResidual) maxResidual = nrm;
  }
  return {
    dim, R, t, scale, meanSquaredError: sse / m, singularValues: Float64Array.from(fit.d), varianceX: fit.varianceX,
    count: m, residualNorms: norms, maxResidual,
  };
}

function finitePoint(x: Float64Array[], y: Float64Array[], i: number): boolean {
  for (let k = 0; k < x.length; k++) if (!Number.isFinite(x[k][i]) || !Number.isFinite(y[k][i])) return false;
  return true;
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
