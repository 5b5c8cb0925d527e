/**
 * Warming a sweep worker's JIT while the main thread decodes the bags: a short made-up bag
 * (never a recording: its results are thrown away) with every input a real bag feeds, at the
 * demo rates, run through the same code as a candidate (the full evaluation and the share
 * filter passes), so that the worker's first real candidate runs on compiled code instead of
 * the interpreter. Nothing it computes reaches a result.
 */
import { ZONE_FREE, ZONE_UNKNOWN } from '../core/arm-step.js';
import type { ArmConfig } from '../params/config.js';
import { KIND_JOINTS, KIND_POSE, KIND_WRENCH, KIND_ZONES, type DecodedArm, type DecodedBag } from './columns.js';
import { evaluateBag } from './evaluate.js';
import { impactBandMaxima, impactFlagTrace } from './share.js';

const JOINTS = 6;

/**
 * A made-up bag of `seconds`: per arm wrench rows at 1 kHz (a steady pull with a small ripple),
 * joint states at 500 Hz, tool poses at 100 Hz along the task's start line (identity
 * orientation), zone views at 10 Hz (zones alternately free and unknown); in log-time order.
 */
export function warmupBag(config: ArmConfig, seconds = 2): DecodedBag {
  const nz = config.task.zones.length;
  const n = Math.max(1, Math.round(seconds * 1000));
  const nj = Math.ceil(n / 2), np = Math.ceil(n / 10), nv = Math.ceil(n / 100);
  const [sx, sy] = config.task.start_m;
  const arm = (name: 'left' | 'right', side: number): DecodedArm => {
    const wrenchRel = new Float64Array(n), wrench = new Float64Array(6 * n);
    for (let i = 0; i < n; i++) {
      wrenchRel[i] = i / 1000;
      const r = Math.sin(i * 0.37) * 0.4;
      wrench.set([1.5 + r, side * (4 + r), -9 + r, 0.02 * r, 0.01, -0.02 * r], 6 * i);
    }
    const jointRel = new Float64Array(nj), jointCount = new Uint8Array(nj).fill(JOINTS), jointOffset = new Uint32Array(nj), jointVel = new Float64Array(JOINTS * nj);
    for (let i = 0; i < nj; i++) {
      jointRel[i] = (2 * i) / 1000;
      jointOffset[i] = JOINTS * i;
      for (let q = 0; q < JOINTS; q++) jointVel[JOINTS * i + q] = 0.01 * Math.sin(i * 0.01 + q);
    }
    const poseRel = new Float64Array(np), pose = new Float64Array(7 * np);
    for (let i = 0; i < np; i++) {
      poseRel[i] = (10 * i) / 1000;
      pose.set([sx + 0.001 * i, sy + side * 0.6, 0.9, 0, 0, 0, 1], 7 * i);
    }
    const zoneRel = new Float64Array(nv), zones = new Uint8Array(nz * nv);
    for (let i = 0; i < nv; i++) {
      zoneRel[i] = (100 * i) / 1000;
      for (let z = 0; z < nz; z++) zones[nz * i + z] = (i + z) % 2 === 0 ? ZONE_FREE : ZONE_UNKNOWN;
    }
    return { arm: name, present: { wrench: true, joint_states: true, tool_pose: true, zone_view: nz > 0 }, wrenchRel, wrench, poseRel, pose, jointRel, jointCount, jointOffset, jointVel, zoneRel, zones };
  };
  const left = arm('left', 1), right = arm('right', -1);
  // Log-time order: per millisecond, each arm's wrench, then its joint state, pose and zone view when due.
  const order: number[] = [], index: number[] = [];
  for (let i = 0; i < n; i++) {
    for (const a of [0, 4]) {
      order.push(a + KIND_WRENCH), index.push(i);
      if (i % 2 === 0) order.push(a + KIND_JOINTS), index.push(i / 2);
      if (i % 10 === 0) order.push(a + KIND_POSE), index.push(i / 10);
      if (i % 100 === 0 && nz > 0) order.push(a + KIND_ZONES), index.push(i / 100);
    }
  }
  return { path: '(warm-up)', duration_s: n / 1000, t0s: 1_700_000_000, zoneCount: nz, arms: { left, right }, count: order.length, order: Uint8Array.from(order), index: Uint32Array.from(index) };
}

/** One round of warm-up: a candidate's full evaluation and the share filter passes on the made-up bag. */
export function warmUp(bag: DecodedBag, left: ArmConfig, right: ArmConfig, tolerance_s: number): void {
  evaluateBag(bag, left, right, [], tolerance_s);
  impactBandMaxima(bag, 'left', left);
  impactFlagTrace(bag, 'right', right);
}
