/**
 * Per-epoch estimation errors of one run against its reference: the reference brought onto the estimate's epochs
 * (align.ts), then error vectors and NEES per block. The summaries live in index.ts; the Monte Carlo test reuses
 * this track for each run.
 *
 * Error definitions (log conventions, "Errors"):
 * - position and velocity: true minus estimate, navigation frame;
 * - orientation, navigation side (default): dtheta = Log(R_true R_est^T); body side: Log(R_est^T R_true);
 * - invariant errors (`conventions.errorGroup` 'SE3' or 'SE23', Barrau and Bonnabel 2017) for the NEES only:
 *   navigation side = right-invariant eta = X_true X_est^-1, body side = left-invariant eta = X_est^-1 X_true,
 *   xi = log(eta) = [phi, (nu,) rho] (se3.ts / se23.ts); its parts are normalised by the logged covariance of
 *   att_*, v_* and p_* respectively. Raw errors (RMSE, ATE, plots) are always the plain ones above.
 */
import type { NavLog, StateStream } from '../model';
import type { AnalysisSettings } from '../settings';
import { mat3MulVec, mat3MultiplyTransposeA, mat3MultiplyTransposeB, so3Log } from '../geometry/so3';
import { se3Compose, se3Inverse, se3Log } from '../geometry/se3';
import { se23Compose, se23Inverse, se23Log } from '../geometry/se23';
import {
  ALIGN_IN_GAP, ALIGN_OK, MAX_GAP_STEPS, bracketTimes, estimateTimeOffset, interpolateAttitude,
  interpolateColumn, medianStep, speedProfile,
} from './align';
import { geodeticToLocal, type GeodeticOrigin, type LocalFrame } from './geodetic';
import { componentSigma, neesSeries, type BlockCovariance } from './nees';
import { normalisedQuaternionColumns, rotationAt, type AttitudeColumns } from './attitude';
import { newFloat64 } from '../columnAlloc';

/** Names of the error blocks. */
export type BlockName = 'position' | 'velocity' | 'orientation';

/** One block's per-epoch errors. */
export interface BlockTrack {
  name: BlockName;
  /** Raw error components (true minus estimate; orientation: rotation vector, rad), NaN where not compared. */
  err: Float64Array[];
  /** Error used for NEES (equals `err` unless invariant errors are chosen). */
  neesErr: Float64Array[];
  /** 1-sigma per component where the log gives it. */
  sigma?: Float64Array[];
  /** Covariance source, when NEES is computable. */
  cov?: BlockCovariance;
  /** NEES per epoch (NaN where not computable), when `cov` is known. */
  nees?: Float64Array;
}

/** The per-epoch comparison of one run. */
export interface ErrorTrack {
  t_s: Float64Array;
  line: Float64Array;
  /** File of the state records. */
  file: string;
  length: number;
  /** Epoch indices inside the settings' time window: [w0, w1). */
  w0: number;
  w1: number;
  /** Per epoch: ALIGN_OK, ALIGN_OUTSIDE_SPAN, ALIGN_IN_GAP. */
  status: Uint8Array;
  /** Where the reference came from. */
  source: 'state' | 'reference';
  frame: LocalFrame;
  frameAssumed: boolean;
  timeOffset_s: number;
  timeOffsetEstimated: boolean;
  origin?: GeodeticOrigin;
  blocks: BlockTrack[];
  /** Joint NEES of all blocks when the full P covers them. */
  joint?: { dof: number; states: string[]; nees: Float64Array };
  /**
   * Estimate and reference positions at the epochs (for ATE, RPE and the trajectory plot). Only the compared
   * epochs count ({@link isCompared}): elsewhere a column may hold a value (it can be the log's own column).
   */
  estP: Float64Array[];
  refP: Float64Array[];
  /** Estimate and reference attitudes on the epochs, read on demand (attitude.ts); both or neither. */
  estAtt?: AttitudeColumns;
  refAtt?: AttitudeColumns;
  /** The reference's own positions (all its samples, converted), for the plot. */
  refOwn?: { t_s: Float64Array; line: Float64Array; p: Float64Array[] };
  notes: string[];
}

const LAT = ['lat', 'latitude', 'lat_deg', 'latitude_deg'];
const LON = ['lon', 'lng', 'longitude', 'lon_deg', 'longitude_deg'];
const HEIGHT = ['h', 'height', 'alt', 'altitude', 'h_m', 'height_m', 'alt_m', 'altitude_m', 'ellipsoidal_height'];

