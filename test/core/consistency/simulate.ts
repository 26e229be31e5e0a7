/**
 * Seeded simulation of a measurement channel for the consistency tests (our own construction, not data):
 * innovations nu(k) = L(k) w(k) with S(k) = L(k) L(k)^T changing from update to update and w(k) standard normal,
 * so a logged S equal to the true one is a consistent filter by construction. Options break it on purpose.
 */
import type { Channel } from '../../../extension/core/model';
import { makeChannel } from './makeLog';
import { makeRng, randomSpd } from './rng';

/** How to simulate. */
export interface SimOptions {
  seed: number;
  duration_s: number;
  rate_hz: number;
  dof?: number;
  name?: string;
  /** Logged S = factor * true S for t in [from_s, to_s) (factor 1/4: NIS four times too large there). */
  scaleS?: { from_s: number; to_s: number; factor: number };
  /** Added to the innovation (a measurement bias), per component. */
  bias?: number[];
  /** AR(1) coefficient of the whitened innovation (0: white). */
  ar?: number;
  /** Update ids cycled through. */
  ids?: string[];
}

/** Simulate one channel. */
export function simulateChannel(o: SimOptions): Channel {
  const rng = makeRng(o.seed);
  const dof = o.dof ?? 1;
  const n = Math.round(o.duration_s * o.rate_hz);
  const t = new Float64Array(n);
  const nu = new Float64Array(n * dof);
  const S = new Float64Array(n * dof * dof);
  const w = new Float64Array(dof);
  const a = o.ar ?? 0;
  const ids: (string | undefined)[] = [];
  for (let i = 0; i < n; i++) {
    t[i] = i / o.rate_hz;
    const s = dof === 1 ? Float64Array.of((0.5 + rng.uniform()) ** 2) : randomSpd(rng, dof);
    // Cholesky of the true S (small, by hand here to stay independent of the code under test).
    const l = new Float64Array(dof * dof);
    for (let j = 0; j < dof; j++) {
      let d = s[j * dof + j];
      for (let k = 0; k < j; k++) d -= l[j * dof + k] ** 2;
      l[j * dof + j] = Math.sqrt(d);
      for (let r = j + 1; r < dof; r++) {
        let x = s[r * dof + j];
        for (let k = 0; k < j; k++) x -= l[r * dof + k] * l[j * dof + k];
        l[r * dof + j] = x / l[j * dof + j];
      }
    }
    for (let c = 0; c < dof; c++) w[c] = a * w[c] + Math.sqrt(1 - a * a) * rng.normal();
    for (let r = 0; r < dof; r++) {
      let x = 0;
      for (let k = 0; k <= r; k++) x += l[r * dof + k] * w[k];
      nu[i * dof + r] = x + (o.bias?.[r] ?? 0);
    }
    const f = o.scaleS && t[i] >= o.scaleS.from_s && t[i] < o.scaleS.to_s ? o.scaleS.factor : 1;
    for (let k = 0; k < dof * dof; k++) S[i * dof * dof + k] = s[k] * f;
    ids.push(o.ids ? o.ids[i % o.ids.length] : undefined);
  }
  return makeChannel({ name: o.name ?? 'sim', dof, t_s: t, nu, S, ids });
}
