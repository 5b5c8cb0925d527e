/**
 * The live node's adapter against an in-memory rclnodejs stand-in: what it subscribes to and
 * publishes, and that live, replay and the core agree (same decoders, same step).
 */
import { MessageReader } from '@foxglove/rosmsg2-serialization';
import { describe, expect, it } from 'vitest';
import { builtinDefinition, parseDefinition } from '../../src/bag/definitions.js';
import { decodeTwistStamped, encodeJointState, encodePoseStamped, encodeWrenchStamped } from '../../src/bag/fast.js';
import { ArmStep } from '../../src/core/arm-step.js';
import { loadCell } from '../../src/params/config.js';
import { ArmNode } from '../../src/ros/arm-node.js';
import { fakeRcl, FakeNode } from './fake-rcl.js';

const cell = loadCell('config/demo_cell.yaml');
const reader = (type: string) => new MessageReader(parseDefinition(type, builtinDefinition(type)!));
const zoneWriter = (await import('@foxglove/rosmsg2-serialization')).MessageWriter;
const zoneView = new zoneWriter(parseDefinition('antiphon/msg/ZoneView', builtinDefinition('antiphon/msg/ZoneView')!));

function setup() {
  const node = new FakeNode('antiphon', '/left');
  const an = new ArmNode(fakeRcl, node, cell.left.config, cell.left.values);
  return { node, an };
}

/** Feed `n` samples at 1 kHz starting at sample k0: wrench every ms, pose and joints every ms, zones every 100 ms. */
function feed(node: FakeNode, k0: number, n: number, force = (_k: number) => [0.1, -0.2, -11.8, 0, 0, 0]) {
  const row = new Float64Array(9);
  for (let k = k0; k < k0 + n; k++) {
    node.clockNs = 1_800_000_000_000_000_000n + BigInt(k) * 1_000_000n;
    const sec = 1_800_000_000 + Math.floor(k / 1000);
    const nanosec = (k % 1000) * 1_000_000;
    row[0] = sec; row[1] = nanosec;
    row[2] = 0.1; row[3] = 0.55; row[4] = 0.9; row[5] = 0; row[6] = 0; row[7] = 0; row[8] = 1;
    node.subs.get('tool_pose')!.cb(Buffer.from(encodePoseStamped(row, 0, 'cell')));
    node.subs.get('joint_states')!.cb(Buffer.from(encodeJointState(sec, nanosec, 'base', ['j1', 'j2', 'j3'], [0, 0, 0], [0.01, 0, 0], [])));
    if (k % 100 === 0) node.subs.get('zone_view')!.cb(Buffer.from(zoneView.writeMessage({ header: { stamp: { sec, nanosec }, frame_id: 'a' }, zones: ['clamp_post', 'tray_drop'], state: Uint8Array.of(0, 2) })));
    const f = force(k);
    for (let a = 0; a < 6; a++) row[2 + a] = f[a]!;
    node.subs.get('wrench')!.cb(Buffer.from(encodeWrenchStamped(row, 0, 'left_ft_sensor')));
  }
}

