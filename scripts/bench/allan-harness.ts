/**
 * Bench harness: Allan deviation of N gyro-like samples (white rate noise plus a rate random walk, 100 Hz), run as
 * its own process by scripts/bench.mjs so that its wall time and peak memory are the core function's alone.
 * usage: node allan-harness.js [N]   prints one JSON line { n, generate_s, allan_s, points, adev1s }
 */
import { allanDeviation } from '../../extension/core/imu/allan';
import { makeSeededRandom } from '../../extension/core/stats/seededRandom';

const n = Number(process.argv[2] ?? 1e7);
const tau0_s = 0.01;
const arw = 2e-4 * Math.sqrt(1 / tau0_s); // white rate noise per sample, rad/s
const rrw = 2e-6 * Math.sqrt(tau0_s); // rate random walk per sample, rad/s
const rng = makeSeededRandom(3);
const t0 = performance.now();
const y = new Float64Array(n);
let walk = 0;
for (let i = 0; i < n; i++) {
  walk += rrw * rng.normal();
  y[i] = walk + arw * rng.normal();
}
const t1 = performance.now();
const curve = allanDeviation(y, tau0_s);
const t2 = performance.now();
let adev1s = NaN;
for (let k = 0; k < curve.tau_s.length; k++) if (Math.abs(curve.tau_s[k] - 1) < 1e-9) adev1s = curve.adev[k];
process.stdout.write(JSON.stringify({ n, generate_s: (t1 - t0) / 1000, allan_s: (t2 - t1) / 1000, points: curve.tau_s.length, adev1s }) + '\n');
