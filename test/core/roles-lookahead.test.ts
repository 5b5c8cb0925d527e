/**
 * The lookahead scheduler (src/core/roles.ts): the owner of the private zones ahead along the
 * path speaks, read off a progress estimate both arms compute from the shared clock and the
 * shared task. Our own design, checked on the demo cell's parameters (synthetic demo data of
 * our own scenario) and invented poses and times: no outside reference applies.
 */
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { ArmStep } from '../../src/core/arm-step.js';
import { LISTENER, RoleScheduler, SPEAKER } from '../../src/core/roles.js';
import { CLEARANCE_M, TaskModel } from '../../src/core/task-model.js';
import { cellFromFile, loadCell, type ArmConfig } from '../../src/params/config.js';
import { parseParamsText } from '../../src/params/load.js';
import { applyStrategy, defaultStrategies, parseStrategy, strategyLabel } from '../../src/sim/strategies.js';
import { InputError } from '../../src/util/errors.js';

const cell = loadCell('config/demo_cell.yaml');
const withRoles = (c: ArmConfig, roles: Partial<ArmConfig['roles']>): ArmConfig => ({ ...c, roles: { ...c.roles, ...roles } });
const lookahead = (c: ArmConfig, extra: Partial<ArmConfig['roles']> = {}): ArmConfig => withRoles(c, { scheduler: 'lookahead', ...extra });
const scheduler = (c: ArmConfig) => new RoleScheduler(c.roles, c.arm, new TaskModel(c.task, c.policy, c.arm));

/** The demo cell's schedule in closed form: when each zone starts and stops counting (s after t0). */
function demoWindows(c: ArmConfig) {
  const la = c.roles.lookahead;
  const v = la.speed_fraction * c.policy.speed_m_s;
  // Clamp post: a circle of radius 0.08 m at x = 0.6 m; tray drop: a box 0.24 m long at x = 1.1 m
  // (config/demo_cell.yaml); the path is the x axis and the beam lies across it.
  const post = { open: la.start_delay_s + (0.52 - la.lead_m) / v, late: la.start_delay_s + (0.68 + CLEARANCE_M) / v + la.detour_s };
  const tray = { open: la.start_delay_s + (0.98 - la.lead_m) / v, late: la.start_delay_s + (1.22 + CLEARANCE_M) / v + 2 * la.detour_s };
  return { post, tray };
}

