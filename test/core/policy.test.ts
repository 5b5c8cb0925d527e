/**
 * The policy stage through its public interface (Policy: legible, consistentMean, meanPart,
 * legMean, toListBits, updateTarget) on the demo cell's left arm (one zone of its own, the clamp
 * post; one hidden, the tray drop), near the clamp post where the zones matter. The reference
 * velocities come from the shared task model (TaskModel.velocityOf); the formulas are our own
 * design as DEVELOPERS.md gives them: the speaker exaggerates v + λ(v − mean), capped at the
 * cruise speed; the listener takes the belief-weighted mean, scaled by
 * floor + (1 − floor)·max(0, 1 − spread / speed).
 */
import { describe, expect, it } from 'vitest';
import { Policy } from '../../src/core/policy.js';
import { LISTENER, SPEAKER } from '../../src/core/roles.js';
import { SubsetTable, TaskModel } from '../../src/core/task-model.js';
import { loadCell, type ArmConfig } from '../../src/params/config.js';

const cell = loadCell('config/demo_cell.yaml');
const cfg: ArmConfig = cell.left.config;
const P = [0.45, 0.02, 0] as const; // object centre just short of the clamp post
const make = (policy: Partial<ArmConfig['policy']> = {}) => {
  const task = new TaskModel(cfg.task, { ...cfg.policy, ...policy }, 'left');
  return { task, policy: new Policy(task, { ...cfg.policy, ...policy }) };
};
const vel = (task: TaskModel, zones: Int32Array, base: number, h: number): number[] => {
  const t = new SubsetTable(zones.length);
  task.tabulate(zones, base, t);
  const out = new Float64Array(3);
  task.velocityOf(t, h, out);
  return [...out];
};
const close = (a: ArrayLike<number>, b: ArrayLike<number>, tol = 1e-12) => {
  expect(a.length).toBe(b.length);
  for (let i = 0; i < a.length; i++) expect(Math.abs(a[i]! - b[i]!), `component ${i}: ${a[i]} vs ${b[i]}`).toBeLessThanOrEqual(tol);
};

describe('Policy helpers', () => {
  it('maps a zone mask onto a list of zones bit by bit', () => {
    const list = Int32Array.of(2, 0, 5);
    expect(Policy.toListBits(list, (1 << 0) | (1 << 5))).toBe(0b110);
    expect(Policy.toListBits(list, 1 << 2)).toBe(0b001);
    expect(Policy.toListBits(list, 1 << 3)).toBe(0);
    expect(Policy.toListBits(list, 0b100101)).toBe(0b111);
    expect(Policy.toListBits(new Int32Array(0), 0xff)).toBe(0);
  });

  it('consistentMean is the uniform mean over the hypotheses that include `need`, and meanPart splits it exactly', () => {
    const { task, policy } = make();
    task.prepare(P[0], P[1], P[2]);
    // Both of the left arm's observed zones (own and hidden) in one table: four hypotheses.
    const zones = Int32Array.of(task.own[0]!, task.hidden[0]!);
    const table = new SubsetTable(2);
    task.tabulate(zones, 0, table);
    for (const need of [0, 1, 2, 3]) {
      const hs = [0, 1, 2, 3].filter((h) => (h & need) === need);
      const want = [0, 1, 2].map((i) => hs.reduce((s, h) => s + vel(task, zones, 0, h)[i]!, 0) / hs.length);
      policy.consistentMean(table, need);
      close(policy.v, want, 1e-15);
      const whole = [...policy.v];
      // The same sums in two parts: bit for bit.
      const sum = new Float64Array(4);
      policy.meanPart(table, need, 0, 1, sum);
      policy.meanPart(table, need, 1, 4, sum);
      expect(sum[3]).toBe(hs.length);
      expect([sum[0]! / sum[3]!, sum[1]! / sum[3]!, sum[2]! / sum[3]!]).toEqual(whole);
    }
  });

  it('legible exaggerates away from the mean by the legibility gain, and caps at the cruise speed', () => {
    const { task, policy } = make();
    task.prepare(P[0], P[1], P[2]);
    const zones = Int32Array.of(task.own[0]!);
    const table = new SubsetTable(1);
    task.tabulate(zones, 0, table);
    const lam = cfg.policy.legibility_gain;
    for (const h of [0, 1]) {
      const v = vel(task, zones, 0, h);
      // A mean beyond v (v is at cruise speed here): the result is shorter, no cap.
      const mean = [1.5 * v[0]! - 0.01, 1.5 * v[1]! + 0.02, 1.5 * v[2]! - 0.005];
      policy.legible(table, h, mean[0]!, mean[1]!, mean[2]!);
      const want = v.map((x, i) => x + lam * (x - mean[i]!));
      expect(Math.hypot(...want)).toBeLessThan(cfg.policy.speed_m_s);
      close(policy.v, want, 1e-15);
      // A mean far away: capped to the cruise speed in the same direction.
      policy.legible(table, h, -1, 2, 0.5);
      const raw = v.map((x, i) => x + lam * (x - [-1, 2, 0.5][i]!));
      const s = Math.hypot(...raw);
      close(policy.v, raw.map((x) => (x * cfg.policy.speed_m_s) / s), 1e-15);
    }
    // The mean itself: no exaggeration at all.
    const v1 = vel(task, zones, 0, 1);
    policy.legible(table, 1, v1[0]!, v1[1]!, v1[2]!);
    close(policy.v, v1, 1e-15);
  });
});

