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
  if (dim === 3 && y.length === 3) return umeyamaColumns3(x, y, use, useCount, withScale, residuals);
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

/**
 * {@link umeyamaColumns} of 3-D points written out on locals (the general loops over dimensions with column lookups
 * were ~60 ms on 250k points): every sum starts at 0 and adds the same terms in the same order, so the same alignment
 * to the last bit. One loop per function: the stage runs once per process, and V8 compiles a long loop well only
 * when it is alone in its function (see track.ts).
 */
function umeyamaColumns3(x: Float64Array[], y: Float64Array[], use: ArrayLike<number>, useCount: number, withScale: boolean,
  residuals?: Float64Array): ColumnAlignment | undefined {
  const dim = 3;
  const sums = new Float64Array(10);
  const m = pointSums3(x, y, use, useCount, sums);
  if (m < dim || m < 2) return undefined;
  const mx = Float64Array.of(sums[0] / m, sums[1] / m, sums[2] / m), my = Float64Array.of(sums[3] / m, sums[4] / m, sums[5] / m);
  centredMoments3(x, y, use, useCount, mx, my, sums);
  const varX = sums[9];
  const fit = fitFromMoments(dim, m, mx, my, sums.subarray(0, 9), varX, withScale);
  if (!fit) return undefined;
  const { R, t, scale } = fit;
  const norms = residuals && residuals.length >= m ? residuals : new Float64Array(m);
  residualNorms3(x, y, use, useCount, R, t, scale, norms, sums);
  return {
    dim, R, t, scale, meanSquaredError: sums[0] / m, singularValues: Float64Array.from(fit.d), varianceX: fit.varianceX,
    count: m, residualNorms: norms, maxResidual: sums[1],
  };
}

/** Whether the six coordinates of a point pair are finite. */
function finite6(a0: number, a1: number, a2: number, b0: number, b1: number, b2: number): boolean {
  return Number.isFinite(a0) && Number.isFinite(b0) && Number.isFinite(a1) && Number.isFinite(b1) && Number.isFinite(a2) && Number.isFinite(b2);
}

/** Coordinate sums of the usable pairs (x into out[0..3), y into out[3..6)); returns their count. */
function pointSums3(x: Float64Array[], y: Float64Array[], use: ArrayLike<number>, useCount: number, out: Float64Array): number {
  const [x0, x1, x2] = x, [y0, y1, y2] = y;
  let m = 0;
  let sx0 = 0, sx1 = 0, sx2 = 0, sy0 = 0, sy1 = 0, sy2 = 0;
  for (let u = 0; u < useCount; u++) {
    const i = use[u];
    const a0 = x0[i], a1 = x1[i], a2 = x2[i], b0 = y0[i], b1 = y1[i], b2 = y2[i];
    if (!finite6(a0, a1, a2, b0, b1, b2)) continue;
    sx0 += a0; sy0 += b0; sx1 += a1; sy1 += b1; sx2 += a2; sy2 += b2;
    m++;
  }
  out[0] = sx0; out[1] = sx1; out[2] = sx2; out[3] = sy0; out[4] = sy1; out[5] = sy2;
  return m;
}

/** Summed cross-covariance (y - my)(x - mx)^T, row-major into out[0..9), and summed |x - mx|^2 into out[9]. */
function centredMoments3(x: Float64Array[], y: Float64Array[], use: ArrayLike<number>, useCount: number, mx: Float64Array, my: Float64Array,
  out: Float64Array): void {
  const [x0, x1, x2] = x, [y0, y1, y2] = y;
  const mx0 = mx[0], mx1 = mx[1], mx2 = mx[2], my0 = my[0], my1 = my[1], my2 = my[2];
  let varX = 0;
  let c00 = 0, c01 = 0, c02 = 0, c10 = 0, c11 = 0, c12 = 0, c20 = 0, c21 = 0, c22 = 0;
  for (let u = 0; u < useCount; u++) {
    const i = use[u];
    const a0 = x0[i], a1 = x1[i], a2 = x2[i], b0 = y0[i], b1 = y1[i], b2 = y2[i];
    if (!finite6(a0, a1, a2, b0, b1, b2)) continue;
    const d0 = a0 - mx0, d1 = a1 - mx1, d2 = a2 - mx2;
    const e0 = b0 - my0, e1 = b1 - my1, e2 = b2 - my2;
    varX += d0 * d0; c00 += e0 * d0; c01 += e0 * d1; c02 += e0 * d2;
    varX += d1 * d1; c10 += e1 * d0; c11 += e1 * d1; c12 += e1 * d2;
    varX += d2 * d2; c20 += e2 * d0; c21 += e2 * d1; c22 += e2 * d2;
  }
  out[0] = c00; out[1] = c01; out[2] = c02; out[3] = c10; out[4] = c11; out[5] = c12; out[6] = c20; out[7] = c21; out[8] = c22;
  out[9] = varX;
}

/** Residual norm |y - (c R x + t)| of each usable pair into `norms`; the summed squares into out[0], the largest into out[1]. */
function residualNorms3(x: Float64Array[], y: Float64Array[], use: ArrayLike<number>, useCount: number, R: Float64Array, t: Float64Array,
  scale: number, norms: Float64Array, out: Float64Array): void {
  const [x0, x1, x2] = x, [y0, y1, y2] = y;
  const r00 = R[0], r01 = R[1], r02 = R[2], r10 = R[3], r11 = R[4], r12 = R[5], r20 = R[6], r21 = R[7], r22 = R[8];
  const t0 = t[0], t1 = t[1], t2 = t[2];
  let sse = 0, maxResidual = 0, j = 0;
  for (let u = 0; u < useCount; u++) {
    const i = use[u];
    const a0 = x0[i], a1 = x1[i], a2 = x2[i], b0 = y0[i], b1 = y1[i], b2 = y2[i];
    if (!finite6(a0, a1, a2, b0, b1, b2)) continue;
    // each row as the general loop: v = 0, then += R[r][c] x[c] in column order
    let v = 0;
    v += r00 * a0; v += r01 * a1; v += r02 * a2;
    const e0 = b0 - (scale * v + t0);
    v = 0;
    v += r10 * a0; v += r11 * a1; v += r12 * a2;
    const e1 = b1 - (scale * v + t1);
    v = 0;
    v += r20 * a0; v += r21 * a1; v += r22 * a2;
    const e2 = b2 - (scale * v + t2);
    let q = 0;
    q += e0 * e0; q += e1 * e1; q += e2 * e2;
    sse += q;
    const nrm = Math.sqrt(q);
    norms[j++] = nrm;
    if (nrm > maxResidual) maxResidual = nrm;
  }
  out[0] = sse; out[1] = maxResidual;
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
