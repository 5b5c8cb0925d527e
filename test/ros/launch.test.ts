/**
 * Defects 1-4 and the packaging: the launch files evaluated with a stand-in for launch and
 * launch_ros (test/ros/launch_stub/run_launch.py; ROS 2 cannot be installed here), their exact
 * command lines run through the CLI (`--dry-run`, the same construction code), the CMake
 * project and package.xml. `ros2 launch` itself runs in the opt-in host suite.
 */
import { spawnSync } from 'node:child_process';
import { readdirSync, readFileSync } from 'node:fs';
import { resolve } from 'node:path';
import { describe, expect, it } from 'vitest';
import { register } from '../../src/cli/node.js';
import type { DryRunGraph } from '../../src/ros/recorder.js';
import { runRegistered } from '../support/run-command.js';

const root = resolve(__dirname, '../..');
const py = '/usr/bin/python3';

interface Proc { package: string; executable: string; name: string | null; namespace: string; cmd: string[]; env: Record<string, string> }
function launch(file: string, ...args: string[]): { processes: Proc[]; arguments: { name: string; choices: string[] | null }[]; error?: string } {
  const r = spawnSync(py, [resolve(__dirname, 'launch_stub/run_launch.py'), resolve(root, 'launch', file), root, ...args], { encoding: 'utf8' });
  expect(r.status, r.stderr).toBe(0);
  return JSON.parse(r.stdout);
}

/** Run a launched command line through the CLI, as lib/antiphon/antiphon_node does (`node "$@"`), with --dry-run --json. */
async function dry(cmd: string[]): Promise<DryRunGraph> {
  const i = cmd.indexOf('--ros-args');
  const args = [...cmd.slice(1, i), '--dry-run', '--json', ...cmd.slice(i)];
  const r = await runRegistered(register, 'node', args);
  expect(r.code, r.stderr + r.stdout).toBe(0);
  return JSON.parse(r.stdout);
}