describe('ArmNode (live adapter)', () => {
  it('subscribes raw with the sensor-data QoS and publishes every output under ~/', () => {
    // Common practice (ROS 2): high-rate sensor topics use the sensor-data QoS profile.
    const { node } = setup();
    expect([...node.subs.keys()].sort()).toEqual(['joint_states', 'tool_pose', 'wrench', 'zone_view']);
    expect(node.subs.get('wrench')!.options).toEqual({ qos: 'qos_profile_sensor_data', isRaw: true });
    expect(node.subs.get('wrench')!.type).toBe('geometry_msgs/msg/WrenchStamped');
    expect([...node.pubs.keys()].sort()).toEqual(['/diagnostics', '~/belief', '~/correction_wrench', '~/impact_wrench', '~/recommended_twist', '~/role', '~/watchdog']);
    expect([...node.services.keys()].sort()).toEqual(['~/reset_hold', '~/tare']);
    expect(node.timers[0]!.period).toBe(10_000_000n);
  });

  it('publishes the same twist the core computes from the same inputs', () => {
    const { node } = setup();
    feed(node, 0, 3000);
    const sent = node.pubs.get('~/recommended_twist')!.sent as Buffer[];
    expect(sent.length).toBe(3000);
    // The same inputs straight into a core step.
    const ref = new ArmStep(cell.left.config, { required: { joint_states: true, zone_view: true } });
    const w = Float64Array.of(0.1, -0.2, -11.8, 0, 0, 0);
    const row = new Float64Array(8);
    let same = 0;
    for (let k = 0; k < 3000; k++) {
      const t = Number(1_800_000_000_000_000_000n + BigInt(k) * 1_000_000n) / 1e9;
      ref.setToolPose(t, 0.1, 0.55, 0.9, 0, 0, 0, 1);
      ref.setJointState(t, [0.01, 0, 0], 3);
      if (k % 100 === 0) ref.setZoneView(t, [0, 2]);
      const o = ref.step(t, w);
      const b = sent[k]!;
      decodeTwistStamped(new DataView(b.buffer, b.byteOffset, b.byteLength), 0, b.byteLength, row, 0);
      if (Object.is(row[2], o.twist[0]) && Object.is(row[3], o.twist[1])) same++;
    }
    expect(same).toBe(3000);
    expect(Math.hypot(row[2]!, row[3]!)).toBeGreaterThan(0); // it moves once tared
  });

  it('holds on a knock, reports why, and releases only through ~/reset_hold after the clear time', () => {
    const { node } = setup();
    feed(node, 0, 1000);
    feed(node, 1000, 20, () => [400, 0, -11.8, 0, 0, 0]);
    const wd = reader('antiphon/msg/WatchdogStatus');
    const last = () => wd.readMessage<{ held: boolean; trips: { check: string }[] }>(node.pubs.get('~/watchdog')!.sent.at(-1) as Buffer);
    expect(last().held).toBe(true);
    expect(last().trips.map((t) => t.check)).toContain('force_raw');
    expect(node.logs.some((l) => l.startsWith('warn safe hold latched'))).toBe(true);
    expect(node.call('~/reset_hold').success).toBe(false);
    feed(node, 1020, 1500); // the correction band rings above its limit for ~0.3 s after a 400 N knock
    const r = node.call('~/reset_hold');
    expect(r, r.message).toMatchObject({ success: true });
    feed(node, 2520, 10);
    expect(last().held).toBe(false);
  });

  it('keeps publishing a zero twist when the inputs stop, and trips on staleness', () => {
    const { node } = setup();
    feed(node, 0, 1500);
    const twist = node.pubs.get('~/recommended_twist')!.sent;
    const before = twist.length;
    for (let k = 0; k < 20; k++) {
      node.clockNs += 10_000_000n;
      node.timers[0]!.cb();
    }
    expect(twist.length).toBeGreaterThan(before);
    const row = new Float64Array(8);
    const b = twist.at(-1) as Buffer;
    decodeTwistStamped(new DataView(b.buffer, b.byteOffset, b.byteLength), 0, b.byteLength, row, 0);
    expect([row[2], row[3], row[4]]).toEqual([0, 0, 0]);
    const wd = reader('antiphon/msg/WatchdogStatus').readMessage<{ held: boolean; trips: { check: string; input: string }[] }>(node.pubs.get('~/watchdog')!.sent.at(-1) as Buffer);
    expect(wd.held).toBe(true);
    expect(wd.trips[0]).toMatchObject({ check: 'stale_input' });
  });

  it('declares every resolved parameter read-only and refuses changes at run time', () => {
    const { node } = setup();
    expect(node.params.length).toBe(cell.left.values.size);
    const cutoff = node.params.find((p) => p.p.name === 'wrench_filter.cutoff_hz')!;
    expect(cutoff.p).toMatchObject({ type: 3, value: 5 });
    expect(cutoff.d.readOnly).toBe(true);
    expect(node.params.find((p) => p.p.name === 'wrench_filter.order')!.p.value).toBe(4n); // integers as BigInt (rclnodejs)
    expect(node.trySet([{}])).toMatchObject({ successful: false });
  });

  it('survives a message that does not decode, and counts it', () => {
    const { node } = setup();
    node.subs.get('wrench')!.cb(Buffer.from([0, 1, 0, 0, 1, 2]));
    node.subs.get('zone_view')!.cb(Buffer.from([9, 9, 9]));
    expect(node.logs.filter((l) => l.startsWith('error')).length).toBe(2);
  });
});
