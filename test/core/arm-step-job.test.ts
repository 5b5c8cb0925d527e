/**
 * The arm step's 100 Hz job (belief and replica updates spread over the samples of the next
 * window): tests of our own behaviour on invented data of our own scenario (the demo cell and a
 * 16-zone variant of it with 256 hypotheses per arm).
 *
 * The oracle is the one-shot computation the arm step ran before the job existed, kept here
 * verbatim in its moving-frame form (windowInFrame / scoreSpeaker / updateBelief /
 * updateReplica), applied to a copy of the arm restored from a snapshot taken when the job
 * started: the job's result must equal it bit for bit, however the job is cut into parts. The
 * cells: the demo cell, a 16-zone variant, the worked 3-D example (examples/path_cell.yaml) and
 * the bench's 50-waypoint 3-D path with 256 hypotheses (bench/pipeline.ts).
 */
import fc from 'fast-check';
import { setFlagsFromString } from 'node:v8';
import { runInNewContext } from 'node:vm';
import { describe, expect, it } from 'vitest';
import { config256 as config256On, configPath } from '../../bench/pipeline.js';
import { ArmStep, ZONE_FREE, ZONE_OCCUPIED, ZONE_UNKNOWN } from '../../src/core/arm-step.js';
import { LISTENER, SPEAKER } from '../../src/core/roles.js';
import { SubsetTable } from '../../src/core/task-model.js';
import { loadCell, type ArmConfig } from '../../src/params/config.js';
import { Rng } from '../../src/util/rng.js';

const cell = loadCell('config/demo_cell.yaml');

/** 16 zones, 8 seen only by each arm: 256 hypotheses on both sides (bench/pipeline.ts's task on the demo cell). */
const config256 = () => config256On(cell);

// The private parts of ArmStep the tests read and drive.
interface Inside {
  task: ArmStep['task'];
  config: ArmConfig;
  belief: ArmStep['belief'];
  replica: ArmStep['replica'];
  hypotheses: number;
  likelihoodScale: number;
  committedHidden: number;
  committedOwn: number;
  commitWeight: Float64Array;
  jobKind: number;
  jobStage: number;
  jobRole: number;
  jobPx: number;
  jobPy: number;
  jobPz: number;
  beliefEvery: number;
  accFx: number;
  accFy: number;
  accFz: number;
  accVx: number;
  accVy: number;
  accVz: number;
  zoneState: Uint8Array;
  out: ArmStep['out'];
  policy: ArmStep['policy'];
  v2: Float64Array;
  runJob(budget: number): void;
  startJob(role: number, px: number, py: number, pz: number): void;
  observedMask(indices: Int32Array): number;
}
const inside = (s: ArmStep) => s as unknown as Inside;

/**
 * The one-shot updates as they were (verbatim but for `this`), on the job's snapshot inputs: the
 * object position the job started at and the window's sums as accumulated then (a restored copy
 * holds both), taken into the moving frame after the prepare, as the one-shot code did.
 */
