/**
 * One wording for a watchdog trip, used by every output that shows one (terminal, summary.json,
 * report, diagnostics): the check, the input, the value when it tripped, the comparison with
 * the limit, the unit, and the worst value while the hold lasted when that differs.
 */
import { CHECKS, type CheckName } from './watchdog.js';

/** Unit of a check's value and limit ('' for a flag, 'score' for the impact score, a ratio). */
export const CHECK_UNITS: Readonly<Record<CheckName, string>> = {
  force_raw: 'N',
  torque_raw: 'N·m',
  force_correction: 'N',
  torque_correction: 'N·m',
  joint_velocity: 'rad/s',
  twist_linear: 'm/s',
  twist_angular: 'rad/s',
  stale_input: 's',
  non_finite: '',
  time_backwards: 's',
  impact: 'score',
  force_untared: 'N',
  torque_untared: 'N·m',
  time_future: 's',
  quaternion_norm: '',
  joint_velocity_absent: '',
  partner_stop: 'ratio',
  partner_hold: '',
};

/** A trip as the outputs carry it (check by name). */
export interface TripLike {
  readonly check: string;
  readonly input: string;
  /** Worst value while held. */
  readonly value: number;
  readonly limit: number;
  /** Value when it tripped; defaults to `value`. */
  readonly first?: number;
}

/** Numbers in trip texts: four significant digits, plain notation where sensible. */
export function tripNumber(v: number): string {
  if (!Number.isFinite(v)) return String(v);
  if (v === 0) return '0';
  const a = Math.abs(v);
  if (a >= 1e-3 && a < 1e5) return String(Number(v.toPrecision(4)));
  return v.toExponential(3);
}

function withUnit(v: number, unit: string): string {
  const n = tripNumber(v);
  if (unit === '' || unit === 'ratio') return n;
  if (unit === 'score') return n;
  return `${n} ${unit}`;
}

/** What a trip measured against its limit, e.g. `force_correction on wrench: 62.4 N > 60 N`. */
export function tripText(trip: TripLike): string {
  const check = trip.check as CheckName;
  const unit = CHECK_UNITS[check] ?? '';
  const first = trip.first ?? trip.value;
  const head = `${trip.check} on ${trip.input}`;
  let body: string;
  switch (check) {
    case 'non_finite':
      body = 'not a finite number';
      break;
    case 'joint_velocity_absent':
      body = 'JointState without velocities, which the parameters require';
      break;
    case 'partner_hold':
      body = 'the hold link says the partner is held';
      break;
    case 'time_backwards':
      body = `time went back ${withUnit(-first, unit)}`;
      break;
    case 'time_future':
      body = `stamped ${withUnit(first, unit)} ahead > tolerance ${withUnit(trip.limit, unit)}`;
      break;
    case 'stale_input':
      body = Number.isFinite(first) ? `age ${withUnit(first, unit)} > ${withUnit(trip.limit, unit)}` : `never received (limit ${withUnit(trip.limit, unit)})`;
      break;
    case 'partner_stop':
      body = `partner speed ratio ${tripNumber(first)} ≤ ${tripNumber(trip.limit)}`;
      break;
    case 'impact':
      body = `impact score ${tripNumber(first)} ≥ ${tripNumber(trip.limit)} (score: impact band over its ${trip.input.endsWith('torque') ? 'torque' : 'force'} limit)`;
      break;
    case 'quaternion_norm':
      body = `|‖q‖ − 1| = ${tripNumber(first)} > ${tripNumber(trip.limit)}`;
      break;
    default:
      body = `${withUnit(first, unit)} > ${withUnit(trip.limit, unit)}`;
  }
  const worst = Number.isFinite(trip.value) && Number.isFinite(first) && trip.value !== first && check !== 'time_backwards' ? `; worst while held ${withUnit(trip.value, unit)}` : '';
  return `${head}: ${body}${worst}`;
}

/** The check name of a watchdog check index. */
export function checkName(k: number): string {
  return CHECKS[k] ?? 'unknown';
}