describe('lookahead scheduler', () => {
  it('two arms fed different own position estimates never take the same role over a transfer', () => {
    // The arm step feeds the scheduler the shared clock only: object estimates 2 mm and 0.3 m
    // apart (a disagreement no real cell has) change nothing.
    for (const offset of [0.002, 0.3]) {
      const L = new ArmStep(lookahead(cell.left.config), { required: { zone_view: false } });
      const R = new ArmStep(lookahead(cell.right.config), { required: { zone_view: false } });
      const w = new Float64Array(6);
      let same = 0;
      let leftSpoke = 0;
      for (let k = 0; k < 20000; k++) {
        const t = k / 1000;
        const x = Math.min(1.6, 0.1 * t);
        L.setToolPose(t, x, 0.55, 0.9, 0, 0, 0, 1);
        R.setToolPose(t, x + offset, -0.55, 0.9, 0, 0, 0, 1);
        const rl = L.step(t, w).role;
        if (rl === R.step(t, w).role) same++;
        if (rl === SPEAKER) leftSpoke++;
      }
      expect(same).toBe(0);
      // Not a degenerate schedule: both arms speak for a good part of the transfer.
      expect(leftSpoke).toBeGreaterThan(4000);
      expect(leftSpoke).toBeLessThan(16000);
    }
  });

  it('holds opposite roles at every time for any parameters and any sequence of times', () => {
    fc.assert(
      fc.property(
        fc.record({
          period: fc.double({ min: 0.005, max: 5, noNaN: true }),
          fraction: fc.double({ min: 0.05, max: 2, noNaN: true }),
          delay: fc.double({ min: 0, max: 5, noNaN: true }),
          lead: fc.double({ min: 0, max: 2, noNaN: true }),
          detour: fc.double({ min: 0, max: 5, noNaN: true }),
        }),
        fc.array(fc.double({ min: 0, max: 1e4, noNaN: true }), { minLength: 1, maxLength: 60 }),
        (q, ts) => {
          const roles = { period_s: q.period, lookahead: { speed_fraction: q.fraction, start_delay_s: q.delay, lead_m: q.lead, detour_s: q.detour } };
          const l = scheduler(lookahead(cell.left.config, roles));
          const r = scheduler(lookahead(cell.right.config, roles));
          for (const t of ts.sort((a, b) => a - b)) expect(l.update(t, false)).not.toBe(r.update(t, false));
        },
      ),
    );
  });

  it("gives every slot to the owner while only its zone is ahead, shares them while both are, then to the other's", () => {
    const c = lookahead(cell.left.config);
    const { post, tray } = demoWindows(c);
    // The shipped defaults put the windows in this order (else the test says nothing).
    expect(post.open).toBeLessThan(tray.open);
    expect(tray.open).toBeLessThan(post.late);
    expect(post.late).toBeLessThan(tray.late);
    const p = c.roles.period_s;
    const l = scheduler(c);
    l.update(0, false); // the first sample starts the progress clock at t0 = 0
    const roleAtSlot = (k: number) => l.update(k * p + p / 2, false);
    const slots = (from: number, to: number) => {
      const out: number[] = [];
      for (let k = Math.ceil(from / p); (k + 1) * p <= to; k++) out.push(roleAtSlot(k));
      return out;
    };
    // Only the clamp post (left's) counts: the left arm speaks in every slot.
    const postOnly = slots(post.open, tray.open);
    expect(postOnly.length).toBeGreaterThan(3);
    expect(postOnly.every((r) => r === SPEAKER)).toBe(true);
    // Both count: one slot each, alternately.
    const both = slots(tray.open, post.late);
    expect(both.length).toBeGreaterThan(1);
    for (let k = 1; k < both.length; k++) expect(both[k]).not.toBe(both[k - 1]);
    // Only the tray drop (right's) counts: the left arm listens in every slot.
    const trayOnly = slots(post.late, tray.late);
    expect(trayOnly.length).toBeGreaterThan(3);
    expect(trayOnly.every((r) => r === LISTENER)).toBe(true);
    // Nothing ahead (before the first window and after the last): plain alternation on the phase.
    expect(slots(0, post.open).length).toBeGreaterThan(1);
    const before = slots(0, post.open);
    for (let k = 0; k < before.length; k++) expect(before[k]).toBe(k % 2 === 0 ? SPEAKER : LISTENER);
    const after = slots(tray.late, tray.late + 10 * p);
    for (let k = 1; k < after.length; k++) expect(after[k]).not.toBe(after[k - 1]);
  });

  it('starts its progress clock on the slot grid, so arms that start within one slot agree', () => {
    const c = lookahead(cell.left.config);
    const { post } = demoWindows(c);
    const p = c.roles.period_s;
    const k = Math.ceil(post.open / p) + 1; // a slot where only the clamp post counts
    const early = scheduler(c);
    const late = scheduler(lookahead(cell.right.config));
    early.update(0.01, false);
    late.update(p * 0.99, false); // the right arm's first sample, late in the same slot
    expect(early.update(k * p + 0.01, false)).toBe(SPEAKER);
    expect(late.update(k * p + 0.01, false)).toBe(LISTENER);
    expect(early.progress_m).toBeCloseTo(late.progress_m, 12);
  });

  it('without private zones alternates like the alternating scheduler', () => {
    const shared = { ...cell.left.config.task, zones: cell.left.config.task.zones.map((z) => ({ ...z, observed_by: 'both' as const })) };
    const alt = scheduler({ ...cell.left.config, task: shared });
    const la = scheduler({ ...lookahead(cell.left.config), task: shared });
    for (let t = 0; t < 30; t += 0.037) expect(la.update(t, false)).toBe(alt.update(t, false));
  });

  it('reports the time to the next switch and defers a switch during a hold', () => {
    const c = lookahead(cell.left.config);
    const l = scheduler(c);
    const p = c.roles.period_s;
    expect(l.update(0.1, false)).toBe(SPEAKER);
    expect(l.timeToSwitch_s).toBeCloseTo(p - 0.1, 12);
    expect(l.update(p + 0.01, true)).toBe(SPEAKER);
    expect(l.switchDeferred).toBe(true);
    expect(l.update(p + 0.02, false)).toBe(LISTENER);
  });

  it('restores from a snapshot to the same schedule', () => {
    const c = lookahead(cell.left.config);
    const a = scheduler(c);
    for (let t = 0.3; t < 4; t += 0.1) a.update(t, false);
    const b = scheduler(c);
    b.restore(a.snapshot());
    for (let t = 4; t < 20; t += 0.07) expect(b.update(t, false)).toBe(a.update(t, false));
  });
});