function oneShot(a: Inside): void {
  const task = a.task;
  const px = a.jobPx, py = a.jobPy, pz = a.jobPz;
  const k = a.likelihoodScale / (2 * a.config.belief.noise_force_n ** 2);
  const c = a.config.coupling.damping_n_s_m;
  const loglik = new Float64Array(Math.max(a.hypotheses, a.replica.n));
  const loglik2 = new Float64Array(loglik.length);
  const wf = new Float64Array(6);
  const windowInFrame = () => {
    const n = a.beliefEvery;
    const w = wf;
    const planar = task.planar;
    task.toFrame(a.accFx / n, a.accFy / n, planar ? 0 : a.accFz / n, w, 0);
    task.toFrame(a.accVx / n, a.accVy / n, planar ? 0 : a.accVz / n, w, 3);
    if (planar) w[2] = w[5] = 0;
  };
  if (a.jobKind === 2) {
    task.prepare(px, py, pz);
    windowInFrame();
    const vx = wf[3]!, vy = wf[4]!, vz = wf[5]!;
    const known = a.observedMask(task.shared) | a.committedHidden;
    const table = new SubsetTable(task.own.length);
    task.tabulate(task.own, known, table);
    a.policy.legMean(table, task.own, a.committedOwn);
    const mx = a.v2[0]!, my = a.v2[1]!, mz = a.v2[2]!;
    for (let h = 0; h < a.replica.n; h++) {
      a.policy.legible(table, h, mx, my, mz);
      const rx = c * (vx - a.v2[0]!);
      const ry = c * (vy - a.v2[1]!);
      const rz = c * (vz - a.v2[2]!);
      loglik[h] = -(rx * rx + ry * ry + rz * rz) * k;
    }
    a.replica.update(loglik, a.config.belief.forgetting);
    return;
  }
  task.prepare(px, py, pz);
  windowInFrame();
  const score = (table: SubsetTable, kn: number, into: Float64Array) => {
    task.tabulate(task.hidden, kn, table);
    a.policy.legMean(table, task.hidden, a.committedHidden);
    const mx = a.v2[0]!, my = a.v2[1]!, mz = a.v2[2]!;
    const w = wf;
    const ft = w[0]!, fl = w[1]!, fv = w[2]!, vt = w[3]!, vl = w[4]!, vv = w[5]!;
    for (let h = 0; h < a.hypotheses; h++) {
      a.policy.legible(table, h, mx, my, mz);
      const rx = ft - c * (a.v2[0]! - vt);
      const ry = fl - c * (a.v2[1]! - vl);
      const rz = fv - c * (a.v2[2]! - vv);
      into[h] = -(rx * rx + ry * ry + rz * rz) * k;
    }
  };
  const known = a.observedMask(task.shared) | a.committedOwn;
  let doubt = -1;
  let doubtU = 0.0196;
  for (let b = 0; b < task.own.length; b++) {
    const w = a.commitWeight[b]!;
    const u = w * (1 - w);
    if (u > doubtU) {
      doubtU = u;
      doubt = b;
    }
  }
  if (doubt === -1) {
    score(new SubsetTable(task.hidden.length), known, loglik);
  } else {
    const bit = 1 << task.own[doubt]!;
    const w = a.commitWeight[doubt]!;
    score(new SubsetTable(task.hidden.length), known | bit, loglik);
    score(new SubsetTable(task.hidden.length), known & ~bit, loglik2);
    const lw = Math.log(w), lw0 = Math.log(1 - w);
    let top = Number.NEGATIVE_INFINITY;
    for (let h = 0; h < a.hypotheses; h++) {
      const x = lw + loglik[h]!, y = lw0 + loglik2[h]!;
      if (x > top) top = x;
      if (y > top) top = y;
    }
    const p = a.belief.p;
    let e1 = 0, e0 = 0;
    for (let h = 0; h < a.hypotheses; h++) {
      const ea = Math.exp(lw + loglik[h]! - top);
      const eb = Math.exp(lw0 + loglik2[h]! - top);
      e1 += p[h]! * ea;
      e0 += p[h]! * eb;
      loglik[h] = top + Math.log(ea + eb);
    }
    const post = e1 / (e1 + e0);
    if (Number.isFinite(post)) {
      const wp = Math.min(Math.max(post, 1e-9), 1 - 1e-9);
      a.commitWeight[doubt] = wp;
      a.committedOwn = wp >= 0.5 ? a.committedOwn | bit : a.committedOwn & ~bit;
    }
  }
  a.belief.update(loglik, a.config.belief.forgetting);
  a.belief.marginals(task.hidden.length, a.out.hiddenOccupied);
}

/** Everything the job may change, for comparison. */
function state(s: ArmStep): unknown {
  const a = inside(s);
  return {
    logp: Array.from(a.belief.logp), p: Array.from(a.belief.p), entropy: a.belief.entropy, mostLikely: a.belief.mostLikely, updates: a.belief.updates,
    rlogp: Array.from(a.replica.logp), rp: Array.from(a.replica.p), rentropy: a.replica.entropy, rmost: a.replica.mostLikely, rupdates: a.replica.updates,
    marg: Array.from(a.out.hiddenOccupied), weight: Array.from(a.commitWeight), committedOwn: a.committedOwn,
  };
}

