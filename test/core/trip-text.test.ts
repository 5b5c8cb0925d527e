/**
 * The one wording of a watchdog trip (src/core/trip-text.ts), pinned text for text: every check
 * with its own body, the units, the number format at its edges, and when the worst value while
 * held is added. These strings are our own output format (terminal, summary.json, report,
 * diagnostics), so the expected texts are written out here rather than derived.
 */
import { describe, expect, it } from 'vitest';
import { CHECK_UNITS, checkName, tripNumber, tripText } from '../../src/core/trip-text.js';
import { CHECKS } from '../../src/core/watchdog.js';

describe('tripNumber: four significant digits, plain between 1e-3 and 1e5', () => {
  it('writes zero, non-finite values and the plain range', () => {
    expect(tripNumber(0)).toBe('0');
    expect(tripNumber(-0)).toBe('0');
    expect(tripNumber(Number.NaN)).toBe('NaN');
    expect(tripNumber(Number.POSITIVE_INFINITY)).toBe('Infinity');
    expect(tripNumber(Number.NEGATIVE_INFINITY)).toBe('-Infinity');
    expect(tripNumber(62.4)).toBe('62.4');
    expect(tripNumber(60)).toBe('60');
    expect(tripNumber(1.23456)).toBe('1.235');
    expect(tripNumber(-1.23456)).toBe('-1.235');
    expect(tripNumber(12345.6)).toBe('12350');
  });

  it('switches to exponent notation exactly at the range edges', () => {
    expect(tripNumber(1e-3)).toBe('0.001'); // lower edge: plain
    expect(tripNumber(-1e-3)).toBe('-0.001');
    expect(tripNumber(9.99e-4)).toBe('9.990e-4'); // just below: exponent
    expect(tripNumber(99_990)).toBe('99990'); // just below the upper edge: plain
    expect(tripNumber(1e5)).toBe('1.000e+5'); // upper edge: exponent
    expect(tripNumber(-1e5)).toBe('-1.000e+5');
    expect(tripNumber(123_456_789)).toBe('1.235e+8');
  });
});

