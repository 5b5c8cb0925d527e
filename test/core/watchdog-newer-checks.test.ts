/**
 * The watchdog checks added after the first threshold tests, bracketed at their SHIPPED values
 * (the schema defaults, the values config/demo_cell.yaml ships): time_future, quaternion_norm,
 * joint_velocity_absent, partner_stop, partner_hold, force_untared and torque_untared; the
 * bias-change reference of the force checks; and which reasons count as the arm's own (what the
 * hold link publishes). Each trip is checked with its record (check, input, value, limit, time).
 * Limits are "largest allowed" (SAFETY.md): at the value passes, just above trips. The
 * quaternion of a rotation has norm 1 (Hamilton's unit quaternions; textbook, from memory).
 */
import { describe, expect, it } from 'vitest';
import { CHECKS, INPUT, INPUTS, Watchdog, watchdogInputs, type WatchdogInputs } from '../../src/core/watchdog.js';
import { buildArmConfig, type WatchdogParams } from '../../src/params/config.js';

const shipped = () => buildArmConfig(undefined, 'left').config;
const REL = 1e-9;

/** A watchdog with every input required and fresh at each sample; returns its trips by name. */
function setup(edit: (p: WatchdogParams) => WatchdogParams = (p) => p) {
  const cfg = shipped();
  const p = edit(cfg.watchdog);
  const wd = new Watchdog(p, cfg.wrench_filter.tare);
  const x = watchdogInputs({ required: new Uint8Array(INPUTS.length).fill(1), lastSeen: new Float64Array(INPUTS.length).fill(0) });
  const sample = (t: number, change?: (x: WatchdogInputs) => void): boolean => {
    x.t_s = t;
    x.lastSeen.fill(t);
    x.compensated.fill(0);
    x.correction.fill(0);
    x.bias.fill(0);
    x.biasChange.fill(0);
    x.quaternionNormError = 0;
    x.jointVelocityAbsent = false;
    x.partnerStopped = false;
    x.partnerSpeedRatio = Number.NaN;
    x.partnerHeld = false;
    x.tared = true;
    change?.(x);
    return wd.checkInputs(x);
  };
  const trips = () => wd.trips.map((r) => ({ check: CHECKS[r.check], input: r.input, value: r.value, limit: r.limit, t_s: r.t_s }));
  return { wd, p, cfg, sample, trips };
}

describe('the shipped values of the newer checks', () => {
  it('are pinned (schema defaults; a changed default must be a deliberate edit here too)', () => {
    const c = shipped();
    expect(c.watchdog.future_tolerance_s).toBe(0.05);
    expect(c.watchdog.quaternion_norm_tolerance).toBe(0.01);
    expect(c.watchdog.partner_stop.speed_ratio).toBe(0.15);
    expect(c.watchdog.force_limit_n + c.wrench_filter.tare.max_bias_n).toBe(190);
    expect(c.watchdog.torque_limit_nm + c.wrench_filter.tare.max_bias_nm).toBe(35);
  });
});

describe('time_future', () => {
  it('an arrival future_tolerance_s ahead of the sample passes; just beyond trips with the lead as value', () => {
    const a = setup();
    a.sample(1);
    expect(a.sample(2, (x) => (x.lastSeen[INPUT.tool_pose] = 2 + 0.05))).toBe(false);
    const b = setup();
    b.sample(1);
    expect(b.sample(2, (x) => (x.lastSeen[INPUT.tool_pose] = 2 + 0.05 * (1 + 1e-6)))).toBe(true);
    const [r] = b.trips();
    expect(r).toMatchObject({ check: 'time_future', input: 'tool_pose', limit: 0.05, t_s: 2 });
    expect(r!.value).toBeCloseTo(0.05 * (1 + 1e-6), 12);
  });

  it('an old arrival is stale, not future: the two never trip together', () => {
    const a = setup();
    a.sample(1);
    a.sample(2, (x) => (x.lastSeen[INPUT.zone_view] = 2 - 0.6));
    expect(a.trips().map((r) => r.check)).toEqual(['stale_input']);
  });
});

describe('quaternion_norm', () => {
  it('|norm − 1| at the tolerance passes; just above trips; NaN trips', () => {
    expect(setup().sample(1, (x) => (x.quaternionNormError = 0.01))).toBe(false);
    const a = setup();
    expect(a.sample(1, (x) => (x.quaternionNormError = 0.01 * (1 + REL)))).toBe(true);
    expect(a.trips()).toEqual([{ check: 'quaternion_norm', input: 'tool_pose', value: 0.01 * (1 + REL), limit: 0.01, t_s: 1 }]);
    const n = setup();
    expect(n.sample(1, (x) => (x.quaternionNormError = Number.NaN))).toBe(true);
    expect(n.trips()[0]!.check).toBe('quaternion_norm');
  });
});

