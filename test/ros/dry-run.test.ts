/**
 * `antiphon node --dry-run [--json]` (the graph from the same construction code on the
 * recording stand-in), and the refusals of `antiphon node`: no --params (exit 2), no ROS 2
 * (how to source it), both at once.
 */
import { describe, expect, it } from 'vitest';
import { register } from '../../src/cli/node.js';
import { loadCell } from '../../src/params/config.js';
import { ArmNodes } from '../../src/ros/arm-nodes.js';
import { RecordingRcl } from '../../src/ros/recorder.js';
import { runRegistered } from '../support/run-command.js';

const run = (args: string[]) => runRegistered(register, 'node', args);

describe('antiphon node --dry-run', () => {
  it('--json equals what the stand-in records from the same construction, in the documented shape', async () => {
    const r = await run(['--arm', 'right', '--params', 'config/demo_cell.yaml', '--dry-run', '--json']);
    expect(r.code, r.stderr).toBe(0);
    const g = JSON.parse(r.stdout);
    const rcl = new RecordingRcl();
    const cell = loadCell('config/demo_cell.yaml');
    new ArmNodes(rcl, { arm: 'right', config: cell.right.config, values: cell.right.values }).inference.configure();
    expect(g).toEqual(JSON.parse(JSON.stringify(rcl.graph())));
    // The shape: nodes[] with name, namespace, lifecycle, publications/subscriptions (topic, type, qos), services, parameters.
    expect(g.nodes.map((n: { name: string; namespace: string; lifecycle: boolean }) => [n.name, n.namespace, n.lifecycle])).toEqual([['antiphon_roles', '/right', false], ['antiphon', '/right', true]]);
    for (const n of g.nodes) {
      expect(Object.keys(n)).toEqual(['name', 'namespace', 'lifecycle', 'publications', 'subscriptions', 'services', 'parameters']);
      for (const e of [...n.publications, ...n.subscriptions]) {
        expect(Object.keys(e)).toEqual(['topic', 'type', 'qos']);
        expect(Object.keys(e.qos)).toEqual(['reliability', 'durability', 'history', 'depth']);
      }
      for (const s of n.services) expect(Object.keys(s)).toEqual(['name', 'type']);
      for (const p of n.parameters) expect(Object.keys(p)).toEqual(['name', 'type', 'read_only', 'range', 'description']);
    }
    const twist = g.nodes[1].publications.find((p: { topic: string }) => p.topic === '/right/antiphon/recommended_twist');
    expect(twist).toEqual({ topic: '/right/antiphon/recommended_twist', type: 'geometry_msgs/msg/TwistStamped', qos: { reliability: 'reliable', durability: 'volatile', history: 'keep_last', depth: 10 } });
    const limit = g.nodes[0].parameters.find((p: { name: string }) => p.name === 'watchdog.linear_speed_limit_m_s');
    expect(limit).toMatchObject({ type: 'double', read_only: false, range: { from: 0.001, to: 1, step: 0 } });
  });

  it('text output lists nodes, topics with QoS and services', async () => {
    const r = await run(['--arm', 'left', '--params', 'config/demo_cell.yaml', '--dry-run']);
    expect(r.code).toBe(0);
    expect(r.stdout).toMatch(/^node \/left\/antiphon_roles\n/);
    expect(r.stdout).toMatch(/node \/left\/antiphon \(lifecycle\)/);
    expect(r.stdout).toMatch(/publishes  \/left\/antiphon\/recommended_twist  geometry_msgs\/msg\/TwistStamped  \[reliable, volatile, keep_last 10\]/);
  });
});

describe('SROS2: services can be turned off', () => {
  it('ros.services.enabled: false (read-only) leaves no reset or tare service, and says so', () => {
    const cell = loadCell('config/demo_cell.yaml');
    const values = new Map(cell.left.values);
    values.set('ros.services.enabled', { ...values.get('ros.services.enabled')!, value: false });
    const rcl = new RecordingRcl();
    new ArmNodes(rcl, { arm: 'left', config: cell.left.config, values }).inference.configure();
    const g = rcl.graph();
    expect(g.nodes.flatMap((n) => n.services)).toEqual([]);
    expect(g.nodes[1]!.parameters.find((p) => p.name === 'ros.services.enabled')).toMatchObject({ type: 'bool', read_only: true });
    expect(rcl.nodes[1]!.logs.some((l) => l.includes('no reset_hold or tare service'))).toBe(true);
  });
});

describe('antiphon node refusals', () => {
  it('without --params: exit 2, a live cell never runs on demo values', async () => {
    const r = await run(['--arm', 'left', '--dry-run']);
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/--params <file>: a live cell never runs on demo defaults/);
  });
  it('without ROS 2: says how to source it; without both: both problems at once', async () => {
    const saved = { d: process.env['ROS_DISTRO'], a: process.env['AMENT_PREFIX_PATH'] };
    delete process.env['ROS_DISTRO'];
    delete process.env['AMENT_PREFIX_PATH'];
    try {
      const one = await run(['--arm', 'left', '--params', 'config/demo_cell.yaml']);
      expect(one.code).toBe(2);
      expect(one.stderr).toMatch(/no ROS 2 environment.*source \/opt\/ros\/<distro>\/setup\.bash/s);
      const both = await run(['--arm', 'left']);
      expect(both.code).toBe(2);
      const lines = both.stderr.trim().split('\n');
      expect(lines).toHaveLength(2);
      expect(lines[0]).toMatch(/--params/);
      expect(lines[1]).toMatch(/ROS_DISTRO/);
    } finally {
      if (saved.d !== undefined) process.env['ROS_DISTRO'] = saved.d;
      if (saved.a !== undefined) process.env['AMENT_PREFIX_PATH'] = saved.a;
    }
  });
  it('a bad arm, and a bad parameters file, exit 2 with the place', async () => {
    expect((await run(['--arm', 'middle', '--params', 'config/demo_cell.yaml', '--dry-run'])).stderr).toMatch(/option --arm: --arm must be left or right/);
    const r = await run(['--arm', 'left', '--params', 'examples/expectations.yaml', '--dry-run']);
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/examples\/expectations\.yaml:\d+:\d+/);
  });
});
