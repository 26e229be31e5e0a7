/**
 * Number formatting for finding messages (plain text, no locale): 4 significant figures below 1000, one decimal
 * above, and exponent form for very small or very large magnitudes.
 */

/** Format a number for a message: 144.2, 10.8 (with digits = 3), 0.0421, 1.2e-33. */
export function formatNumber(x: number, digits = 4): string {
  if (!Number.isFinite(x)) return String(x);
  const a = Math.abs(x);
  if (a === 0) return '0';
  if (a < 1e-3 || a >= 1e7) return x.toExponential(Math.max(0, digits - 3)).replace('e+', 'e');
  if (a >= 1000) return x.toFixed(1);
  return String(Number(x.toPrecision(digits)));
}

/** A probability as a percentage for messages: 0.999 -> "99.9%", 0.01 -> "1%". */
export function formatPercent(p: number): string {
  return `${String(Number((p * 100).toPrecision(6)))}%`;
}
