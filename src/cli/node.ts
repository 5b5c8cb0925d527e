/**
 * `antiphon node --arm <left|right> [--params <file>] [--ros-args ...]`: the live ROS 2 node of
 * one arm, launched alongside the arm's existing driver. Needs a sourced ROS 2 distro and the
 * optional dependency rclnodejs (see DEVELOPERS.md).
 */
import type { Command } from 'commander';
import { loadCell } from '../params/config.js';
import type { ArmName } from '../params/spec.js';
import type { RclModule } from '../ros/rcl.js';
import { InputError } from '../util/errors.js';
import { logger } from '../util/log.js';
import { runCommand } from './common.js';

/** Load rclnodejs, or explain plainly why it cannot be used here. */
export async function loadRclnodejs(env: NodeJS.ProcessEnv = process.env): Promise<RclModule> {
  if (!env['ROS_DISTRO'] || !env['AMENT_PREFIX_PATH']) {
    throw new InputError({
      code: 'ros.not_sourced',
      message: 'no ROS 2 environment: ROS_DISTRO and AMENT_PREFIX_PATH are not set',
      hint: 'source /opt/ros/<distro>/setup.bash (and your workspace install/setup.bash with the antiphon interfaces), then run again; replay and simulate need no ROS',
    });
  }
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

export function register(program: Command): void {
  program
    .command('node')
    .description('Run the live ROS 2 node of one arm (needs a sourced ROS 2 and rclnodejs). ROS arguments follow --ros-args.')
    .requiredOption('--arm <arm>', 'left or right')
    .option('--params <file>', 'antiphon parameters file (ROS 2 format; the node reads it itself)')
    .option('--name <name>', 'node name', 'antiphon')
    .allowUnknownOption(true)
    .action((opts: { arm: string; params?: string; name: string }) =>
      runCommand(false, async () => {
        if (opts.arm !== 'left' && opts.arm !== 'right') throw new InputError({ code: 'cli.bad_arm', message: `--arm must be left or right, got '${opts.arm}'`, where: { option: '--arm' } });
        const cell = loadCell(opts.params);
        const arm = cell[opts.arm as ArmName];
        const rcl = await loadRclnodejs();
        const { ArmNode } = await import('../ros/arm-node.js');
        // rcl parses --ros-args itself (remapping, namespace, use_sim_time, log levels).
        const rosArgs = process.argv.includes('--ros-args') ? process.argv.slice(process.argv.indexOf('--ros-args')) : [];
        await rcl.init(undefined, ['node', 'antiphon', ...rosArgs]);
        const node = new rcl.Node(opts.name, `/${opts.arm}`);
        new ArmNode(rcl, node, arm.config, arm.values);
        logger('node').info({ arm: opts.arm, node: node.name(), namespace: node.namespace() }, 'antiphon node running');
        node.spin();
        await new Promise<void>((resolve) => {
          const stop = () => {
            node.destroy();
            rcl.shutdown();
            resolve();
          };
          process.once('SIGTERM', stop);
          process.once('SIGINT', stop);
        });
        return 0;
      }),
    );
}
