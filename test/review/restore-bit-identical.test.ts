/** Review probe: restore-then-continue equals the uninterrupted run (two arms, demo cell, invented data). */
import { expect, it } from 'vitest';
import { ArmStep, type ArmOutputs } from '../../src/core/arm-step.js';
import { loadCell } from '../../src/params/config.js';
import { Rng } from '../../src/util/rng.js';

const cell = loadCell('config/demo_cell.yaml');
function sig(o: ArmOutputs): string {
  return JSON.stringify([o.t_s, o.role, o.slot, o.timeToSwitch_s, o.switchDeferred, [...o.belief], [...o.hiddenOccupied], o.entropy_nats, o.mostLikely, o.beliefUpdated, [...o.twist], [...o.correction], [...o.impact], o.impactFlag, o.impactScore, o.held, o.inhibited, o.tared, o.objectX, o.objectY, o.committedHidden, o.committedOwn, o.tareOutcome, o.tareReason, o.jointVelocityAvailable, o.partnerSpeedRatio]);
}
function run(snapAt: number | null, occ: boolean[]): string[] {
  let L = new ArmStep(cell.left.config, { jointCount: 3 });
  let R = new ArmStep(cell.right.config, { jointCount: 3 });
  const rng = new Rng(7);
  const zones = cell.left.config.task.zones;
  const view = (arm: string) => zones.map((z, i) => (z.observed_by === arm ? (occ[i] ? 1 : 0) : 2));
  let px = 0, py = 0, fL = 0, fLy = 0;
  const wl = new Float64Array(6), wr = new Float64Array(6), vel = new Float64Array(3);
  const out: string[] = [];
  for (let k = 0; k < 9000; k++) {
    const t = k / 1000;
    if (snapAt !== null && k === snapAt) {
      const sl = L.snapshot(), sr = R.snapshot();
      L = new ArmStep(cell.left.config, { jointCount: 3 });
      R = new ArmStep(cell.right.config, { jointCount: 3 });
      L.restore(sl); R.restore(sr);
    }
    if (k % 100 === 0) { L.setZoneView(t, view('left')); R.setZoneView(t, view('right')); }
    L.setToolPose(t, px, py + 0.55, 0.9, 0, 0, 0, 1);
    R.setToolPose(t, px, py - 0.55, 0.9, 0, 0, 0, 1);
    if (k % 2 === 0) { L.setJointState(t, vel, 3); R.setJointState(t, vel, 3); }
    const nz = () => (k < 1000 ? 0.2 : 1.0) * rng.normal();
    wl[0] = fL + nz(); wl[1] = fLy + nz(); wl[2] = -11.77 + 0.2 * rng.normal();
    wr[0] = -fL + nz(); wr[1] = -fLy + nz(); wr[2] = -11.77 + 0.2 * rng.normal();
    const oL = L.step(t, wl), oR = R.step(t, wr);
    if (snapAt === null || k >= snapAt) out[k] = sig(oL) + sig(oR);
    fL = 40 * (oR.twist[0]! - oL.twist[0]!); fLy = 40 * (oR.twist[1]! - oL.twist[1]!);
    const vx = (oL.twist[0]! + oR.twist[0]!) / 2, vy = (oL.twist[1]! + oR.twist[1]!) / 2;
    vel[0] = vx; vel[1] = vy;
    px += vx / 1000; py += vy / 1000;
  }
  return out;
}
it('restore mid-run then continue is identical to the uninterrupted run, every output, every sample', () => {
  for (const occ of [[true, true], [false, true]]) {
    const a = run(null, occ);
    for (const at of [3371, 5005]) {
      const b = run(at, occ);
      for (let k = at; k < 9000; k++) if (a[k] !== b[k]) { const x = JSON.parse("[" + a[k]!.replace("][", "],[") + "]"), y = JSON.parse("[" + b[k]!.replace("][", "],[") + "]"); const d: string[] = []; for (let s = 0; s < 2; s++) for (let f = 0; f < x[s].length; f++) if (JSON.stringify(x[s][f]) !== JSON.stringify(y[s][f])) d.push(`arm ${s} field ${f}: ${JSON.stringify(x[s][f])} vs ${JSON.stringify(y[s][f])}`); throw new Error(`occ ${occ} snapshot at ${at}: first difference at sample ${k}: ${d.join("; ").slice(0, 600)}`); }
    }
  }
  expect(true).toBe(true);
});
