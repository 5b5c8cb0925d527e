/**
 * One test per defect 5-14 of the live node (1-4 are in launch.test.ts), each against the
 * test stand-in, which matches QoS as DDS does.
 */
import { describe, expect, it } from 'vitest';
import { startNodes } from '../../src/cli/node.js';
import { buildArmConfig } from '../../src/params/config.js';
import { parseParamsText, resolveForArm } from '../../src/params/load.js';
import { ArmNodes, NODE_NAMES } from '../../src/ros/arm-nodes.js';
import { qos, RMW } from '../../src/ros/qos.js';
import { OUTPUT_BAG_QOS, OUTPUT_KINDS } from '../../src/ros/topics.js';
import { PARAMETER_TYPE } from '../../src/ros/rcl.js';
import { RecordingRcl } from '../../src/ros/recorder.js';
import { InputError } from '../../src/util/errors.js';
import { FakeRcl } from './fake-rcl.js';
import { activateAfterTare, cell, decodeWrench, diag, reader, setup, T0_NS, withValues } from './harness.js';

const wd = reader('antiphon/msg/WatchdogStatus');
const lastWd = (rcl: FakeRcl) => wd.readMessage<{ held: boolean; trips: { check: string; input: string }[] }>(rcl.sent('/left/antiphon/watchdog').at(-1) as Buffer);

describe('defect 5: the motion output is reliable', () => {
  it('a default (reliable) subscriber receives the recommended twist, the wrenches and the belief', () => {
    const s = setup();
    activateAfterTare(s);
    s.feed(1000, 500);
    expect(s.twists.length).toBe(1500);
    const got: Record<string, number> = {};
    const sub = new s.rcl.Node('consumer2', '/left');
    for (const t of ['correction_wrench', 'belief', 'role']) sub.createSubscription(t === 'belief' ? 'antiphon/msg/Belief' : t === 'role' ? 'antiphon/msg/RoleState' : 'geometry_msgs/msg/WrenchStamped', `antiphon/${t}`, { qos: s.rcl.QoS.profileDefault, isRaw: true }, () => void (got[t] = (got[t] ?? 0) + 1));
    s.feed(1500, 1000);
    expect(got['correction_wrench']).toBe(1000);
    expect(got['belief']).toBeGreaterThan(0);
    expect(got['role']).toBeGreaterThan(0);
    expect(s.rcl.incompatible).toEqual([]);
  });
  it('the other outputs are configurable: best effort status outputs do not reach a reliable subscriber, and diagnostics say so', () => {
    const s = setup({ values: withValues('left', { 'ros.qos.status.reliability': 'best_effort' }) });
    const sub = new s.rcl.Node('rviz', '/left');
    sub.createSubscription('antiphon/msg/RoleState', 'antiphon/role', { qos: s.rcl.QoS.profileDefault, isRaw: true }, () => undefined);
    s.feed(0, 1000);
    expect(s.rcl.incompatible.map((x) => x.topic)).toContain('/left/antiphon/role');
    expect(diag(s.rcl)['qos_incompatible']).toMatch(/\/left\/antiphon\/role: subscriber rviz incompatible: RELIABILITY/);
    // The twist stays reliable whatever the status QoS.
    expect(s.rcl.topic('/left/antiphon/recommended_twist').qos.reliability).toBe('reliable');
  });
});

describe('defect 6: input QoS matches what drivers and our bags offer', () => {
  it('a best-effort zone_view publisher (as ros2 bag play offers our bags) reaches the node; a reliable one too', () => {
    for (const offered of [qos('best_effort', 10), qos('reliable', 10)]) {
      const s = setup({ inputQos: offered });
      s.feed(0, 300);
      expect(s.rcl.incompatible).toEqual([]);
      // Every required input, zone_view included, has arrived.
      expect(s.nodes.step!.watchdog.waitingForInputs).toBe(false);
    }
  });
  it('an incompatible partner held publisher (best effort, volatile) is reported in diagnostics', () => {
    const s = setup({ values: withValues('left', { 'watchdog.hold_link.enabled': true }) });
    const partner = new s.rcl.Node('antiphon_roles', '/right');
    partner.createPublisher('std_msgs/msg/Bool', '/left/partner_held', { qos: s.rcl.QoS.profileSensorData });
    s.feed(0, 1000);
    expect(diag(s.rcl)['qos_incompatible']).toMatch(/partner_held: publisher antiphon_roles incompatible: RELIABILITY .*DURABILITY/);
  });
});

