/**
 * The policy stage: what velocity this arm recommends for the carried object, as speaker or
 * listener, and the legible exaggeration the speaker adds.
 *
 * - Speaker: the task's velocity field for its own view plus common knowledge, exaggerated away
 *   from the mean over the alternatives the listener still holds (`legible`, `legMean`).
 * - Listener: the centralized policy in expectation over its belief, slowed while the
 *   hypotheses it holds disagree about what to do.
 *
 * The belief stage reproduces the partner's speaker with the same `legible` / `legMean`, so
 * both live here once. Pure and allocation-free after construction: every result is written
 * into `v` (scratch) or `target`; the subset tables it tabulates are its own, so the policy
 * never disturbs a table the belief stage is working through.
 */
import type { PolicyParams } from '../params/config.js';
import { SPEAKER, type Role } from './roles.js';
import { SubsetTable, type TaskModel } from './task-model.js';

export class Policy {
  /** Scratch result of `legible`, `consistentMean` and `legMean` (object velocity in the path's moving frame: tangent, lateral, vertical). */
  readonly v = new Float64Array(3);
  /** The last target written by `updateTarget` (object velocity, cell frame x, y, z). */
  readonly target = new Float64Array(3);
  /** consistentMean's running sums (x, y, z, count). */
  private readonly sum = new Float64Array(4);
  private readonly ownTable: SubsetTable;
  private readonly hiddenTable: SubsetTable;

  constructor(
    readonly task: TaskModel,
    readonly params: PolicyParams,
  ) {
    this.ownTable = new SubsetTable(task.own.length);
    this.hiddenTable = new SubsetTable(task.hidden.length);
  }

  /**
   * The speaker's legible velocity for private hypothesis `hyp` of a table tabulated over
   * the speaker's private zones (with what it knows as the base); (meanX, meanY) is its mean
   * over the alternatives the listener still holds (legMean). All in the moving frame of the
   * prepared position (the exaggeration is a detour's exaggeration). Writes v.
   */
  legible(table: SubsetTable, hyp: number, meanX: number, meanY: number, meanZ: number): void {
    const v = this.v;
    this.task.velocityOf(table, hyp, v);
    const lam = this.params.legibility_gain;
    let vx = v[0]! + lam * (v[0]! - meanX);
    let vy = v[1]! + lam * (v[1]! - meanY);
    let vz = v[2]! + lam * (v[2]! - meanZ);
    const s = Math.sqrt(vx * vx + vy * vy + vz * vz);
    const vmax = this.params.speed_m_s;
    if (s > vmax) {
      vx *= vmax / s;
      vy *= vmax / s;
      vz *= vmax / s;
    }
    v[0] = vx;
    v[1] = vy;
    v[2] = vz;
  }

  /** Uniform mean velocity over the hypotheses of a table whose bits include `need` (table bit space). Writes v. */
  consistentMean(table: SubsetTable, need: number): void {
    const sum = this.sum;
    sum[0] = sum[1] = sum[2] = sum[3] = 0;
    this.meanPart(table, need, 0, table.size, sum);
    const v = this.v;
    const k = sum[3]!;
    v[0] = sum[0]! / k;
    v[1] = sum[1]! / k;
    v[2] = sum[2]! / k;
  }

  /**
   * Part of `consistentMean` over hypotheses [from, to): adds the velocities of those whose bits
   * include `need` into sum[0..2] and their count into sum[3] (the arm step's job spreads a mean
   * over several samples this way; the same order of additions, so the same result bit for bit).
   */
  meanPart(table: SubsetTable, need: number, from: number, to: number, sum: Float64Array): void {
    const act = table.active;
    const vt = table.vt, vl = table.vl, vv = table.vv;
    let sx = sum[0]!, sy = sum[1]!, sz = sum[2]!, k = sum[3]!;
    for (let h = from; h < to; h++) {
      if ((h & need) !== need) continue;
      const e = h & act;
      sx += vt[e]!;
      sy += vl[e]!;
      sz += vv[e]!;
      k++;
    }
    sum[0] = sx;
    sum[1] = sy;
    sum[2] = sz;
    sum[3] = k;
  }

  /** Map a zone-index mask onto the bit space of a zone list (bit b: list[b]). */
  static toListBits(list: Int32Array, zoneMask: number): number {
    let m = 0;
    for (let b = 0; b < list.length; b++) if ((zoneMask >>> list[b]!) & 1) m |= 1 << b;
    return m;
  }

  /**
   * The mean the speaker exaggerates away from: its velocity averaged uniformly over the
   * hypotheses the listener still holds, i.e. those in which every zone of `list` already
   * committed (`committed`, a zone-index mask) is occupied. Both arms compute it from common
   * knowledge only. (A mean weighted by the replica of the listener's belief was measured
   * worse: replica and belief differ by the noise, which biases every prediction.) Writes v.
   */
  legMean(table: SubsetTable, list: Int32Array, committed: number): void {
    this.consistentMean(table, Policy.toListBits(list, committed));
  }

  /**
   * The recommended object velocity at object position (px, py, pz), written into `target`
   * (cell frame); computed in the path's moving frame there.
   * `shared` and `own`: zone-index masks of the observed zones this arm sees occupied (shared
   * and private); `committedHidden` / `committedOwn`: the common knowledge of the last switches;
   * `belief`: the probability of each hidden hypothesis (listener).
   */
  updateTarget(role: Role, px: number, py: number, pz: number, shared: number, own: number, committedHidden: number, committedOwn: number, belief: Float64Array): void {
    const task = this.task;
    const v = this.v;
    task.prepare(px, py, pz);
    if (role === SPEAKER) {
      // Act on my own view and common knowledge only; exaggerate what tells my view from
      // the alternatives the partner still holds (uniform over what is not yet committed).
      const known = shared | committedHidden;
      task.tabulate(task.own, known, this.ownTable);
      this.legMean(this.ownTable, task.own, committedOwn);
      const mx = v[0]!, my = v[1]!, mz = v[2]!;
      let hyp = 0;
      for (let b = 0; b < task.own.length; b++) if ((own >>> task.own[b]!) & 1) hyp |= 1 << b;
      this.legible(this.ownTable, hyp, mx, my, mz);
      task.toCell(v[0]!, v[1]!, v[2]!, this.target);
      return;
    }
    // Listener: the centralized policy in expectation over the belief, slowed while the
    // hypotheses it still holds disagree about what to do (uncertainty that matters here).
    let sx = 0, sy = 0, sz = 0, sxx = 0;
    const hypotheses = 1 << task.hidden.length;
    const table = this.hiddenTable;
    task.tabulate(task.hidden, shared | own, table);
    const act = table.active;
    const vt = table.vt, vl = table.vl, vv = table.vv;
    for (let h = 0; h < hypotheses; h++) {
      const e = h & act;
      const a = vt[e]!, b = vl[e]!, c = vv[e]!;
      const ph = belief[h]!;
      sx += ph * a;
      sy += ph * b;
      sz += ph * c;
      sxx += ph * (a * a + b * b + c * c);
    }
    const spread = Math.sqrt(Math.max(0, sxx - sx * sx - sy * sy - sz * sz));
    const floor = this.params.confidence_floor;
    const conf = Math.max(0, 1 - spread / this.params.speed_m_s);
    const scale = floor + (1 - floor) * conf;
    task.toCell(sx * scale, sy * scale, sz * scale, this.target);
  }
}