describe('joint_velocity_absent, partner_stop, partner_hold', () => {
  it('each trips on its flag alone, with its own record', () => {
    const a = setup();
    a.sample(1, (x) => (x.jointVelocityAbsent = true));
    expect(a.trips()).toEqual([{ check: 'joint_velocity_absent', input: 'joint_states', value: 0, limit: 0, t_s: 1 }]);
    const b = setup();
    b.sample(1, (x) => {
      x.partnerStopped = true;
      x.partnerSpeedRatio = 0.04;
    });
    expect(b.trips()).toEqual([{ check: 'partner_stop', input: 'wrench', value: 0.04, limit: 0.15, t_s: 1 }]);
    const c = setup();
    c.sample(1, (x) => (x.partnerHeld = true));
    expect(c.trips()).toEqual([{ check: 'partner_hold', input: 'hold_link', value: 1, limit: 0, t_s: 1 }]);
    // A ratio alone (without the detector's verdict) is no trip.
    const d = setup();
    expect(d.sample(1, (x) => (x.partnerSpeedRatio = 0))).toBe(false);
  });

  it('held only for the partner (stop or hold link) is not "held for own reasons"; any other reason is', () => {
    const a = setup();
    expect(a.wd.heldForOwnReasons).toBe(false);
    a.sample(1, (x) => {
      x.partnerStopped = true;
      x.partnerHeld = true;
    });
    expect(a.wd.held).toBe(true);
    expect(a.wd.heldForOwnReasons).toBe(false);
    a.sample(1.001, (x) => (x.quaternionNormError = 1));
    expect(a.wd.heldForOwnReasons).toBe(true);
    const b = setup();
    b.sample(1, (x) => (x.partnerHeld = true));
    expect(b.wd.heldForOwnReasons).toBe(false);
  });

  it('a released partner_stop hold says to reset the partner first; other holds say "released"', () => {
    const a = setup((p) => ({ ...p, release_clear_s: 0.05 }));
    a.sample(1, (x) => {
      x.partnerStopped = true;
      x.partnerSpeedRatio = 0;
    });
    for (let k = 1; k <= 60; k++) a.sample(1 + k / 1000);
    expect(a.wd.requestReset()).toEqual({
      released: true,
      reason: 'released; partner_stop was a reason: reset the partner first, or this arm drags it for up to watchdog.partner_stop.window_s before it holds again',
    });
    // A later hold for another reason after that release: a plain "released".
    a.sample(1.1, (x) => (x.jointVelocityAbsent = true));
    for (let k = 1; k <= 60; k++) a.sample(1.1 + k / 1000);
    expect(a.wd.requestReset()).toEqual({ released: true, reason: 'released' });
  });
});

describe('force_untared and torque_untared: raw minus payload, whatever the tare', () => {
  it('the force limit plus the largest bias (190 N) passes; just above trips force_untared only', () => {
    const a = setup();
    expect(a.sample(1, (x) => (x.bias[2] = 190))).toBe(false);
    const b = setup();
    b.sample(1, (x) => (x.bias[2] = 190 * (1 + REL)));
    expect(b.trips()).toEqual([{ check: 'force_untared', input: 'wrench', value: 190 * (1 + REL), limit: 190, t_s: 1 }]);
  });

  it('the untared force is |compensated + bias| (a tared force that cancels the bias passes)', () => {
    const a = setup();
    expect(a.sample(1, (x) => {
      x.bias[0] = 200;
      x.compensated[0] = -100;
    })).toBe(false);
    const b = setup();
    b.sample(1, (x) => {
      x.bias[1] = 120;
      x.compensated[1] = 71;
      x.bias[0] = 0;
    });
    expect(b.trips().map((r) => r.check)).toEqual(['force_untared']);
    expect(b.trips()[0]!.value).toBe(191);
  });

  it('the torque limit plus the largest torque bias (35 N·m) passes; just above trips torque_untared only', () => {
    const a = setup();
    expect(a.sample(1, (x) => (x.bias[4] = 35))).toBe(false);
    const b = setup();
    b.sample(1, (x) => {
      x.bias[5] = 20;
      x.compensated[5] = 15.5;
    });
    expect(b.trips()).toEqual([{ check: 'torque_untared', input: 'wrench', value: 35.5, limit: 35, t_s: 1 }]);
  });

  it('the untared checks apply before the first tare too; the correction checks do not', () => {
    const a = setup();
    a.sample(1, (x) => {
      x.tared = false;
      x.bias[0] = 191;
      x.correction[0] = 1000;
      x.correction[3] = 1000;
    });
    expect(a.trips().map((r) => r.check)).toEqual(['force_untared']);
  });

  it('the untared limits default to none (a watchdog built without the tare bounds)', () => {
    const wd = new Watchdog(shipped().watchdog);
    const x = watchdogInputs({ t_s: 1 });
    x.bias[0] = 1e9;
    x.bias[3] = 1e9;
    expect(wd.checkInputs(x)).toBe(false);
  });
});