describe('Policy.updateTarget', () => {
  it('speaker: acts on its own view, exaggerated from the uniform mean over its own hypotheses', () => {
    const { task, policy } = make();
    const own = 1 << task.own[0]!;
    const lam = cfg.policy.legibility_gain;
    for (const occupied of [false, true]) {
      policy.updateTarget(SPEAKER, P[0], P[1], P[2], 0, occupied ? own : 0, 0, 0, new Float64Array(2));
      const zones = Int32Array.of(task.own[0]!);
      const v0 = vel(task, zones, 0, 0);
      const v1 = vel(task, zones, 0, 1);
      const mine = occupied ? v1 : v0;
      const mean = v0.map((x, i) => (x + v1[i]!) / 2);
      let want = mine.map((x, i) => x + lam * (x - mean[i]!));
      const s = Math.hypot(...want);
      if (s > cfg.policy.speed_m_s) want = want.map((x) => (x * cfg.policy.speed_m_s) / s);
      const cellV = new Float64Array(3);
      task.toCell(want[0]!, want[1]!, want[2]!, cellV);
      close(policy.target, cellV, 1e-15);
    }
    // The two views must give different targets near the post (otherwise nothing is said).
    policy.updateTarget(SPEAKER, P[0], P[1], P[2], 0, 0, 0, 0, new Float64Array(2));
    const free = [...policy.target];
    policy.updateTarget(SPEAKER, P[0], P[1], P[2], 0, own, 0, 0, new Float64Array(2));
    expect(Math.hypot(free[0]! - policy.target[0]!, free[1]! - policy.target[1]!)).toBeGreaterThan(1e-3);
  });

  it('speaker: once its zone is committed, it moves as it would without legibility', () => {
    const { task, policy } = make();
    const own = 1 << task.own[0]!;
    policy.updateTarget(SPEAKER, P[0], P[1], P[2], 0, own, 0, own, new Float64Array(2));
    const v1 = vel(task, Int32Array.of(task.own[0]!), 0, 1);
    const cellV = new Float64Array(3);
    task.toCell(v1[0]!, v1[1]!, v1[2]!, cellV);
    close(policy.target, cellV, 1e-15);
  });

  it('speaker: ignores the belief and the hidden view unless committed', () => {
    const { task, policy } = make();
    const hidden = 1 << task.hidden[0]!;
    policy.updateTarget(SPEAKER, 1.0, -0.02, 0, 0, 0, 0, 0, Float64Array.of(0.5, 0.5));
    const a = [...policy.target];
    policy.updateTarget(SPEAKER, 1.0, -0.02, 0, 0, hidden, 0, 0, Float64Array.of(0, 1));
    expect([...policy.target]).toEqual(a);
    // Committed hidden zone: part of what it knows (the tray drop is just ahead at x = 1.0).
    policy.updateTarget(SPEAKER, 1.0, -0.02, 0, 0, 0, hidden, 0, Float64Array.of(0.5, 0.5));
    expect(Math.hypot(a[0]! - policy.target[0]!, a[1]! - policy.target[1]!)).toBeGreaterThan(1e-3);
  });

  it('listener: a certain belief gives that hypothesis\' velocity at full scale', () => {
    const { task, policy } = make();
    const zones = Int32Array.of(task.hidden[0]!);
    for (const h of [0, 1]) {
      const belief = h === 0 ? Float64Array.of(1, 0) : Float64Array.of(0, 1);
      policy.updateTarget(LISTENER, 1.0, -0.02, 0, 0, 0, 0, 0, belief);
      task.prepare(1.0, -0.02, 0);
      const v = vel(task, zones, 0, h);
      const cellV = new Float64Array(3);
      task.toCell(v[0]!, v[1]!, v[2]!, cellV);
      close(policy.target, cellV, 1e-15);
    }
  });

  it('listener: an unsure belief slows by the spread, down to the confidence floor', () => {
    for (const floor of [0.3, 0]) {
      const { task, policy } = make({ confidence_floor: floor });
      const zones = Int32Array.of(task.hidden[0]!);
      for (const p1 of [0.5, 0.2]) {
        policy.updateTarget(LISTENER, 1.0, -0.02, 0, 0, 0, 0, 0, Float64Array.of(1 - p1, p1));
        task.prepare(1.0, -0.02, 0);
        const v0 = vel(task, zones, 0, 0);
        const v1 = vel(task, zones, 0, 1);
        const mean = v0.map((x, i) => (1 - p1) * x + p1 * v1[i]!);
        // Spread: the belief's standard deviation of the velocity (for two hypotheses
        // sqrt(p(1−p))·|v1 − v0|).
        const spread = Math.sqrt(p1 * (1 - p1)) * Math.hypot(v1[0]! - v0[0]!, v1[1]! - v0[1]!, v1[2]! - v0[2]!);
        expect(spread).toBeGreaterThan(0.01);
        const scale = floor + (1 - floor) * Math.max(0, 1 - spread / cfg.policy.speed_m_s);
        expect(scale).toBeLessThan(1);
        const cellV = new Float64Array(3);
        task.toCell(mean[0]! * scale, mean[1]! * scale, mean[2]! * scale, cellV);
        close(policy.target, cellV, 1e-12);
      }
    }
  });
});

