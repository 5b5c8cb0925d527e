/** `antiphon replay <bag>`: what antiphon would have done on a recorded run, with these parameters. */
import { join } from 'node:path';
import type { Command } from 'commander';
import { progressBar } from './progress.js';
import { logger } from '../util/log.js';
import type { ArmSummary } from '../replay/summary.js';
import { changedParams } from '../params/diff.js';
import { openBag } from '../bag/index.js';
import { loadDefinitionSources } from '../bag/definition-sources.js';
import { createBagWriter, storageOption } from '../bag/writer.js';
import { loadCell } from '../params/config.js';
import type { ArmName } from '../params/spec.js';
import { evaluate, hiddenZonesOf, loadExpectations, type Verdict } from '../replay/expect.js';
import { replayBag, writerSink, type ReplayRecord } from '../replay/replay.js';
import { replayReportInput, summarize } from '../replay/summary.js';
import { renderReport } from '../report/html.js';
import { parseRemaps } from '../ros/topics.js';
import { pathFromBag } from '../replay/path-topic.js';
import { parsePathOf } from '../ros/path-msg.js';
import { EXIT_CHECKS_FAILED, EXIT_OK, InputError } from '../util/errors.js';
import { interruptExitCode, interrupted, interruptedFields, watchInterrupts } from '../util/interrupt.js';
import { checkOutputDir, withOutputDir, writeFileAtomic } from '../util/outdir.js';
import { numberOption, printJson, printText, runCommand } from './common.js';

interface Opts {
  params?: string;
  arm: string;
  remap: string[];
  start?: string;
  end?: string;
  out?: string;
  overwrite?: boolean;
  expect?: string;
  storage?: string;
  definitions?: string[];
  pathTopic?: string;
  pathOf?: string;
  json?: boolean;
}

export function verdictTable(verdicts: readonly Verdict[]): string {
  const rows = verdicts.map((v) => [v.pass ? 'PASS' : 'FAIL', v.name, v.expected, v.measured]);
  const head = ['verdict', 'expectation', 'expected', 'measured'];
  const width = head.map((h, k) => Math.max(h.length, ...rows.map((r) => r[k]!.length)));
  const line = (r: string[]) => r.map((c, k) => c.padEnd(width[k]!)).join('  ').trimEnd();
  return [line(head), line(width.map((w) => '-'.repeat(w))), ...rows.map(line)].join('\n');
}

