/**
 * The analysis report, `residuum.report/1` (../shared/spec/report-contract.md; our copy and extensions are in
 * docs/report-contract.md and the JSON Schema in schema/report.schema.json). The CLI prints it and the panel draws
 * from it, so what a person sees and what a script checks cannot disagree.
 *
 * Rules: SI units (fields ending `Deg` are degrees); every number finite; a value that cannot be computed is
 * absent, and `null` inside an array. Add fields freely; never rename or remove without bumping `schema`.
 */
import type { FindingKind } from './model';

/** Schema identifier of this report version. */
export const REPORT_SCHEMA = 'residuum.report/1';

/** NIS or NEES summary of one sequence. */
export interface ChiSquareSummary {
  dof?: number;
  mean?: number;
  /** Share of values inside the two-sided 95% chi-square interval for their dof. */
  inside95?: number;
  bounds95?: [number, number];
}

/** One update id within a channel (an anchor pair, a satellite, a landmark). */
export interface ChannelById {
  id: string;
  updates: number;
  rejected?: number;
  outliers: number;
  nis: { mean?: number; inside95?: number };
  innovationMean?: (number | null)[];
}

/** Per-channel figures. */
export interface ChannelReport {
  name: string;
  dof: number;
  updates: number;
  rejected: number;
  outliers: number;
  nis: ChiSquareSummary & Record<string, unknown>;
  innovationMean?: (number | null)[];
  innovationStd?: (number | null)[];
  whiteness?: { lags: number; ljungBoxQ?: number; ljungBoxP?: number } & Record<string, unknown>;
  byId?: ChannelById[];
  [extra: string]: unknown;
}

/** A finding: something worth a person's attention, with where and when. */
export interface Finding {
  kind: FindingKind;
  t?: number;
  tEnd?: number;
  line?: number;
  file?: string;
  column?: number;
  channel?: string;
  id?: string;
  side?: 'overconfident' | 'pessimistic';
  axis?: number;
  size?: number;
  score?: number;
  p?: number;
  severity?: 'error' | 'warning' | 'info';
  message: string;
}

/** An entry of `worst`: an update with a small chi-square tail probability. */
export interface WorstEntry {
  t: number;
  line: number;
  channel: string;
  id?: string;
  score: number;
  p: number;
}

/** The whole report. Blocks owned by other modules are typed there and kept open here. */
export interface Report {
  schema: typeof REPORT_SCHEMA;
  tool: { version: string };
  source: { path: string; format: 'csv' | 'jsonl' | 'json'; rows: number; sha256?: string; files: string[] };
  settings: Record<string, unknown> & { confidence: number; gate: number; window_s: number; imuPreset: string };
  partial: boolean;
  time: { start?: number; end?: number; epochs: number; medianDt?: number };
  channels: ChannelReport[];
  errors?: Record<string, unknown> & { excluded: number };
  bias?: Record<string, unknown>;
  uwb?: Record<string, unknown>;
  notes: unknown[];
  findings: Finding[];
  worst: WorstEntry[];
  [extra: string]: unknown;
}
