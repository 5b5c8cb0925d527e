/**
 * Shards: `--shard i/n` (i from 0) or `--shard auto/n`, which takes i from the batch
 * scheduler: JOB_COMPLETION_INDEX (a Kubernetes Indexed Job) or SLURM_ARRAY_TASK_ID (a Slurm
 * job array; the array must be 0..n-1).
 */
import { InputError } from '../util/errors.js';
import type { Shard } from './run.js';

export function parseShard(raw: string | undefined, env: NodeJS.ProcessEnv = process.env): Shard | null {
  if (raw === undefined) return null;
  const m = /^(\d+|auto)\/(\d+)$/.exec(raw.trim());
  const hint = 'i/n with 0 <= i < n (e.g. 0/4), or auto/n to take i from JOB_COMPLETION_INDEX or SLURM_ARRAY_TASK_ID';
  if (!m) throw new InputError({ code: 'cli.bad_shard', message: `--shard must be i/n or auto/n, got '${raw}'`, where: { option: '--shard' }, hint });
  const count = Number(m[2]);
  if (!(count >= 1 && count <= 100_000)) throw new InputError({ code: 'cli.bad_shard', message: `--shard: n must be from 1 to 100000, got ${m[2]}`, where: { option: '--shard' }, hint });
  let index: number;
  if (m[1] === 'auto') {
    const from = env['JOB_COMPLETION_INDEX'] !== undefined ? 'JOB_COMPLETION_INDEX' : env['SLURM_ARRAY_TASK_ID'] !== undefined ? 'SLURM_ARRAY_TASK_ID' : undefined;
    if (!from) throw new InputError({ code: 'cli.no_shard_index', message: '--shard auto/n: neither JOB_COMPLETION_INDEX nor SLURM_ARRAY_TASK_ID is set', where: { option: '--shard' }, hint: 'run inside a Kubernetes Indexed Job or a Slurm job array, or give the index: --shard i/n' });
    const v = env[from]!;
    if (!/^\d+$/.test(v)) throw new InputError({ code: 'cli.bad_shard', message: `${from} is '${v}', not a whole number`, where: { option: '--shard' }, hint });
    index = Number(v);
    if (index >= count) throw new InputError({ code: 'cli.bad_shard', message: `${from} = ${index} is not below n = ${count}`, where: { option: '--shard' }, hint: 'the job array must run indices 0 to n-1 (Slurm: --array=0-<n-1>; Kubernetes: completions n)' });
  } else {
    index = Number(m[1]);
    if (index >= count) throw new InputError({ code: 'cli.bad_shard', message: `--shard ${raw}: i must be below n`, where: { option: '--shard' }, hint });
  }
  return { index, count };
}