export function register(program: Command): void {
  program
    .command('replay')
    .description('Feed a recorded bag through the same arm step as the live node, on bag time; write an output bag, summary.json and report.html.')
    .argument('<bag>', 'rosbag2 directory or storage file (MCAP or sqlite3)')
    .option('--params <file>', 'ROS 2 parameters file (default: built-in defaults)')
    .option('--arm <arm>', 'left, right or both', 'both')
    .option('--remap <from:=to>', 'read input topic <from> from bag topic <to> (repeatable)', (v: string, acc: string[]) => [...acc, v], [] as string[])
    .option('--start <s>', 'start, seconds from the bag start')
    .option('--end <s>', 'end, seconds from the bag start')
    .option('--out <dir>', 'write the output bag, summary.json and report.html here')
    .option('--overwrite', 'replace an existing --out folder')
    .option('--expect <file>', 'expectations file (YAML); exit 1 when any fails')
    .option('--storage <s>', 'storage of the output bag: mcap or sqlite3 (rosbag2 .db3, as Humble records by default)', 'mcap')
    .option('--definitions <bag|dir>', 'more message definitions (repeatable): another bag, a folder of ROS packages or an install prefix; searched after the bag`s own', (v: string, acc: string[] = []) => [...acc, v])
    .option('--path-topic <name>', 'take the nominal path from this nav_msgs/msg/Path topic of the bag (its first message, poses in the cell frame) instead of task.path in the parameters')
    .option('--path-of <what>', 'what the --path-topic poses are: object (its centre), left-tool or right-tool (that arm\'s planned tool path; the grasp offset gives the object path)', 'object')
    .option('--json', 'print the summary as JSON on stdout')
    .action((bagPath: string, opts: Opts) =>
      runCommand(!!opts.json, async () => {
        if (!['left', 'right', 'both'].includes(opts.arm)) {
          throw new InputError({ code: 'cli.bad_arm', message: `--arm must be left, right or both, got '${opts.arm}'`, where: { option: '--arm' } });
        }
        if (parsePathOf(opts.pathOf) !== 'object' && opts.pathTopic === undefined) throw new InputError({ code: 'cli.path_of_without_topic', message: `--path-of ${opts.pathOf} needs --path-topic`, where: { option: '--path-of' }, hint: 'name the bag\'s nav_msgs/msg/Path topic with --path-topic, or leave out --path-of' });
        const arms: ArmName[] = opts.arm === 'both' ? ['left', 'right'] : [opts.arm as ArmName];
        const { map: remap, bad } = parseRemaps(opts.remap);
        if (bad.length) throw new InputError({ code: 'cli.bad_remap', message: `malformed --remap ${bad.join(', ')}`, where: { option: '--remap' }, hint: 'write from:=to, e.g. /left/wrench:=/ft_left/wrench' });
        const startS = numberOption('--start', opts.start, 0, 1e9);
        const endS = numberOption('--end', opts.end, 0, 1e9);
        // A note on stderr through the logger: readable on a terminal, a JSON line otherwise.
        if (opts.params === undefined) logger('replay').info({ code: 'replay.default_params', hint: "pass --params <file> with the cell's parameters" }, 'replay: no --params given, using the built-in default of every parameter (no keep-out zones: the belief has nothing to infer)');
        const cell = loadCell(opts.params);
        const storage = storageOption(opts.storage);
        // --out is checked before any work; names in the expectations are checked at load.
        const outOpts = { overwrite: !!opts.overwrite, inputs: [bagPath, opts.params, opts.expect] };
        if (opts.out !== undefined) checkOutputDir(opts.out, outOpts);
        const expectations = opts.expect ? loadExpectations(opts.expect, { arms, hiddenZones: hiddenZonesOf(cell) }) : undefined;
        const definitions = await loadDefinitionSources(opts.definitions);
        const bag = await openBag(bagPath);
        // SIGINT/SIGTERM: finish the batch, write the bag and summary.json of what was replayed, exit 130/143.
        const unwatch = watchInterrupts();
        try {
          const bar = progressBar('replay', !!opts.json);
          bar?.start(1000, 0);
          const progress = bar ? (f: number) => bar.update(Math.round(f * 1000)) : undefined;
          let configs = { left: cell.left.config, right: cell.right.config };
          if (opts.pathTopic !== undefined) {
            const cellFrame = String(cell.left.values.get('ros.frames.cell')?.value ?? 'cell');
            const bp = pathFromBag(bag, opts.pathTopic, configs, cellFrame, parsePathOf(opts.pathOf));
            configs = { left: bp.configs.left!, right: bp.configs.right! };
            for (const w of bp.warnings) logger('replay').warn({ code: w.code, topic: opts.pathTopic }, w.message);
            logger('replay').info({ topic: opts.pathTopic, poses: bp.path.waypoints_m.length / 3 }, `replay: the nominal path from ${opts.pathTopic} (${bp.path.waypoints_m.length / 3} poses)`);
          }
          const base = { arms, configs, remap, ...(startS !== undefined ? { startS } : {}), ...(endS !== undefined ? { endS } : {}), ...(progress ? { progress } : {}), ...(definitions.length ? { definitions } : {}), shouldStop: interrupted };
          let record: ReplayRecord;
          let summary: Record<string, unknown>;
          let verdicts: Verdict[] | undefined;
          const finish = (r: ReplayRecord) => {
            verdicts = expectations ? evaluate(r, expectations) : undefined;
            const s = summarize(r, opts.params ?? null, verdicts, Object.fromEntries(arms.map((a) => [a, changedParams(cell[a].values, a)])));
            const done = (s['arms'] as { samples: number }[] | undefined)?.reduce((a, x) => a + x.samples, 0) ?? 0;
            summary = { ...s, ...interruptedFields({ samples_done: done }) };
          };
          if (opts.out !== undefined) {
            await withOutputDir(opts.out, outOpts, async (tmp) => {
              const writer = await createBagWriter(join(tmp, 'bag'), { compression: 'zstd', storage });
              try {
                record = await replayBag(bag, { ...base, sink: writerSink(writer, bag) });
              } catch (err) {
                writer.abort();
                throw err;
              }
              await writer.close();
              finish(record);
              writeFileAtomic(join(tmp, 'summary.json'), JSON.stringify(summary, null, 2) + '\n');
              const input = replayReportInput(record, `replay of ${bagPath}${opts.params ? ` with ${opts.params}` : ' with built-in defaults'}`, summary, verdicts);
              writeFileAtomic(join(tmp, 'report.html'), renderReport(input));
            });
          } else {
            record = await replayBag(bag, base);
            finish(record);
          }
          bar?.stop();
          const ok = !verdicts || verdicts.every((v) => v.pass);
          if (opts.json) {
            printJson({ ...summary!, ...(opts.out ? { out: opts.out } : {}) });
          } else {
            const lines: string[] = [`replayed ${bagPath} (${record!.storage}, ${record!.duration_s.toFixed(3)} s)`];
            const n2 = (v: number | null) => (v === null ? '-' : v.toFixed(2));
            for (const a of summary!['arms'] as ArmSummary[]) {
              lines.push(`  ${a.arm}: ${a.samples} samples, ${a.role_switches} role switches, ${a.impacts.length} impacts, peak correction force ${n2(a.peak_correction_force_n)} N, ${a.holds.length ? a.holds.length + ' hold' + (a.holds.length === 1 ? '' : 's') : 'no hold'}`);
              for (const h of a.holds) lines.push(`    hold at ${h.start_s.toFixed(3)} s${h.end_s === null ? ', not released' : `, released at ${h.end_s.toFixed(3)} s`}: ${h.reasons.map((r) => r.text).join('; ')}`);
            }
            const inf = summary!['internal_force'] as { peak_n: number } | undefined;
            if (inf) lines.push(`  peak internal force ${n2(inf.peak_n)} N (estimated from the wrist wrenches; + squeeze)`);
            // The warnings themselves went to stderr once, as they were found.
            if (record!.warnings.length > 0) lines.push(`  ${record!.warnings.length} warning${record!.warnings.length === 1 ? '' : 's'} (on stderr; in summary.json with --out)`);
            if (verdicts) lines.push('', verdictTable(verdicts));
            if (opts.out) lines.push('', `wrote ${join(opts.out, 'bag')}, ${join(opts.out, 'summary.json')}, ${join(opts.out, 'report.html')}`);
            printText(lines.join('\n'));
          }
          return interruptExitCode(ok ? EXIT_OK : EXIT_CHECKS_FAILED);
        } finally {
          unwatch();
          bag.close();
        }
      }),
    );
}
