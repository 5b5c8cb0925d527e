/**
 * The role scheduler through its public interface (RoleScheduler: constructor, update, the
 * reported slot, time to switch, deferral, switch count, snapshot/restore), on the demo cell's
 * roles and on invented zone splits. Our own design (src/core/roles.ts): slots of period_s on
 * the shared clock, phase picks who speaks in even slots, the adaptive share of slots follows
 * the private zones of the shared task, and no switch is made during a hold.
 */
import { describe, expect, it } from 'vitest';
import { LISTENER, RoleScheduler, SPEAKER } from '../../src/core/roles.js';
import type { TaskModel } from '../../src/core/task-model.js';
import { loadCell, type ArmConfig, type RolesParams } from '../../src/params/config.js';

const cell = loadCell('config/demo_cell.yaml');
const base: RolesParams = { ...cell.left.config.roles, scheduler: 'alternating', period_s: 0.5, phase: 0 };
const zone = (observed_by: string) => ({ observed_by }) as ArmConfig['task']['zones'][number];
const taskOf = (nl: number, nr: number, both = 1) =>
  ({ zones: [...Array.from({ length: nl }, () => zone('left')), ...Array.from({ length: nr }, () => zone('right')), ...Array.from({ length: both }, () => zone('both'))] }) as unknown as TaskModel;
const make = (p: Partial<RolesParams>, arm: 'left' | 'right' = 'left', task = taskOf(1, 1)) => new RoleScheduler({ ...base, ...p }, arm, task);

describe('RoleScheduler, fixed', () => {
  it('holds the configured role from construction, with slot 0 and no time to switch', () => {
    for (const [fixed_role, role] of [['speaker', SPEAKER], ['listener', LISTENER]] as const) {
      const s = make({ scheduler: 'fixed', fixed_role });
      expect(s.role).toBe(role);
      for (const [t, hold] of [[0.2, false], [0.7, true], [3.3, false]] as const) {
        expect(s.update(t, hold)).toBe(role);
        expect(s.slot).toBe(0);
        expect(s.timeToSwitch_s).toBe(-1);
      }
      expect(s.switches).toBe(0);
      expect(s.switchDeferred).toBe(false);
    }
  });
});

describe('RoleScheduler, alternating', () => {
  it('starts as speaker before the first update, whatever the fixed role says', () => {
    const fresh = make({ fixed_role: 'listener' });
    expect(fresh.role).toBe(SPEAKER);
    expect([fresh.slot, fresh.timeToSwitch_s, fresh.switchDeferred, fresh.switches]).toEqual([0, -1, false, 0]);
    expect(make({ scheduler: 'adaptive', fixed_role: 'listener' }).role).toBe(SPEAKER);
  });

  it('phase 0 speaks in even slots, phase 1 in odd slots; slot and time to switch on the shared clock', () => {
    const p0 = make({ phase: 0 });
    const p1 = make({ phase: 1 }, 'left'); // the phase, not the arm, decides (adaptive would give the left arm even slots)
    const cases: [number, number, number][] = [
      // t, slot, time to the next switch (period 0.5 s)
      [0, 0, 0.5],
      [0.25, 0, 0.25],
      [0.5, 1, 0.5],
      [0.75, 1, 0.25],
      [1.5, 3, 0.5],
      [2.0, 4, 0.5],
    ];
    for (const [t, slot, left] of cases) {
      const want = slot % 2 === 0 ? SPEAKER : LISTENER;
      expect(p0.update(t, false), `t=${t}`).toBe(want);
      expect(p0.slot).toBe(slot);
      expect(p0.timeToSwitch_s).toBe(left);
      expect(p1.update(t, false), `t=${t}`).toBe(want === SPEAKER ? LISTENER : SPEAKER);
      expect(p1.slot).toBe(slot);
    }
  });

  it('takes the clock role on the first update even during a hold, and does not count it as a switch', () => {
    const s = make({});
    expect(s.update(0.6, true)).toBe(LISTENER);
    expect(s.switches).toBe(0);
    expect(s.switchDeferred).toBe(false);
  });

  it('counts each switch, defers it during a hold, and clears the deferral once the roles agree again', () => {
    const s = make({});
    s.update(0.1, false);
    expect(s.switches).toBe(0);
    expect(s.update(0.6, false)).toBe(LISTENER);
    expect(s.switches).toBe(1);
    expect(s.update(1.1, true)).toBe(LISTENER); // wants speaker: deferred
    expect(s.switchDeferred).toBe(true);
    expect(s.switches).toBe(1);
    expect(s.update(1.2, true)).toBe(LISTENER);
    expect(s.switchDeferred).toBe(true);
    expect(s.update(1.6, true)).toBe(LISTENER); // the clock says listener again: nothing to defer
    expect(s.switchDeferred).toBe(false);
    expect(s.switches).toBe(1);
    expect(s.update(2.1, false)).toBe(SPEAKER);
    expect(s.switches).toBe(2);
    expect(s.switchDeferred).toBe(false);
    expect(s.update(2.2, false)).toBe(SPEAKER);
    expect(s.switches).toBe(2);
  });

  it('a snapshot restored into a fresh scheduler continues exactly like the original', () => {
    const a = make({});
    a.update(0.1, false);
    a.update(0.6, false);
    a.update(1.1, true);
    const snap = a.snapshot();
    // role, slot, time to switch, deferred, switches, last switch, started; then the lookahead's
    // clock origin and progress (kept by every scheduler).
    expect(snap.slice(0, 7)).toEqual([LISTENER, 2, a.timeToSwitch_s, 1, 1, 0.6, 1]);
    expect(snap).toHaveLength(9);
    const b = make({});
    b.restore(snap);
    expect(b.role).toBe(LISTENER);
    expect(b.slot).toBe(2);
    expect(b.switchDeferred).toBe(true);
    expect(b.switches).toBe(1);
    expect(b.snapshot()).toEqual(snap);
    // Started: the next update is a switch (counted), not a first update.
    for (const t of [1.2, 1.7, 2.2]) expect(b.update(t, false)).toBe(a.update(t, false));
    expect(b.switches).toBe(a.switches);
    expect(b.switches).toBe(4); // 1.2, 1.7 and 2.2 each start a new slot
    // A snapshot of a scheduler that never ran restores "not started": the first update is free.
    const c = make({});
    c.restore(make({}).snapshot());
    expect(c.switchDeferred).toBe(false);
    c.update(0.6, true);
    expect(c.role).toBe(LISTENER);
    expect(c.switches).toBe(0);
  });
});