describe('launch files (evaluated with a launch stand-in)', () => {
  it('defect 1: the exact argv of a launch goes through the CLI, --ros-args and all', async () => {
    const { processes } = launch('arm.launch.py', 'arm:=left', 'wrench_topic:=/left/ft_sensor/wrench', 'use_security:=true', 'keystore:=/etc/antiphon/keys');
    expect(processes).toHaveLength(1);
    const g = await dry(processes[0]!.cmd);
    const roles = g.nodes.find((n) => n.name === 'antiphon_roles')!;
    expect(roles.subscriptions.find((s) => s.type === 'geometry_msgs/msg/WrenchStamped')!.topic).toBe('/left/ft_sensor/wrench');
    // SROS2: an enclave per arm, and the security environment.
    expect(processes[0]!.cmd.slice(processes[0]!.cmd.indexOf('--ros-args'))).toEqual(expect.arrayContaining(['--enclave', '/antiphon/left']));
    expect(processes[0]!.env).toEqual({ ROS_SECURITY_ENABLE: 'true', ROS_SECURITY_STRATEGY: 'Enforce', ROS_SECURITY_KEYSTORE: '/etc/antiphon/keys' });
  });

  it('defect 3: arm:=right starts in /right on /right/* (defaults from launch substitutions, choices left/right)', async () => {
    const l = launch('arm.launch.py', 'arm:=right');
    expect(l.arguments.find((a) => a.name === 'arm')!.choices).toEqual(['left', 'right']);
    const p = l.processes[0]!;
    expect(p.namespace).toBe('/right');
    expect(p.cmd).toEqual(expect.arrayContaining(['--arm', 'right', '-r', 'wrench:=/right/wrench', '-r', 'zone_view:=/right/zone_view', '-r', 'partner_held:=/left/antiphon/held']));
    const g = await dry(p.cmd);
    expect(g.nodes.map((n) => n.namespace)).toEqual(['/right', '/right']);
    expect(g.nodes.flatMap((n) => [...n.subscriptions, ...n.publications]).filter((e) => e.topic !== '/diagnostics').every((e) => e.topic.startsWith('/right/'))).toBe(true);
    expect(launch('arm.launch.py', 'arm:=middle').error).toMatch(/one of \['left', 'right'\]/);
    // Nothing comes from the environment.
    for (const f of ['arm.launch.py', 'dual_arm.launch.py', 'antiphon_launch_common.py']) expect(readFileSync(resolve(root, 'launch', f), 'utf8')).not.toMatch(/os\.environ|getenv/);
  });

  it('defect 4: launch_ros Node of the installed executable antiphon_node, params file from the package share', () => {
    const { processes } = launch('dual_arm.launch.py', 'autostart:=true', 'use_sim_time:=true');
    expect(processes.map((p) => [p.package, p.executable, p.namespace])).toEqual([['antiphon', 'antiphon_node', '/left'], ['antiphon', 'antiphon_node', '/right']]);
    for (const p of processes) {
      // No node name: a __node remap would rename both nodes of the process.
      expect(p.name).toBeNull();
      expect(p.cmd).toEqual(expect.arrayContaining(['--params', resolve(root, 'config/demo_cell.yaml'), '--autostart']));
      const file = p.cmd[p.cmd.indexOf('--params-file') + 1]!;
      expect(readFileSync(file, 'utf8')).toContain('use_sim_time: true');
    }
    // The share path holds no dist/: the executable finds the app beside itself (lib/antiphon/app).
    const script = readFileSync(resolve(root, 'scripts/antiphon_node'), 'utf8');
    expect(script).toMatch(/\$here\/app\/dist\/src\/cli\/main\.js" node "\$@"/);
  });
});

describe('CMakeLists.txt and package.xml', () => {
  const cmake = readFileSync(resolve(root, 'CMakeLists.txt'), 'utf8').replace(/#.*$/gm, '');
  it('defect 2: the project enables C and C++ (rosidl compiles typesupport libraries)', () => {
    // Common practice (rosidl_generate_interfaces): the generators add C and C++ targets.
    const m = /project\(\s*antiphon\s+(?:LANGUAGES\s+)?([A-Z ]+)\)/.exec(cmake);
    expect(m?.[1]?.split(/\s+/)).toEqual(expect.arrayContaining(['C', 'CXX']));
    expect(cmake).not.toMatch(/project\(antiphon NONE\)/);
  });
  it('builds every msg/*.msg and installs the executable under lib/antiphon, launch, config and rviz under share', () => {
    const listed = [...cmake.matchAll(/"msg\/(\w+\.msg)"/g)].map((m) => m[1]).sort();
    expect(listed).toEqual(readdirSync(resolve(root, 'msg')).filter((f) => f.endsWith('.msg')).sort());
    expect(cmake).toMatch(/install\(PROGRAMS scripts\/antiphon_node DESTINATION lib\/\$\{PROJECT_NAME\}\)/);
    expect(cmake).toMatch(/install\(DIRECTORY dist node_modules DESTINATION lib\/\$\{PROJECT_NAME\}\/app/);
    expect(cmake).toMatch(/install\(DIRECTORY config launch rviz DESTINATION share\/\$\{PROJECT_NAME\}\)/);
  });
  it('defect 14: package.xml has a nodejs exec_depend and the message packages the node uses', () => {
    const xml = readFileSync(resolve(root, 'package.xml'), 'utf8').replace(/<!--[\s\S]*?-->/g, '');
    const deps = [...xml.matchAll(/<(?:exec_)?depend>([\w]+)<\/(?:exec_)?depend>/g)].map((m) => m[1]);
    expect(deps).toEqual(expect.arrayContaining(['nodejs', 'geometry_msgs', 'sensor_msgs', 'diagnostic_msgs', 'std_srvs', 'visualization_msgs', 'lifecycle_msgs', 'launch_ros']));
  });
});
