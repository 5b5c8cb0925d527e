/**
 * `antiphon node --arm <left|right> --params <file> [--autostart] [--dry-run [--json]] [--ros-args ...]`:
 * the live ROS 2 nodes of one arm (src/ros/arm-nodes.ts), launched beside the arm's driver.
 * Needs a sourced ROS 2 distro and the optional dependency rclnodejs (see DEVELOPERS.md),
 * except `--dry-run`, which prints the ROS graph the node would create, computed by running the
 * same construction code against a recording stand-in.
 */
import type { Command } from 'commander';
import { loadCell } from '../params/config.js';
import type { ArmConfig } from '../params/config.js';
import type { ArmName, ResolvedValue } from '../params/spec.js';
import { ArmNodes } from '../ros/arm-nodes.js';
import { parsePathOf, type PathOf } from '../ros/path-msg.js';
import { stateLabel, type RclModule } from '../ros/rcl.js';
import { RecordingRcl, type DryRunGraph } from '../ros/recorder.js';
import { InputError, type Problem } from '../util/errors.js';
import { logger } from '../util/log.js';
import { printJson, printText, runCommand } from './common.js';

const SOURCE_HINT = 'source /opt/ros/<distro>/setup.bash (and your workspace install/setup.bash with the antiphon interfaces), then run again; replay, simulate and node --dry-run need no ROS';

function rosEnvProblem(env: NodeJS.ProcessEnv): Problem | undefined {
  if (env['ROS_DISTRO'] && env['AMENT_PREFIX_PATH']) return undefined;
  return { code: 'ros.not_sourced', message: 'no ROS 2 environment: ROS_DISTRO and AMENT_PREFIX_PATH are not set', hint: SOURCE_HINT };
}

/** Load rclnodejs, or explain plainly why it cannot be used here. */
export async function loadRclnodejs(env: NodeJS.ProcessEnv = process.env): Promise<RclModule> {
  const p = rosEnvProblem(env);
  if (p) throw new InputError(p);
  try {
    const mod = (await import('rclnodejs' as string)) as { default: RclModule };
    return mod.default;
  } catch (err) {
    const code = (err as { code?: string }).code;
    if (code === 'ERR_MODULE_NOT_FOUND') {
      throw new InputError({ code: 'ros.no_rclnodejs', message: 'rclnodejs is not installed (it is an optional dependency that builds only with a sourced ROS 2)', hint: 'with ROS 2 sourced, run npm install (or npm rebuild rclnodejs)' });
    }
    if (code === 'NATIVE_ERROR') {
      throw new InputError({ code: 'ros.native', message: `rclnodejs could not load its native binding: ${(err as Error).message}`, hint: 'rebuild it against the sourced distro: npm rebuild rclnodejs' });
    }
    throw err;
  }
}

/** The arguments after `--ros-args` (rcl parses them: remapping, namespace, parameters, enclave, log levels). */
export function rosArgsOf(argv: readonly string[]): string[] {
  const i = argv.indexOf('--ros-args');
  return i < 0 ? [] : argv.slice(i);
}

/** Check the options; every problem at once. */
export function checkNodeOptions(opts: { arm: string; params?: string; dryRun?: boolean }, env: NodeJS.ProcessEnv): void {
  const problems: Problem[] = [];
  if (opts.arm !== 'left' && opts.arm !== 'right') problems.push({ code: 'cli.bad_arm', message: `--arm must be left or right, got '${opts.arm}'`, where: { option: '--arm' } });
  if (opts.params === undefined) {
    problems.push({ code: 'cli.no_params', message: 'antiphon node needs --params <file>: a live cell never runs on demo defaults', where: { option: '--params' }, hint: 'write the cell\'s parameters file (start from config/demo_cell.yaml) and check it with antiphon check-config <file>' });
  }
  if (!opts.dryRun) {
    const p = rosEnvProblem(env);
    if (p) problems.push(p);
  }
  if (problems.length) throw new InputError(problems);
}

/** `-r from:=to` and `-r __ns:=/x` of the ROS arguments, for the dry run. */
function applyRemaps(rcl: RecordingRcl, rosArgs: readonly string[]): void {
  for (let k = 0; k < rosArgs.length - 1; k++) {
    if (rosArgs[k] !== '-r' && rosArgs[k] !== '--remap') continue;
    const m = /^([^:=\s]+):=(\S+)$/.exec(rosArgs[k + 1]!);
    if (!m) continue;
    if (m[1] === '__ns') rcl.namespaceOverride = m[2]!;
    else rcl.remaps.set(m[1]!, m[2]!);
  }
}

/** Run the node's construction code against the recording stand-in and return what it created (after configure). */
export function dryRun(arm: ArmName, paramsFile: string, rosArgs: readonly string[] = [], pathTopic?: string, pathOf: PathOf = 'object'): DryRunGraph {
  const cell = loadCell(paramsFile);
  const rcl = new RecordingRcl();
  applyRemaps(rcl, rosArgs);
  const nodes = new ArmNodes(rcl, { arm, config: cell[arm].config, values: cell[arm].values, pathOf, ...(pathTopic !== undefined ? { pathTopic } : {}) });
  nodes.inference.configure();
  return rcl.graph();
}

function graphText(g: DryRunGraph): string {
  const L: string[] = [];
  const q = (x: { reliability: string; durability: string; history: string; depth: number }) => `${x.reliability}, ${x.durability}, ${x.history} ${x.depth}`;
  for (const n of g.nodes) {
    L.push(`node ${n.namespace === '/' ? '' : n.namespace}/${n.name}${n.lifecycle ? ' (lifecycle)' : ''}`);
    for (const s of n.subscriptions) L.push(`  subscribes ${s.topic}  ${s.type}  [${q(s.qos)}]`);
    for (const p of n.publications) L.push(`  publishes  ${p.topic}  ${p.type}  [${q(p.qos)}]`);
    for (const s of n.services) L.push(`  service    ${s.name}  ${s.type}`);
    const live = n.parameters.filter((p) => !p.read_only).length;
    L.push(`  parameters ${n.parameters.length} (${live} settable at run time; --json lists them)`);
  }
  return L.join('\n');
}