describe('tripText', () => {
  it('gives every check a unit entry and a name by index', () => {
    for (let k = 0; k < CHECKS.length; k++) {
      expect(checkName(k)).toBe(CHECKS[k]);
      expect(typeof CHECK_UNITS[CHECKS[k]!]).toBe('string');
    }
    expect(checkName(CHECKS.length)).toBe('unknown');
    expect(checkName(-1)).toBe('unknown');
  });

  it('writes the limit checks as value > limit with their units', () => {
    const cases: [string, string][] = [
      ['force_raw', 'N'],
      ['torque_raw', 'N·m'],
      ['force_correction', 'N'],
      ['torque_correction', 'N·m'],
      ['joint_velocity', 'rad/s'],
      ['twist_linear', 'm/s'],
      ['twist_angular', 'rad/s'],
      ['force_untared', 'N'],
      ['torque_untared', 'N·m'],
    ];
    for (const [check, unit] of cases) {
      expect(CHECK_UNITS[check as (typeof CHECKS)[number]]).toBe(unit);
      expect(tripText({ check, input: 'x', value: 2.5, limit: 2 })).toBe(`${check} on x: 2.5 ${unit} > 2 ${unit}`);
    }
  });

  it('adds the worst value while held only when it differs from the first and both are finite', () => {
    expect(tripText({ check: 'force_raw', input: 'wrench', value: 70, limit: 60, first: 62.4 })).toBe('force_raw on wrench: 62.4 N > 60 N; worst while held 70 N');
    expect(tripText({ check: 'force_raw', input: 'wrench', value: 62.4, limit: 60, first: 62.4 })).toBe('force_raw on wrench: 62.4 N > 60 N');
    expect(tripText({ check: 'force_raw', input: 'wrench', value: 62.4, limit: 60 })).toBe('force_raw on wrench: 62.4 N > 60 N');
    expect(tripText({ check: 'force_raw', input: 'wrench', value: Number.POSITIVE_INFINITY, limit: 60, first: 62.4 })).toBe('force_raw on wrench: 62.4 N > 60 N');
    expect(tripText({ check: 'force_raw', input: 'wrench', value: 70, limit: 60, first: Number.NaN })).toBe('force_raw on wrench: NaN N > 60 N');
  });

  it('writes the flag checks in words, without numbers', () => {
    expect(CHECK_UNITS.non_finite).toBe('');
    expect(CHECK_UNITS.quaternion_norm).toBe('');
    expect(CHECK_UNITS.joint_velocity_absent).toBe('');
    expect(CHECK_UNITS.partner_hold).toBe('');
    expect(tripText({ check: 'non_finite', input: 'wrench', value: Number.NaN, limit: 0 })).toBe('non_finite on wrench: not a finite number');
    expect(tripText({ check: 'joint_velocity_absent', input: 'joint_states', value: 0, limit: 0 })).toBe('joint_velocity_absent on joint_states: JointState without velocities, which the parameters require');
    expect(tripText({ check: 'partner_hold', input: 'hold_link', value: 2, limit: 0, first: 1 })).toBe('partner_hold on hold_link: the hold link says the partner is held; worst while held 2');
    expect(tripText({ check: 'partner_hold', input: 'hold_link', value: 1, limit: 0, first: 1 })).toBe('partner_hold on hold_link: the hold link says the partner is held');
  });

  it('writes time going back as a positive step, never with a worst value', () => {
    expect(CHECK_UNITS.time_backwards).toBe('s');
    expect(tripText({ check: 'time_backwards', input: 'wrench', value: -0.5, limit: 0, first: -0.25 })).toBe('time_backwards on wrench: time went back 0.25 s');
  });

  it('writes the future stamp against its tolerance', () => {
    expect(CHECK_UNITS.time_future).toBe('s');
    expect(tripText({ check: 'time_future', input: 'tool_pose', value: 100, limit: 0.5 })).toBe('time_future on tool_pose: stamped 100 s ahead > tolerance 0.5 s');
  });

  it('writes a stale input by its age, or as never received', () => {
    expect(tripText({ check: 'stale_input', input: 'wrench', value: 0.2, limit: 0.05, first: 0.06 })).toBe('stale_input on wrench: age 0.06 s > 0.05 s; worst while held 0.2 s');
    expect(tripText({ check: 'stale_input', input: 'tool_pose', value: Number.POSITIVE_INFINITY, limit: 0.05 })).toBe('stale_input on tool_pose: never received (limit 0.05 s)');
  });

  it('writes the ratio and score checks without units', () => {
    expect(CHECK_UNITS.partner_stop).toBe('ratio');
    expect(CHECK_UNITS.impact).toBe('score');
    expect(tripText({ check: 'partner_stop', input: 'wrench', value: 0.1, limit: 0.25, first: 0.2 })).toBe('partner_stop on wrench: partner speed ratio 0.2 ≤ 0.25; worst while held 0.1');
    expect(tripText({ check: 'impact', input: 'wrench.force', value: 2, limit: 1, first: 1.5 })).toBe('impact on wrench.force: impact score 1.5 ≥ 1 (score: impact band over its force limit); worst while held 2');
    expect(tripText({ check: 'impact', input: 'wrench.torque', value: 1.5, limit: 1 })).toBe('impact on wrench.torque: impact score 1.5 ≥ 1 (score: impact band over its torque limit)');
    expect(tripText({ check: 'quaternion_norm', input: 'tool_pose', value: 0.5, limit: 0.01 })).toBe('quaternion_norm on tool_pose: |‖q‖ − 1| = 0.5 > 0.01');
  });

  it('writes an unknown check as value > limit without a unit', () => {
    expect(tripText({ check: 'something_else', input: 'x', value: 3, limit: 2 })).toBe('something_else on x: 3 > 2');
  });
});
