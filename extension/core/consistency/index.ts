/**
 * The consistency stage: innovation (NIS) statistics per channel and per update id, the `worst` list across
 * channels, and the panel's innovation series. See channel.ts for one channel and docs/consistency.md for the
 * methods and corrections.
 */
import type { NavLog } from '../model';
import type { ChannelReport, Finding, WorstEntry } from '../report';
import type { AnalysisSettings } from '../settings';
import type { Series, StageOutput } from '../series';
import { analyzeChannel } from './channel';

export { computeNis, computeNisDetailed, nisTailProbability, wrapAngle_rad } from './nis';
export { monteCarloNisBounds, averageAcrossRuns, monteCarloInsideShare } from './monteCarlo';
export { analyzeChannel, windowSpec } from './channel';

/** What the consistency stage returns: channel reports, findings, series, `worst` and each channel's NIS. */
export type ChannelsOutput = StageOutput<ChannelReport[]> & {
  worst: WorstEntry[];
  /** NIS of every update of each channel by name (rejected updates included: use `channel.rejected` to skip them). */
  nisByChannel: Map<string, Float64Array>;
};

/**
 * Order of `worst`: smallest chi-square tail probability first; ties (e.g. tails below 1e-308 that are 0) by the
 * larger NIS, then the earlier time.
 */
export function compareWorst(a: WorstEntry, b: WorstEntry): number {
  if (a.p !== b.p) return a.p < b.p ? -1 : 1;
  if (a.score !== b.score) return a.score > b.score ? -1 : 1;
  return a.t - b.t;
}

/**
 * Analyse every channel of the log. A channel that fails unexpectedly yields a finding naming it instead of an
 * exception, so one bad channel never loses the others.
 */
export function analyzeChannels(log: NavLog, settings: AnalysisSettings): ChannelsOutput {
  const block: ChannelReport[] = [];
  const findings: Finding[] = [];
  const series: Series[] = [];
  const candidates: WorstEntry[] = [];
  const nisByChannel = new Map<string, Float64Array>();
  for (const channel of log.channels) {
    try {
      const r = analyzeChannel(channel, settings, log.resets);
      block.push(r.report);
      findings.push(...r.findings);
      series.push(...r.series);
      candidates.push(...r.worst);
      nisByChannel.set(channel.name, r.nis);
    } catch (e) {
      findings.push({
        kind: 'note',
        channel: channel.name,
        severity: 'error',
        message: `The consistency analysis of channel ${channel.name} failed: ${e instanceof Error ? e.message : String(e)}`,
      });
    }
  }
  candidates.sort(compareWorst);
  const worst = candidates.slice(0, Math.max(0, settings.maxWorst));
  return { block, findings, series, worst, nisByChannel };
}
