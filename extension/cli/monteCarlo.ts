/**
 * `residuum montecarlo LOG... | FOLDER [--json] [--out F]`: N runs of the same scenario, the N-run average NEES per
 * error block and average NIS per channel at each epoch against Bar-Shalom's chi2(N n)/N bounds
 * (core/errors/montecarlo.ts). A folder stands for every log in it (not mapping, notes or report files).
 */
import { readdirSync, statSync } from 'node:fs';
import * as path from 'node:path';
import { InputError, readLogFile, type AnalyzeFileOptions } from '../node/analyzeFile';
import { analyzeMonteCarlo, type MonteCarloBlock, type MonteCarloSeries } from '../core/errors/montecarlo';
import { resolveSettings } from '../core/settings';
import { finiteJson } from '../core/finite';
import { UsageError } from './args';
import { table, fmt } from './summary';

const LOG_EXTENSIONS = ['.csv', '.jsonl', '.ndjson', '.json'];
const NOT_LOGS = ['.map.json', '.notes.json', '.report.json', '.gate.json'];

/** The logs a list of files and folders stands for, in a stable order. */
export function expandRuns(inputs: string[]): string[] {
  const out: string[] = [];
  for (const p of inputs) {
    let isDir = false;
    try {
      isDir = statSync(p).isDirectory();
    } catch {
      out.push(p); // readLogFile names the missing file
      continue;
    }
    if (!isDir) {
      out.push(p);
      continue;
    }
    const names = readdirSync(p)
      .filter((n) => LOG_EXTENSIONS.some((e) => n.toLowerCase().endsWith(e)) && !NOT_LOGS.some((e) => n.toLowerCase().endsWith(e)))
      .sort();
    if (names.length === 0) throw new InputError(`folder ${p} holds no logs (.csv, .jsonl, .ndjson, .json)`);
    for (const n of names) out.push(path.join(p, n));
  }
  return out;
}

function summaryRow(name: string, s: MonteCarloSeries): string[] {
  return [name, String(s.dof), String(s.epochs), fmt(s.mean), s.inside95 !== undefined ? `${(100 * s.inside95).toFixed(1)}%` : '-', s.bounds95 ? `[${fmt(s.bounds95[0])}, ${fmt(s.bounds95[1])}]` : '-'];
}

/** The block without its per-epoch arrays unless asked (JSON stays small by default). */
function summarize(block: MonteCarloBlock, perEpoch: boolean): unknown {
  const strip = (s: MonteCarloSeries) => (perEpoch ? s : { dof: s.dof, epochs: s.epochs, mean: s.mean, inside95: s.inside95, bounds95: s.bounds95 });
  return {
    runs: block.runs,
    nees: Object.fromEntries(Object.entries(block.nees).map(([k, s]) => [k, strip(s as MonteCarloSeries)])),
    nis: Object.fromEntries(Object.entries(block.nis).map(([k, s]) => [k, strip(s)])),
    notes: block.notes,
  };
}

/** Run the verb; returns the exit status. */
export async function runMonteCarlo(values: Record<string, unknown>, positionals: string[], options: AnalyzeFileOptions): Promise<number> {
  const files = expandRuns(positionals);
  if (files.length < 2) throw new UsageError(`montecarlo needs two or more runs (logs or a folder of logs), got ${files.length}`);
  const logs = [];
  // only the logs: the N-run figures come from their columns, not from each run's own analysis
  for (const f of files) logs.push(await readLogFile(f, options));
  const block = analyzeMonteCarlo(logs, resolveSettings(options.settings));
  if (values.json) {
    process.stdout.write(JSON.stringify(finiteJson({ schema: 'residuum.montecarlo/1', files, ...(summarize(block, values['per-epoch'] === true) as object) }), null, 2) + '\n');
    return 0;
  }
  process.stdout.write(`Monte Carlo over ${block.runs} runs (N-run averages per epoch against chi2(N n)/N, 95% two-sided)\n`);
  const rows = [
    ...Object.entries(block.nees).map(([k, s]) => summaryRow(`NEES ${k}`, s as MonteCarloSeries)),
    ...Object.entries(block.nis).map(([k, s]) => summaryRow(`NIS ${k}`, s)),
  ];
  process.stdout.write(table(['quantity', 'dof', 'epochs', 'mean', 'inside95', 'bounds (all runs)'], rows));
  for (const n of block.notes) process.stdout.write(`note: ${n}\n`);
  return 0;
}