describe('Policy on a 3-D path (examples/path_cell.yaml): the vertical component counts too', () => {
  const path = loadCell('examples/path_cell.yaml').left.config;
  const task = new TaskModel(path.task, path.policy, 'left');
  const policy = new Policy(task, path.policy);
  /** The first point of the path where `ok` holds for the all-free and all-occupied velocities of `zones`. */
  const where = (zones: Int32Array, ok = (a: number[], b: number[]) => Math.abs(a[2]! - b[2]!) > 0.01): number[] => {
    for (let s = 0; s < task.path.length; s += 0.01) {
      task.path.locate(s);
      const p = [task.path.pos[0]!, task.path.pos[1]!, task.path.pos[2]!];
      task.prepare(p[0]!, p[1]!, p[2]!);
      const a = vel(task, zones, 0, 0);
      const b = vel(task, zones, 0, (1 << zones.length) - 1);
      if (ok(a, b)) return p;
    }
    throw new Error('no point of the path where the test applies');
  };

  it('consistentMean averages the vertical component as well', () => {
    const zones = Int32Array.of(task.own[0]!);
    const p = where(zones);
    task.prepare(p[0]!, p[1]!, p[2]!);
    const table = new SubsetTable(1);
    task.tabulate(zones, 0, table);
    const v0 = vel(task, zones, 0, 0);
    const v1 = vel(task, zones, 0, 1);
    expect(Math.abs(v0[2]! + v1[2]!)).toBeGreaterThan(1e-3);
    policy.consistentMean(table, 0);
    close(policy.v, v0.map((x, i) => (x + v1[i]!) / 2), 1e-15);
  });

  it('listener: the spread and the scaled mean include the vertical component', () => {
    // The right arm: its hidden zone is the low clamp, passed over (lifted).
    const right = loadCell('examples/path_cell.yaml').right.config;
    const task = new TaskModel(right.task, right.policy, 'right');
    const policy = new Policy(task, right.policy);
    const zones = Int32Array.of(task.hidden[0]!);
    let p: number[] | undefined;
    for (let s = 0; s < task.path.length && !p; s += 0.01) {
      task.path.locate(s);
      const q = [task.path.pos[0]!, task.path.pos[1]!, task.path.pos[2]!];
      task.prepare(q[0]!, q[1]!, q[2]!);
      if (Math.abs(vel(task, zones, 0, 0)[2]! - vel(task, zones, 0, 1)[2]!) > 0.01) p = q;
    }
    expect(p).toBeDefined();
    const floor = path.policy.confidence_floor;
    for (const p1 of [0.5, 0.3]) {
      policy.updateTarget(LISTENER, p![0]!, p![1]!, p![2]!, 0, 0, 0, 0, Float64Array.of(1 - p1, p1));
      task.prepare(p![0]!, p![1]!, p![2]!);
      const v0 = vel(task, zones, 0, 0);
      const v1 = vel(task, zones, 0, 1);
      const mean = v0.map((x, i) => (1 - p1) * x + p1 * v1[i]!);
      const spread = Math.sqrt(p1 * (1 - p1)) * Math.hypot(v1[0]! - v0[0]!, v1[1]! - v0[1]!, v1[2]! - v0[2]!);
      const scale = floor + (1 - floor) * Math.max(0, 1 - spread / path.policy.speed_m_s);
      const cellV = new Float64Array(3);
      task.toCell(mean[0]! * scale, mean[1]! * scale, mean[2]! * scale, cellV);
      close(policy.target, cellV, 1e-12);
    }
  });
});
