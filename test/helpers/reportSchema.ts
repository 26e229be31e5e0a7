/**
 * Validates reports against schema/report.schema.json (every report made in the tests goes through this),
 * and checks the contract's rule that every number is finite (JSON cannot say NaN, but a stray string could).
 */
import Ajv from 'ajv';
import schema from '../../schema/report.schema.json';

const ajv = new Ajv({ allErrors: true, strict: false });
const validate = ajv.compile(schema);

/** Returns a list of problems (empty when the report is valid). */
export function reportProblems(report: unknown): string[] {
  const problems: string[] = [];
  if (!validate(report)) {
    for (const e of validate.errors ?? []) problems.push(`${e.instancePath || '/'} ${e.message ?? ''}`);
  }
  const walk = (v: unknown, path: string): void => {
    if (typeof v === 'number' && !Number.isFinite(v)) problems.push(`${path} is not finite`);
    else if (typeof v === 'string' && /^(nan|-?inf(inity)?)$/i.test(v)) problems.push(`${path} is a non-finite number written as a string`);
    else if (Array.isArray(v)) v.forEach((x, i) => walk(x, `${path}/${i}`));
    else if (v && typeof v === 'object') for (const [k, x] of Object.entries(v)) walk(x, `${path}/${k}`);
  };
  walk(report, '');
  return problems;
}