describe('defect 7: sim time with ros2 bag play --clock (40 Hz steps)', () => {
  const sim = () => withValues('left', { use_sim_time: true });
  it('a clock stepping at 40 Hz latches no hold and warns with the fix', () => {
    const s = setup({ values: sim() });
    activateAfterTare(s);
    // /clock at 40 Hz: the ROS clock advances in 25 ms steps while the messages keep their 1 kHz stamps.
    s.feed(1000, 3000, { clockNs: (k) => T0_NS + BigInt(Math.floor(k / 25) * 25) * 1_000_000n });
    expect(lastWd(s.rcl).held).toBe(false);
    expect(Math.hypot(...s.lastTwist().slice(2, 4))).toBeGreaterThan(0);
    expect(s.rcl.node('antiphon').logs.some((l) => l.includes('ros2 bag play --clock 1000'))).toBe(true);
    expect(Number(diag(s.rcl)['clock_step_max_s'])).toBeCloseTo(0.025, 3);
  });
  it('looped playback (sim time jumps back) starts the arm step afresh instead of latching time_backwards', () => {
    const s = setup({ values: sim() });
    s.feed(0, 2000);
    s.feed(0, 1500, { stampNs: (k) => T0_NS + BigInt(k) * 1_000_000n }); // the loop starts again
    expect(s.nodes.counters.resets_on_clock_jump).toBe(1);
    expect(lastWd(s.rcl).trips.map((t) => t.check)).not.toContain('time_backwards');
    expect(lastWd(s.rcl).held).toBe(false);
  });
});

describe('defect 8: queue depth, dropped samples, event-loop pauses and NTP steps', () => {
  it('the input queue depth is a parameter', () => {
    const s = setup({ values: withValues('left', { 'ros.input_queue_depth': 250 }) });
    expect(s.rcl.node('antiphon_roles').subscriptions.map((x) => x.qos.depth)).toEqual([250, 250, 250]);
  });
  it('dropped wrench samples are counted from the header stamps', () => {
    const s = setup();
    s.feed(0, 1000, { skip: (k) => k >= 500 && k < 505 });
    s.rcl.tickPeriod(10_000_000n);
    s.feed(1000, 1000);
    expect(s.nodes.counters.dropped_wrench_samples).toBe(5);
    expect(diag(s.rcl)['dropped_wrench_samples']).toBe('5');
  });
  it('a 8 ms pause of the event loop (samples queued, delivered late with their stamps) trips nothing; an NTP step of the ROS clock neither', () => {
    const s = setup();
    activateAfterTare(s);
    // Samples 1000..1007 arrive together after the pause: the stamps keep their spacing.
    s.feed(1000, 1000, { clockNs: (k) => T0_NS + BigInt(k) * 1_000_000n + (k > 1500 ? 2_000_000_000n : 0n) });
    expect(lastWd(s.rcl).held).toBe(false);
  });
});

describe('defect 9: shutdown', () => {
  it('removes rclnodejs\'s SIGINT handler before init, publishes a final zero twist, then destroys the nodes', async () => {
    const rcl = new FakeRcl();
    const order: string[] = [];
    const init = rcl.init.bind(rcl);
    rcl.removeSignalHandlers = () => void order.push('removeSignalHandlers');
    rcl.init = async (c, a) => (order.push('init'), init(c, a));
    const live = await startNodes(rcl, 'left', cell.left, []);
    expect(order).toEqual(['removeSignalHandlers', 'init']);
    live.nodes.inference.configure();
    const twist = rcl.topic('/left/antiphon/recommended_twist');
    const before = twist.sent.length;
    await live.stop('SIGINT');
    expect(twist.sent.length).toBe(before + 1);
    expect(decodeWrench(twist.sent.at(-1) as Buffer).slice(2)).toEqual([0, 0, 0, 0, 0, 0]);
    expect(rcl.nodes.filter((n) => n.nodeName.startsWith('antiphon')).every((n) => n.destroyed)).toBe(true);
    expect(rcl.shutDown).toBe(true);
  });
});

