/**
 * `residuum compare LOG_A LOG_B [...]`: analyse each run and print the figures side by side (or JSON).
 */
import { analyzeFile, type AnalyzeFileOptions } from '../node/analyzeFile';
import { compareReports } from '../core/compare';
import { UsageError } from './args';
import { table, fmt } from './summary';

/** Run the verb; returns the exit status. */
export async function runCompare(values: Record<string, unknown>, positionals: string[], options: AnalyzeFileOptions): Promise<number> {
  if (positionals.length < 2) throw new UsageError(`compare takes two or more logs, got ${positionals.length}`);
  const reports = [];
  for (const p of positionals) reports.push((await analyzeFile(p, options)).report);
  const figures = compareReports(reports);
  if (values.json) {
    process.stdout.write(JSON.stringify({ runs: reports.map((r) => ({ path: r.source.path, sha256: r.source.sha256 })), figures, reports }, null, 2) + '\n');
    return 0;
  }
  const labels = positionals.map((_, i) => String.fromCharCode(65 + (i % 26)));
  positionals.forEach((p, i) => process.stdout.write(`run ${labels[i]}: ${p}\n`));
  const rows = figures.map((f) => [
    f.what + (f.unit ? ` [${f.unit}]` : ''),
    ...f.values.map((v, i) => (v === null ? '-' : fmt(v)) + (i > 0 && f.deltas[i] !== null ? ` (${f.deltas[i]! >= 0 ? '+' : ''}${fmt(f.deltas[i])})` : '')),
    f.best !== undefined ? labels[f.best] : '-',
  ]);
  process.stdout.write(table(['figure', ...labels, 'better'], rows));
  return 0;
}