describe('lookahead parameters and strategy', () => {
  const file = (extra: string) =>
    parseParamsText(
      `/**:\n  ros__parameters:\n    roles:\n      scheduler: lookahead\n${extra}left:\n  ros__parameters:\n    roles:\n      phase: 0\nright:\n  ros__parameters:\n    roles:\n      phase: ${extra.includes('SAMEPHASE') ? 0 : 1}\n`,
      'cell.yaml',
    );

  it('loads with its documented defaults', () => {
    const { left, right } = cellFromFile(file(''), 'cell.yaml');
    expect(left.config.roles.scheduler).toBe('lookahead');
    expect(left.config.roles.lookahead).toEqual(right.config.roles.lookahead);
    for (const v of Object.values(left.config.roles.lookahead)) expect(Number.isFinite(v)).toBe(true);
  });

  it('refuses the same phase on both arms and lookahead values that differ between the arms', () => {
    const same = () => cellFromFile(file('# SAMEPHASE\n'), 'cell.yaml');
    expect(same).toThrow(InputError);
    try {
      same();
    } catch (e) {
      expect((e as InputError).problems.map((p) => p.code)).toContain('param.same_phase');
    }
    const text = `/**:\n  ros__parameters:\n    roles:\n      scheduler: lookahead\nleft:\n  ros__parameters:\n    roles:\n      phase: 0\n      lookahead:\n        speed_fraction: 0.7\nright:\n  ros__parameters:\n    roles:\n      phase: 1\n`;
    try {
      cellFromFile(parseParamsText(text, 'cell.yaml'), 'cell.yaml');
      expect.unreachable();
    } catch (e) {
      const p = (e as InputError).problems.find((q) => q.code === 'param.arms_differ');
      expect(p?.where?.key).toBe('roles.lookahead.speed_fraction');
      expect(p?.where?.line).toBe(10);
    }
  });

  it('is a strategy of its own, with an optional period, in the default comparison', () => {
    const s = parseStrategy('lookahead:0.2s');
    expect(s).toEqual({ name: 'lookahead', k: 200 });
    expect(strategyLabel(s)).toBe('lookahead:0.2s');
    expect(parseStrategy('lookahead')).toEqual({ name: 'lookahead', k: null });
    const a = applyStrategy(s, cell.left.config, cell.right.config);
    expect(a.left.roles).toMatchObject({ scheduler: 'lookahead', period_s: 0.2, phase: 0 });
    expect(a.right.roles).toMatchObject({ scheduler: 'lookahead', period_s: 0.2, phase: 1 });
    expect(a.view).toBe('own');
    expect(defaultStrategies().map((x) => x.name)).toContain('lookahead');
  });
});
