/**
 * Findings to the Problems panel: a thin adapter from report findings and reader diagnostics to
 * `vscode.Diagnostic`s, capped (worst first), Warning or Information severity, source `residuum`, code = the kind.
 */
import * as vscode from 'vscode';
import type { Diagnostic as ReaderDiagnostic } from '../core/model';
import type { Finding } from '../core/report';
import { rankFindings } from './ranking';

/** The `source` of every diagnostic this extension sets. */
export const DIAGNOSTIC_SOURCE = 'residuum';

/** The zero-based range of a 1-based `line` (and optional 1-based `column`), or the first line when unknown. */
export function lineRange(line: number | undefined, column?: number): vscode.Range {
  const l = line !== undefined && Number.isFinite(line) && line >= 1 ? Math.floor(line) - 1 : 0;
  if (column !== undefined && Number.isFinite(column) && column >= 1) {
    const c = Math.floor(column) - 1;
    return new vscode.Range(l, c, l, c + 1);
  }
  return new vscode.Range(l, 0, l, Number.MAX_SAFE_INTEGER);
}

function severityOf(level: string | undefined): vscode.DiagnosticSeverity {
  return level === 'info' ? vscode.DiagnosticSeverity.Information : vscode.DiagnosticSeverity.Warning;
}

/** Diagnostics per file, plus the column named by each `unknown-column` diagnostic (see {@link unknownColumnKey}). */
export interface Problems {
  files: Map<string, { uri: vscode.Uri; diagnostics: vscode.Diagnostic[] }>;
  unknownColumns: Map<string, string>;
}

/** Key of an `unknown-column` diagnostic in `Problems.unknownColumns` (diagnostics come back to code actions as copies). */
export function unknownColumnKey(uri: vscode.Uri, d: { range: vscode.Range; message: string }): string {
  return `${uri.toString()}#${d.range.start.line}#${d.message}`;
}

/**
 * Diagnostics per file URI (string form) for the findings of one run, at most `cap` in all, worst first.
 * Reader diagnostics of kind `unknown-column` are added beyond the cap (they carry the quick fix that maps the
 * column) with `code` `unknown-column`. `resolve` maps a file name (undefined: the main log) to its URI.
 */
export function toProblems(
  findings: readonly Finding[],
  readerDiagnostics: readonly ReaderDiagnostic[],
  cap: number,
  resolve: (file: string | undefined) => vscode.Uri,
): Problems {
  const out = new Map<string, { uri: vscode.Uri; diagnostics: vscode.Diagnostic[] }>();
  const unknownColumns = new Map<string, string>();
  const add = (uri: vscode.Uri, d: vscode.Diagnostic): void => {
    const key = uri.toString();
    const entry = out.get(key) ?? { uri, diagnostics: [] };
    entry.diagnostics.push(d);
    out.set(key, entry);
  };
  for (const f of rankFindings(findings.filter((f) => f.kind !== 'unknown-column'), cap)) {
    const d = new vscode.Diagnostic(lineRange(f.line, f.column), f.message, severityOf(f.severity));
    d.source = DIAGNOSTIC_SOURCE;
    d.code = f.kind;
    add(resolve(f.file), d);
  }
  for (const r of readerDiagnostics) {
    if (r.kind !== 'unknown-column') continue;
    const d = new vscode.Diagnostic(lineRange(r.line || 1, r.column), r.message, vscode.DiagnosticSeverity.Information);
    d.source = DIAGNOSTIC_SOURCE;
    d.code = 'unknown-column';
    const uri = resolve(r.file);
    add(uri, d);
    // The quick fix maps a column of the log itself; problems reported on the mapping file, or about JSON keys
    // and record kinds rather than columns, get no fix.
    const name = uri.toString() === resolve(undefined).toString() ? r.channel ?? unknownColumnName(r.message) : undefined;
    if (name !== undefined) unknownColumns.set(unknownColumnKey(uri, d), name);
  }
  return { files: out, unknownColumns };
}

/** The column an `unknown-column` message is about: it starts `Column "<name>"` (the readers' wording). */
export function unknownColumnName(message: string): string | undefined {
  const m = /^Column "([^"]+)"/.exec(message);
  return m ? m[1] : undefined;
}
