/**
 * Time series the panel draws, produced by the analyses beside the report. The report holds the summary figures;
 * series hold the per-epoch values behind them (NIS over time with its band, errors with envelopes, biases ...).
 * The host keeps them and answers the webview's window queries with min/max envelopes (core/envelope.ts).
 */

/** One plotted quantity over time. */
export interface Series {
  /** Stable key, `<group>/<name>`, e.g. `nis/tdoa`, `error/position`, `bias/gyro_x`. */
  key: string;
  /** The view it belongs to: 'innovations', 'errors', 'bias', 'allan', 'uwb', 'trajectory'. */
  group: string;
  /** Human label (text only). */
  label: string;
  /** Unit of `y` in plain text (`m`, `rad/s`, `1`). */
  unit: string;
  /** Abscissa: seconds in the log's time base, ascending (for Allan deviation: tau in seconds). */
  x: Float64Array;
  /** Ordinate; NaN where undefined. */
  y: Float64Array;
  /** 1-based source line of each point, where it maps to a record. */
  line?: Float64Array;
  /** Optional band drawn with the series (bounds, +-3 sigma envelope). */
  lo?: Float64Array;
  hi?: Float64Array;
  /** Log-log axes (Allan deviation). */
  logLog?: boolean;
}

/** What each analysis stage returns besides its report block. */
export interface StageOutput<Block> {
  block?: Block;
  findings: import('./report').Finding[];
  series: Series[];
}
