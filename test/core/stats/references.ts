/**
 * Typed access to the general-purpose reference libraries the statistics tests compare against (jstat ships no
 * type declarations; only the functions used are typed here).
 */
import { createRequire } from 'node:module';

const require = createRequire(import.meta.url);

/** The jStat functions the tests use. */
export interface JStatSubset {
  chisquare: { inv(p: number, dof: number): number; cdf(x: number, dof: number): number };
  studentt: { cdf(x: number, dof: number): number };
  normal: { inv(p: number, mean: number, std: number): number };
  binomial: { cdf(k: number, n: number, p: number): number };
}

/** jStat 1.9 (devDependency). */
export const jStat = (require('jstat') as { jStat: JStatSubset }).jStat;

/** @stdlib/stats-kstest result fields used. */
export interface StdlibKsResult { statistic: number; pValue: number }

/** @stdlib/stats-kstest (devDependency) with a user CDF. */
export const stdlibKstest = require('@stdlib/stats-kstest') as (
  x: ArrayLike<number>, cdf: (x: number) => number,
) => StdlibKsResult;
