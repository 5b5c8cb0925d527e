/**
 * Opt-in suite for a ROS 2 host (not run by `npm test`): the real node on real rcl.
 *
 *   source /opt/ros/<distro>/setup.bash
 *   colcon build --packages-select antiphon && source install/setup.bash   # antiphon/msg/*
 *   npm install && npm run test:ros-host
 *
 * It starts `antiphon node --arm left` as a process, publishes the driver's topics with
 * rclnodejs, and checks the node's outputs, services and parameters over DDS.
 */
import { spawn, type ChildProcess } from 'node:child_process';
import { resolve } from 'node:path';
import { afterAll, beforeAll, describe, expect, it } from 'vitest';

const root = resolve(__dirname, '../..');
const sourced = !!process.env['ROS_DISTRO'] && !!process.env['AMENT_PREFIX_PATH'];
let rcl: any;
let node: any;
let child: ChildProcess | undefined;

beforeAll(async () => {
  if (!sourced) throw new Error('source a ROS 2 distro first (ROS_DISTRO and AMENT_PREFIX_PATH are unset)');
  rcl = (await import('rclnodejs' as string)).default;
  await rcl.init();
  node = new rcl.Node('antiphon_test_driver', '/left');
  node.spin();
  // --autostart: configure, then activate once tared; --ros-args as launch passes them.
  child = spawn(process.execPath, [resolve(root, 'dist/src/cli/main.js'), 'node', '--arm', 'left', '--params', resolve(root, 'config/demo_cell.yaml'), '--autostart', '--ros-args', '-r', '__ns:=/left'], { stdio: 'inherit' });
  await new Promise((r) => setTimeout(r, 3000));
});

afterAll(async () => {
  child?.kill('SIGTERM');
  node?.destroy();
  await rcl?.shutdown();
});

const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));

describe('antiphon node on ROS 2', () => {
  it('publishes a recommended twist for every wrench, zero until tared, then moving', async () => {
    const twists: { twist: { linear: { x: number; y: number } } }[] = [];
    // Default (reliable) QoS, as a velocity interface on the arm subscribes: the twist is reliable.
    node.createSubscription('geometry_msgs/msg/TwistStamped', '/left/antiphon/recommended_twist', (m: any) => twists.push(m));
    const wrench = node.createPublisher('geometry_msgs/msg/WrenchStamped', '/left/wrench', { qos: rcl.QoS.profileSensorData });
    const pose = node.createPublisher('geometry_msgs/msg/PoseStamped', '/left/tool_pose', { qos: rcl.QoS.profileSensorData });
    const joints = node.createPublisher('sensor_msgs/msg/JointState', '/left/joint_states', { qos: rcl.QoS.profileSensorData });
    const zones = node.createPublisher('antiphon/msg/ZoneView', '/left/zone_view');
    const header = () => ({ stamp: node.now().toMsg(), frame_id: 'left_ft_sensor' });
    for (let k = 0; k < 1500; k++) {
      pose.publish({ header: header(), pose: { position: { x: 0.1, y: 0.55, z: 0.9 }, orientation: { x: 0, y: 0, z: 0, w: 1 } } });
      if (k % 2 === 0) joints.publish({ header: header(), name: ['j1'], position: [0], velocity: [0], effort: [] });
      if (k % 100 === 0) zones.publish({ header: header(), zones: ['clamp_post', 'tray_drop'], state: [0, 2] });
      wrench.publish({ header: header(), wrench: { force: { x: 0.1, y: -0.2, z: -11.8 }, torque: { x: 0, y: 0, z: 0 } } });
      await sleep(1);
    }
    await sleep(200);
    expect(twists.length).toBeGreaterThan(500);
    expect(Math.hypot(twists.at(-1)!.twist.linear.x, twists.at(-1)!.twist.linear.y)).toBeGreaterThan(0);
  });

  it('holds when the wrench stops, and ~/reset_hold refuses until the clear time has passed', async () => {
    await sleep(500);
    const client = node.createClient('std_srvs/srv/Trigger', '/left/antiphon/reset_hold');
    expect(await client.waitForService(5000)).toBe(true);
    const res = await client.sendRequestAsync({});
    expect(res.success).toBe(false);
  });

  it('exposes its parameters: structural ones read-only, thresholds settable within their ceilings', async () => {
    const params = node.createParameterClient('/left/antiphon_roles');
    const value = await params.getParameter('wrench_filter.cutoff_hz');
    expect(value.value).toBe(5);
    expect((await params.setParameter('wrench_filter.cutoff_hz', 9.0)).successful).toBe(false);
    expect((await params.setParameter('watchdog.force_limit_n', 600.0)).successful).toBe(false);
    expect((await params.setParameter('watchdog.force_limit_n', 120.0)).successful).toBe(true);
  });
});
