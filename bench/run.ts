/**
 * `npm run bench`: every benchmark, one report. Ends with bench/results/latest.json (each figure
 * with its unit, the machine and the date) and a table on the terminal.
 *
 *   npm run bench                      full run (soak 60 s)
 *   npm run bench -- --quick           short runs of everything (under two minutes on an idle machine)
 *   npm run bench -- --soak-s 600      a 10-minute soak
 *   node --expose-gc dist/bench/run.js <name>...   one benchmark, its own JSON (the old way)
 *
 * Figures are measured, never asserted in tests. On a shared machine they vary with its load:
 * the load average at the start and the end is recorded with them.
 */
import { cpus, loadavg } from 'node:os';
import { mkdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { benchArmStep, benchArmStepPath, benchFilterWatchdog, configDense, configNoZones } from './pipeline.js';
import { machine, report, round } from './harness.js';

type Figure = { value: number | null; unit: string; note?: string };
type Fn = (...a: never[]) => Promise<Record<string, unknown>> | Record<string, unknown>;

async function optionalFn(file: string, fn: string): Promise<Fn | undefined> {
  try {
    const mod = (await import(file)) as Record<string, Fn>;
    return typeof mod[fn] === 'function' ? mod[fn] : undefined;
  } catch (err) {
    if ((err as { code?: string }).code !== 'ERR_MODULE_NOT_FOUND') throw err;
    return undefined;
  }
}

const num = (v: unknown): number | null => (typeof v === 'number' && Number.isFinite(v) ? v : null);
const at = (o: unknown, path: string): unknown => path.split('.').reduce<unknown>((x, k) => (x && typeof x === 'object' ? (x as Record<string, unknown>)[k] : undefined), o);

function parseArgs(argv: readonly string[]): { quick: boolean; soakS: number; names: string[] } {
  let quick = false;
  let soakS = 60;
  const names: string[] = [];
  for (let i = 0; i < argv.length; i++) {
    const a = argv[i]!;
    if (a === '--quick') quick = true;
    else if (a === '--soak-s') {
      const v = Number(argv[++i]);
      if (!(v > 0 && v <= 86_400)) {
        process.stderr.write(`--soak-s must be a number of seconds from 0 to 86400, got '${argv[i]}'\n`);
        process.exit(2);
      }
      soakS = v;
    } else names.push(a);
  }
  return { quick, soakS, names };
}

async function single(names: string[]): Promise<void> {
  const B: Record<string, () => Promise<Record<string, unknown>> | Record<string, unknown>> = {
    'filter-watchdog': () => benchFilterWatchdog() as unknown as Record<string, unknown>,
    'arm-step': () => benchArmStep() as unknown as Record<string, unknown>,
    'arm-step-path': () => benchArmStepPath() as unknown as Record<string, unknown>,
    'arm-step-floor': () => benchArmStep(1_000_000, configNoZones()) as unknown as Record<string, unknown>,
    'arm-step-dense': () => benchArmStep(1_000_000, configDense()) as unknown as Record<string, unknown>,
  };
  for (const [name, file, fn] of [['replay', './replay.js', 'benchReplay'], ['sim', './sim.js', 'benchSim'], ['families', './sim.js', 'benchFamilies'], ['issue8', './issue8-measure.js', 'benchIssue8'], ['issue8-calibrated', './issue8-calibrated.js', 'benchIssue8Calibrated'], ['adapter', './adapter.js', 'benchAdapter'], ['soak', './soak.js', 'benchSoak'], ['sweep', './sweep.js', 'benchSweep']] as const) {
    const f = await optionalFn(file, fn);
    if (f) B[name] = () => (f as () => Promise<Record<string, unknown>>)();
  }
  for (const name of names) {
    const b = B[name];
    if (!b) {
      process.stderr.write(`unknown benchmark '${name}'; known: ${Object.keys(B).join(', ')}\n`);
      process.exitCode = 2;
      return;
    }
    report(name, await b());
  }
}

async function all(quick: boolean, soakS: number): Promise<void> {
  const started = new Date();
  const load0 = loadavg();
  const raw: Record<string, unknown> = {};
  const figures: Record<string, Figure> = {};
  const fig = (name: string, value: unknown, unit: string, note?: string) => {
    const v = num(value);
    figures[name] = { value: v === null ? null : round(v), unit, ...(note ? { note } : {}) };
  };
  const log = (s: string) => process.stderr.write(`bench: ${s}\n`);
  const n = quick ? 200_000 : 1_000_000;

  log(`filter + watchdog, ${n} samples`);
  const fw = benchFilterWatchdog(n);
  raw['filter_watchdog'] = fw;
  fig('filter_watchdog.p50_ns', fw.median_ns, 'ns');
  fig('filter_watchdog.p99_ns', fw.p99_ns, 'ns');

  log(`arm step (256 hypotheses), ${n} samples`);
  const as = benchArmStep(n) as unknown as Record<string, unknown>;
  raw['arm_step'] = as;
  fig('arm_step.p50_ns', as['median_ns'], 'ns');
  fig('arm_step.p99_ns', as['p99_ns'], 'ns');
  fig('arm_step.p999_ns', as['p999_ns'], 'ns');
  fig('arm_step.max_ns', as['max_ns'], 'ns');
  log('arm-step-path');
  const ap = benchArmStepPath(n) as unknown as Record<string, unknown>;
  raw['arm_step_path'] = ap;
  fig('arm_step_path.p50_ns', ap['median_ns'], 'ns', '50-waypoint 3-D path, 8 hidden 3-D zones per arm, 256 hypotheses');
  fig('arm_step_path.p99_ns', ap['p99_ns'], 'ns');
  fig('arm_step_path.p999_ns', ap['p999_ns'], 'ns');
  fig('arm_step_path.max_ns', ap['max_ns'], 'ns');
  log('arm-step-dense');
  const ad = benchArmStep(n, configDense()) as unknown as Record<string, unknown>;
  raw['arm_step_dense'] = ad;
  fig('arm_step_dense.p50_ns', ad['median_ns'], 'ns', 'the worst case of the 256-hypothesis task: all 8 hidden zones acting at once');
  fig('arm_step_dense.p999_ns', ad['p999_ns'], 'ns');
  log('arm-step-floor');
  const af = benchArmStep(n, configNoZones()) as unknown as Record<string, unknown>;
  raw['arm_step_floor'] = af;
  fig('arm_step_floor.p50_ns', af['median_ns'], 'ns', 'no zones: filter, watchdog, roles, policy and every check, no belief job');
  fig('arm_step_floor.p99_ns', af['p99_ns'], 'ns');
  fig('heap_growth_bytes_per_sample', as['heap_growth_bytes_per_sample'], 'B/sample', 'arm step, between forced collections around a run of the same length');

  const soakFn = (await optionalFn('./soak.js', 'benchSoak'))!;
  const soakLen = quick ? Math.min(soakS, 10) : soakS;
  log(`soak of two arms at 1 kHz, ${soakLen} s`);
  const soak = await (soakFn as (s: number) => Promise<Record<string, unknown>>)(soakLen);
  raw['soak'] = soak;
  fig('gc.max_pause_ms', soak['gc_max_pause_ms'], 'ms', `longest perf_hooks gc entry during a ${soakLen} s soak of two arms at 1 kHz (${String(soak['gc_count'])} collections)`);
  fig('soak.slowest_two_arm_sample_ns', soak['slowest_two_arm_sample_ns'], 'ns');
  fig('soak.heap_growth_bytes_per_sample', soak['heap_growth_bytes_per_sample'], 'B/sample', 'over the soak, no forced collection (includes garbage not yet collected)');

  const replayFn = await optionalFn('./replay.js', 'benchReplay');
  if (replayFn) {
    const d = quick ? 10 : 60;
    log(`replay of a ${d} s two-arm bag`);
    const r = await (replayFn as (s: number) => Promise<Record<string, unknown>>)(d);
    raw['replay'] = r;
    fig('replay.times_real_time', at(r, 'full_replay.times_real_time'), 'x real time', `${d} s bag, read + decode + both arm steps`);
    const full = num(at(r, 'full_replay.seconds'));
    const plain = num(at(r, 'plain_iteration.seconds'));
    fig('replay.ratio_to_plain', full !== null && plain !== null && plain > 0 ? round(full / plain) : null, 'x (replay time / bare @mcap read time)', 'the bare read: McapIndexedReader.readMessages() of the same file, no decoding');
  }

  const simFn = await optionalFn('./sim.js', 'benchSim');
  if (simFn) {
    const worlds = Number(process.env['ANTIPHON_BENCH_WORLDS'] ?? (quick ? 2 : 30));
    log(`simulated cell: one episode, then compare --worlds ${worlds} --jobs 2`);
    const s = await (simFn as (w: number, j: number) => Promise<Record<string, unknown>>)(worlds, 2);
    const { compare_strategies_table: _t, ...rest } = s;
    raw['sim'] = rest;
    fig('sim.real_time_factor', s['rtf'], 'x real time', 'MuJoCo tool-point cell at 1 kHz with both arm pipelines, best of 3');
    const eps = num(s['compare_episodes']);
    const wall = num(s['compare_wall_s']);
    fig('compare.seconds_per_1000_episodes', eps && wall !== null ? round((wall / eps) * 1000) : null, 's / 1000 episodes', `compare --worlds ${worlds} --jobs 2 (${String(eps)} episodes), wall time`);
  }

  const sweepFn = await optionalFn('./sweep.js', 'benchSweep');
  if (sweepFn) {
    log('sweep');
    const s = await (sweepFn as (q: boolean) => Promise<Record<string, unknown>>)(quick);
    raw['sweep'] = s;
    fig('sweep.candidate_seconds_per_s', s['candidate_seconds_per_s'], 's / simulated s');
    fig('sweep.jobs_2.candidate_seconds_per_s', at(s, 'jobs_2.candidate_seconds_per_s'), 's / simulated s', '20 candidates, shared, --jobs 2 as the CLI runs it (this thread alone when the work is too small: bagPlan)');
    fig('sweep.speedup_jobs_2', s['speedup_jobs_2'], 'x (jobs 1 time / jobs 2 time)', '20 candidates, shared');
    fig('sweep.speedup_jobs_2_unshared', s['speedup_jobs_2_unshared'], 'x (jobs 1 time / jobs 2 time)', '20 candidates, every one in full');
    fig('sweep.speedup_jobs_2_large', s['speedup_jobs_2_large'], 'x (jobs 1 time / jobs 2 time)', '40 candidates over two bags, shared');
    fig('sweep.speedup_jobs_2_cli_cold_large', s['speedup_jobs_2_cli_cold_large'], 'x (jobs 1 time / jobs 2 time)', 'the same, a fresh antiphon sweep process per run');
  } else {
    fig('sweep.candidate_seconds_per_s', null, 's / simulated s', 'bench/sweep.ts does not exist on this branch (written with the sweep command)');
  }

  const cpu = cpus();
  const doc = {
    date: started.toISOString(),
    finished: new Date().toISOString(),
    quick,
    machine: {
      cpu_model: cpu[0]?.model ?? 'unknown',
      cores: cpu.length,
      ...machine(),
      load_average_1m: { start: round(load0[0]!), end: round(loadavg()[0]!) },
      note: 'a load average above the core count means the machine was shared while measuring',
    },
    figures,
    raw,
  };
  const dir = join(process.cwd(), 'bench', 'results');
  mkdirSync(dir, { recursive: true });
  writeFileSync(join(dir, 'latest.json'), JSON.stringify(doc, null, 2) + '\n');
  const rows = Object.entries(figures).map(([k, f]) => [k, f.value === null ? '-' : String(f.value), f.unit]);
  const w = [0, 1, 2].map((c) => Math.max(...rows.map((r) => r[c]!.length), ['figure', 'value', 'unit'][c]!.length));
  const line = (r: string[]) => `${r[0]!.padEnd(w[0]!)}  ${r[1]!.padStart(w[1]!)}  ${r[2]}`;
  process.stdout.write(
    [
      `antiphon bench ${quick ? '(quick) ' : ''}${doc.date}: ${doc.machine.cpu_model}, ${doc.machine.cores} cores, Node ${process.version}, load ${doc.machine.load_average_1m.start} -> ${doc.machine.load_average_1m.end}`,
      line(['figure', 'value', 'unit']),
      ...rows.map(line),
      ...Object.entries(figures).filter(([, f]) => f.note && f.value === null).map(([k, f]) => `  ${k}: ${f.note}`),
      `wrote ${join('bench', 'results', 'latest.json')}`,
      '',
    ].join('\n'),
  );
}

const { quick, soakS, names } = parseArgs(process.argv.slice(2));
if (names.length) await single(names);
else await all(quick, soakS);
