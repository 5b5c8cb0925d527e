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
          expect(l.update(t, 0, false)).not.toBe(r.update(t, 0, false));
        }
      }),
    );
  });

  it('switches every period_s and reports the time to the next switch', () => {
    const l = scheduler(cell.left.config);
    expect(l.update(0.1, 0, false)).toBe(SPEAKER);
    expect(l.timeToSwitch_s).toBeCloseTo(0.4, 12);
    expect(l.update(0.6, 0, false)).toBe(LISTENER);
    expect(l.slot).toBe(1);
    expect(l.update(1.01, 0, false)).toBe(SPEAKER);
  });

  it('defers a switch during an impact or a hold and catches up after', () => {
    const l = scheduler(cell.left.config);
    l.update(0.4, 0, false);
    expect(l.update(0.55, 0, true)).toBe(SPEAKER);
    expect(l.switchDeferred).toBe(true);
    expect(l.update(0.56, 0, false)).toBe(LISTENER);
    expect(l.switchDeferred).toBe(false);
  });

  it('fixed keeps its role', () => {
    const s = scheduler(withRoles(cell.left.config, { scheduler: 'fixed', fixed_role: 'listener' }));
    for (const t of [0, 0.7, 5, 100]) expect(s.update(t, 0, false)).toBe(LISTENER);
  });

  it('adaptive: both arms agree from common knowledge; the arm seeing the zone ahead speaks', () => {
    const l = scheduler(withRoles(cell.left.config, { scheduler: 'adaptive' }));
    const r = scheduler(withRoles(cell.right.config, { scheduler: 'adaptive' }));
    // Clamp post (seen by left) at x = 0.6, tray drop (seen by right) at x = 1.1.
    let t = 0;
    for (let x = 0; x <= 1.6; x += 0.01, t += 0.05) {
      const rl = l.update(t, x, false);
      const rr = r.update(t, x, false);
      expect(rl).not.toBe(rr);
      if (x < 0.5) expect(rl).toBe(SPEAKER);
      if (x > 0.8 && x < 1.1) expect(rr).toBe(SPEAKER);
    }
  });
});
