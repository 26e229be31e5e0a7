/**
 * The report contract allows only finite JSON numbers: a value that cannot be computed is absent, and `null`
 * inside an array. This is the one place that enforces it, after the stages have run.
 */

/** A JSON value. */
export type Json = null | boolean | number | string | Json[] | { [key: string]: Json };

/**
 * Deep copy of a plain value in which non-finite numbers are dropped from objects and become `null` in arrays;
 * typed arrays become plain arrays, `undefined` fields are dropped.
 */
export function finiteJson(value: unknown): Json | undefined {
  if (value === null) return null;
  switch (typeof value) {
    case 'number':
      return Number.isFinite(value) ? value : undefined;
    case 'string':
    case 'boolean':
      return value;
    case 'object': {
      if (Array.isArray(value) || ArrayBuffer.isView(value)) {
        const items = Array.from(value as ArrayLike<unknown>);
        return items.map((v) => {
          const c = finiteJson(v);
          return c === undefined ? null : c;
        });
      }
      const out: { [key: string]: Json } = {};
      for (const [k, v] of Object.entries(value as Record<string, unknown>)) {
        const c = finiteJson(v);
        if (c !== undefined) out[k] = c;
      }
      return out;
    }
    default:
      return undefined;
  }
}