function pick(cols: Map<string, Float64Array>, prefix: string, names: string[]): Float64Array | undefined {
  for (const n of names) { const c = cols.get(prefix + n); if (c) return c; }
  return undefined;
}

function columnsOf(cols: Map<string, Float64Array>, prefix: string, names: string[]): (Float64Array | undefined)[] {
  return names.map((n) => cols.get(prefix + n));
}

const allDefined = (a: (Float64Array | undefined)[]): a is Float64Array[] => a.every((c) => c !== undefined);

/** Positions of a stream (local x, y, z or geodetic converted), or undefined. */
function positionsOf(
  s: StateStream, prefix: string, frame: LocalFrame, origin: GeodeticOrigin | undefined,
): { p: (Float64Array | undefined)[]; origin?: GeodeticOrigin } | undefined {
  const p = columnsOf(s.columns, prefix, ['p_x', 'p_y', 'p_z']);
  if (p[0] && p[1]) return { p };
  const lat = pick(s.columns, prefix, LAT), lon = pick(s.columns, prefix, LON);
  if (!lat || !lon) return undefined;
  const h = pick(s.columns, prefix, HEIGHT);
  const out: [Float64Array, Float64Array, Float64Array] = [new Float64Array(s.length), new Float64Array(s.length), new Float64Array(s.length)];
  const o = geodeticToLocal(lat, lon, h, s.length, frame, out, origin);
  return { p: h ? out : [out[0], out[1], undefined], origin: o };
}

/** The quaternion columns of a stream (`q_w q_x q_y q_z` after `prefix`), or undefined. */
function quaternionColumns(s: StateStream, prefix: string): Float64Array[] | undefined {
  const q = columnsOf(s.columns, prefix, ['q_w', 'q_x', 'q_y', 'q_z']);
  return allDefined(q) ? q : undefined;
}

/** Attitude columns read as the given normalisation. */
function attitudeOf(q: Float64Array[], normalisation: AttitudeColumns['normalisation']): AttitudeColumns {
  return { w: q[0], x: q[1], y: q[2], z: q[3], normalisation };
}

const scratchA = new Float64Array(9);
const scratchB = new Float64Array(9);

/** Whether epoch k of a track is compared: inside the time window with a reference value. */
export function isCompared(track: Pick<ErrorTrack, 'w0' | 'w1' | 'status'>, k: number): boolean {
  return k >= track.w0 && k < track.w1 && track.status[k] === ALIGN_OK;
}

/** t + offset for the first `length` stamps. */
function shiftedTimes(t_s: Float64Array, length: number, offset: number): Float64Array {
  const out = new Float64Array(length);
  for (let i = 0; i < length; i++) out[i] = t_s[i] + offset;
  return out;
}

/** Index range [w0, w1) of epochs with t in the window (the whole log without one). */
function windowRange(t_s: Float64Array, length: number, window?: [number, number]): [number, number] {
  if (!window) return [0, length];
  let w0 = 0;
  while (w0 < length && !(t_s[w0] >= window[0])) w0++;
  let w1 = w0;
  while (w1 < length && t_s[w1] <= window[1]) w1++;
  return [w0, w1];
}

function blockCovariance(state: StateStream, states: string[], sigmaNames: string[]): BlockCovariance | undefined {
  const P = state.P;
  if (P) {
    const idx = states.map((s) => P.states.indexOf(s));
    const size = P.states.length;
    if (idx.every((i) => i >= 0) && P.matrix.length >= state.length * size * size) return { full: { matrix: P.matrix, size, indices: idx } };
  }
  const sig = sigmaNames.map((n) => state.columns.get(n));
  if (allDefined(sig)) return { sigma: sig };
  return undefined;
}

/*
 * The per-epoch loops below are small functions of one loop each, with one store per value whatever the branch:
 * this stage runs once per process, and V8 compiles a hot loop only after a few thousand slow iterations; a loop in a
 * long function, or followed by code that has not run yet, or a rare branch with its own stores (a missing epoch)
 * sends it back to the slow tier for thousands more (seen with --trace-deopt/--trace-osr on a 250k-epoch log, where
 * heap profiles of one run showed most epochs of such loops boxing numbers in the slow tier).
 */

