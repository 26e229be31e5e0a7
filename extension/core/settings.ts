/**
 * Analysis settings shared by the CLI, the extension and the tests. Defaults are the documented ones;
 * the extension maps its `residuum.*` configuration onto this object and the CLI its options.
 */

/** Settings of one analysis. */
export interface AnalysisSettings {
  /** Two-sided confidence of the NIS/NEES bounds (0.95). */
  confidence: number;
  /** Single-update outlier gate as a chi-square probability (0.999). */
  gate: number;
  /** Sliding window for time-averaged NIS/NEES, seconds (5). */
  window_s: number;
  /** Alternatively a window in updates; when set it wins over `window_s`. */
  windowUpdates?: number;
  /** Family-wise false-finding probability per channel or error block for `inconsistent` (0.01). */
  familyAlpha: number;
  /** Lags of the whiteness test (20). */
  whitenessLags: number;
  /** IMU preset name when the log's mapping gives no specification ('consumer'). */
  imuPreset: string;
  /** Mapping file used, if any. */
  map?: string;
  /** Offset added to the reference's time stamps, seconds (0). */
  timeOffset_s: number;
  /** Estimate the reference time offset by cross-correlation of speeds. */
  estimateTimeOffset: boolean;
  /** Maximum `worst` entries (100, the contract's cap). */
  maxWorst: number;
  /** Threshold of the `high-dop` finding (PDOP, 6). */
  maxDop: number;
  /** Treat the whole raw IMU log as static for Allan deviation. */
  imuStatic: boolean;
  /**
   * Errors against a reference: constant lever arm, body frame, metres, from the reference's measured point to the
   * estimator's point (p_ref_at_estimate = p_ref + R_ref l; R_ref from the reference attitude, else the estimate's).
   */
  leverArm_m?: [number, number, number];
  /** Errors: constant navigation-frame offset added to every reference position, metres (a frame offset). */
  referenceOffset_m?: [number, number, number];
  /** Errors: only estimate epochs with t in [t0, t1] (log time base, seconds) are compared with the reference. */
  window?: [number, number];
  /** Errors: fit a scale in the Umeyama alignment behind the absolute trajectory error (default rigid). */
  alignScale?: boolean;
  /** Errors: distance window of the relative error, metres (default: 1, 2 or 5 x 10^k at most a tenth of the path). */
  rpeDistance_m?: number;
  /**
   * IMU specification override (wins over the mapping file and the preset, field by field): each field a number in SI
   * or a datasheet string such as "10 deg/h", "0.005 deg/s/sqrt(Hz)", "400 ug/sqrt(Hz)"; `preset` names the preset
   * that fills the rest. Fields: gyroNoiseDensity, gyroBiasInstability, gyroRateRandomWalk, accNoiseDensity,
   * accBiasInstability, accRateRandomWalk (core/imu/presets.ts, units in core/imu/units.ts).
   */
  imuSpec?: Partial<Record<'gyroNoiseDensity' | 'gyroBiasInstability' | 'gyroRateRandomWalk' | 'accNoiseDensity' | 'accBiasInstability' | 'accRateRandomWalk', number | string | { value: number; unit: string }>> & { preset?: string };
  /** Probability of a false `bias-step` finding per bias axis of a clean log (0.01 when absent). */
  biasStepAlpha?: number;
  /** Memory budget for the numeric columns, bytes; beyond it the analysis is decimated and `partial` set. */
  memoryBudgetBytes: number;
  /**
   * Filter restarts the user confirmed (seconds, log time base): from `--reset-at`, or `reset` notes of the sidecar
   * (core/notes/resets.ts). Like the log's own `reset` records, each starts a new segment (core/resets).
   */
  confirmedResets_s?: number[];
  /** Threshold on a state block's one-epoch variance ratio for a `covariance-jump` candidate (10; core/resets). */
  covarianceJumpFactor?: number;
}

/** The documented defaults. */
export const DEFAULT_SETTINGS: AnalysisSettings = {
  confidence: 0.95,
  gate: 0.999,
  window_s: 5,
  familyAlpha: 0.01,
  whitenessLags: 20,
  imuPreset: 'consumer',
  timeOffset_s: 0,
  estimateTimeOffset: false,
  maxWorst: 100,
  maxDop: 6,
  imuStatic: false,
  memoryBudgetBytes: 4 * 1024 * 1024 * 1024,
};

/** Merge partial settings over the defaults. */
export function resolveSettings(partial: Partial<AnalysisSettings> = {}): AnalysisSettings {
  return { ...DEFAULT_SETTINGS, ...partial };
}
