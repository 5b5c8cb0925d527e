/**
 * The live adapter on the test stand-in: two nodes under the arm's namespace sharing one arm
 * step, the topics README lists, and live and core agreeing sample for sample.
 */
import { describe, expect, it } from 'vitest';
import { ArmStep } from '../../src/core/arm-step.js';
import { CHECKS } from '../../src/core/watchdog.js';
import { activateAfterTare, cell, decodeVec, diag, reader, setup } from './harness.js';

describe('ArmNodes (live adapter)', () => {
  it('two nodes in /left: the roles node holds the force-torque and joint inputs, the lifecycle node the twist', () => {
    const { rcl } = setup();
    const roles = rcl.node('antiphon_roles');
    const inf = rcl.node('antiphon');
    expect(roles.namespace()).toBe('/left');
    expect(inf.lifecycle).toBe(true);
    expect(roles.lifecycle).toBe(false);
    expect(roles.subscriptions.map((s) => s.topic).sort()).toEqual(['/left/joint_states', '/left/tool_pose', '/left/wrench']);
    expect(inf.subscriptions.map((s) => s.topic)).toEqual(['/left/zone_view']);
    expect(inf.publications.map((p) => p.topic).sort()).toEqual(['/left/antiphon/belief', '/left/antiphon/markers', '/left/antiphon/recommended_twist']);
    expect(roles.publications.map((p) => p.topic).sort()).toEqual(['/diagnostics', '/left/antiphon/correction_wrench', '/left/antiphon/held', '/left/antiphon/impact_wrench', '/left/antiphon/role', '/left/antiphon/watchdog']);
    expect(roles.services.map((s) => s.name).sort()).toEqual(['/left/antiphon/reset_hold', '/left/antiphon/tare']);
    // Raw CDR in, the same fixed-layout decoders as replay.
    expect(roles.subscriptions.every((s) => s.raw)).toBe(true);
  });

  it('one arm step, shared: the twist the lifecycle node publishes comes from the step the roles node drives, bit for bit', () => {
    const s = setup();
    activateAfterTare(s);
    s.feed(1000, 2000);
    const ref = new ArmStep(cell.left.config, { required: { joint_states: true, zone_view: true } });
    // Inactive for the first 1000 samples: the node's step withholds its twist (and starts from rest when activated).
    ref.setOutputEnabled(false);
    const sent = s.rcl.sent('/left/antiphon/recommended_twist') as Buffer[];
    // One twist per wrench sample (the 100 Hz tick adds none while the wrench flows).
    expect(sent.length).toBe(3000);
    let same = 0;
    for (let k = 0; k < 3000; k++) {
      const t = Number(1_800_000_000n) + k / 1000;
      ref.setToolPose(t, 0.1, 0.55, 0.9, 0, 0, 0, 1);
      ref.setJointState(t, [0.01, 0, 0], 3);
      if (k % 100 === 0) ref.setZoneView(t, [0, 2]);
      if (k === 1000) ref.setOutputEnabled(true);
      const o = ref.step(t, Float64Array.of(0.1, -0.2, -11.8, 0, 0, 0));
      if (k < 1000) continue;
      const v = decodeVec(sent[k]!);
      if (Object.is(v[2], o.twist[0]) && Object.is(v[3], o.twist[1])) same++;
    }
    expect(same).toBe(2000);
    expect(Math.hypot(...s.lastTwist().slice(2, 4))).toBeGreaterThan(0);
  });

  it('holds on a knock, reports why, and releases only through antiphon/reset_hold after the clear time', () => {
    const s = setup();
    activateAfterTare(s);
    s.feed(1000, 20, { force: () => [400, 0, -11.8, 0, 0, 0] });
    const wd = reader('antiphon/msg/WatchdogStatus');
    const last = () => wd.readMessage<{ held: boolean; trips: { check: string }[] }>(s.rcl.sent('/left/antiphon/watchdog').at(-1) as Buffer);
    expect(last().held).toBe(true);
    expect(last().trips.map((t) => t.check)).toContain('force_raw');
    expect(s.rcl.node('antiphon').logs.some((l) => l.startsWith('warn safe hold latched'))).toBe(true);
    expect(s.rcl.call('/left/antiphon/reset_hold').reply?.success).toBe(false);
    s.feed(1020, 1500);
    expect(s.rcl.call('/left/antiphon/reset_hold').reply).toMatchObject({ success: true });
    // Every reset is logged with its outcome.
    expect(s.rcl.node('antiphon').logs.filter((l) => l.includes('reset_hold:')).map((l) => l.split(' ')[2])).toEqual(['refused', 'released']);
  });

  it('diagnostics: one entry per watchdog check (from CHECKS), the lifecycle state, and whether the joint-speed check is active', () => {
    const s = setup();
    s.feed(0, 1000);
    const d = diag(s.rcl);
    for (const c of CHECKS) expect(d[`check.${c}`], c).toBe('ok');
    expect(d['lifecycle_state']).toBe('inactive');
    expect(d['joint_velocity_check']).toBe('active');
    const n = setup();
    n.feed(0, 1000, { joints: () => [{ names: ['j1', 'j2', 'j3'], velocity: [] }] });
    expect(diag(n.rcl)['joint_velocity_check']).toMatch(/^inactive/);
  });

  it('survives a message that does not decode, and counts it', () => {
    const s = setup();
    s.pubs.wrench.publish(Buffer.from([0, 1, 0, 0, 1, 2]));
    s.pubs.zones.publish(Buffer.from([9, 9, 9]));
    expect(s.nodes.counters.bad_messages).toBe(2);
  });
});
