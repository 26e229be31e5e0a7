// Thin vscode adapters with a small hand-written `vscode` mock (vi.mock): findings to Problems-panel diagnostics,
// and the panel HTML's Content Security Policy. Real editor behaviour is covered by the in-host self test.
import { describe, expect, it, vi } from 'vitest';

vi.mock('vscode', () => {
  class Position {
    constructor(readonly line: number, readonly character: number) {}
  }
  class Range {
    readonly start: Position;
    readonly end: Position;
    constructor(l0: number, c0: number, l1: number, c1: number) {
      this.start = new Position(l0, c0);
      this.end = new Position(l1, c1);
    }
  }
  class Diagnostic {
    source?: string;
    code?: string;
    constructor(readonly range: Range, readonly message: string, readonly severity: number) {}
  }
  class Uri {
    constructor(readonly path: string) {}
    static file(p: string): Uri {
      return new Uri(p);
    }
    static joinPath(base: Uri, ...parts: string[]): Uri {
      return new Uri([base.path, ...parts].join('/'));
    }
    toString(): string {
      return `file://${this.path}`;
    }
  }
  return { Range, Position, Diagnostic, Uri, DiagnosticSeverity: { Error: 0, Warning: 1, Information: 2, Hint: 3 } };
});

const vscode = await import('vscode');
const { toProblems, lineRange, unknownColumnKey, unknownColumnName } = await import('../../extension/host/problems');
const { contentSecurityPolicy, panelHtml } = await import('../../extension/host/html');

describe('toProblems', () => {
  const log = vscode.Uri.file('/w/run.csv');
  const map = vscode.Uri.file('/w/run.csv.map.json');
  const resolve = (f: string | undefined): typeof log => (f === 'run.csv.map.json' ? map : log);
  it('caps findings worst first, with Warning/Information severity, source and code', () => {
    const problems = toProblems(
      [
        { kind: 'time-gap', line: 10, message: 'gap' },
        { kind: 'outlier', line: 2343, p: 1e-33, score: 144.2, message: 'NIS 144.2' },
        { kind: 'bad-value', line: 5, column: 7, severity: 'error', message: 'inf' },
        { kind: 'not-white', severity: 'info', message: 'lag 1' },
        { kind: 'parse-error', file: 'run.csv.map.json', line: 3, column: 2, p: 1e-40, message: 'bad JSON' },
      ],
      [
        { severity: 'info', kind: 'unknown-column', file: 'run.csv', line: 1, column: 12, message: 'Column "temp_c" is not a name of the log conventions' },
        { severity: 'warning', kind: 'unknown-column', file: 'run.csv.map.json', line: 0, message: 'The mapping names column "x", which run.csv does not have' },
      ],
      4,
      resolve,
    );
    const onLog = problems.files.get(log.toString())?.diagnostics ?? [];
    const onMap = problems.files.get(map.toString())?.diagnostics ?? [];
    expect(onMap.map((d) => [d.code, d.range.start.line, d.range.start.character, d.severity])).toEqual([
      ['parse-error', 2, 1, vscode.DiagnosticSeverity.Warning],
      ['unknown-column', 0, 0, vscode.DiagnosticSeverity.Information],
    ]);
    expect(onLog.map((d) => [d.code, d.source, d.range.start.line, d.severity])).toEqual([
      ['outlier', 'residuum', 2342, vscode.DiagnosticSeverity.Warning],
      ['bad-value', 'residuum', 4, vscode.DiagnosticSeverity.Warning],
      ['time-gap', 'residuum', 9, vscode.DiagnosticSeverity.Warning],
      ['unknown-column', 'residuum', 0, vscode.DiagnosticSeverity.Information],
    ]);
    const unknown = onLog[3];
    expect(problems.unknownColumns.get(unknownColumnKey(log, unknown))).toBe('temp_c');
    // Only the log's own columns get the quick fix.
    expect([...problems.unknownColumns.values()]).toEqual(['temp_c']);
  });
  it('places whole-file problems on the first line and reads quoted column names', () => {
    expect([lineRange(undefined).start.line, lineRange(0).start.line, lineRange(12, 3).start.character]).toEqual([0, 0, 2]);
    expect([unknownColumnName('Column "temp_c" is not a known name'), unknownColumnName('Top-level key "x" is ignored'), unknownColumnName('no quotes')]).toEqual(['temp_c', undefined, undefined]);
  });
});

describe('panel HTML', () => {
  it('has a strict CSP: nothing by default, scripts by nonce only, no eval', () => {
    const csp = contentSecurityPolicy('https://res.example', 'abc123');
    expect(csp).toBe(
      "default-src 'none'; img-src https://res.example data:; style-src https://res.example 'unsafe-inline'; font-src https://res.example; script-src 'nonce-abc123'",
    );
    expect(csp).not.toMatch(/unsafe-eval/);
  });
  it('puts the CSP first, loads one nonce script from dist and a fresh nonce per render', () => {
    const webview = { cspSource: 'https://res.example', asWebviewUri: (u: { path: string }) => `https://res.example${u.path}` };
    const ext = vscode.Uri.file('/ext');
    const a = panelHtml(webview as never, ext);
    const b = panelHtml(webview as never, ext);
    const nonceOf = (html: string): string | undefined => /script-src 'nonce-([^']+)'/.exec(html)?.[1];
    expect(a.indexOf('Content-Security-Policy')).toBeLessThan(a.indexOf('<meta charset'));
    expect(a).toContain(`<script nonce="${nonceOf(a)}" src="https://res.example/ext/dist/webview.js"></script>`);
    expect((a.match(/<script/g) ?? []).length).toBe(1);
    expect(nonceOf(a)).toMatch(/^[0-9a-f]{32}$/);
    expect(nonceOf(a)).not.toBe(nonceOf(b));
    expect(a).toContain('<main id="app" data-state="loading"');
  });
});
