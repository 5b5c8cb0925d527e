#!/usr/bin/env node
/**
 * `npm run fuzz -- [--cases N] [--seed s] [--json] [--targets a,b] [--time-ms T] [--mem-mb M] [--save DIR]`
 *
 * Mutates copies of the rosbag2 fixtures, generated bags and the example CSV, parameters, model
 * and expectations files, runs the commands on them under a time and a memory bound, and counts
 * crashes (an exception that is not a clear input error, exit 70, a V8 abort) and hangs.
 * Exit 0 when none, 1 otherwise. `--json` prints {"cases","crashes","hangs","by_target",…}.
 */
import { Command } from 'commander';
import { writeFileSync } from 'node:fs';
import { runFuzz, TARGETS, type Target } from './engine.js';

const program = new Command('antiphon-fuzz')
  .description('Fuzz every input antiphon reads; report crashes and hangs.')
  .option('--cases <n>', 'number of cases', '300')
  .option('--seed <s>', 'seed (an unsigned 32-bit integer)', '1')
  .option('--json', 'one JSON object on stdout')
  .option('--targets <list>', `comma-separated subset of ${TARGETS.join(', ')}`)
  .option('--time-ms <ms>', 'time bound per case', '10000')
  .option('--mem-mb <mb>', 'memory bound: peak resident memory of the process', '1536')
  .option('--heap-mb <mb>', 'V8 heap limit of the worker', '768')
  .option('--save <dir>', 'save every failing input here (case.json + files)')
  .option('--trace', 'one line per case on stderr')
  .option('--checkpoint <file>', 'write the JSON report so far to this file every 500 cases')
  .parse();

const o = program.opts<{ cases: string; seed: string; json?: boolean; targets?: string; timeMs: string; memMb: string; heapMb: string; save?: string; trace?: boolean; checkpoint?: string }>();
const int = (name: string, v: string, min: number): number => {
  const n = Number(v);
  if (!Number.isInteger(n) || n < min) {
    process.stderr.write(`antiphon-fuzz: ${name} must be a whole number >= ${min}, got '${v}'\n`);
    process.exit(2);
  }
  return n;
};
const targets = o.targets?.split(',').map((t) => t.trim()) as Target[] | undefined;
for (const t of targets ?? []) {
  if (!(TARGETS as readonly string[]).includes(t)) {
    process.stderr.write(`antiphon-fuzz: unknown target '${t}' (targets: ${TARGETS.join(', ')})\n`);
    process.exit(2);
  }
}
const cases = int('--cases', o.cases, 0);
const tty = process.stderr.isTTY && !o.json;
const report = await runFuzz({
  cases,
  seed: int('--seed', o.seed, 0) >>> 0,
  ...(targets ? { targets } : {}),
  timeMs: int('--time-ms', o.timeMs, 100),
  memMb: int('--mem-mb', o.memMb, 64),
  heapMb: int('--heap-mb', o.heapMb, 64),
  ...(o.save ? { saveDir: o.save } : {}),
  ...(o.checkpoint ? { checkpoint: (r: object) => writeFileSync(o.checkpoint!, JSON.stringify(r, null, 2) + '\n') } : {}),
  ...(o.trace ? { onCase: (c: { id: number; target: string; seed: string; mutation: string; args: readonly string[]; outcome: string; code: number; ms: number }) => process.stderr.write(`${c.id} ${c.target} ${c.seed} ${c.mutation} -> ${c.outcome} exit ${c.code} ${c.ms} ms: ${c.args.join(' ')}\n`) } : {}),
  progress: (done, total, failures) => {
    if (tty && (done % 50 === 0 || done === total)) process.stderr.write(`\r${done}/${total} cases, ${failures} failing`);
    else if (!tty && done % 5000 === 0) process.stderr.write(`${done}/${total} cases, ${failures} failing\n`);
  },
});
if (tty) process.stderr.write('\n');
if (o.json) {
  process.stdout.write(JSON.stringify(report, null, 2) + '\n');
} else {
  const L = [
    `cases ${report.cases} (seed ${report.seed}) in ${report.elapsed_s} s, ${report.cases_per_s} cases/s`,
    `crashes ${report.crashes}, hangs ${report.hangs} (memory bound exceeded: ${report.memory_failures}); usage errors ${report.usage_errors}`,
    ...Object.entries(report.by_target).map(([t, c]) => `  ${t.padEnd(10)} ${String(c.cases).padStart(7)} cases  ${c.crashes} crashes  ${c.hangs} hangs  ${c.skipped} skipped`),
    `peak resident memory ${report.peak_rss_mb} MB${report.peak_rss_case ? ` (raised by case ${report.peak_rss_case.id}: ${report.peak_rss_case.target}, ${report.peak_rss_case.seed}, ${report.peak_rss_case.mutation})` : ''}`,
    report.slowest ? `slowest case ${report.slowest.id}: ${report.slowest.ms} ms (${report.slowest.target}, ${report.slowest.seed}, ${report.slowest.mutation}: ${report.slowest.args.join(' ')})` : '',
    ...report.failures.map((f) => `${f.kind} in case ${f.id} (${f.target}, ${f.seed}, ${f.mutation}): ${f.args.join(' ')}${f.saved ? ` [saved: ${f.saved}]` : ''}\n    ${f.detail.split('\n').slice(0, 4).join('\n    ')}`),
  ];
  process.stdout.write(L.filter((l) => l !== '').join('\n') + '\n');
}
process.exitCode = report.crashes + report.hangs > 0 ? 1 : 0;