/** An arm brought to a random state: a run with noise and pushes, then random common knowledge and a random prior. */
function armAt(cfg: ArmConfig, seed: number, samples: number): { s: ArmStep; t: number } {
  const s = new ArmStep(cfg, { jointCount: 3 });
  const rng = new Rng(seed);
  const w = new Float64Array(6);
  const vel = new Float64Array(3);
  const zones = cfg.task.zones;
  const view = Uint8Array.from(zones, (z) => (z.observed_by === cfg.arm ? (rng.uniform() < 0.5 ? ZONE_OCCUPIED : ZONE_FREE) : ZONE_UNKNOWN));
  let t = 0;
  for (let k = 0; k < samples; k++) {
    t = k / 1000;
    if (k % 100 === 0) s.setZoneView(t, view);
    s.setToolPose(t, 0.2 + 0.3 * Math.sin(0.1 * t + seed), 0.55 * (cfg.arm === 'left' ? 1 : -1) + 0.1 * Math.cos(0.1 * t), 0.9, 0, 0, 0, 1);
    if (k % 2 === 0) s.setJointState(t, vel, 3);
    const nz = k < 1000 ? 0.2 : 1; // quiet until the start-up tare
    w[0] = nz * rng.normal() + (k > 1000 ? 4 * Math.sin(3 * t) : 0);
    w[1] = nz * rng.normal() + (k > 1000 ? 3 * Math.cos(2 * t) : 0);
    w[2] = -11.77 + 0.2 * rng.normal();
    s.step(t, w);
  }
  return { s, t };
}