describe('defect 10: the parameter mirror is what is enforced', () => {
  it('an override (-p / /**) is honoured through the schema: shown and enforced alike', () => {
    const s = setup({ overrides: [{ name: 'watchdog.force_limit_n', type: PARAMETER_TYPE.double, value: 120 }] });
    expect(s.rcl.node('antiphon_roles').parameters.get('watchdog.force_limit_n')!.parameter.value).toBe(120);
    expect(s.nodes.step!.config.watchdog.force_limit_n).toBe(120);
    s.feed(0, 1000);
    s.feed(1000, 5, { force: () => [130, 0, -11.8, 0, 0, 0] });
    expect(lastWd(s.rcl).trips.map((t) => t.check)).toContain('force_raw');
  });
  it('a wrongly typed, out-of-range or above-ceiling override is refused with a clear message, not a throw from rcl', () => {
    const bad = (name: string, type: number, value: unknown) => {
      const rcl = new FakeRcl();
      rcl.overrides = [{ name, type, value }];
      try {
        new ArmNodes(rcl, { arm: 'left', config: cell.left.config, values: cell.left.values });
      } catch (err) {
        expect(err).toBeInstanceOf(InputError);
        return (err as InputError).problems[0]!.message;
      }
      return 'accepted';
    };
    expect(bad('watchdog.force_limit_n', PARAMETER_TYPE.integer, 120n)).toMatch(/must be written as a floating-point number/);
    expect(bad('watchdog.force_limit_n', PARAMETER_TYPE.double, 900)).toMatch(/above its hard safety ceiling 500/);
    expect(bad('wrench_filter.order', PARAMETER_TYPE.integer, 12n)).toMatch(/out of range/);
  });
});

describe('defect 11: parameter files round-trip through ros2 param dump', () => {
  it('a dump of both nodes (fully qualified names, nested keys, use_sim_time) loads back to the same values', () => {
    const s = setup();
    // ros2 param dump writes one section per node: /<ns>/<node>: ros__parameters: nested maps,
    // doubles with a decimal point (common practice: rcl_yaml_param_parser reads 1 as an integer).
    const lines: string[] = [];
    const lit = (type: number, v: unknown): string => {
      const num = (x: number) => (type === PARAMETER_TYPE.double || type === PARAMETER_TYPE.double_array) && Number.isInteger(x) ? `${x}.0` : String(x);
      if (Array.isArray(v)) return `[${v.map((x) => (typeof x === 'number' ? num(x) : JSON.stringify(x))).join(', ')}]`;
      if (typeof v === 'number' || typeof v === 'bigint') return num(Number(v));
      return typeof v === 'string' ? JSON.stringify(v) : String(v);
    };
    for (const name of Object.values(NODE_NAMES)) {
      lines.push(`/left/${name}:`, '  ros__parameters:');
      const open: string[] = [];
      const params = [...s.rcl.node(name).parameters.values()].sort((a, b) => (a.parameter.name < b.parameter.name ? -1 : 1));
      for (const { parameter: p, descriptor: d } of params) {
        const parts = p.name.split('.');
        let common = 0;
        while (common < open.length && common < parts.length - 1 && open[common] === parts[common]) common++;
        open.length = common;
        for (let k = common; k < parts.length - 1; k++) {
          lines.push(`${'  '.repeat(k + 2)}${parts[k]}:`);
          open.push(parts[k]!);
        }
        lines.push(`${'  '.repeat(parts.length + 1)}${parts.at(-1)}: ${lit(d.type, p.value)}`);
      }
    }
    const text = lines.join('\n') + '\n';
    const f = parseParamsText(text, 'dump.yaml');
    const back = resolveForArm(f, 'left');
    for (const [k, v] of cell.left.values) expect(back.get(k)?.value, k).toEqual(v.value);
    expect(() => buildArmConfig(f, 'left')).not.toThrow();
  });
  it('/left/antiphon: and /left/**: sections are accepted; a bare node name is refused with the allowed forms', () => {
    const f = parseParamsText('/left/antiphon:\n  ros__parameters:\n    policy:\n      speed_m_s: 0.1\n/right/**:\n  ros__parameters:\n    roles:\n      phase: 1\n', 'x.yaml');
    expect(resolveForArm(f, 'left').get('policy.speed_m_s')!.value).toBe(0.1);
    expect(resolveForArm(f, 'right').get('roles.phase')!.value).toBe(1);
    expect(() => parseParamsText('antiphon:\n  ros__parameters:\n    roles:\n      phase: 1\n', 'y.yaml')).toThrow(/fully qualified node name/);
  });
});

