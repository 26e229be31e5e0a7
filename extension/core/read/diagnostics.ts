/**
 * Reader diagnostics with a cap per (file, kind, column): the first {@link DIAGNOSTIC_CAP} are kept and the rest
 * counted, then summarised in one line, so a bad 1 GB file does not produce millions of objects. A key starting with
 * `first:` keeps only its first diagnostic and summarises the rest; `once:` keeps the first and drops the rest.
 */
import type { Diagnostic, FindingKind, Severity } from '../model';

/** Diagnostics kept per file, kind and column before the rest are only counted. */
export const DIAGNOSTIC_CAP = 50;

interface Overflow {
  first: Diagnostic;
  dropped: number;
}

/** Collects diagnostics for one run, capping repeats. */
export class DiagnosticSink {
  readonly list: Diagnostic[] = [];
  private readonly counts = new Map<string, number>();
  private readonly overflow = new Map<string, Overflow>();

  /** Add a diagnostic; `key` groups repeats (default: file, kind and column or channel). */
  add(d: Diagnostic, key?: string): void {
    const k = key ?? `${d.file}\u0000${d.kind}\u0000${d.channel ?? ''}\u0000${d.column ?? ''}`;
    const n = (this.counts.get(k) ?? 0) + 1;
    this.counts.set(k, n);
    // Keys starting with "once:" are kept the first time only, without a summary; keys starting with "first:" are
    // kept the first time and the rest counted in one summary line (a value reported once per column).
    if (n > 1 && k.startsWith('once:')) return;
    if (n <= (k.startsWith('first:') ? 1 : DIAGNOSTIC_CAP)) { this.list.push(d); return; }
    const o = this.overflow.get(k);
    if (o) o.dropped++;
    else this.overflow.set(k, { first: d, dropped: 1 });
  }

  /** Shorthand for {@link add}. */
  report(severity: Severity, kind: FindingKind, file: string, line: number, message: string,
    extra?: { column?: number; t?: number; channel?: string; key?: string }): void {
    const d: Diagnostic = { severity, kind, file, line, message };
    if (extra?.column !== undefined) d.column = extra.column;
    if (extra?.t !== undefined && Number.isFinite(extra.t)) d.t = extra.t;
    if (extra?.channel !== undefined) d.channel = extra.channel;
    this.add(d, extra?.key);
  }

  /** Whether an error-severity diagnostic has been added. */
  hasErrors(): boolean {
    return this.list.some((d) => d.severity === 'error');
  }

  /** Every diagnostic so far plus one summary line per capped group (nothing is changed). */
  snapshot(): Diagnostic[] {
    const out = this.list.slice();
    for (const o of this.overflow.values()) {
      const d: Diagnostic = {
        severity: o.first.severity,
        kind: o.first.kind,
        file: o.first.file,
        line: 0,
        message: `${o.dropped} more like this not listed (first of them at line ${o.first.line}): ${o.first.message}`,
      };
      if (o.first.channel !== undefined) d.channel = o.first.channel;
      out.push(d);
    }
    return out;
  }
}

/** Most characters of user text (a column name, a cell, a key) quoted in one diagnostic message. */
export const QUOTE_MAX_CHARS = 60;

/**
 * User text as quoted in a diagnostic message: control characters shown as spaces and anything past
 * `max` characters cut off with an ellipsis, so a message stays one short plain sentence whatever the input holds.
 */
export function clip(text: string, max: number = QUOTE_MAX_CHARS): string {
  const plain = text.replace(/[\u0000-\u001f\u007f-\u009f\u2028\u2029]/g, ' ');
  if (plain.length <= max) return plain;
  // Do not cut a surrogate pair in half.
  let end = max - 1;
  const code = plain.charCodeAt(end - 1);
  if (code >= 0xd800 && code <= 0xdbff) end--;
  return `${plain.slice(0, end)}\u2026`;
}
