/**
 * The in-memory form of one navigation run, as the readers produce it and every analysis consumes it.
 *
 * Conventions (stated once, here):
 * - Columns are `Float64Array`s, one value per record of their stream; a missing value is `NaN`.
 *   Never row objects.
 * - `t_s` is seconds in the log's own time base (after unit suffixes are applied; absolute stamps stay absolute).
 * - `line` is the 1-based line where the record starts in its file (`file` names the file).
 * - Positions in metres, velocities in m/s, angles in radians, rates in rad/s, specific force in m/s^2,
 *   all in the navigation frame (`frame`: ENU or NED) unless the name says `body`.
 * - Attitude is stored as a Hamilton quaternion `q_w q_x q_y q_z` (scalar first) rotating body vectors into the
 *   navigation frame (`nav_R_body`). Readers convert matrices, Euler angles and other orders at the edge.
 * - String ids (update ids, anchor ids) are interned: a column holds the index into a `string[]` dictionary
 *   (`NaN` when absent).
 */

/** Severity of a reader or analysis diagnostic. */
export type Severity = 'error' | 'warning' | 'info';

/** Kinds of finding in version 1 of the report contract, plus the reader's own. */
export type FindingKind =
  | 'outlier'
  | 'inconsistent'
  | 'not-white'
  | 'innovation-bias'
  | 'bias-step'
  | 'bias-drift'
  | 'time-gap'
  | 'time-backwards'
  | 'bad-rotation'
  | 'bad-covariance'
  | 'bad-value'
  | 'parse-error'
  | 'suspect-anchor'
  | 'too-few-anchors'
  | 'high-dop'
  | 'unknown-column'
  | 'covariance-jump'
  | 'note';

/** A problem found while reading: where it is (file, 1-based line and column) and a plain sentence. */
export interface Diagnostic {
  severity: Severity;
  kind: FindingKind;
  /** File name (as given to the reader). */
  file: string;
  /** 1-based line; 0 when the problem concerns the whole file. */
  line: number;
  /** 1-based character column, where known. */
  column?: number;
  /** Time of the record concerned, where known. */
  t?: number;
  /** Channel or column concerned, where relevant. */
  channel?: string;
  message: string;
}

/** A set of named numeric columns sharing one time base and one line index. */
export interface Stream {
  /** Record times, seconds. */
  t_s: Float64Array;
  /** 1-based line of each record in `file`. */
  line: Float64Array;
  /** File the records came from. */
  file: string;
  /** Number of records (the arrays may be longer: use only [0, length)). */
  length: number;
  /**
   * When the records come from several files of the run (joined by time): per record, the index into
   * `NavLog.files` of its file (`file` is then the first of them). Absent when all come from `file`.
   */
  fileIndex?: Uint16Array;
}

/**
 * Estimator state records (one per epoch). Canonical column names (see log-conventions.md):
 * `p_x p_y p_z v_x v_y v_z q_w q_x q_y q_z bg_x bg_y bg_z ba_x ba_y ba_z`,
 * `sigma_<state>` (1-sigma, variances already converted), `gt_<state>` for ground truth.
 */
export interface StateStream extends Stream {
  columns: Map<string, Float64Array>;
  /** Full covariance per epoch when logged: `matrix` holds length*n*n values, row-major per epoch. */
  P?: { states: string[]; matrix: Float64Array };
}

/** The updates of one measurement channel. */
export interface Channel extends Stream {
  name: string;
  /** Degrees of freedom: the length of the innovation. */
  dof: number;
  /** Innovations, `length * dof`, row-major (NaN where only NIS is logged). */
  nu: Float64Array;
  /** Innovation covariances, `length * dof * dof`, row-major, symmetric; absent when not logged. */
  S?: Float64Array;
  /** Precomputed NIS when logged (`nis_<ch>`). */
  nisLogged?: Float64Array;
  /** Interned update ids (index into `ids`), NaN when absent. */
  id: Float64Array;
  ids: string[];
  /** 1 where the estimator rejected the update, else 0. */
  rejected: Uint8Array;
  /** Components marked as angles (wrapped to (-pi, pi] before NIS). */
  angleComponents: boolean[];
}

/** Raw IMU samples in the body frame. */
export interface ImuStream extends Stream {
  gyro_x: Float64Array; gyro_y: Float64Array; gyro_z: Float64Array;
  acc_x: Float64Array; acc_y: Float64Array; acc_z: Float64Array;
  mag_x?: Float64Array; mag_y?: Float64Array; mag_z?: Float64Array;
}