describe('defect 12: frames are parameters and checked', () => {
  it('a wrench in another frame is refused and counted; the output wrenches carry ros.frames.sensor', () => {
    const s = setup({ values: withValues('left', { 'ros.frames.sensor': 'left_wrist_ft' }) });
    s.feed(0, 100, { wrenchFrame: 'left_ft_sensor' });
    expect(s.nodes.counters.wrong_frame).toBe(100);
    expect(s.rcl.sent('/left/antiphon/correction_wrench')).toHaveLength(0);
    s.feed(100, 100, { wrenchFrame: 'left_wrist_ft' });
    const b = s.rcl.sent('/left/antiphon/correction_wrench').at(-1) as Buffer;
    expect(b.subarray(16, 16 + 'left_wrist_ft'.length).toString()).toBe('left_wrist_ft');
  });
  it('the tool pose must be in ros.frames.cell, and the sensor orientation is the tool orientation times ros.frames.sensor_in_tool_xyzw', () => {
    const s = setup({ values: withValues('left', { 'ros.frames.cell': 'world' }) });
    s.feed(0, 50); // poses in 'cell'
    expect(s.nodes.counters.wrong_frame).toBe(50);
    // 180 degrees about z between tool and sensor (x, y, z, w = 0, 0, 1, 0): identity tool gives that sensor orientation.
    const r = setup({ values: withValues('left', { 'ros.frames.sensor_in_tool_xyzw': [0, 0, 1, 0] }) });
    r.feed(0, 10);
    expect(Array.from(r.nodes.step!.snapshot().pose.slice(3))).toEqual([0, 0, 1, 0]);
  });
});

describe('defect 13: joints are selected by name', () => {
  const names = { 'ros.joint_names': ['left_j1', 'left_j2'] };
  it('JointState with another arm\'s joints mixed in: only this arm\'s speeds count', () => {
    const s = setup({ values: withValues('left', names) });
    // One message per driver on a shared /joint_states, and one merged message; the right arm moves fast.
    s.feed(0, 1500, { joints: () => [{ names: ['right_j1', 'right_j2'], velocity: [2.5, 2.5] }, { names: ['right_j1', 'left_j2', 'left_j1', 'right_j2'], velocity: [2.5, 0.1, 0.2, 2.5] }] });
    expect(lastWd(s.rcl).held).toBe(false);
    expect(s.nodes.counters.joint_messages_ignored).toBe(1500);
    expect(Array.from(s.nodes.step!.snapshot().joint.slice(0, 2))).toEqual([0.2, 0.1]);
    // This arm's joint over the limit trips, named by its index in ros.joint_names.
    s.feed(1500, 5, { joints: () => [{ names: ['right_j1', 'left_j2', 'left_j1'], velocity: [0, 0, 1.5] }] });
    expect(lastWd(s.rcl).trips[0]).toMatchObject({ check: 'joint_velocity', input: 'joint_states[0]' });
  });
});