/** ALIGN_OK where every present reference position component is finite, ALIGN_IN_GAP elsewhere. */
function positionStatus(p: (Float64Array | undefined)[], n: number): Uint8Array {
  const status = new Uint8Array(n);
  const [c0, c1, c2] = p;
  for (let k = 0; k < n; k++) {
    const ok = (!c0 || Number.isFinite(c0[k])) && (!c1 || Number.isFinite(c1[k])) && (!c2 || Number.isFinite(c2[k]));
    status[k] = ok ? ALIGN_OK : ALIGN_IN_GAP;
  }
  return status;
}

/** ALIGN_OK where the attitude is usable (all ALIGN_OK without one), ALIGN_IN_GAP elsewhere. */
function attitudeStatus(att: AttitudeColumns | undefined, n: number): Uint8Array {
  const status = new Uint8Array(n);
  for (let k = 0; k < n; k++) status[k] = !att || rotationAt(scratchA, att, k) ? ALIGN_OK : ALIGN_IN_GAP;
  return status;
}

/**
 * Orientation error (rotation vector, rad) per epoch: navigation side Log(R_true R_est^T), body side
 * Log(R_est^T R_true); NaN where not compared or either attitude is unusable.
 */
function orientationErrors(estAtt: AttitudeColumns, refAtt: AttitudeColumns, status: Uint8Array, n: number, w0: number, w1: number,
  side: 'nav' | 'body', column: () => Float64Array): Float64Array[] {
  const ex = column(), ey = column(), ez = column();
  const E = new Float64Array(9), v = new Float64Array(3);
  const Re = scratchA, Rt = scratchB;
  ex.fill(NaN, 0, w0); ey.fill(NaN, 0, w0); ez.fill(NaN, 0, w0);
  ex.fill(NaN, w1, n); ey.fill(NaN, w1, n); ez.fill(NaN, w1, n);
  const body = side === 'body';
  for (let k = w0; k < w1; k++) {
    const ok = status[k] === ALIGN_OK && rotationAt(Re, estAtt, k) && rotationAt(Rt, refAtt, k);
    if (ok) {
      if (body) mat3MultiplyTransposeA(E, Re, Rt); else mat3MultiplyTransposeB(E, Rt, Re);
      so3Log(v, E);
    }
    ex[k] = ok ? v[0] : NaN; ey[k] = ok ? v[1] : NaN; ez[k] = ok ? v[2] : NaN;
  }
  return [ex, ey, ez];
}

/**
 * r[c] - p[c] of every component at the compared epochs (inside [w0, w1) with status ALIGN_OK), NaN elsewhere: one
 * pass writing every value once (a per-epoch predicate closure and one pass per component cost ~40 ms on 250k epochs).
 */
function differenceColumns(r: Float64Array[], p: Float64Array[], n: number, w0: number, w1: number, status: Uint8Array,
  column: () => Float64Array): Float64Array[] {
  const d = r.length;
  const out: Float64Array[] = [];
  for (let c = 0; c < d; c++) {
    const e = column();
    e.fill(NaN, 0, w0); e.fill(NaN, w1, n);
    out.push(e);
  }
  if (d === 3) {
    const [r0, r1, r2] = r, [p0, p1, p2] = p, [e0, e1, e2] = out;
    for (let k = w0; k < w1; k++) {
      const ok = status[k] === ALIGN_OK;
      e0[k] = ok ? r0[k] - p0[k] : NaN; e1[k] = ok ? r1[k] - p1[k] : NaN; e2[k] = ok ? r2[k] - p2[k] : NaN;
    }
  } else {
    for (let c = 0; c < d; c++) {
      const rc = r[c], pc = p[c], e = out[c];
      for (let k = w0; k < w1; k++) e[k] = status[k] === ALIGN_OK ? rc[k] - pc[k] : NaN;
    }
  }
  return out;
}

/**
 * Build the error track of one run. Returns undefined when the log has no reference (neither `gt_` columns nor a
 * reference stream) or no estimated position, attitude or velocity to compare.
 */
