/**
 * Run-time parameters (`ros2 param set`): descriptors with ranges, refusal past a ceiling or out
 * of range with the reason, structural keys read-only, atomic application at the next sample,
 * logging of old and new values with the time, and a warning for keys both arms must share.
 */
import { describe, expect, it } from 'vitest';
import { ArmStep } from '../../src/core/arm-step.js';
import { SPEC_BY_KEY } from '../../src/params/schema.js';
import { LIVE_KEYS } from '../../src/ros/live-params.js';
import { PARAMETER_TYPE } from '../../src/ros/rcl.js';
import { RecordedRange } from '../../src/ros/recorder.js';
import { cell, diag, setup } from './harness.js';

const dbl = (name: string, value: number) => ({ name, type: PARAMETER_TYPE.double, value });

describe('run-time parameters', () => {
  it('every live key is a schema key with a range (a renamed key would silently turn read-only)', () => {
    for (const k of LIVE_KEYS) {
      const spec = SPEC_BY_KEY.get(k);
      expect(spec, k).toBeDefined();
      expect(spec!.min !== undefined && spec!.max !== undefined, k).toBe(true);
    }
  });

  it('declares every threshold with a descriptor: description with unit, a continuous range capped at the ceiling, read-only for structural keys', () => {
    const s = setup();
    const p = s.rcl.node('antiphon_roles').parameters;
    const f = p.get('watchdog.force_limit_n')!;
    expect(f.descriptor.readOnly).toBe(false);
    expect(f.descriptor.description).toMatch(/\[N\] Hard ceiling 500 N\.$/);
    expect(f.descriptor.range).toEqual(new RecordedRange(1, 500, 0));
    expect(p.get('wrench_filter.order')!.descriptor.readOnly).toBe(true);
    expect(p.get('wrench_filter.order')!.descriptor.range).toEqual(new RecordedRange(1n, 8n, 1n));
    expect(s.rcl.node('antiphon').parameters.get('task.object.length_m')!.descriptor.readOnly).toBe(true);
    expect(s.rcl.node('antiphon').parameters.get('policy.legibility_gain')!.descriptor.readOnly).toBe(false);
  });

  it('a change past a ceiling is refused with the reason (by the range, and by the schema behind it)', () => {
    const s = setup();
    const roles = s.rcl.node('antiphon_roles');
    expect(roles.setParameter(new s.rcl.Parameter('watchdog.force_limit_n', PARAMETER_TYPE.double, 600))).toMatchObject({ successful: false, reason: expect.stringMatching(/outside its range 1 to 500/) });
    // The schema's own refusal, as a rcl without local range checks would hand it over.
    expect(s.nodes.onSetParameters([dbl('watchdog.force_limit_n', 600)])).toMatchObject({ successful: false, reason: expect.stringMatching(/above its hard safety ceiling 500 N/) });
    expect(s.nodes.onSetParameters([dbl('watchdog.linear_speed_limit_m_s', 0.1)])).toMatchObject({ successful: false, reason: expect.stringMatching(/policy\.speed_m_s = 0\.15 exceeds watchdog\.linear_speed_limit_m_s = 0\.1/) });
    expect(s.nodes.onSetParameters([{ name: 'wrench_filter.order', type: PARAMETER_TYPE.integer, value: 2n }])).toMatchObject({ successful: false, reason: expect.stringMatching(/structural/) });
    expect(s.nodes.step!.config.watchdog.force_limit_n).toBe(150);
    expect(s.rcl.node('antiphon').logs.filter((l) => l.startsWith('warn parameter change refused')).length).toBe(3);
  });

  it('an accepted change is applied at the next sample, logged with old and new values and the time, and shown in diagnostics', () => {
    const s = setup();
    s.feed(0, 1000);
    const roles = s.rcl.node('antiphon_roles');
    expect(roles.setParameter(new s.rcl.Parameter('watchdog.force_limit_n', PARAMETER_TYPE.double, 100))).toMatchObject({ successful: true });
    // Not yet: the step in use is unchanged until the sample boundary.
    expect(s.nodes.step!.config.watchdog.force_limit_n).toBe(150);
    s.feed(1000, 1, { force: () => [120, 0, -11.8, 0, 0, 0] });
    expect(s.nodes.step!.config.watchdog.force_limit_n).toBe(100);
    expect(s.nodes.step!.out.held).toBe(true); // 120 N trips the new 100 N limit on that very sample
    const log = s.rcl.node('antiphon').logs.find((l) => l.startsWith('info parameter watchdog.force_limit_n'))!;
    expect(log).toMatch(/150 -> 100 at t = 1800000001\.000000 s, applied at the sample boundary/);
    s.rcl.tickPeriod(10_000_000n);
    for (let k = 0; k < 100; k++) s.rcl.tickPeriod(10_000_000n);
    expect(diag(s.rcl)['last_parameter_change']).toMatch(/^watchdog\.force_limit_n: 150 -> 100 at .* applied at the sample boundary$/);
  });

  it('applyParams with the same configuration continues bit for bit; the change carries every piece of state', () => {
    const a = new ArmStep(cell.left.config, { required: { joint_states: true, zone_view: true } });
    const b = new ArmStep(cell.left.config, { required: { joint_states: true, zone_view: true } });
    let same = 0;
    for (let k = 0; k < 4000; k++) {
      const t = 100 + k / 1000;
      if (k === 2222) b.applyParams({ ...cell.left.config });
      for (const x of [a, b]) {
        x.setToolPose(t, 0.1 + k * 1e-5, 0.55, 0.9, 0, 0, 0, 1);
        x.setJointState(t, [0.01, 0, 0], 3);
        if (k % 100 === 0) x.setZoneView(t, [0, 2]);
      }
      const w = Float64Array.of(0.1 + Math.sin(k / 50), -0.2, -11.8, 0, 0, 0.01 * Math.cos(k / 30));
      const oa = a.step(t, w);
      const ob = b.step(t, w);
      if (oa.twist.every((v, i) => Object.is(v, ob.twist[i])) && oa.correction.every((v, i) => Object.is(v, ob.correction[i])) && Object.is(oa.entropy_nats, ob.entropy_nats) && oa.role === ob.role) same++;
    }
    expect(same).toBe(4000);
  });

  it('a change to a key both arms share (the role period, the phase) warns that the partner must change too', () => {
    const s = setup();
    expect(s.rcl.node('antiphon_roles').setParameter(new s.rcl.Parameter('roles.period_s', PARAMETER_TYPE.double, 0.8))).toMatchObject({ successful: true });
    expect(s.nodes.onSetParameters([{ name: 'roles.phase', type: PARAMETER_TYPE.integer, value: 1n }])).toMatchObject({ successful: true, reason: expect.stringMatching(/roles\.phase must be the same on both arms \(opposite phases\)/) });
    expect(s.rcl.node('antiphon').logs.some((l) => l.startsWith('warn roles.period_s must be the same on both arms'))).toBe(true);
  });
});
