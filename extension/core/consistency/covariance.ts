/**
 * Health of the logged innovation covariances S: symmetric (relative asymmetry at most ASYMMETRY_TOLERANCE) and
 * positive definite (a Cholesky factorisation succeeds) at every update, checked in one allocation-free pass.
 * Eigen-figures (smallest eigenvalue, condition number) come from ml-matrix's symmetric eigenvalue decomposition on a
 * small sample of updates only (evenly strided plus the caller's picks, e.g. the largest NIS), keeping
 * eigen-decompositions off the hot path. (ml-matrix rather than mathjs `eigs`: same answers, but mathjs builds its
 * typed dispatch on first use, and the core already depends on ml-matrix.)
 */
import { EigenvalueDecomposition, Matrix } from 'ml-matrix';
import type { Channel } from '../model';
import { choleskyFactor } from '../linalg/cholesky';

/** Largest relative asymmetry |S_rc - S_cr| / max(|S_rr|, |S_cc|) still taken as symmetric (printing round-off). */
export const ASYMMETRY_TOLERANCE = 1e-6;
/** Matrices sampled at an even stride for eigen-figures. */
export const EIGEN_SAMPLE = 24;
/** Runs of bad covariances kept (the rest are counted). */
export const MAX_BAD_RUNS = 50;

/** Maximal runs of consecutive bad updates: the first MAX_BAD_RUNS listed, the rest counted. */
class BadRuns {
  readonly runs: BadCovarianceRun[] = [];
  moreRuns = 0;
  private open: BadCovarianceRun | undefined;
  private prevBad = false;

  /** Update i is fine (or not checked): the next bad one starts a new run. */
  good(): void {
    this.prevBad = false;
  }

  /** Update i is bad: extend the open run or start one. */
  bad(i: number, notSpd: boolean, asymmetric: boolean): void {
    if (!this.prevBad) {
      if (this.runs.length < MAX_BAD_RUNS) {
        this.open = { first: i, last: i, count: 0, notSpd: 0, asymmetric: 0 };
        this.runs.push(this.open);
      } else {
        this.open = undefined;
        this.moreRuns++;
      }
    }
    this.prevBad = true;
    const open = this.open;
    if (!open) return;
    open.last = i;
    open.count++;
    if (notSpd) open.notSpd++;
    if (asymmetric) open.asymmetric++;
  }
}

/** A maximal run of consecutive updates whose S failed. */
export interface BadCovarianceRun {
  first: number;
  last: number;
  count: number;
  notSpd: number;
  asymmetric: number;
}

/** Covariance figures of one channel. */
export interface CovarianceHealth {
  /** Updates with a complete S. */
  checked: number;
  notSpd: number;
  asymmetric: number;
  /** Updates where S is partly missing (some entries NaN). */
  incomplete: number;
  minEigenvalue?: number;
  maxCondition?: number;
  /** Matrices the eigen-figures come from (all updates for 1 dof). */
  eigenSampled: number;
  runs: BadCovarianceRun[];
  /** Bad runs beyond MAX_BAD_RUNS (not listed). */
  moreRuns: number;
}

