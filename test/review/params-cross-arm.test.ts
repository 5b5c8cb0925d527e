/**
 * Review finding: the loader checks that both arms share task.* and opposite roles.phase, but not the
 * other values both arms must compute identically: roles.scheduler, roles.period_s (the role
 * is a function of the shared clock and these), and the belief/commitment parameters the
 * replica reproduces (belief.commit_probability, ...). Files that give the arms different
 * values load without a problem, and the arms then spend a large share of the time in the
 * same role. Parameters: our demo cell with one per-arm override.
 */
import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { RoleScheduler } from '../../src/core/roles.js';
import { TaskModel } from '../../src/core/task-model.js';
import { loadCell } from '../../src/params/config.js';

const base = readFileSync('config/demo_cell.yaml', 'utf8');
const dir = mkdtempSync(join(tmpdir(), 'review8-'));
/** The demo cell with `lines` added to the right arm's section (under its existing roles: map when `roles`). */
function withRight(name: string, section: 'roles' | 'belief', lines: string): string {
  const p = join(dir, `${name}.yaml`);
  const text = section === 'roles'
    ? base.replace(/right:\n  ros__parameters:\n    roles:\n/, `right:\n  ros__parameters:\n    roles:\n${lines}`)
    : base.replace(/right:\n  ros__parameters:\n/, `right:\n  ros__parameters:\n    belief:\n${lines}`);
  writeFileSync(p, text);
  return p;
}
function sameRoleFraction(path: string): number {
  const c = loadCell(path);
  const mk = (a: typeof c.left) => new RoleScheduler(a.config.roles, a.config.arm, new TaskModel(a.config.task, a.config.policy, a.config.arm));
  const l = mk(c.left), r = mk(c.right);
  let same = 0;
  const n = 20000;
  for (let k = 0; k < n; k++) if (l.update(k / 1000, false) === r.update(k / 1000, false)) same++;
  return same / n;
}
const refused = (p: string) => { try { loadCell(p); return false; } catch { return true; } };

describe('review: values both arms must share are cross-checked', () => {
  it('different roles.period_s on the two arms is refused', () => {
    const p = withRight('period', 'roles', '      period_s: 0.6\n');
    if (!refused(p)) expect.fail(`accepted; the arms are in the same role ${(100 * sameRoleFraction(p)).toFixed(1)} % of 20 s`);
  });
  it('scheduler fixed for both arms with the same (default) fixed_role is refused', () => {
    const p = join(dir, 'fixed.yaml');
    writeFileSync(p, base.replace('      scheduler: alternating\n', '      scheduler: fixed\n'));
    if (!refused(p)) expect.fail(`accepted; the arms are in the same role ${(100 * sameRoleFraction(p)).toFixed(1)} % of 20 s`);
  });
  it('adaptive on both arms with the same roles.phase (no private zones: it falls back to alternating) is refused', () => {
    const p = join(dir, 'adaptive-phase.yaml');
    writeFileSync(p, base.replace('      scheduler: alternating\n', '      scheduler: adaptive\n').replaceAll('observed_by: left', 'observed_by: both').replaceAll('observed_by: right', 'observed_by: both').replace('      phase: 1 ', '      phase: 0 '));
    if (!refused(p)) expect.fail(`accepted; the arms are in the same role ${(100 * sameRoleFraction(p)).toFixed(1)} % of 20 s`);
  });
  it('different belief.commit_probability on the two arms is refused (commitments would disagree by construction)', () => {
    const p = withRight('commit', 'belief', '      commit_probability: 0.95\n');
    expect(refused(p), 'accepted').toBe(true);
  });
});