/** Raw TDOA records: range difference d_j - d_i between anchors i and j, metres. */
export interface TdoaStream extends Stream {
  /** Interned anchor ids (index into `NavLog.anchorIds`). */
  i: Float64Array;
  j: Float64Array;
  d_m: Float64Array;
}

/** Raw two-way ranges to anchors, metres. */
export interface RangeStream extends Stream {
  /** Interned anchor id (index into `NavLog.anchorIds`). */
  anchor: Float64Array;
  r_m: Float64Array;
}

/** A fixed UWB anchor, position in metres in the navigation frame. */
export interface Anchor {
  id: string;
  p: [number, number, number];
}

/** Reference trajectory (ground truth at its own rate, e.g. motion capture or RTK). Same column names as state, without `gt_`. */
export interface ReferenceStream extends StateStream {}

/** Attitude error convention. */
export type AttitudeErrorSide = 'nav' | 'body';

/** Everything read for one run. */
export interface NavLog {
  /** Path of the main log as given. */
  path: string;
  format: 'csv' | 'jsonl' | 'json';
  /** Every data record read, of any kind, across the run's files. */
  rows: number;
  /** Metadata (`# key: value` lines, JSON `meta`), keys lower-cased. */
  meta: Record<string, string>;
  frame?: 'ENU' | 'NED';
  state: StateStream;
  channels: Channel[];
  imu?: ImuStream;
  tdoa?: TdoaStream;
  ranges?: RangeStream;
  /** Separate reference file(s), when given. */
  reference?: ReferenceStream;
  anchors: Anchor[];
  /** Dictionary for anchor ids used by `tdoa` and `ranges`. */
  anchorIds: string[];
  /** Times of estimator resets (`reset` records or metadata). */
  resets: number[];
  /** `# source: path:line` metadata, parsed. */
  source?: { path: string; line: number };
  /** Every file that was read for this run. */
  files: string[];
  /** Mapping-file conventions that analyses need. */
  conventions: { attitudeErrorSide: AttitudeErrorSide; errorGroup?: 'SO3xR3' | 'SE3' | 'SE23' };
  /** IMU specification from the mapping file (SI units), if given. */
  imuSpec?: ImuSpec;
  /** IMU specification exactly as the mapping file gives it (datasheet numbers with units), for conversion to SI. */
  imuSpecRaw?: ImuSpecRaw;
  diagnostics: Diagnostic[];
  /** True when the memory budget forced the reader to decimate (read/budget.ts); a diagnostic says what was kept. */
  partial?: boolean;
}

/** A datasheet number with its unit as written in a mapping file (e.g. `{ value: 0.007, unit: "deg/s/sqrt(Hz)" }`). */
export interface ImuSpecValue {
  value: number;
  unit: string;
}

/** IMU specification as the mapping file writes it (not yet SI); field meanings as in {@link ImuSpec}. */
export interface ImuSpecRaw {
  preset?: string;
  gyroNoiseDensity?: ImuSpecValue;
  gyroBiasInstability?: ImuSpecValue;
  gyroRateRandomWalk?: ImuSpecValue;
  accNoiseDensity?: ImuSpecValue;
  accBiasInstability?: ImuSpecValue;
  accRateRandomWalk?: ImuSpecValue;
}

/** IMU noise specification in SI units (conversion from datasheet units lives in core/imu/units.ts). */
export interface ImuSpec {
  /** Gyro angle random walk / noise density, rad/s/sqrt(Hz). */
  gyroNoiseDensity?: number;
  /** Gyro bias instability, rad/s. */
  gyroBiasInstability?: number;
  /** Gyro rate random walk K, rad/s^2/sqrt(Hz) (rad/s/sqrt(s)). */
  gyroRateRandomWalk?: number;
  /** Accelerometer velocity random walk / noise density, m/s^2/sqrt(Hz). */
  accNoiseDensity?: number;
  /** Accelerometer bias instability, m/s^2. */
  accBiasInstability?: number;
  /** Accelerometer bias random walk K, m/s^3/sqrt(Hz). */
  accRateRandomWalk?: number;
  /** Name of the preset or 'mapping' / 'settings'. */
  origin: string;
}

/** Create an empty stream-backed Float64Array column of a given length filled with NaN. */
export function nanColumn(length: number): Float64Array {
  const a = new Float64Array(length);
  a.fill(NaN);
  return a;
}