/** Check every logged S of `channel`; `extra` are update indices to include in the eigen sample. */
export function covarianceHealth(channel: Channel, extra: number[] = []): CovarianceHealth | undefined {
  const { S, dof, length } = channel;
  if (!S || dof < 1) return undefined;
  if (dof === 1) return scalarHealth(S, length);
  const dd = dof * dof;
  const work = new Float64Array(dd);
  const ok = new Uint8Array(length);
  let checked = 0;
  let notSpd = 0;
  let asym = 0;
  let incomplete = 0;
  const bad = new BadRuns();
  for (let i = 0; i < length; i++) {
    const o = i * dd;
    let finite = 0;
    for (let k = 0; k < dd; k++) if (Number.isFinite(S[o + k])) finite++;
    if (finite < dd) {
      if (finite > 0) incomplete++;
      bad.good();
      continue;
    }
    checked++;
    const isAsym = isAsymmetric(S, o, dof);
    const isSpd = choleskyFactor(S, o, dof, work, 0);
    if (isAsym) asym++;
    if (!isSpd) notSpd++;
    if (!isAsym && isSpd) { ok[i] = 1; bad.good(); continue; }
    bad.bad(i, !isSpd, isAsym);
  }
  const out: CovarianceHealth = { checked, notSpd, asymmetric: asym, incomplete, eigenSampled: 0, runs: bad.runs, moreRuns: bad.moreRuns };
  if (checked === 0) return out;
  // Eigen-figures on a sample of well-formed updates.
  const picks = new Set<number>();
  const stride = Math.max(1, Math.floor(length / EIGEN_SAMPLE));
  for (let i = 0; i < length; i += stride) {
    let j = i;
    while (j < length && j < i + stride && !ok[j]) j++;
    if (j < length && ok[j]) picks.add(j);
  }
  for (const i of extra) if (i >= 0 && i < length && ok[i]) picks.add(i);
  let minEig = Infinity;
  let maxCond = 0;
  for (const i of picks) {
    const rows: number[][] = [];
    for (let r = 0; r < dof; r++) {
      const row: number[] = [];
      for (let c = 0; c < dof; c++) row.push(0.5 * (S[i * dd + r * dof + c] + S[i * dd + c * dof + r]));
      rows.push(row);
    }
    try {
      const values = new EigenvalueDecomposition(new Matrix(rows), { assumeSymmetric: true }).realEigenvalues;
      let lo = Infinity;
      let hi = -Infinity;
      for (const v of values) { if (v < lo) lo = v; if (v > hi) hi = v; }
      if (lo < minEig) minEig = lo;
      if (lo > 0 && hi / lo > maxCond) maxCond = hi / lo;
      out.eigenSampled++;
    } catch {
      // The decomposition failed on this matrix: leave it out of the sample.
    }
  }
  if (Number.isFinite(minEig)) out.minEigenvalue = minEig;
  if (maxCond > 0) out.maxCondition = maxCond;
  return out;
}

/**
 * Whether the finite n x n matrix at `o` is asymmetric beyond ASYMMETRY_TOLERANCE: the same decision as
 * `asymmetry(S, o, n) > ASYMMETRY_TOLERANCE` (linalg/cholesky.ts) for the finite matrices checked here, stopping
 * at the first pair beyond it.
 */
function isAsymmetric(S: Float64Array, o: number, n: number): boolean {
  for (let r = 0; r < n; r++) {
    const srr = Math.abs(S[o + r * n + r]);
    for (let c = r + 1; c < n; c++) {
      const scale = Math.max(srr, Math.abs(S[o + c * n + c]), Number.MIN_VALUE);
      if (Math.abs(S[o + r * n + c] - S[o + c * n + r]) / scale > ASYMMETRY_TOLERANCE) return true;
    }
  }
  return false;
}

/**
 * {@link covarianceHealth} of a one-dimensional S (a variance per update), in one pass without a factorisation:
 * a 1 x 1 S is symmetric, positive definite exactly when it is above 0 (choleskyFactor's pivot test d > |d| 1e-14
 * for a finite d), and it is its own eigenvalue (every update is in the eigen sample).
 */
function scalarHealth(S: Float64Array, length: number): CovarianceHealth {
  let checked = 0;
  let notSpd = 0;
  let incomplete = 0;
  let minDiag = Infinity;
  const bad = new BadRuns();
  for (let i = 0; i < length; i++) {
    const v = S[i];
    if (!Number.isFinite(v)) {
      bad.good();
      continue;
    }
    checked++;
    if (v < minDiag) minDiag = v;
    if (v > Math.abs(v) * 1e-14) { bad.good(); continue; }
    notSpd++;
    bad.bad(i, true, false);
  }
  const out: CovarianceHealth = { checked, notSpd, asymmetric: 0, incomplete, eigenSampled: 0, runs: bad.runs, moreRuns: bad.moreRuns };
  if (checked === 0) return out;
  out.minEigenvalue = minDiag;
  if (minDiag > 0) out.maxCondition = 1;
  out.eigenSampled = checked;
  return out;
}
