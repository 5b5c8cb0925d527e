/** `antiphon sweep`: candidates of a parameter space over bags or simulated worlds; the choice, the Pareto front, tuned.yaml. */
import { existsSync, readdirSync, statSync } from 'node:fs';
import { join } from 'node:path';
import type { Command } from 'commander';
import cliProgress from 'cli-progress';
import { cellFromFile } from '../params/config.js';
import { loadParamsFile } from '../params/load.js';
import { checkEpisodeSetup } from '../sim/episode.js';
import { loadFamily } from '../sim/family.js';
import { simOptions } from '../sim/options.js';
import { inspectBags } from '../sweep/decoded.js';
import { labelsPerBag, loadLabels, NO_LABELS } from '../sweep/labels.js';
import { objectiveByName } from '../sweep/objective.js';
import { writeSweepFiles } from '../sweep/output.js';
import { journalPath, removeJournal, runSweep, type SweepData } from '../sweep/run.js';
import { parseShard } from '../sweep/shard.js';
import { loadSpace } from '../sweep/space.js';
import { metricsText } from '../sweep/tuned.js';
import { InputError } from '../util/errors.js';
import { INPUT_LIMITS, readInputText } from '../util/read-input.js';
import { checkOutputDir, withOutputDir } from '../util/outdir.js';
import { integerOption, numberOption, printJson, printText, runCommand } from './common.js';
import { armModelOption } from './simulate.js';

interface Opts {
  params: string;
  space: string;
  bags?: string[];
  labels?: string;
  worlds?: string;
  family?: string;
  objective: string;
  jobs: string;
  shard?: string;
  seed: string;
  resume?: boolean;
  out?: string;
  overwrite?: boolean;
  duration?: string;
  armModel: string;
  json?: boolean;
}

const isBag = (p: string): boolean => {
  try {
    const st = statSync(p);
    if (st.isFile()) return /\.(mcap|db3)(\.zstd)?$/.test(p);
    if (!st.isDirectory()) return false;
    return existsSync(join(p, 'metadata.yaml')) || readdirSync(p).some((n) => /\.(mcap|db3)(\.zstd)?$/.test(n));
  } catch {
    return false;
  }
};

/** `--bags`: bag folders or files; a folder that is no bag stands for the bags directly inside it (by name). */
export function expandBags(args: readonly string[]): string[] {
  const out: string[] = [];
  for (const a of args) {
    if (isBag(a)) {
      out.push(a);
      continue;
    }
    let inner: string[] = [];
    try {
      if (statSync(a).isDirectory()) inner = readdirSync(a).sort().map((n) => join(a, n)).filter(isBag);
    } catch {
      throw new InputError({ code: 'sweep.no_bag', message: `no such bag or folder: ${a}`, where: { file: a, option: '--bags' }, hint: 'a rosbag2 folder, an .mcap or .db3 file, or a folder of bags' });
    }
    if (inner.length === 0) throw new InputError({ code: 'sweep.no_bag', message: `${a} is no bag and holds no bags`, where: { file: a, option: '--bags' }, hint: 'a rosbag2 folder (metadata.yaml), an .mcap or .db3 file, or a folder of such' });
    out.push(...inner);
  }
  return out;
}

