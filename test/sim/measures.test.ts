/**
 * The two-arm measurements of an episode on constructed output streams with a known answer
 * (invented data of our own behaviour), then in the kinematic cell: every listener update
 * gives one pair per hidden zone, the injected sample is the only NaN, and the disturbance
 * leaves the run as it was when it is 0.
 */
import { describe, expect, it } from 'vitest';
import type { ArmOutputs, ArmStep } from '../../src/core/arm-step.js';
import { LISTENER, SPEAKER } from '../../src/core/roles.js';
import { loadCell } from '../../src/params/config.js';
import { runKinematicCell } from '../../src/sim/kinematic-cell.js';
import { commitmentSummary, EpisodeMeasures, percentile } from '../../src/sim/measures.js';

const cell = loadCell('config/demo_cell.yaml');

/** A stand-in for an arm step: only its hidden zones are read. */
const fakeArm = (hidden: number[]) => ({ task: { hidden: Int32Array.from(hidden) } }) as unknown as ArmStep;

function outputs(nHidden: number): ArmOutputs {
  return {
    t_s: 0, role: SPEAKER, slot: 0, timeToSwitch_s: -1, switchDeferred: false, belief: new Float64Array(1 << nHidden), hiddenOccupied: new Float64Array(nHidden),
    entropy_nats: 0, mostLikely: 0, beliefUpdated: false, twist: new Float64Array(6), correction: new Float64Array(6), impact: new Float64Array(6), impactFlag: false,
    impactScore: 0, held: false, inhibited: false, tared: true, objectX: 0, objectY: 0, committedHidden: 0, committedOwn: 0,
    tareOutcome: 0, tareReason: '', heldOwn: false, jointVelocityAvailable: true, partnerSpeedRatio: Number.NaN,
  };
}

describe('episode measures on constructed streams', () => {
  it('pairs each listener update with the truth of each hidden zone, in the order of task.hidden', () => {
    // Zones 0..2; left's hidden zones are 2 and 0, right's is 1. Zone 0 occupied, 1 free, 2 occupied.
    const m = new EpisodeMeasures(fakeArm([2, 0]), fakeArm([1]), [true, false, true], 0.001, undefined);
    const l = outputs(2), r = outputs(1);
    l.beliefUpdated = true;
    l.hiddenOccupied.set([0.95, 0.02]); // zone 2 (occupied) 0.95 -> bin 9 truth 1; zone 0 (occupied) 0.02 -> bin 0 truth 1
    r.beliefUpdated = true;
    r.hiddenOccupied.set([0.01]); // zone 1 (free) -> bin 0 truth 0
    m.sample(0, l, r, 0, 0);
    l.beliefUpdated = r.beliefUpdated = false;
    m.sample(0.001, l, r, 0, 0); // no update: no pair
    const c = m.finish().calibration;
    expect(c.updates).toBe(3);
    expect(c.bins[0]!.count).toBe(2);
    expect(c.bins[0]!.observed_frequency).toBe(0.5);
    expect(c.bins[9]!.observed_frequency).toBe(1);
    // P(truth) < 0.05: zone 0 occupied at 0.02 (yes); zone 1 free at 0.01 (P(truth) 0.99, no); zone 2 at 0.95 (no).
    expect(c.p_truth_below_0_05_rate).toBeCloseTo(1 / 3, 12);
  });

  it('evaluates the k-th switch once both arms made it, counts disagreements, onsets and repairs in time and slots', () => {
    const m = new EpisodeMeasures(fakeArm([1]), fakeArm([0]), [false, false], 0.001, undefined);
    const l = outputs(1), r = outputs(1);
    let t = 0;
    const step = (lr: number, rr: number, lh: number, lo: number, rh: number, ro: number) => {
      l.role = lr as 0 | 1; r.role = rr as 0 | 1;
      l.committedHidden = lh; l.committedOwn = lo; r.committedHidden = rh; r.committedOwn = ro;
      m.sample(t, l, r, 0, 0);
      t += 0.5;
    };
    step(SPEAKER, LISTENER, 0, 0, 0, 0); // t 0: start, no switch
    step(LISTENER, LISTENER, 0, 0, 0, 0); // t 0.5: left switched, right one sample late: not evaluated yet
    step(LISTENER, SPEAKER, 0, 0, 1, 0); // t 1.0: switch 1: right.committedHidden 1 vs left.committedOwn 0: disagree (onset)
    step(SPEAKER, LISTENER, 2, 0, 1, 2); // t 1.5: switch 2: still right 1 vs left 0: disagree
    step(LISTENER, SPEAKER, 2, 1, 1, 2); // t 2.0: switch 3: agree: repaired after 1.0 s, 2 slots
    step(LISTENER, SPEAKER, 2, 1, 1, 2); // no switch
    step(SPEAKER, LISTENER, 0, 1, 1, 2); // t 3.0: switch 4: left.committedHidden 0 vs right.committedOwn 2: disagree, open to the end
    const s = m.finish();
    // Freshly committed pair: switch 1 right's (1 vs 0, disagrees), 2 left's (2 vs 2), 3 right's (1 vs 1), 4 left's (0 vs 2, disagrees).
    expect(s.commitments).toEqual({ switches: 4, disagreeing: 3, rate: 0.75, fresh_disagreeing: 2, fresh_rate: 0.5, onsets: 2, repair_s: { max: 1, p95: 1 }, repair_slots_max: 2, unrepaired: 1 });
    // Both arms in the same role: the one sample at t 0.5 (0.001 s per sample), both listening.
    expect(s.same_role.total_s).toBeCloseTo(0.001, 12);
    expect(s.same_role.both_listener_s).toBeCloseTo(0.001, 12);
    expect(s.same_role.fraction).toBeCloseTo(1 / 7, 12);
    expect(s.same_role.sampled_s).toBeCloseTo(0.007, 12);
  });

  it('pools commitment sums, with the nearest-rank 95th percentile (common practice)', () => {
    const a = { switches: 10, disagreeing: 2, fresh_disagreeing: 1, onsets: 1, repairs_s: [0.5], repair_slots: [1], unrepaired: 0 };
    const b = { switches: 30, disagreeing: 4, fresh_disagreeing: 3, onsets: 2, repairs_s: [1.5, 0.5], repair_slots: [3, 1], unrepaired: 1 };
    expect(commitmentSummary([a, b])).toEqual({ switches: 40, disagreeing: 6, rate: 0.15, fresh_disagreeing: 4, fresh_rate: 0.1, onsets: 3, repair_s: { max: 1.5, p95: 1.5 }, repair_slots_max: 3, unrepaired: 1 });
    expect(percentile([1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12, 13, 14, 15, 16, 17, 18, 19, 20], 0.95)).toBe(19);
    expect(percentile([], 0.95)).toBeNull();
    expect(commitmentSummary([]).rate).toBeNull();
  });

  it('injects one NaN sample and times the partner from it to the start of its final run of zero twist', () => {
    const m = new EpisodeMeasures(fakeArm([1]), fakeArm([0]), [false, false], 0.001, { arm: 'right', t_s: 1.0 });
    const l = outputs(1), r = outputs(1);
    const w = new Float64Array(6).fill(1);
    let nan = 0;
    for (let i = 0; i <= 3000; i++) {
      const t = i / 1000;
      w.fill(1);
      m.wrench('left', t, w);
      m.wrench('right', t, w);
      if (w.some(Number.isNaN)) nan++;
      r.held = t >= 1.0;
      l.role = LISTENER;
      r.role = SPEAKER;
      // Partner (left) twist: moving, zero briefly at 1.2 s, moving, zero for good from 2.0 s.
      l.twist[0] = (t >= 1.2 && t < 1.3) || t >= 2.0 ? 0 : 0.1;
      m.sample(t, l, r, t < 1.0 ? 0 : Math.min(t, 2.0) - 1.0, 0);
    }
    expect(nan).toBe(1);
    const p = m.finish().partner_hold!;
    expect(p.injected_at_s).toBe(1.0);
    expect(p.held_at_s).toBe(1.0);
    expect(p.role_at_injection).toBe('speaker');
    expect(p.partner_role_at_injection).toBe('listener');
    expect(p.partner_stopped_at_s).toBe(2.0);
    expect(p.detection_s).toBeCloseTo(1.0, 12);
    expect(p.watched_after_stop_s).toBeCloseTo(1.0, 12);
    expect(p.object_moved_m).toBeCloseTo(1.0, 9);
    expect(p.object_path_m).toBeCloseTo(1.0, 9);
  });

  it('says never when the partner still moves at the end', () => {
    const m = new EpisodeMeasures(fakeArm([1]), fakeArm([0]), [false, false], 0.001, { arm: 'left', t_s: 0.5 });
    const l = outputs(1), r = outputs(1);
    const w = new Float64Array(6);
    for (let i = 0; i < 1000; i++) {
      m.wrench('left', i / 1000, w);
      r.twist[0] = 0.1;
      m.sample(i / 1000, l, r, 0, 0);
    }
    const p = m.finish().partner_hold!;
    expect(p.partner).toBe('right');
    expect(p.detection_s).toBeNull();
    expect(p.partner_stopped_at_s).toBeNull();
  });
});

