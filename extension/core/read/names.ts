/**
 * Column names of the log conventions (log-conventions.md, "Names") resolved to roles.
 *
 * Names are compared after {@link normalizeName}: trimmed, lower case, and `_`, `.`, `-` and spaces all read as `_`.
 * Roles use the model's canonical names (`p_x`, `q_w`, `sigma_att_x`, `gt_p_x`, ...).
 */
import { timeSuffixFactor } from './units';

/** What a column carries. `scale` converts the cell to SI; `variance` means take the square root. */
export type Role =
  | { kind: 'time'; scale: number }
  | { kind: 'state'; name: string; scale: number; variance?: boolean }
  | { kind: 'nu'; channel: string; index: number }
  | { kind: 's'; channel: string; i: number; j: number }
  | { kind: 'nis'; channel: string }
  | { kind: 'id'; channel: string }
  | { kind: 'rejected'; channel: string }
  | { kind: 'imu'; name: string; scale: number }
  | { kind: 'tdoa_i' }
  | { kind: 'tdoa_j' }
  | { kind: 'tdoa' }
  | { kind: 'range_id' }
  | { kind: 'range'; anchor?: string }
  | { kind: 'anchor_pos'; axis: number }
  | { kind: 'reset' }
  | { kind: 'ignore' };

/** Normalise a column name: trim, lower-case, and read `.`, `-` and white space as `_`. */
export function normalizeName(name: string): string {
  return name.trim().toLowerCase().replace(/[.\-\s]+/g, '_').replace(/_+/g, '_');
}

const DEG = Math.PI / 180;

/** Canonical base state names (without prefixes) keyed by every accepted alias. */
const BASE = new Map<string, string>();
function alias(canonical: string, ...names: string[]): void {
  BASE.set(canonical, canonical);
  for (const n of names) BASE.set(n, canonical);
}
for (const a of ['x', 'y', 'z']) {
  alias(`p_${a}`, `p${a}`, `pos_${a}`, `position_${a}`, a);
  alias(`v_${a}`, `v${a}`, `vel_${a}`, `velocity_${a}`);
  alias(`bg_${a}`, `bias_gyro_${a}`, `gyro_bias_${a}`, `b_g_${a}`, `bg${a}`);
  alias(`ba_${a}`, `bias_acc_${a}`, `acc_bias_${a}`, `b_a_${a}`, `ba${a}`);
  alias(`att_${a}`);
}
for (const a of ['w', 'x', 'y', 'z']) alias(`q_${a}`, `q${a}`, `quat_${a}`);
for (let i = 1; i <= 3; i++) for (let j = 1; j <= 3; j++) alias(`r_${i}${j}`, `r${i}${j}`, `r_${i}_${j}`);
for (const a of ['roll', 'pitch', 'yaw']) alias(a, `${a}_rad`);

/** Resolve a state base name (e.g. `pos_x`, `yaw_deg`) to its canonical name and factor to SI. */
function resolveBase(n: string): { name: string; scale: number } | undefined {
  const direct = BASE.get(n);
  if (direct) return { name: direct, scale: 1 };
  const m = /^(roll|pitch|yaw)_deg$/.exec(n);
  if (m) return { name: m[1], scale: DEG };
  return undefined;
}

const IMU = /^(gyro|acc|mag)_([xyz])$/;

/**
 * The role of a normalised column name under the log conventions, or undefined when the name is not one of them.
 * `att_*` is only a state when it carries a sigma (it names an error-state component).
 */
export function resolveName(n: string): Role | undefined {
  let m = /^(t|time|timestamp|stamp)(?:_(s|ms|us|ns))?$/.exec(n);
  if (m) return { kind: 'time', scale: timeSuffixFactor(m[2] ?? 's') };
  const base = resolveBase(n);
  if (base && !base.name.startsWith('att_')) return { kind: 'state', name: base.name, scale: base.scale };
  m = /^(sigma|std|var)_(.+)$/.exec(n);
  if (m) {
    const b = resolveBase(m[2]);
    if (b) {
      return m[1] === 'var'
        ? { kind: 'state', name: `sigma_${b.name}`, scale: b.scale * b.scale, variance: true }
        : { kind: 'state', name: `sigma_${b.name}`, scale: b.scale };
    }
  }
  m = /^(gt|true)_(.+)$/.exec(n);
  if (m) {
    const b = resolveBase(m[2]);
    if (b && !b.name.startsWith('att_')) return { kind: 'state', name: `gt_${b.name}`, scale: b.scale };
  }
  m = IMU.exec(n);
  if (m) return { kind: 'imu', name: `${m[1]}_${m[2]}`, scale: 1 };
  if (n === 'tdoa_i') return { kind: 'tdoa_i' };
  if (n === 'tdoa_j') return { kind: 'tdoa_j' };
  if (n === 'tdoa') return { kind: 'tdoa' };
  if (n === 'range_id') return { kind: 'range_id' };
  if (n === 'range') return { kind: 'range' };
  m = /^range_(.+)$/.exec(n);
  if (m) return { kind: 'range', anchor: m[1] };
  if (n === 'reset') return { kind: 'reset' };
  m = /^(?:nu|innov)_(.+?)(?:_(\d+))?$/.exec(n);
  if (m) return { kind: 'nu', channel: m[1], index: m[2] === undefined ? 0 : Number(m[2]) };
  m = /^s_(.+?)_(\d+)_(\d+)$/.exec(n);
  if (m) return { kind: 's', channel: m[1], i: Number(m[2]), j: Number(m[3]) };
  m = /^s_(.+)$/.exec(n);
  if (m) return { kind: 's', channel: m[1], i: -1, j: -1 };
  m = /^nis_(.+)$/.exec(n);
  if (m) return { kind: 'nis', channel: m[1] };
  m = /^id_(.+)$/.exec(n);
  if (m) return { kind: 'id', channel: m[1] };
  m = /^rejected_(.+)$/.exec(n);
  if (m) return { kind: 'rejected', channel: m[1] };
  return undefined;
}

/**
 * The role of a mapping file's `role` string: any convention name, plus `ignore`, `range` and
 * `anchor_x|y|z` (anchor position columns, with `anchorFrom`).
 */
export function resolveMappedRole(role: string): Role | undefined {
  const n = normalizeName(role);
  if (n === 'ignore') return { kind: 'ignore' };
  const a = /^anchor_([xyz])$/.exec(n);
  if (a) return { kind: 'anchor_pos', axis: 'xyz'.indexOf(a[1]) };
  if (n === 't' || n === 'time') return { kind: 'time', scale: 1 };
  const base = resolveBase(n);
  if (base && base.name.startsWith('att_')) return undefined;
  return resolveName(n);
}