describe('defect 14: the smaller points', () => {
  it('antiphon/tare answers when the tare is taken, not when it is requested', () => {
    const s = setup({ values: withValues('left', { 'wrench_filter.tare.on_start': false }) });
    s.feed(0, 10);
    const call = s.rcl.call('/left/antiphon/tare');
    expect(call.reply).toBeUndefined();
    s.feed(10, 1000);
    expect(call.reply).toMatchObject({ success: true });
    expect(s.rcl.node('antiphon').logs.some((l) => /tare: taken/.test(l))).toBe(true);
  });
  it('the QoS bags record for the outputs is what the live node offers (OUTPUT_BAG_QOS, rmw enum values)', () => {
    const s = setup();
    for (const kind of OUTPUT_KINDS) {
      const live = s.rcl.topic(`/left/antiphon/${kind}`).qos;
      const [bag] = OUTPUT_BAG_QOS[kind];
      expect([bag.reliability, bag.durability, bag.history, bag.depth], kind).toEqual([RMW.reliability[live.reliability], RMW.durability[live.durability], RMW.history.keep_last, live.depth]);
    }
  });
  it('the veto accepts use_sim_time', () => {
    const s = setup();
    expect(s.rcl.node('antiphon').setParameter(new s.rcl.Parameter('use_sim_time', PARAMETER_TYPE.bool, true))).toMatchObject({ successful: true });
  });
  it('the stand-in matches QoS as DDS does (negative control: reliable subscriber, best-effort publisher)', () => {
    const rcl = new FakeRcl();
    const a = new rcl.Node('a');
    const b = new rcl.Node('b');
    const got: Buffer[] = [];
    b.createSubscription('std_msgs/msg/String', '/t', { qos: rcl.QoS.profileDefault, isRaw: true }, (m) => void got.push(m));
    a.createPublisher('std_msgs/msg/String', '/t', { qos: rcl.QoS.profileSensorData }).publish(Buffer.from([0, 1, 0, 0]));
    expect(got).toHaveLength(0);
    expect(rcl.incompatible).toEqual([{ topic: '/t', why: 'RELIABILITY (reliable requested, best effort offered)' }]);
    a.createPublisher('std_msgs/msg/String', '/t', { qos: rcl.QoS.profileDefault }).publish(Buffer.from([0, 1, 0, 0]));
    expect(got).toHaveLength(1);
  });
  it('a dry run records the same graph twice (no hidden state between constructions)', () => {
    const g = () => {
      const r = new RecordingRcl();
      new ArmNodes(r, { arm: 'left', config: cell.left.config, values: cell.left.values }).inference.configure();
      return r.graph();
    };
    expect(g()).toEqual(g());
  });
});

describe('the hold link between the arms (watchdog.hold_link.enabled)', () => {
  it('antiphon/held goes to the partner (reliable, transient local): a knock on the right arm holds the left one, and a hold caused by the partner is not sent back', () => {
    const rcl = new FakeRcl();
    rcl.remaps.set('/left/partner_held', '/right/antiphon/held');
    rcl.remaps.set('/right/partner_held', '/left/antiphon/held');
    const steady = { s: 1000 };
    const on = { 'watchdog.hold_link.enabled': true };
    const L = setup({ rcl, steady, values: withValues('left', on) });
    const R = setup({ rcl, steady, arm: 'right', values: withValues('right', on) });
    expect(rcl.topic('/left/antiphon/held').qos).toMatchObject({ reliability: 'reliable', durability: 'transient_local' });
    const both = (k0: number, n: number, knockRight = false) => {
      for (let k = k0; k < k0 + n; k++) {
        L.feed(k, 1);
        R.feed(k, 1, { shareSteady: true, force: knockRight ? () => [400, 0, -11.8, 0, 0, 0] : undefined });
      }
    };
    both(0, 1000);
    expect(L.nodes.step!.out.held).toBe(false);
    both(1000, 5, true);
    both(1005, 20);
    expect(R.nodes.step!.out.held).toBe(true);
    expect(L.nodes.step!.out.held).toBe(true);
    expect(lastWd(rcl).trips.map((t) => t.check)).toContain('partner_hold');
    // std_msgs/msg/Bool in CDR: 4 bytes of encapsulation, then the byte.
    expect((rcl.sent('/left/antiphon/held').at(-1) as Buffer)[4]).toBe(0);
    expect((rcl.sent('/right/antiphon/held').at(-1) as Buffer)[4]).toBe(1);
  });
});