describe('episode measures in the kinematic cell (demo cell, seed 5, both zones occupied)', () => {
  const occ = [true, true];
  const base = runKinematicCell(cell.left.config, cell.right.config, occ, { seed: 5, duration_s: 6 });

  it('one pair per hidden zone per listener update: about (listening time) x 100 Hz x 1 zone', () => {
    const c = base.measures!.calibration;
    // Each arm listens about half of the 6 s at 100 Hz updates, one hidden zone each: about 600 pairs (less the tare).
    expect(c.updates).toBeGreaterThan(400);
    expect(c.updates).toBeLessThanOrEqual(600);
    expect(c.bins.reduce((a, b) => a + b.count, 0)).toBe(c.updates);
    // Alternating on the shared clock: every switch evaluated, about 2 per second; the arms never in the same role.
    expect(base.measures!.commitments.switches).toBeGreaterThanOrEqual(10);
    expect(base.measures!.same_role.total_s).toBe(0);
    expect(base.measures!.partner_hold).toBeNull();
  });

  it('a zero disturbance and no injection leave the run exactly as it was', () => {
    const again = runKinematicCell(cell.left.config, cell.right.config, occ, { seed: 5, duration_s: 6, disturbance_n: 0 });
    expect(JSON.stringify(again)).toBe(JSON.stringify(base));
  });

  it('an injected hold latches non_finite on that arm at the injection', () => {
    const r = runKinematicCell(cell.left.config, cell.right.config, occ, { seed: 5, duration_s: 6, stopAtGoal: false, inject_hold: { arm: 'left', t_s: 3.0 } });
    const p = r.measures!.partner_hold!;
    expect(p.injected_at_s).toBe(3.0);
    expect(p.held_at_s).toBe(3.0);
    expect(r.trips.left.some((s) => s.startsWith('non_finite@wrench'))).toBe(true);
    // The partner feels itself dragging the held arm and holds too (partner_stop), for no other reason.
    expect(r.trips.right.every((s) => s.startsWith('partner_stop@'))).toBe(true);
  });
});
