/**
 * The shipped cluster files agree with the CLI: the Kubernetes Indexed Job (batch/v1,
 * completionMode Indexed: the Kubernetes Job API, from memory) runs as many shards as its
 * --shard auto/n names and writes them where the merge Job reads; the Slurm script is valid
 * POSIX sh (`sh -n`) and runs the array 0..n-1 with --shard auto/n.
 */
import { spawnSync } from 'node:child_process';
import { readFileSync } from 'node:fs';
import { describe, expect, it } from 'vitest';
import { parse } from 'yaml';

describe('deploy/', () => {
  it('the Indexed Job runs completions shards, each into results/shard-<index>, and the merge joins them', () => {
    const job = parse(readFileSync('deploy/sweep-indexed-job.yaml', 'utf8'));
    expect(job.kind).toBe('Job');
    expect(job.spec.completionMode).toBe('Indexed');
    const args: string[] = job.spec.template.spec.containers[0].args;
    const n = Number(/^--shard=auto\/(\d+)$/.exec(args.find((a) => a.startsWith('--shard='))!)![1]);
    expect(job.spec.completions).toBe(n);
    expect(job.spec.parallelism).toBeLessThanOrEqual(n);
    expect(args).toContain('--out=results/shard-$(JOB_COMPLETION_INDEX)');
    const merge = parse(readFileSync('deploy/sweep-merge-job.yaml', 'utf8'));
    expect(merge.spec.template.spec.containers[0].args[0]).toContain('antiphon merge results/shard-* --out results/merged');
    expect(merge.spec.template.spec.volumes[0].persistentVolumeClaim.claimName).toBe(job.spec.template.spec.volumes[0].persistentVolumeClaim.claimName);
  });

  it('the Slurm script is valid sh and shards with the array index', () => {
    expect(spawnSync('sh', ['-n', 'deploy/sweep-slurm.sh']).status).toBe(0);
    const s = readFileSync('deploy/sweep-slurm.sh', 'utf8');
    expect(s).toContain('--array=0-$((SHARDS - 1))');
    expect(s).toContain('--shard auto/$SHARDS');
    expect(s).toContain('--dependency=afterok:');
    expect(s).toContain('antiphon merge $OUT/shard-*');
  });
});
