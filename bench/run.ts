/**
 * `npm run bench`: every benchmark, figures printed and written to bench/results/*.json.
 * Run one with `node --expose-gc dist/bench/run.js <name> [...]`.
 */
import { benchArmStep, benchArmStepPath, benchFilterWatchdog } from './pipeline.js';
import { report } from './harness.js';

const GOALS = { filter_watchdog_median_ns: 300, arm_step_median_ns: 10_000, path_median_ns: 1_000, path_p999_ns: 25_000 };

type Bench = () => Promise<void> | void;
const BENCHES: Record<string, Bench> = {
  'filter-watchdog': () => {
    const r = benchFilterWatchdog();
    report('filter-watchdog', { ...r, goal_median_ns: GOALS.filter_watchdog_median_ns, meets_goal: r.median_ns <= GOALS.filter_watchdog_median_ns });
  },
  'arm-step': () => {
    const r = benchArmStep();
    report('arm-step', { ...r, goal_median_ns: GOALS.arm_step_median_ns, meets_goal: r.median_ns <= GOALS.arm_step_median_ns });
  },
  'arm-step-path': () => {
    const r = benchArmStepPath();
    report('arm-step-path', { ...r, goal_median_ns: GOALS.path_median_ns, goal_p999_ns: GOALS.path_p999_ns, meets_goal: r.median_ns <= GOALS.path_median_ns && r.p999_ns <= GOALS.path_p999_ns });
  },
};

// Benchmarks contributed by other modules register here when their module exists.
async function optional(name: string, file: string, fn: string): Promise<void> {
  try {
    const mod = (await import(file)) as Record<string, () => Promise<Record<string, unknown>>>;
    if (typeof mod[fn] === 'function') BENCHES[name] = async () => report(name, await mod[fn]!());
  } catch (err) {
    if ((err as { code?: string }).code !== 'ERR_MODULE_NOT_FOUND') throw err;
  }
}

await optional('replay', './replay.js', 'benchReplay');
await optional('sim', './sim.js', 'benchSim');
await optional('issue8', './issue8-measure.js', 'benchIssue8');
await optional('adapter', './adapter.js', 'benchAdapter');

const wanted = process.argv.slice(2);
for (const name of wanted.length ? wanted : Object.keys(BENCHES)) {
  const b = BENCHES[name];
  if (!b) {
    process.stderr.write(`unknown benchmark '${name}'; known: ${Object.keys(BENCHES).join(', ')}\n`);
    process.exitCode = 2;
    break;
  }
  await b();
}