describe('RoleScheduler, adaptive', () => {
  it('counts only the zones private to each arm; with none it alternates by phase', () => {
    for (const phase of [0, 1] as const) {
      const a = make({ scheduler: 'adaptive', phase }, 'left', taskOf(0, 0, 3));
      const b = make({ scheduler: 'alternating', phase }, 'left', taskOf(0, 0, 3));
      for (const t of [0.1, 0.6, 1.1, 1.6, 2.1]) {
        expect(a.update(t, false)).toBe(b.update(t, false));
        expect(a.slot).toBe(b.slot);
        expect(a.timeToSwitch_s).toBe(b.timeToSwitch_s);
      }
    }
  });

  it('shares the slots by private zones, evenly spread: two left zones, one right zone', () => {
    // ceil((k+1)·2/3) > ceil(k·2/3) for k = 0, 1, 2: true, true, false.
    const l = make({ scheduler: 'adaptive', period_s: 0.5 }, 'left', taskOf(2, 1));
    const r = make({ scheduler: 'adaptive', period_s: 0.5 }, 'right', taskOf(2, 1));
    const seq: number[] = [];
    for (let k = 0; k < 6; k++) {
      const t = 0.5 * k + 0.125;
      seq.push(l.update(t, false));
      expect(r.update(t, false)).toBe(seq[k] === SPEAKER ? LISTENER : SPEAKER);
      expect(l.slot).toBe(k);
      expect(l.timeToSwitch_s).toBe(0.375);
    }
    expect(seq).toEqual([SPEAKER, SPEAKER, LISTENER, SPEAKER, SPEAKER, LISTENER]);
  });

  it('an arm with no private zone only listens; its partner only speaks', () => {
    const l = make({ scheduler: 'adaptive' }, 'left', taskOf(0, 2));
    const r = make({ scheduler: 'adaptive' }, 'right', taskOf(0, 2));
    for (const t of [0, 0.6, 1.1, 7.3]) {
      expect(l.update(t, false)).toBe(LISTENER);
      expect(r.update(t, false)).toBe(SPEAKER);
    }
  });

  it('stays periodic for times before zero (slot taken modulo the cycle)', () => {
    const l = make({ scheduler: 'adaptive', period_s: 1 }, 'left', taskOf(2, 1));
    const seq: number[] = [];
    for (let k = -3; k < 0; k++) seq.push(l.update(k + 0.5, false));
    expect(l.slot).toBe(-1);
    expect(seq).toEqual([SPEAKER, SPEAKER, LISTENER]);
  });
});
