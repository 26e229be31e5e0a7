/**
 * The `residuum.*` settings and their mapping onto AnalysisSettings. Pure: the caller passes a getter (in the host,
 * `workspace.getConfiguration('residuum', uri).get`), so the mapping is tested without an editor. Values from the
 * user's JSON are checked here: a wrong type or an out-of-range number falls back to the default.
 */
import type { AnalysisSettings } from '../core/settings';

/** IMU presets offered in the settings (core/imu/presets.ts holds their figures). */
export const IMU_PRESETS = ['consumer', 'industrial', 'tactical'] as const;

/** Everything the editor reads from the settings for one log. */
export interface EditorConfiguration {
  /** Overrides of the analysis defaults. */
  analysis: Partial<AnalysisSettings>;
  /** Mapping file (absolute, or relative to the log's folder); undefined = the default `<log>.map.json`. */
  mapPath?: string;
  /** Cap of findings shown in the Problems panel. */
  maxProblems: number;
  /** Cap of points of a planar path (trajectory) sent to the panel. */
  maxPathPoints: number;
  /** CodeLens in estimator sources (reserved; read so the setting exists and is honoured when lenses come). */
  codeLens: boolean;
}

/** Reads one setting (undefined when unset). */
export type SettingGetter = (key: string) => unknown;

function num(get: SettingGetter, key: string, min: number, max: number): number | undefined {
  const v = get(key);
  return typeof v === 'number' && Number.isFinite(v) && v >= min && v <= max ? v : undefined;
}

function int(get: SettingGetter, key: string, min: number, max: number, fallback: number): number {
  const v = num(get, key, min, max);
  return v === undefined ? fallback : Math.floor(v);
}

/** Read the `residuum.*` settings through `get` (keys without the `residuum.` prefix). */
export function readConfiguration(get: SettingGetter): EditorConfiguration {
  const analysis: Partial<AnalysisSettings> = {};
  const confidence = num(get, 'nis.confidenceLevel', 0.5, 0.99999);
  if (confidence !== undefined) analysis.confidence = confidence;
  const gate = num(get, 'nis.gate', 0.5, 0.9999999);
  if (gate !== undefined) analysis.gate = gate;
  const window = num(get, 'nis.windowSeconds', 0.001, 1e6);
  if (window !== undefined) analysis.window_s = window;
  const lags = num(get, 'nis.whitenessLags', 1, 1000);
  if (lags !== undefined) analysis.whitenessLags = Math.floor(lags);
  const worst = num(get, 'worst.maxEntries', 1, 100);
  if (worst !== undefined) analysis.maxWorst = Math.floor(worst);
  const dop = num(get, 'uwb.maxDop', 0.1, 1e6);
  if (dop !== undefined) analysis.maxDop = dop;
  const preset = get('imu.preset');
  if (typeof preset === 'string' && (IMU_PRESETS as readonly string[]).includes(preset)) analysis.imuPreset = preset;
  if (get('imu.static') === true) analysis.imuStatic = true;
  const offset = num(get, 'reference.timeOffsetSeconds', -1e12, 1e12);
  if (offset !== undefined) analysis.timeOffset_s = offset;
  const map = get('mapping.file');
  const out: EditorConfiguration = {
    analysis,
    maxProblems: int(get, 'problems.maxEntries', 0, 10000, 50),
    maxPathPoints: int(get, 'chart.maxPathPoints', 100, 1_000_000, 20000),
    codeLens: get('codeLens.enabled') !== false,
  };
  if (typeof map === 'string' && map.trim() !== '') out.mapPath = map.trim();
  return out;
}
