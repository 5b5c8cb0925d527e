import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { LISTENER, RoleScheduler, SPEAKER } from '../../src/core/roles.js';
import { TaskModel } from '../../src/core/task-model.js';
import { loadCell, type ArmConfig } from '../../src/params/config.js';

const cell = loadCell('config/demo_cell.yaml');
const withRoles = (c: ArmConfig, roles: Partial<ArmConfig['roles']>): ArmConfig => ({ ...c, roles: { ...c.roles, ...roles } });
const scheduler = (c: ArmConfig) => new RoleScheduler(c.roles, c.arm, new TaskModel(c.task, c.policy, c.arm));

describe('RoleScheduler', () => {
  it('alternating arms with opposite phases hold opposite roles at every time, without messages', () => {
    // Our design: slot = floor(t / period) on the shared clock; phase decides who speaks.
    fc.assert(
      fc.property(fc.array(fc.double({ min: 0, max: 1e6, noNaN: true }), { minLength: 1, maxLength: 50 }), (ts) => {
        const l = scheduler(cell.left.config);
        const r = scheduler(cell.right.config);
        for (const t of ts.sort((a, b) => a - b)) {
          expect(l.update(t, false)).not.toBe(r.update(t, false));
        }
      }),
    );
  });

  it('switches every period_s and reports the time to the next switch', () => {
    const l = scheduler(cell.left.config);
    expect(l.update(0.1, false)).toBe(SPEAKER);
    expect(l.timeToSwitch_s).toBeCloseTo(0.4, 12);
    expect(l.update(0.6, false)).toBe(LISTENER);
    expect(l.slot).toBe(1);
    expect(l.update(1.01, false)).toBe(SPEAKER);
  });

  it('defers a switch during a hold and catches up after', () => {
    const l = scheduler(cell.left.config);
    l.update(0.4, false);
    expect(l.update(0.55, true)).toBe(SPEAKER);
    expect(l.switchDeferred).toBe(true);
    expect(l.update(0.56, false)).toBe(LISTENER);
    expect(l.switchDeferred).toBe(false);
  });

  it('fixed keeps its role', () => {
    const s = scheduler(withRoles(cell.left.config, { scheduler: 'fixed', fixed_role: 'listener' }));
    for (const t of [0, 0.7, 5, 100]) expect(s.update(t, false)).toBe(LISTENER);
  });

  it('adaptive: roles come from the clock and the shared task only, so they are opposite at every time', () => {
    // Our design (property): for any split of private zones between the arms and any times,
    // the two arms never hold the same role, and over whole cycles the left arm speaks in
    // n_left of every n_left + n_right slots (an arm without private zones only listens).
    const zone = (observed_by: string) => ({ observed_by }) as ArmConfig['task']['zones'][number];
    fc.assert(
      fc.property(fc.integer({ min: 0, max: 5 }), fc.integer({ min: 0, max: 5 }), fc.double({ min: 0.01, max: 2, noNaN: true }), fc.array(fc.double({ min: 0, max: 1e5, noNaN: true }), { minLength: 1, maxLength: 40 }), (nl, nr, period, ts) => {
        const task = { zones: [...Array.from({ length: nl }, () => zone('left')), ...Array.from({ length: nr }, () => zone('right')), zone('both')] } as unknown as TaskModel;
        const l = new RoleScheduler({ ...cell.left.config.roles, scheduler: 'adaptive', period_s: period }, 'left', task);
        const r = new RoleScheduler({ ...cell.right.config.roles, scheduler: 'adaptive', period_s: period }, 'right', task);
        for (const t of ts.sort((a, b) => a - b)) expect(l.update(t, false)).not.toBe(r.update(t, false));
        const total = nl + nr;
        if (total === 0) return;
        const a = new RoleScheduler({ ...cell.left.config.roles, scheduler: 'adaptive', period_s: 1 }, 'left', task);
        let spoke = 0;
        for (let k = 0; k < 3 * total; k++) if (a.update(k + 0.5, false) === SPEAKER) spoke++;
        expect(spoke).toBe(3 * nl);
      }),
    );
  });

  it('adaptive on the demo cell (one private zone each) alternates every period', () => {
    const l = scheduler(withRoles(cell.left.config, { scheduler: 'adaptive' }));
    const r = scheduler(withRoles(cell.right.config, { scheduler: 'adaptive' }));
    const seq = [0.1, 0.6, 1.1, 1.6].map((t) => [l.update(t, false), r.update(t, false)]);
    expect(seq).toEqual([[SPEAKER, LISTENER], [LISTENER, SPEAKER], [SPEAKER, LISTENER], [LISTENER, SPEAKER]]);
  });
});