/**
 * Start the nodes of one arm on rcl: rclnodejs's own SIGINT handler is removed first (it would
 * destroy the nodes before a final zero twist could be sent), then rcl is initialised with the
 * ROS arguments. `stop` sends the final zero twist, destroys the nodes and shuts rcl down.
 */
export async function startNodes(rcl: RclModule, arm: ArmName, loaded: { config: ArmConfig; values: ReadonlyMap<string, ResolvedValue> }, rosArgs: readonly string[], opts: { autostart?: boolean; pathTopic?: string; pathOf?: PathOf } = {}): Promise<{ nodes: ArmNodes; stop: (why: string) => Promise<void> }> {
  rcl.removeSignalHandlers();
  await rcl.init(undefined, ['node', 'antiphon', ...rosArgs]);
  const nodes = new ArmNodes(rcl, { arm, config: loaded.config, values: loaded.values, pathOf: opts.pathOf ?? 'object', ...(opts.pathTopic !== undefined ? { pathTopic: opts.pathTopic } : {}) });
  const log = logger('node');
  log.info({ arm, nodes: [nodes.roles.name(), nodes.inference.name()], namespace: nodes.roles.namespace() }, 'antiphon nodes up (lifecycle node unconfigured)');
  nodes.roles.spin();
  nodes.inference.spin();
  let auto: NodeJS.Timeout | undefined;
  if (opts.autostart) {
    // For cells whose bringup does not drive the lifecycle: configure once, then activate once tared.
    let configured = false;
    auto = setInterval(() => {
      const s = nodes.state;
      if (s === 'unconfigured' && !configured) {
        configured = true;
        if (stateLabel(nodes.inference.configure()) !== 'inactive') {
          log.error('autostart: configure refused (see the log above); the node stays unconfigured');
          clearInterval(auto);
        }
      } else if (s === 'inactive') nodes.inference.activate();
      else clearInterval(auto);
    }, 500);
  }
  return {
    nodes,
    stop: async (why: string) => {
      if (auto) clearInterval(auto);
      log.info({ why }, 'shutting down: final zero twist, then the nodes are destroyed');
      nodes.finalize();
      // Let the reliable final zero twist leave before the publisher goes.
      await new Promise((r) => setTimeout(r, 200));
      nodes.destroy();
      rcl.shutdown();
    },
  };
}

export function register(program: Command): void {
  program
    .command('node')
    .description('Run the live ROS 2 nodes of one arm (needs a sourced ROS 2 and rclnodejs; --dry-run needs neither). ROS arguments follow --ros-args.')
    .requiredOption('--arm <arm>', 'left or right')
    .option('--params <file>', 'antiphon parameters file (ROS 2 format; required: a live cell never runs on demo values)')
    .option('--autostart', 'drive the lifecycle node to active by itself (configure, then activate once tared)', false)
    .option('--dry-run', 'print the ROS graph the node would create (nodes, topics with QoS, services, parameters) and exit', false)
    .option('--json', 'with --dry-run: print the graph as JSON', false)
    .option('--path-topic <name>', 'also take the nominal path from this nav_msgs/msg/Path topic (poses in the cell frame): taken while inactive, or at the next deactivate')
    .option('--path-of <what>', 'what the --path-topic poses are: object (its centre), left-tool or right-tool (that arm\'s planned tool path; the grasp offset gives the object path)', 'object')
    .allowUnknownOption(true)
    .allowExcessArguments(true)
    .action((opts: { arm: string; params?: string; autostart: boolean; dryRun: boolean; json: boolean; pathTopic?: string; pathOf?: string }, cmd: Command) =>
      runCommand(opts.json, async () => {
        checkNodeOptions(opts, process.env);
        const pathOf = parsePathOf(opts.pathOf);
        if (pathOf !== 'object' && opts.pathTopic === undefined) throw new InputError({ code: 'cli.path_of_without_topic', message: `--path-of ${pathOf} needs --path-topic`, where: { option: '--path-of' }, hint: 'name the nav_msgs/msg/Path topic with --path-topic, or leave out --path-of' });
        const arm = opts.arm as ArmName;
        // The ROS arguments as given (the program's raw argv), never as commander split them.
        const rosArgs = rosArgsOf((cmd.parent as unknown as { rawArgs?: string[] } | null)?.rawArgs ?? process.argv);
        if (opts.dryRun) {
          const g = dryRun(arm, opts.params!, rosArgs, opts.pathTopic, pathOf);
          if (opts.json) printJson(g);
          else printText(graphText(g));
          return 0;
        }
        const cell = loadCell(opts.params);
        const rcl = await loadRclnodejs();
        const live = await startNodes(rcl, arm, cell[arm], rosArgs, { autostart: opts.autostart, pathOf, ...(opts.pathTopic !== undefined ? { pathTopic: opts.pathTopic } : {}) });
        // Stopped by a signal: final zero twist, nodes destroyed, exit 128 + n (130 SIGINT, 143 SIGTERM).
        const code = await new Promise<number>((resolve) => {
          const stop = (signal: string, exit: number) => void live.stop(signal).then(() => resolve(exit));
          process.once('SIGTERM', () => stop('SIGTERM', 143));
          process.once('SIGINT', () => stop('SIGINT', 130));
        });
        return code;
      }),
    );
}