describe('the 100 Hz job', () => {
  it('equals the one-shot update bit for bit, however it is cut into parts (property)', () => {
    const pathCell = loadCell('examples/path_cell.yaml');
    const cfgs = [cell.left.config, cell.right.config, config256().left, config256().right, pathCell.left.config, pathCell.right.config, configPath().left, configPath().right];
    fc.assert(
      fc.property(
        fc.integer({ min: 0, max: 7 }),
        fc.integer({ min: 1, max: 1_000_000 }),
        fc.boolean(),
        fc.double({ min: 0.03, max: 0.97, noNaN: true }),
        fc.integer({ min: 0, max: 0xffff }),
        fc.array(fc.integer({ min: 1, max: 30_000 }), { minLength: 1, maxLength: 8 }),
        (ci, seed, hedge, w, masks, budgets) => {
          const cfg = cfgs[ci]!;
          const { s } = armAt(cfg, seed, 1200 + (seed % 700));
          const a = inside(s);
          a.jobKind = 0;
          const rng = new Rng(seed + 1);
          // Random common knowledge and prior.
          a.committedHidden = 0;
          for (let b = 0; b < a.task.hidden.length; b++) if ((masks >>> b) & 1) a.committedHidden |= 1 << a.task.hidden[b]!;
          a.committedOwn = 0;
          for (let b = 0; b < a.task.own.length; b++) if ((masks >>> (8 + b)) & 1) a.committedOwn |= 1 << a.task.own[b]!;
          a.commitWeight.fill(0);
          if (hedge) a.commitWeight[seed % a.task.own.length] = w;
          a.belief.setPrior(Array.from({ length: a.belief.n }, () => 0.05 + rng.uniform()));
          a.replica.setPrior(Array.from({ length: a.replica.n }, () => 0.05 + rng.uniform()));
          for (const role of [LISTENER, SPEAKER]) {
            // Start a job on this window (the means as accumulated so far), copy the arm.
            a.accFx = 30 * (rng.uniform() - 0.5);
            a.accFy = 30 * (rng.uniform() - 0.5);
            a.accFz = 30 * (rng.uniform() - 0.5);
            a.accVx = 1.5 * rng.uniform();
            a.accVy = 0.5 * (rng.uniform() - 0.5);
            a.accVz = 0.5 * (rng.uniform() - 0.5);
            if (a.task.planar) a.startJob(role, 0.1 + 1.2 * rng.uniform(), 0.2 * (rng.uniform() - 0.5), 0.9);
            else {
              // Near a random point of the 3-D path (its frame turns and tilts there).
              const path = a.task.path;
              path.locate(path.length * rng.uniform());
              a.startJob(role, path.pos[0]! + 0.2 * (rng.uniform() - 0.5), path.pos[1]! + 0.2 * (rng.uniform() - 0.5), path.pos[2]! + 0.2 * (rng.uniform() - 0.5));
            }
            const ref = new ArmStep(cfg, { jointCount: 3 });
            ref.restore(s.snapshot());
            oneShot(inside(ref));
            let i = 0;
            while (a.jobKind !== 0) a.runJob(budgets[i++ % budgets.length]!);
            expect(state(s)).toEqual(state(ref));
          }
        },
      ),
      { numRuns: 25, seed: 8 },
    );
  });

  it('a snapshot taken mid-job (restore, applyParams, an older planar job snapshot) gives the same continuation, every output, every sample', () => {
    const { left } = config256();
    const sig = (s: ArmStep) => JSON.stringify([state(s), Array.from(s.out.twist), s.out.beliefUpdated, s.out.committedHidden, s.out.committedOwn]);
    for (const seed of [3, 4]) {
      const { s: base } = armAt(left, seed, 1500);
      const a = inside(base);
      const rng = new Rng(seed);
      const w = new Float64Array(6);
      let k = 1500;
      const feed = (s: ArmStep, kk: number, r: Rng) => {
        const t = kk / 1000;
        s.setToolPose(t, 0.3, 0.55, 0.9, 0, 0, 0, 1);
        s.setJointState(t, new Float64Array(3), 3);
        if (kk % 100 === 0) s.setZoneView(t, new Uint8Array(16).fill(ZONE_FREE));
        w[0] = 0.3 * r.normal() + 2;
        w[1] = 0.3 * r.normal();
        w[2] = -11.77;
        return s.step(t, w);
      };
      // Step until a job is in flight past its first part, then copy it there.
      let guard = 0;
      while (!(a.jobKind !== 0 && a.jobStage > 2) && guard++ < 100) feed(base, k++, rng);
      expect(a.jobKind).not.toBe(0);
      const copy = new ArmStep(left, { jointCount: 3 });
      copy.restore(base.snapshot());
      // applyParams goes through a snapshot too: a run-time parameter change mid-job continues it.
      const changed = new ArmStep(left, { jointCount: 3 });
      changed.restore(base.snapshot());
      changed.applyParams(left);
      expect(inside(changed).jobKind).toBe(a.jobKind);
      // An older snapshot of the planar job (23 numbers, its window in the cell frame, which is
      // the moving frame on this straight path along x) continues the same way.
      const snap = base.snapshot();
      const nl = (snap.job.length - 28) / 2;
      const oldJob = new Float64Array(23 + 2 * nl);
      oldJob.set(snap.job.subarray(0, 23), 0);
      oldJob.set(snap.job.subarray(28), 23);
      const older = new ArmStep(left, { jointCount: 3 });
      older.restore({ ...snap, job: oldJob });
      expect(inside(older).jobKind).toBe(a.jobKind);
      const r1 = new Rng(99), r2 = new Rng(99), r3 = new Rng(99), r4 = new Rng(99);
      for (let j = 0; j < 700; j++) {
        feed(base, k + j, r1);
        feed(copy, k + j, r2);
        feed(changed, k + j, r3);
        feed(older, k + j, r4);
        expect(sig(copy)).toBe(sig(base));
        expect(sig(changed)).toBe(sig(base));
        expect(sig(older)).toBe(sig(base));
      }
    }
  });

  it('a role switch before the job lands discards it; otherwise it lands within the next window', () => {
    const { left } = config256();
    const { s } = armAt(left, 11, 2000);
    const a = inside(s);
    const rng = new Rng(5);
    const w = new Float64Array(6);
    let landed = 0, discarded = 0, startK = -1, longest = 0;
    for (let k = 2000; k < 8000; k++) {
      const t = k / 1000;
      s.setToolPose(t, 0.3, 0.55, 0.9, 0, 0, 0, 1);
      if (k % 2 === 0) s.setJointState(t, new Float64Array(3), 3);
      if (k % 100 === 0) s.setZoneView(t, new Uint8Array(16).fill(ZONE_FREE));
      w[0] = 0.3 * rng.normal() + 2;
      w[1] = 0.3 * rng.normal();
      w[2] = -11.77;
      const before = a.jobKind !== 0 ? { role: a.jobRole, updates: a.belief.updates, rupdates: a.replica.updates } : null;
      const o = s.step(t, w);
      const landedNow = before !== null && (a.belief.updates !== before.updates || a.replica.updates !== before.rupdates);
      if (landedNow) {
        landed++;
        expect(o.role).toBe(before.role);
        // Started at the end of a window, landed within the next one.
        longest = Math.max(longest, k - startK);
        expect(k - startK).toBeLessThanOrEqual(inside(s).config.wrench_filter.sample_rate_hz / inside(s).config.belief.update_rate_hz);
        startK = -1;
      } else if (before && a.jobKind === 0) {
        // Gone without landing: only by a role switch, and then nothing changed.
        discarded++;
        expect(o.role).not.toBe(before.role);
        expect(o.beliefUpdated).toBe(false);
        startK = -1;
      }
      if (a.jobKind !== 0 && startK === -1) startK = k;
      if (o.beliefUpdated) expect(o.role).toBe(LISTENER);
    }
    // 256 hypotheses: a job takes two samples or more, so the last window of a slot never lands.
    expect(longest).toBeGreaterThanOrEqual(1);
    // 6 s of 0.5 s slots: the last window of each slot is discarded (12), the others land.
    expect(discarded).toBeGreaterThanOrEqual(10);
    expect(discarded).toBeLessThanOrEqual(13);
    expect(landed).toBeGreaterThan(500);
  });

  it('on the demo cell (two hypotheses a side) every job lands in the sample its window ends, as the one-shot update did', () => {
    for (const cfg of [cell.left.config, cell.right.config]) {
      const { s } = armAt(cfg, 21, 1000);
      const a = inside(s);
      const rng = new Rng(2);
      const w = new Float64Array(6);
      let updates = 0;
      for (let k = 1000; k < 4000; k++) {
        const t = k / 1000;
        s.setToolPose(t, 0.3, 0.55 * (cfg.arm === 'left' ? 1 : -1), 0.9, 0, 0, 0, 1);
        if (k % 2 === 0) s.setJointState(t, new Float64Array(3), 3);
        if (k % 100 === 0) s.setZoneView(t, Uint8Array.of(ZONE_FREE, ZONE_FREE));
        w[0] = 0.3 * rng.normal() + 2;
        w[1] = 0.3 * rng.normal();
        w[2] = -11.77;
        s.step(t, w);
        expect(a.jobKind).toBe(0);
        updates = a.belief.updates + a.replica.updates;
      }
      expect(updates).toBeGreaterThan(250);
    }
  });

  it('allocates nothing per sample over a long run (heap after forced collections)', () => {
    setFlagsFromString('--expose-gc');
    const gc = runInNewContext('gc') as () => void;
    const { left } = config256();
    const s = new ArmStep(left, { jointCount: 6 });
    const w = new Float64Array(6);
    const qd = new Float64Array(6);
    const view = Uint8Array.from(left.task.zones, (z, k) => (z.observed_by === 'left' ? (k % 4 === 0 ? ZONE_OCCUPIED : ZONE_FREE) : ZONE_UNKNOWN));
    const rng = new Rng(1);
    const run = (from: number, n: number) => {
      for (let k = from; k < from + n; k++) {
        const t = k / 1000;
        s.setToolPose(t, 0.3 + 0.05 * Math.sin(t * 0.1), 0.55, 0.9, 0, 0, 0, 1);
        if ((k & 1) === 0) s.setJointState(t, qd, 6);
        if (k % 100 === 0) s.setZoneView(t, view);
        w[0] = 0.2 * rng.normal() + (t > 1 ? 5 * Math.sin(t) : 0);
        w[1] = 0.2 * rng.normal() + (t > 1 ? 3 * Math.cos(0.7 * t) : 0);
        w[2] = -11.77 + 0.2 * rng.normal();
        s.step(t, w);
      }
    };
    run(0, 20_000);
    gc();
    gc();
    const before = process.memoryUsage().heapUsed;
    const n = 100_000;
    run(20_000, n);
    gc();
    gc();
    const growth = process.memoryUsage().heapUsed - before;
    // 100 000 samples: one 16-byte object per sample would be 1.6 MB.
    expect(growth).toBeLessThan(300_000);
  });
});