export function register(program: Command): void {
  program
    .command('sweep')
    .description('Run every candidate of a parameter space over bags (with labelled events) or simulated worlds; choose by an objective, report the Pareto front and write tuned.yaml.')
    .requiredOption('--params <file>', 'base parameters file (YAML); tuned.yaml is this file with the chosen values changed')
    .requiredOption('--space <file>', 'sweep space file (YAML; see examples/sweep-space.yaml)')
    .option('--bags <paths...>', 'bags (rosbag2 folders, .mcap or .db3 files), or folders of bags')
    .option('--labels <file>', 'events file (CSV or YAML) or expectations file labelling the bags\' impacts and pushes')
    .option('--worlds <N>', 'instead of bags: N randomized worlds of the simulated cell')
    .option('--family <file>', 'worlds: draw them from this scenario family (YAML; examples/families/); its knocks are the impacts to detect')
    .option('--objective <name>', 'safe (default), success, gentle, fast-detection, fast-transfer', 'safe')
    .option('--jobs <k>', 'worker threads', '1')
    .option('--shard <i/n>', 'run slice i of n (i from 0), or auto/n (index from JOB_COMPLETION_INDEX or SLURM_ARRAY_TASK_ID)')
    .option('--seed <s>', 'worlds: seed of the batch', '1')
    .option('--duration <s>', 'worlds: simulated time limit per episode, s')
    .option('--arm-model <m>', 'worlds: tool_point or six_joint', 'tool_point')
    .option('--resume', 'go on from the candidates an interrupted run of the same sweep kept')
    .option('--out <dir>', 'output folder: sweep.json, tuned.yaml, report.html (a shard: sweep.json)')
    .option('--overwrite', 'replace an output folder antiphon wrote before')
    .option('--json', 'print the result as JSON (no progress bar)')
    .action(async (opts: Opts) =>
      runCommand(!!opts.json, async () => {
        const jobs = integerOption('--jobs', opts.jobs, 1, 256)!;
        const shard = parseShard(opts.shard);
        const objective = objectiveByName(opts.objective);
        if ((opts.bags === undefined) === (opts.worlds === undefined)) throw new InputError({ code: 'cli.sweep_data', message: 'give either --bags or --worlds', where: { option: '--bags' }, hint: '--bags <dir | files...> [--labels <file>], or --worlds N' });
        if (opts.resume && !opts.out) throw new InputError({ code: 'cli.resume_without_out', message: '--resume needs --out (the journal lives beside the output folder)', where: { option: '--resume' } });
        const base = loadParamsFile(opts.params);
        cellFromFile(base, opts.params);
        const baseText = readInputText(opts.params, { what: 'parameters file', code: 'param', maxBytes: INPUT_LIMITS.params, option: '--params' });
        const space = loadSpace(opts.space);
        let data: SweepData;
        let inputs: string[] = [opts.params, opts.space];
        if (opts.family !== undefined && opts.worlds === undefined) throw new InputError({ code: 'cli.family_without_worlds', message: '--family draws simulated worlds: it goes with --worlds N', where: { option: '--family' }, hint: '--worlds N --family <file>, or --bags <dir | files...> [--labels <file>]' });
        if (opts.bags) {
          const paths = expandBags(opts.bags);
          const bags = await inspectBags(paths);
          const labels = opts.labels ? loadLabels(opts.labels) : NO_LABELS;
          data = { kind: 'bags', bags, labels, perBag: labelsPerBag(labels, bags) };
          inputs = [...inputs, ...paths, ...(opts.labels ? [opts.labels] : [])];
        } else {
          if (opts.labels) throw new InputError({ code: 'cli.labels_with_worlds', message: '--labels labels bags; over worlds the simulator\'s ground truth is the label', where: { option: '--labels' } });
          const worlds = integerOption('--worlds', opts.worlds, 1, 1_000_000)!;
          const seed = integerOption('--seed', opts.seed, 0, 4294967295)!;
          const duration = numberOption('--duration', opts.duration, 0.01, 3600);
          const options = { arm_model: armModelOption(opts.armModel), record: false };
          const cell = cellFromFile(base, opts.params);
          const problems = checkEpisodeSetup(cell.left.config, simOptions(options));
          if (problems.length) throw new InputError(problems);
          const family = opts.family !== undefined ? loadFamily(opts.family, cell.left.config, options) : undefined;
          if (family) inputs = [...inputs, opts.family!];
          data = { kind: 'worlds', worlds, seed, options, ...(duration !== undefined ? { duration_s: duration } : {}), ...(family ? { family } : {}) };
        }
        if (opts.out) checkOutputDir(opts.out, { overwrite: !!opts.overwrite, inputs });
        const journal = opts.out ? journalPath(opts.out) : undefined;
        let stop = false;
        let stopPool = (): void => {};
        const onSigint = (): void => {
          stop = true;
          stopPool();
        };
        process.once('SIGINT', onSigint);
        const showBar = !opts.json && process.stderr.isTTY === true;
        const bar = showBar ? new cliProgress.SingleBar({ stream: process.stderr, hideCursor: true }, cliProgress.Presets.shades_classic) : null;
        const t0 = process.hrtime.bigint();
        let run;
        try {
          run = await runSweep({
            base, baseText, space, data, objective, jobs, shard,
            ...(journal ? { journal } : {}),
            resume: !!opts.resume,
            stopRequested: () => stop,
            onStart: (s) => (stopPool = s),
            ...(bar ? { onProgress: (done: number, total: number) => { if (done === 1 || !bar.getTotal()) bar.start(total, done); bar.update(done); } } : {}),
          });
        } finally {
          bar?.stop();
          process.off('SIGINT', onSigint);
        }
        const wall = Number(process.hrtime.bigint() - t0) / 1e9;
        if (run.interrupted) {
          process.stderr.write(`antiphon: interrupted: ${run.done} of ${run.total} candidates finished${journal ? `, kept in ${journal}; run again with --resume to go on` : ' (no --out: nothing kept)'}\n`);
          return 130;
        }
        const doc = run.document;
        let files: string[] = [];
        if (opts.out) {
          files = await withOutputDir(opts.out, { overwrite: !!opts.overwrite, inputs }, async (tmp) => writeSweepFiles(tmp, doc));
          removeJournal(journal);
        }
        const chosen = doc.candidates.find((c) => c.index === doc.chosen);
        if (opts.json) {
          printJson({ sweep_id: doc.sweep_id, shard: doc.shard, candidates: doc.candidates.length, resumed: run.resumed, chosen: doc.chosen, chosen_values: chosen?.values ?? null, chosen_metrics: chosen?.metrics ?? null, pareto: doc.pareto, roc_auc: doc.roc?.auc ?? null, wall_s: wall, threads: run.threads, out: opts.out ?? null, files });
        } else {
          const lines = [`sweep ${doc.sweep_id}: ${doc.candidates.length} candidates${doc.shard ? ` (shard ${doc.shard.index}/${doc.shard.count} of ${doc.candidates_total})` : ''}${run.resumed ? `, ${run.resumed} from the journal` : ''} in ${wall.toFixed(1)} s`];
          if (jobs > 1) lines.push(`--jobs ${jobs}: ${run.threads.workers ? `${run.threads.threads} threads (${run.threads.workers} worker${run.threads.workers > 1 ? 's' : ''})` : 'in this thread'}: ${run.threads.reason}`);
          if (doc.shard) lines.push('a shard: join the shards with antiphon merge <dirs...> --out <dir> for the choice, tuned.yaml and the report');
          else if (chosen) lines.push(`chosen (${objective.name}): candidate ${chosen.index}: ${Object.entries(chosen.values).map(([k, v]) => `${k} = ${JSON.stringify(v)}`).join(', ')}`, `  ${metricsText(chosen.metrics)}`, `Pareto front: ${doc.pareto?.length ?? 0} candidates${doc.roc ? `; ROC area of ${doc.roc.key}: ${doc.roc.auc.toFixed(4)}` : ''}`);
          else lines.push(`no candidate is admissible under '${objective.name}' (each misses a labelled impact): nothing chosen`);
          if (opts.out) lines.push(`wrote ${files.map((f) => join(opts.out!, f)).join(', ')}`);
          printText(lines.join('\n'));
        }
        return 0;
      }),
    );
}