describe('the bias-change reference of the force and torque checks', () => {
  it('a later tare must not hide a squeeze: |w + Δbias| counts when larger than |w|', () => {
    const p = shipped().watchdog;
    const a = setup();
    a.sample(1, (x) => {
      x.compensated[0] = 100;
      x.biasChange[0] = p.force_limit_n - 100 + 1;
    });
    expect(a.trips()).toMatchObject([{ check: 'force_raw', value: p.force_limit_n + 1 }]);
    const b = setup();
    b.sample(1, (x) => {
      x.tared = false; // the correction band would see Δbias too
      x.compensated[4] = 10;
      x.biasChange[4] = p.torque_limit_nm - 10 + 0.5;
    });
    expect(b.trips()).toMatchObject([{ check: 'torque_raw', value: p.torque_limit_nm + 0.5 }]);
  });

  it('the same for the correction band (tared only)', () => {
    const p = shipped().watchdog;
    const a = setup();
    a.sample(1, (x) => {
      x.correction[1] = 10;
      x.biasChange[1] = p.correction_force_limit_n - 10 + 1;
    });
    expect(a.trips().map((r) => [r.check, r.value])).toContainEqual(['force_correction', p.correction_force_limit_n + 1]);
    const b = setup();
    b.sample(1, (x) => {
      x.correction[3] = 5;
      x.biasChange[3] = p.correction_torque_limit_nm - 5 + 1;
    });
    expect(b.trips().map((r) => [r.check, r.value])).toContainEqual(['torque_correction', p.correction_torque_limit_nm + 1]);
    // Δbias alone, larger than the limit, with the opposite correction: |c + Δ| is small, |c| too.
    const c = setup();
    expect(c.sample(1, (x) => {
      x.correction[2] = -40;
      x.biasChange[2] = 41;
      x.compensated[2] = -40;
    })).toBe(false);
  });
});

describe('every axis counts (force axes 0–2, torque axes 3–5)', () => {
  it.each([0, 1, 2])('force axis %i: the bias change, the bias and the correction add to that axis', (k) => {
    const a = setup();
    a.sample(1, (x) => {
      x.tared = false;
      x.compensated[k] = 100;
      x.biasChange[k] = 51;
    });
    expect(a.trips().map((r) => r.check)).toEqual(['force_raw']);
    const b = setup();
    b.sample(1, (x) => {
      x.compensated[k] = 100;
      x.bias[k] = 91;
    });
    expect(b.trips().map((r) => r.check)).toEqual(['force_untared']);
    const c = setup();
    c.sample(1, (x) => {
      x.correction[k] = 30;
      x.biasChange[k] = 31;
    });
    expect(c.trips().map((r) => r.check)).toEqual(['force_correction']);
  });

  it.each([3, 4, 5])('torque axis %i: the bias change, the bias and the correction add to that axis', (k) => {
    const a = setup();
    a.sample(1, (x) => {
      x.tared = false;
      x.compensated[k] = 10;
      x.biasChange[k] = 15.5;
    });
    expect(a.trips().map((r) => r.check)).toEqual(['torque_raw']);
    const b = setup();
    b.sample(1, (x) => {
      x.compensated[k] = 10;
      x.bias[k] = 25.5;
    });
    expect(b.trips().map((r) => r.check)).toEqual(['torque_untared']);
    const c = setup();
    c.sample(1, (x) => {
      x.correction[k] = 7;
      x.biasChange[k] = 8.5;
    });
    expect(c.trips().map((r) => r.check)).toEqual(['torque_correction']);
  });
});

describe('inputs that go missing or bad', () => {
  it('an arrival time lost after the input was seen (NaN again) is stale at once, with an infinite age', () => {
    const a = setup();
    a.sample(1);
    a.sample(1.001, (x) => (x.lastSeen[INPUT.joint_states] = Number.NaN));
    expect(a.trips()).toEqual([{ check: 'stale_input', input: 'joint_states', value: Number.POSITIVE_INFINITY, limit: a.p.stale_after_s.joint_states, t_s: 1.001 }]);
  });

  it('a zone view with a non-finite time trips non_finite for zone_view', () => {
    const a = setup();
    expect(a.sample(1, (x) => (x.zoneFinite = false))).toBe(true);
    expect(a.trips()).toEqual([{ check: 'non_finite', input: 'zone_view', value: Number.NaN, limit: 0, t_s: 1 }]);
  });

  it('a non-finite wrench trips non_finite only: the force and impact checks skip that sample', () => {
    const a = setup();
    a.sample(1, (x) => {
      x.compensated[0] = Number.NaN;
      x.impactFlag = true;
      x.impactScore = 5;
    });
    expect(a.trips().map((r) => [r.check, r.input])).toEqual([['non_finite', 'wrench']]);
  });

  it('an arrival exactly future_tolerance_s ahead passes (binary-exact: 0.05 − 0)', () => {
    const a = setup();
    expect(a.sample(0, (x) => (x.lastSeen[INPUT.wrench] = 0.05))).toBe(false);
  });

  it('tick: inputs gone quiet trip stale_input between samples; a tick at the last sample time changes nothing', () => {
    const a = setup();
    a.sample(1);
    const seen = new Float64Array(INPUTS.length).fill(1);
    const req = new Uint8Array(INPUTS.length).fill(1);
    expect(a.wd.tick(1, seen, req)).toBe(false);
    expect(a.wd.tick(1 + a.p.stale_after_s.wrench * 2, seen, req)).toBe(true);
    expect(a.trips()[0]).toMatchObject({ check: 'stale_input', input: 'wrench' });
  });
});
