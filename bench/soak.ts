/**
 * Soak: two arm steps (256 hypotheses each, the arm-step bench's task) paced at 1 kHz of wall
 * time for `seconds`, every input at its cell rate, while a PerformanceObserver records each
 * garbage collection (perf_hooks 'gc' entries). Reports the longest pause, the collections by
 * kind, the slowest two-arm sample and the heap growth per sample over the soak.
 */
import { PerformanceObserver, constants } from 'node:perf_hooks';
import { ArmStep, ZONE_FREE, ZONE_OCCUPIED, ZONE_UNKNOWN } from '../src/core/arm-step.js';
import { Rng } from '../src/util/rng.js';
import { config256 } from './pipeline.js';
import { round } from './harness.js';

const KINDS: Record<number, string> = {
  [constants.NODE_PERFORMANCE_GC_MINOR]: 'minor',
  [constants.NODE_PERFORMANCE_GC_MAJOR]: 'major',
  [constants.NODE_PERFORMANCE_GC_INCREMENTAL]: 'incremental',
  [constants.NODE_PERFORMANCE_GC_WEAKCB]: 'weakcb',
};

export async function benchSoak(seconds = 60): Promise<Record<string, unknown>> {
  const { left, right } = config256();
  const arms = [new ArmStep(left, { jointCount: 6 }), new ArmStep(right, { jointCount: 6 })];
  const views = arms.map((a, s) => {
    const v = new Uint8Array(a.task.n);
    a.task.zones.forEach((z, k) => (v[k] = z.observed_by === (s === 0 ? 'left' : 'right') ? (k % 4 === 0 ? ZONE_OCCUPIED : ZONE_FREE) : ZONE_UNKNOWN));
    return v;
  });
  const rng = new Rng(60);
  const w = new Float64Array(6);
  const qd = new Float64Array(6);
  const pauses: number[] = [];
  const byKind: Record<string, number> = {};
  const obs = new PerformanceObserver((list) => {
    for (const e of list.getEntries()) {
      pauses.push(e.duration);
      const k = KINDS[((e as unknown as { detail?: { kind?: number } }).detail)?.kind ?? -1] ?? 'other';
      byKind[k] = (byKind[k] ?? 0) + 1;
    }
  });
  obs.observe({ entryTypes: ['gc'] });
  const hr = process.hrtime.bigint;
  const heapBefore = process.memoryUsage().heapUsed;
  const t0 = hr();
  let k = 0;
  let slowest = 0;
  let late = 0;
  const total = Math.round(seconds * 1000);
  const step = (s: number, t: number) => {
    const a = arms[s]!;
    a.setToolPose(t, 0.3 + 0.05 * Math.sin(t * 0.1), s === 0 ? 0.55 : -0.55, 0.9, 0, 0, 0, 1);
    if ((k & 1) === 0) a.setJointState(t, qd, 6);
    if (k % 100 === 0) a.setZoneView(t, views[s]!);
    w[0] = 0.2 * rng.normal() + 3 * Math.sin(t);
    w[1] = 0.2 * rng.normal();
    w[2] = -11.77 + 0.2 * rng.normal();
    w[3] = w[4] = w[5] = 0.01 * rng.normal();
    a.step(t, w);
  };
  while (k < total) {
    // Samples due by the wall clock (1 kHz), run as they fall due; the loop yields between bursts.
    const due = Math.min(total, Math.floor(Number(hr() - t0) / 1e6));
    if (due - k > 5) late++;
    while (k < due) {
      const t = k / 1000;
      const a = hr();
      step(0, t);
      step(1, t);
      const d = Number(hr() - a);
      if (d > slowest) slowest = d;
      k++;
    }
    await new Promise((r) => setImmediate(r));
  }
  const wall = Number(hr() - t0) / 1e9;
  // Let the observer deliver the last entries.
  await new Promise((r) => setTimeout(r, 50));
  obs.disconnect();
  const heapAfter = process.memoryUsage().heapUsed;
  pauses.sort((a, b) => a - b);
  return {
    seconds,
    wall_s: round(wall),
    samples_per_arm: k,
    gc_count: pauses.length,
    gc_by_kind: byKind,
    gc_max_pause_ms: pauses.length ? round(pauses[pauses.length - 1]!) : 0,
    gc_p99_pause_ms: pauses.length ? round(pauses[Math.min(pauses.length - 1, Math.floor(0.99 * pauses.length))]!) : 0,
    slowest_two_arm_sample_ns: slowest,
    bursts_more_than_5_ms_late: late,
    heap_growth_bytes_per_sample: round((heapAfter - heapBefore) / Math.max(1, 2 * k)),
    config: 'two arms, 256 hypotheses each (16 zones), wrench and tool pose 1 kHz, joint states 500 Hz, area sensor 10 Hz, paced by the wall clock',
  };
}
