/**
 * The nominal path from a topic (nav_msgs/msg/Path of the object in the cell frame): the
 * decoder against a reference CDR serializer (@foxglove/rosmsg2-serialization, with the
 * nav_msgs/msg/Path definition of ROS 2's common_interfaces, from memory), the same checks as
 * the parameters with the topic as the place, and the live node on the stand-in: taken while
 * inactive, kept for the next deactivate while active, refused with topic and reason.
 */
import { MessageWriter } from '@foxglove/rosmsg2-serialization';
import { describe, expect, it } from 'vitest';
import { parseDefinition } from '../../src/bag/definitions.js';
import { loadCell } from '../../src/params/config.js';
import { decodePath, encodePath, PATH_DEFINITION, PATH_TYPE, topicPathProblems, type TopicPath } from '../../src/ros/path-msg.js';
import { PATH_QOS } from '../../src/ros/arm-nodes.js';
import { RMW } from '../../src/ros/qos.js';
import { activateAfterTare, cell, setup, type Setup } from './harness.js';

const TOPIC = '/antiphon/path';
const pathCell = loadCell('examples/path_cell.yaml').left.config;
// The demo cell carried along a path that rises 5 cm over its middle (our own invented numbers).
const W = [0, 0, 0.9, 0.8, 0.05, 0.95, 1.6, 0, 0.9];
const O = [0, 0, 0, 1, 0, 0, 0, 1, 0, 0, 0.0499792, 0.9987503];

function reference(frame: string, W: number[], O: number[]): Uint8Array {
  const w = new MessageWriter(parseDefinition(PATH_TYPE, PATH_DEFINITION));
  const poses = [];
  for (let k = 0; 3 * k < W.length; k++) {
    poses.push({
      header: { stamp: { sec: 12, nanosec: 500_000_000 }, frame_id: frame },
      pose: { position: { x: W[3 * k], y: W[3 * k + 1], z: W[3 * k + 2] }, orientation: { x: O[4 * k], y: O[4 * k + 1], z: O[4 * k + 2], w: O[4 * k + 3] } },
    });
  }
  return w.writeMessage({ header: { stamp: { sec: 12, nanosec: 500_000_000 }, frame_id: frame }, poses });
}

describe('nav_msgs/msg/Path decoding', () => {
  it('reads what a reference CDR serializer writes, and our encoder writes the same bytes', () => {
    const ref = reference('cell', W, O);
    const d = decodePath(ref, { topic: TOPIC }) as TopicPath;
    expect(d.frame_id).toBe('cell');
    expect(d.stamp_s).toBeCloseTo(12.5, 9);
    expect(d.waypoints_m).toEqual(W);
    expect(d.orientations_xyzw).toEqual(O);
    expect(d.pose_frames).toEqual(['cell', 'cell', 'cell']);
    expect(Buffer.from(encodePath('cell', 12.5, W, O))).toEqual(Buffer.from(ref));
  });

  it('refuses a truncated message with the topic and the byte offset', () => {
    const ref = reference('cell', W, O);
    const d = decodePath(ref.subarray(0, ref.length - 20), { topic: TOPIC });
    expect(d).toMatchObject({ code: 'ros.path_bad_message', where: { topic: TOPIC } });
    expect((d as { where: { byteOffset: number } }).where.byteOffset).toBeGreaterThan(100);
    expect(decodePath(Uint8Array.of(9, 9, 9), { topic: TOPIC })).toMatchObject({ code: 'ros.path_bad_message', where: { topic: TOPIC, byteOffset: 0 } });
  });
});

describe('a path from a topic gets the parameters\' checks, placed at the topic', () => {
  const check = (W: number[], O: number[] = [], frame = 'cell') => topicPathProblems(pathCell, decodePath(encodePath(frame, 0, W, O), { topic: TOPIC }) as TopicPath, 'cell', { topic: TOPIC });
  const own = pathCell.task.path!;

  it('takes the example\'s own path', () => {
    expect(check([...own.waypoints_m], [...own.orientations_xyzw])).toEqual([]);
  });

  it.each([
    ['one pose', [0, 0, 0.9], 'param.path_too_short'],
    ['a repeated point', [0, 0, 0.9, 0, 0, 0.9, 2.6, 0.6, 0.85], 'param.path_repeated_point'],
    ['an end inside a zone (the column)', [0, 0, 0.9, 0.75, -0.8, 0.9], 'param.zone_overlaps_goal'],
    ['a turn tighter than the object allows', [0, 0, 0.9, 0.3, 0, 0.9, 0.3, 0.3, 0.9], 'param.path_turn_too_tight'],
  ])('refuses %s', (_what, W, code) => {
    const p = check(W as number[]);
    expect(p.map((x) => x.code)).toContain(code);
    expect(p.every((x) => x.where?.topic === TOPIC)).toBe(true);
    expect(p.find((x) => x.code === code)!.hint).toBeTruthy();
  });

  it('refuses orientations that are not unit quaternions and a frame other than the cell', () => {
    expect(check([0, 0, 0.9, 2.6, 0.6, 0.85], [0, 0, 0, 0, 0, 0, 0, 0]).map((x) => x.code)).toContain('param.path_orientation_not_unit');
    expect(check([...own.waypoints_m], [...own.orientations_xyzw], 'map')).toMatchObject([{ code: 'ros.path_wrong_frame', message: expect.stringMatching(/'map'/) }]);
  });
});

