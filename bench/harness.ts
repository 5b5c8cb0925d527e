/**
 * Benchmark helpers: per-sample timing with the timer's own cost subtracted, batch
 * throughput, and heap growth after forced collections (run node with --expose-gc).
 */
import { mkdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';

const hr = process.hrtime.bigint;

export interface SampleStats {
  samples: number;
  median_ns: number;
  p99_ns: number;
  p999_ns: number;
  mean_ns: number;
  /** Timer cost subtracted from each sample. */
  timer_overhead_ns: number;
  heap_growth_bytes_per_sample: number;
  heap_before_mb: number;
  heap_after_mb: number;
}

function gc(): void {
  const g = (globalThis as { gc?: () => void }).gc;
  if (g) {
    g();
    g();
  }
}

function timerOverhead(): number {
  const n = 200_000;
  const d = new Float64Array(n);
  for (let k = 0; k < n; k++) {
    const a = hr();
    const b = hr();
    d[k] = Number(b - a);
  }
  d.sort();
  return d[n >> 1]!;
}

/**
 * Time `body(k)` for k = 0..n-1, one sample at a time, after `warmup` untimed calls.
 * The heap is measured around a second, untimed run of the same length.
 */
export function timeSamples(n: number, warmup: number, body: (k: number) => void): SampleStats {
  for (let k = 0; k < warmup; k++) body(k);
  const overhead = timerOverhead();
  const d = new Float64Array(n);
  for (let k = 0; k < n; k++) {
    const a = hr();
    body(warmup + k);
    const b = hr();
    d[k] = Number(b - a) - overhead;
  }
  gc();
  const before = process.memoryUsage().heapUsed;
  for (let k = 0; k < n; k++) body(warmup + n + k);
  gc();
  const after = process.memoryUsage().heapUsed;
  let sum = 0;
  for (let k = 0; k < n; k++) sum += d[k]!;
  d.sort();
  const q = (p: number) => Math.max(0, d[Math.min(n - 1, Math.floor(p * n))]!);
  return {
    samples: n,
    median_ns: round(q(0.5)),
    p99_ns: round(q(0.99)),
    p999_ns: round(q(0.999)),
    mean_ns: round(Math.max(0, sum / n)),
    timer_overhead_ns: overhead,
    heap_growth_bytes_per_sample: Math.round(((after - before) / n) * 1e4) / 1e4,
    heap_before_mb: round(before / 1048576),
    heap_after_mb: round(after / 1048576),
  };
}

export function round(x: number): number {
  return Math.round(x * 1000) / 1000;
}

export function machine(): Record<string, unknown> {
  return { node: process.version, platform: process.platform, arch: process.arch, gc_exposed: typeof (globalThis as { gc?: unknown }).gc === 'function' };
}

/** Print a result and write it as JSON under bench/results/. */
export function report(name: string, result: Record<string, unknown>): void {
  const dir = join(process.cwd(), 'bench', 'results');
  mkdirSync(dir, { recursive: true });
  const doc = { bench: name, date: new Date().toISOString(), machine: machine(), ...result };
  writeFileSync(join(dir, `${name}.json`), JSON.stringify(doc, null, 2) + '\n');
  process.stdout.write(`\n== ${name}\n${JSON.stringify(result, null, 2)}\n`);
}
