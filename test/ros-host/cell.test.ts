/**
 * Opt-in suite for a ROS 2 host (not run by `npm test`): the installed package as a cell uses
 * it, through the ROS 2 command line. Run from a sourced workspace where antiphon is built and
 * installed (see README "Running on a ROS 2 cell"):
 *
 *   source /opt/ros/<distro>/setup.bash
 *   npm ci && colcon build --packages-select antiphon && source install/setup.bash
 *   npm run test:ros-host
 *
 * Cases: `ros2 launch` of both launch files from the installed workspace; a walk through the
 * lifecycle with `ros2 lifecycle set`; `ros2 param set` accepted and refused; `ros2 bag play
 * --clock 1000` of a demo bag on sim time; a reliable (default QoS) twist subscriber.
 */
import { spawn, spawnSync, type ChildProcess } from 'node:child_process';
import { mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import { afterEach, beforeAll, describe, expect, it } from 'vitest';

const root = resolve(__dirname, '../..');
const sleep = (ms: number) => new Promise((r) => setTimeout(r, ms));
let children: ChildProcess[] = [];

function sh(cmd: string, timeout = 60_000): { code: number; out: string } {
  const r = spawnSync('bash', ['-c', cmd], { encoding: 'utf8', timeout });
  return { code: r.status ?? -1, out: (r.stdout ?? '') + (r.stderr ?? '') };
}
function start(cmd: string): ChildProcess {
  const c = spawn('bash', ['-c', `exec ${cmd}`], { stdio: 'inherit', detached: false });
  children.push(c);
  return c;
}
/** Poll a command until its output matches. */
async function until(cmd: string, re: RegExp, ms = 30_000): Promise<string> {
  const end = Date.now() + ms;
  let last = '';
  while (Date.now() < end) {
    last = sh(cmd, 20_000).out;
    if (re.test(last)) return last;
    await sleep(500);
  }
  throw new Error(`${cmd}: never matched ${re}; last output:\n${last}`);
}

beforeAll(() => {
  if (!process.env['ROS_DISTRO'] || !process.env['AMENT_PREFIX_PATH']) throw new Error('source a ROS 2 distro and the workspace (install/setup.bash) first');
  const p = sh('ros2 pkg prefix antiphon');
  if (p.code !== 0) throw new Error(`antiphon is not installed in the sourced workspace: colcon build --packages-select antiphon && source install/setup.bash (${p.out.trim()})`);
});

afterEach(async () => {
  for (const c of children) c.kill('SIGINT');
  await sleep(1500);
  for (const c of children) if (c.exitCode === null) c.kill('SIGTERM');
  children = [];
});

describe('the installed package on ROS 2', () => {
  it('ros2 launch antiphon dual_arm.launch.py: both arms, two nodes each, the lifecycle node unconfigured', async () => {
    start(`ros2 launch antiphon dual_arm.launch.py params_file:=${resolve(root, 'config/demo_cell.yaml')}`);
    const nodes = await until('ros2 node list', /\/right\/antiphon_roles/);
    for (const n of ['/left/antiphon', '/left/antiphon_roles', '/right/antiphon', '/right/antiphon_roles']) expect(nodes).toContain(n);
    expect((await until('ros2 lifecycle get /left/antiphon', /unconfigured/))).toMatch(/unconfigured \[1\]/);
  });

  it('ros2 launch antiphon arm.launch.py arm:=right: /right only, on /right topics', async () => {
    start(`ros2 launch antiphon arm.launch.py arm:=right autostart:=true params_file:=${resolve(root, 'config/demo_cell.yaml')}`);
    await until('ros2 node list', /\/right\/antiphon\b/);
    const topics = await until('ros2 topic list', /\/right\/antiphon\/recommended_twist/);
    expect(topics).not.toMatch(/\/left\/antiphon/);
    expect(sh('ros2 topic info -v /right/antiphon/recommended_twist').out).toMatch(/Reliability: RELIABLE/);
  });

  it('ros2 lifecycle set: configure, activate refused until tared, deactivate, cleanup, shutdown', async () => {
    start(`ros2 launch antiphon arm.launch.py arm:=left params_file:=${resolve(root, 'config/demo_cell.yaml')}`);
    await until('ros2 lifecycle get /left/antiphon', /unconfigured/);
    expect(sh('ros2 lifecycle set /left/antiphon configure').out).toMatch(/Transitioning successful/);
    // No wrench yet: not tared, so activate is refused.
    expect(sh('ros2 lifecycle set /left/antiphon activate').out).toMatch(/Transitioning failed/);
    // antiphon/tare, called before any input (the arm inhibited): answered only when the tare is
    // taken, from the first still window once the driver publishes.
    let tareReply = '';
    const tare = spawn('bash', ['-c', 'ros2 service call /left/antiphon/tare std_srvs/srv/Trigger'], { stdio: ['ignore', 'pipe', 'inherit'] });
    tare.stdout!.on('data', (d) => (tareReply += String(d)));
    children.push(tare);
    await sleep(3000);
    expect(tareReply).not.toMatch(/response:/);
    // A reliable subscriber sees zero twists while inactive once a driver publishes.
    start(`ros2 topic pub -r 1000 /left/wrench geometry_msgs/msg/WrenchStamped "{header: {frame_id: left_ft_sensor}, wrench: {force: {z: -11.8}}}"`);
    start(`ros2 topic pub -r 1000 /left/tool_pose geometry_msgs/msg/PoseStamped "{header: {frame_id: cell}, pose: {position: {x: 0.1, y: 0.55, z: 0.9}, orientation: {w: 1.0}}}"`);
    start(`ros2 topic pub -r 500 /left/joint_states sensor_msgs/msg/JointState "{name: [j1], position: [0.0], velocity: [0.0]}"`);
    const twist = await until('ros2 topic echo --once /left/antiphon/recommended_twist', /linear:/);
    expect(twist).toMatch(/x: 0\.0/);
    await sleep(2000);
    expect(tareReply).toMatch(/success=True/);
    expect(sh('ros2 lifecycle set /left/antiphon activate').out).toMatch(/Transitioning successful/);
    expect(sh('ros2 lifecycle set /left/antiphon deactivate').out).toMatch(/Transitioning successful/);
    expect(sh('ros2 lifecycle set /left/antiphon cleanup').out).toMatch(/Transitioning successful/);
    expect(sh('ros2 lifecycle set /left/antiphon shutdown').out).toMatch(/Transitioning successful/);
  });

  it('ros2 param set: a threshold accepted, a value past its ceiling and a structural key refused', async () => {
    start(`ros2 launch antiphon arm.launch.py arm:=left autostart:=true params_file:=${resolve(root, 'config/demo_cell.yaml')}`);
    await until('ros2 node list', /\/left\/antiphon_roles/);
    expect(sh('ros2 param set /left/antiphon_roles watchdog.force_limit_n 120.0').out).toMatch(/Set parameter successful/);
    expect(sh('ros2 param set /left/antiphon_roles watchdog.force_limit_n 600.0').out).toMatch(/failed/i);
    expect(sh('ros2 param set /left/antiphon_roles wrench_filter.order 2').out).toMatch(/read-only|failed/i);
    expect(sh('ros2 param describe /left/antiphon_roles watchdog.force_limit_n').out).toMatch(/Min value: 1\.0[\s\S]*Max value: 500\.0/);
    // The dump loads back with the node's own loader.
    const dir = mkdtempSync(join(tmpdir(), 'antiphon-dump-'));
    const f = join(dir, 'left.yaml');
    expect(sh(`ros2 param dump /left/antiphon_roles > ${f} && ros2 param dump /left/antiphon | tail -n +1 >> ${f} && node ${resolve(root, 'dist/src/cli/main.js')} check-config ${f} --arm left`).code).toBe(0);
  });

  it('ros2 bag play --clock 1000 of a demo bag on sim time: the node follows the bag, no hold, a moving twist', async () => {
    const out = mkdtempSync(join(tmpdir(), 'antiphon-demo-'));
    expect(sh(`node ${resolve(root, 'dist/src/cli/main.js')} simulate --params ${resolve(root, 'config/demo_cell.yaml')} --seed 7 --out ${out}/sim --overwrite`, 600_000).code).toBe(0);
    start(`ros2 launch antiphon dual_arm.launch.py use_sim_time:=true autostart:=true params_file:=${resolve(root, 'config/demo_cell.yaml')}`);
    await until('ros2 node list', /\/right\/antiphon_roles/);
    start(`ros2 bag play ${out}/sim/bag --clock 1000`);
    const wd = await until('ros2 topic echo --once /left/antiphon/watchdog', /held:/, 60_000);
    expect(wd).toMatch(/held: false/);
    const tw = await until('ros2 topic echo --once /left/antiphon/recommended_twist', /linear:/);
    expect(tw).not.toMatch(/x: 0\.0\n\s+y: 0\.0/);
  });
});