describe('the live node takes the path from a topic', () => {
  const publisher = (s: Setup) => {
    const n = new s.rcl.Node('planner', '/');
    return n.createPublisher(PATH_TYPE, TOPIC, { qos: new s.rcl.QoS(1, 1, RMW.reliability.reliable, RMW.durability.transient_local) });
  };

  it('subscribes on the lifecycle node with reliable QoS at configure', () => {
    const s = setup({ pathTopic: TOPIC });
    const inf = s.rcl.node('antiphon');
    expect(inf.subscriptions.map((x) => x.topic)).toContain(TOPIC);
    expect(inf.subscriptions.find((x) => x.topic === TOPIC)!.qos).toMatchObject({ reliability: PATH_QOS.reliability, durability: 'volatile' });
    // Without the option there is no such subscription.
    expect(setup().rcl.node('antiphon').subscriptions.map((x) => x.topic)).not.toContain(TOPIC);
  });

  it('while inactive: taken at once, keeping the tare (the arm can be activated)', () => {
    const s = setup({ pathTopic: TOPIC });
    s.feed(0, 1000); // tared, inactive
    expect(s.nodes.step!.out.tared).toBe(true);
    publisher(s).publish(Buffer.from(encodePath('cell', 0, W, O)));
    expect(s.nodes.counters.paths_taken).toBe(1);
    expect(s.nodes.config.task.path!.waypoints_m).toEqual(W);
    expect(s.nodes.config.task.goal_m).toEqual([1.6, 0]);
    expect(s.nodes.step!.task.planar).toBe(false);
    expect(s.nodes.step!.out.tared).toBe(true);
    expect(s.nodes.inference.activate().label).toBe('active');
    // The markers draw the new path.
    s.feed(1000, 10);
    s.rcl.tickPeriod(500_000_000n);
    const m = (s.rcl.sent('/left/antiphon/markers').at(-1) as { markers: { ns: string; points: { z: number }[] }[] }).markers;
    const line = m.find((x) => x.ns === 'antiphon_left/path')!;
    expect(Math.max(...line.points.map((p) => p.z))).toBeGreaterThan(0.93); // the corner at 0.95 m is rounded
  });

  it('while active: kept, and taken at the next deactivate (the safe point)', () => {
    const s = setup({ pathTopic: TOPIC });
    activateAfterTare(s);
    const before = s.nodes.config;
    publisher(s).publish(Buffer.from(encodePath('cell', 0, W, O)));
    expect(s.nodes.counters.paths_taken).toBe(0);
    expect(s.nodes.config).toBe(before);
    expect(s.rcl.node('antiphon').logs.some((l: string) => /taken at the next deactivate/.test(l))).toBe(true);
    s.feed(1000, 100);
    expect(s.nodes.inference.deactivate().label).toBe('inactive');
    expect(s.nodes.counters.paths_taken).toBe(1);
    expect(s.nodes.config.task.path!.waypoints_m).toEqual(W);
  });

  it('refuses an invalid path with the topic and the reason, and keeps the parameters\' path', () => {
    const s = setup({ pathTopic: TOPIC });
    s.feed(0, 1000);
    const pub = publisher(s);
    pub.publish(Buffer.from(encodePath('map', 0, W, O)));
    pub.publish(Buffer.from(encodePath('cell', 0, [0, 0, 0.9, 0, 0, 0.9], [])));
    pub.publish(Buffer.from(Uint8Array.of(0, 1, 0, 0, 7)));
    expect(s.nodes.counters.paths_refused).toBe(3);
    expect(s.nodes.counters.paths_taken).toBe(0);
    expect(s.nodes.config.task.path?.waypoints_m ?? []).toEqual(cell.left.config.task.path?.waypoints_m ?? []);
    const warns = s.rcl.node('antiphon').logs.filter((l: string) => l.startsWith(`warn path on ${TOPIC} refused`));
    expect(warns).toHaveLength(3);
    expect(warns[0]).toMatch(/'map'/);
    expect(warns[1]).toMatch(/repeats/);
    expect(warns[2]).toMatch(/does not parse|not a CDR/);
  });
});