export function buildErrorTrack(log: NavLog, settings: AnalysisSettings): ErrorTrack | undefined {
  const state = log.state;
  const n = state.length;
  const notes: string[] = [];
  const frame: LocalFrame = log.frame ?? 'ENU';
  const frameAssumed = !log.frame;
  const ref = log.reference && log.reference.length > 0 ? log.reference : undefined;
  const refStream: StateStream = ref ?? state;
  const prefix = ref ? '' : 'gt_';

  // Reference positions first (they fix the geodetic origin), then the estimate's.
  const refPos = positionsOf(refStream, prefix, frame, undefined);
  const estPos = positionsOf(state, '', frame, refPos?.origin);
  const refQRaw = quaternionColumns(refStream, prefix);
  const estQRaw = quaternionColumns(state, '');
  // A reference at its own rate is interpolated from unit quaternions; one in the same records is read in place.
  const refQ = refQRaw && ref ? normalisedQuaternionColumns(refQRaw[0], refQRaw[1], refQRaw[2], refQRaw[3], ref.length) : refQRaw;
  // velocity: 3-D when both have v_z, else horizontal (v_x, v_y) when both have those
  const refV3 = columnsOf(refStream.columns, prefix, ['v_x', 'v_y', 'v_z']);
  const estV3 = columnsOf(state.columns, '', ['v_x', 'v_y', 'v_z']);
  const velDims = refV3[2] && estV3[2] ? 3 : 2;
  const refV = refV3.slice(0, velDims);
  const estV = estV3.slice(0, velDims);
  const hasPos = !!(refPos && estPos);
  const hasVel = allDefined(refV) && allDefined(estV);
  const hasAtt = !!(refQ && estQRaw);
  if (!hasPos && !hasVel && !hasAtt) return undefined;

  // Every long column the track keeps is cut from the run's slabs (columnAlloc.ts: huge pages instead of ~500 page
  // faults per 2 MB column).
  const group = log.conventions.errorGroup ?? 'SO3xR3';
  const column = (): Float64Array => newFloat64(n);

  // --- time alignment -------------------------------------------------------------------------------------
  let offset = ref ? settings.timeOffset_s : 0;
  let offsetEstimated = false;
  if (ref && settings.estimateTimeOffset && hasPos) {
    const es = speedProfile(state.t_s, n, estPos.p, allDefined(estV) ? estV : []);
    const rs = speedProfile(ref.t_s, ref.length, refPos.p, allDefined(refV) ? refV : []);
    const span = state.t_s[n - 1] - state.t_s[0];
    const maxLag = Math.min(60, Math.max(1, span / 10));
    const shifted = shiftedTimes(ref.t_s, ref.length, offset);
    const est = estimateTimeOffset(state.t_s, es, n, shifted, rs, ref.length, maxLag);
    if (Number.isFinite(est)) { offset += est; offsetEstimated = true; } else notes.push('time offset could not be estimated (speeds do not overlap or do not vary); the given offset is used');
  } else if (!ref && settings.timeOffset_s !== 0) {
    notes.push('timeOffset_s ignored: the ground truth is in the same records as the estimate');
  }

  const [w0, w1] = windowRange(state.t_s, n, settings.window);
  const off = settings.referenceOffset_m;
  const lever = settings.leverArm_m;
  let rp: (Float64Array | undefined)[] = [];
  let rv: Float64Array[] = [];
  let refAtt: AttitudeColumns | undefined;
  let status: Uint8Array;
  if (ref) {
    const valid = new Uint8Array(ref.length);
    for (let i = 0; i < ref.length; i++) {
      let ok = true;
      if (refPos) for (const c of refPos.p) if (c && !Number.isFinite(c[i])) ok = false;
      if (!refPos && hasAtt) for (const c of refQ as Float64Array[]) if (!Number.isFinite(c[i])) ok = false;
      if (!refPos && !hasAtt && hasVel) for (const c of refV as Float64Array[]) if (!Number.isFinite(c[i])) ok = false;
      valid[i] = ok ? 1 : 0;
    }
    const step = medianStep(ref.t_s, ref.length);
    const br = bracketTimes(state.t_s, n, ref.t_s, ref.length, offset, valid, MAX_GAP_STEPS * step * (1 + 1e-9));
    const interp = (c: Float64Array | undefined): Float64Array | undefined =>
      c ? interpolateColumn(c, br, column()) : undefined;
    rp = refPos ? refPos.p.map(interp) : [];
    rv = hasVel ? (refV as Float64Array[]).map((c) => interp(c) as Float64Array) : [];
    if (refQ) {
      const out: [Float64Array, Float64Array, Float64Array, Float64Array] = [column(), column(), column(), column()];
      interpolateAttitude(refQ[0], refQ[1], refQ[2], refQ[3], br, out);
      refAtt = attitudeOf(out, 'unit');
    }
    status = br.status;
  } else {
    // The reference is in the estimate's own records: every epoch is its own bracket, so its columns are read in
    // place (no interpolated copies); an epoch is compared when its reference position (or attitude) is there.
    status = refPos ? positionStatus(refPos.p, n) : attitudeStatus(refQ ? attitudeOf(refQ, 'logged') : undefined, n);
    // The frame offset and lever arm below change the reference positions: they get their own copy then.
    rp = refPos ? refPos.p.map((c) => (c && (off || lever) ? c.slice(0, n) : c)) : [];
    rv = hasVel ? (refV as Float64Array[]) : [];
    if (refQ) refAtt = attitudeOf(refQ, 'loggedTwice');
  }
  const estAtt = estQRaw ? attitudeOf(estQRaw, 'logged') : undefined;

  // Frame offset and lever arm on the reference positions.
  if (refPos && (off || lever)) {
    if (lever && !refAtt && !estAtt) notes.push('leverArm_m ignored: neither the reference nor the estimate has an attitude');
    const l = new Float64Array(3), lr = new Float64Array(3);
    for (let k = w0; k < w1; k++) {
      for (let c = 0; c < rp.length; c++) { const col = rp[c]; if (col && off) col[k] += off[c]; }
      if (lever) {
        const R = scratchA;
        // the reference's attitude where it has one, else the estimate's
        if (!((refAtt && rotationAt(R, refAtt, k)) || (estAtt && rotationAt(R, estAtt, k)))) continue;
        l[0] = lever[0]; l[1] = lever[1]; l[2] = lever[2];
        mat3MulVec(lr, R, l);
        for (let c = 0; c < rp.length; c++) { const col = rp[c]; if (col) col[k] += lr[c]; }
      }
    }
  }

  const blocks: BlockTrack[] = [];
  const side = log.conventions.attitudeErrorSide;

  // --- position --------------------------------------------------------------------------------------------
  const estP: Float64Array[] = [];
  const refP: Float64Array[] = [];
  if (hasPos) {
    const dims = rp[2] && estPos.p[2] ? 3 : 2;
    if (dims === 2) notes.push('position compared in 2-D: no height in the estimate or the reference');
    for (let c = 0; c < dims; c++) { estP.push(estPos.p[c] as Float64Array); refP.push(rp[c] as Float64Array); }
    const err = differenceColumns(refP, estP, n, w0, w1, status, column);
    const names = ['p_x', 'p_y', 'p_z'].slice(0, dims);
    const cov = blockCovariance(state, names, names.map((s) => `sigma_${s}`));
    blocks.push({ name: 'position', err, neesErr: err, cov });
  }

  // --- velocity --------------------------------------------------------------------------------------------
  if (hasVel) {
    const err = differenceColumns(rv, estV as Float64Array[], n, w0, w1, status, column);
    const names = ['v_x', 'v_y', 'v_z'].slice(0, velDims);
    if (velDims === 2) notes.push('velocity compared in 2-D: no vertical velocity in the estimate or the reference');
    blocks.push({ name: 'velocity', err, neesErr: err, cov: blockCovariance(state, names, names.map((s) => `sigma_${s}`)) });
  }

  // --- orientation -----------------------------------------------------------------------------------------
  if (hasAtt && estAtt && refAtt) {
    const err = orientationErrors(estAtt, refAtt, status, n, w0, w1, side, column);
    const names = ['att_x', 'att_y', 'att_z'];
    blocks.push({ name: 'orientation', err, neesErr: err, cov: blockCovariance(state, names, names.map((s) => `sigma_${s}`)) });
  }

  // --- invariant errors for the NEES -----------------------------------------------------------------------
  const pos = blocks.find((b) => b.name === 'position');
  const vel = blocks.find((b) => b.name === 'velocity');
  const att = blocks.find((b) => b.name === 'orientation');
  if (group !== 'SO3xR3') {
    if (!pos || !att || pos.err.length !== 3 || !estAtt || !refAtt) {
      notes.push(`invariant errors (${group}) need 3-D position and attitude in both the estimate and the reference; plain errors are used`);
    } else {
      const useVel = group === 'SE23' && !!vel && vel.err.length === 3;
      if (group === 'SE23' && !useVel) notes.push('SE2(3) errors need 3-D velocity in both; SE(3) errors are used');
      const size = useVel ? 15 : 12;
      const K = useVel ? 2 : 1;
      const Xe = new Float64Array(size), Xt = new Float64Array(size), eta = new Float64Array(size), xi = new Float64Array(3 + 3 * K);
      const nPos = [0, 1, 2].map(() => column().fill(NaN));
      const nAtt = [0, 1, 2].map(() => column().fill(NaN));
      const nVel = [0, 1, 2].map(() => (useVel ? column() : new Float64Array(n)).fill(NaN));
      for (let k = w0; k < w1; k++) {
        if (!Number.isFinite(att.err[0][k]) || !Number.isFinite(pos.err[0][k])) continue;
        if (useVel && !Number.isFinite((vel as BlockTrack).err[0][k])) continue;
        // both attitudes are there: the orientation error is finite
        rotationAt(scratchA, estAtt, k); rotationAt(scratchB, refAtt, k);
        for (let i = 0; i < 9; i++) { Xe[i] = scratchA[i]; Xt[i] = scratchB[i]; }
        for (let c = 0; c < 3; c++) {
          const pe = estP[c][k], pt = refP[c][k];
          if (useVel) {
            Xe[9 + c] = (estV as Float64Array[])[c][k]; Xt[9 + c] = rv[c][k];
            Xe[12 + c] = pe; Xt[12 + c] = pt;
          } else { Xe[9 + c] = pe; Xt[9 + c] = pt; }
        }
        if (useVel) {
          if (side === 'body') { se23Inverse(eta, Xe); se23Compose(eta, eta, Xt); } else { se23Inverse(eta, Xe); se23Compose(eta, Xt, eta); }
          se23Log(xi, eta);
        } else {
          if (side === 'body') { se3Inverse(eta, Xe); se3Compose(eta, eta, Xt); } else { se3Inverse(eta, Xe); se3Compose(eta, Xt, eta); }
          se3Log(xi, eta);
        }
        for (let c = 0; c < 3; c++) {
          nAtt[c][k] = xi[c];
          if (useVel) { nVel[c][k] = xi[3 + c]; nPos[c][k] = xi[6 + c]; } else nPos[c][k] = xi[3 + c];
        }
      }
      pos.neesErr = nPos; att.neesErr = nAtt;
      if (useVel && vel) vel.neesErr = nVel;
      notes.push(`NEES uses ${side === 'body' ? 'left' : 'right'}-invariant errors on ${useVel ? 'SE2(3)' : 'SE(3)'}`);
    }
  }

  // --- NEES per block and joint ----------------------------------------------------------------------------
  for (const b of blocks) {
    if (!b.cov) continue;
    b.nees = neesSeries(b.neesErr, b.cov, n, column());
    b.sigma = b.neesErr.map((_, i) => componentSigma(b.cov as BlockCovariance, i, n, column) as Float64Array);
  }
  let joint: ErrorTrack['joint'];
  if (state.P && blocks.length > 1) {
    const states: string[] = [];
    const errs: Float64Array[] = [];
    for (const b of blocks) {
      const names = b.name === 'position' ? ['p_x', 'p_y', 'p_z'] : b.name === 'velocity' ? ['v_x', 'v_y', 'v_z'] : ['att_x', 'att_y', 'att_z'];
      states.push(...names.slice(0, b.neesErr.length));
      errs.push(...b.neesErr);
    }
    const cov = blockCovariance(state, states, []);
    if (cov?.full) joint = { dof: states.length, states, nees: neesSeries(errs, { full: cov.full }, n, column()) };
  }

  // --- the reference's own samples for the plot --------------------------------------------------------------
  let refOwn: ErrorTrack['refOwn'];
  if (ref && refPos && refPos.p[0] && refPos.p[1]) {
    const px = refPos.p[0], py = refPos.p[1], pz = refPos.p[2];
    const shiftT = shiftedTimes(ref.t_s, ref.length, offset);
    const p = [px.slice(0, ref.length), py.slice(0, ref.length), ...(pz ? [pz.slice(0, ref.length)] : [])];
    if (off) for (let c = 0; c < p.length; c++) for (let i = 0; i < ref.length; i++) p[c][i] += off[c];
    refOwn = { t_s: shiftT, line: ref.line.slice(0, ref.length), p };
  }

  if (frameAssumed && (refPos?.origin || blocks.length > 0)) {
    // only matters for geodetic conversion and the trajectory plot's axes
    if (refPos?.origin) notes.push('frame not given in the log: geodetic reference converted to ENU');
  }
  return {
    t_s: state.t_s, line: state.line, file: state.file, length: n, w0, w1, status, source: ref ? 'reference' : 'state', frame, frameAssumed,
    timeOffset_s: offset, timeOffsetEstimated: offsetEstimated, origin: refPos?.origin, blocks, joint,
    estP, refP, estAtt: hasAtt ? estAtt : undefined, refAtt: hasAtt ? refAtt : undefined, refOwn, notes,
  };
}
