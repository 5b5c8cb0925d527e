/**
 * Review finding: ranges that each key allows but whose combinations break what another key assumes,
 * with no cross-check: (a) watchdog.partner_stop.speed_ratio above policy.confidence_floor
 * (its own description says to keep it below); (b) wrench_filter.tare.still_twist_m_s at or
 * above policy.speed_m_s (the tare's stillness gate then passes at cruise speed);
 * (c) watchdog.future_tolerance_s above the stale limits (an input stamped up to the tolerance
 * in the future is not stale for tolerance + stale_after_s of silence).
 * Parameters: the demo cell with one shared override each (our own scenario).
 */
import { mkdtempSync, readFileSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { ArmStep } from '../../src/core/arm-step.js';
import { loadCell, type ArmConfig } from '../../src/params/config.js';
import { runKinematicCell } from '../../src/sim/kinematic-cell.js';

const base = readFileSync('config/demo_cell.yaml', 'utf8');
const dir = mkdtempSync(join(tmpdir(), 'review8b-'));
const file = (name: string, from: string, to: string) => {
  const p = join(dir, `${name}.yaml`);
  if (!base.includes(from)) throw new Error(`test set-up: ${from} not in the demo cell`);
  writeFileSync(p, base.replace(from, to));
  return p;
};
const refused = (p: string) => { try { loadCell(p); return false; } catch { return true; } };
const noZones = (c: ArmConfig): ArmConfig => ({ ...c, task: { ...c.task, zones: [] } });

describe('review: cross-checks within one arm', () => {
  it('(a) partner_stop.speed_ratio above policy.confidence_floor is refused', () => {
    const p = file('ratio', '        speed_ratio: 0.15\n', '        speed_ratio: 0.5\n');
    if (refused(p)) return;
    const c = loadCell(p);
    const r = runKinematicCell(c.left.config, c.right.config, [true, true], { seed: 1, duration_s: 30, disturbance_n: 1.5 });
    expect.fail(`accepted (confidence_floor 0.3); cooperating run: success ${r.success}, trips ${JSON.stringify(r.trips)}`);
  });

  it('(b) tare.still_twist_m_s at or above policy.speed_m_s is refused', () => {
    const p = file('still', '        max_change_nm: 1.0\n', '        max_change_nm: 1.0\n        still_twist_m_s: 0.5\n');
    if (refused(p)) return;
    const c = loadCell(p);
    const s = new ArmStep(noZones(c.left.config), { required: { tool_pose: false, zone_view: false } });
    const w = new Float64Array(6);
    for (let k = 0; k < 3000; k++) s.step(k / 1000, w);
    const v = Math.hypot(s.out.twist[0]!, s.out.twist[1]!);
    expect.fail(`accepted; a tare requested at ${v.toFixed(3)} m/s (cruise) answers ${s.requestTare().status}`);
  });

  it('(c) future_tolerance_s longer than a stale limit is refused', () => {
    const p = file('future', '      release_clear_s: 1.0\n', '      release_clear_s: 1.0\n      future_tolerance_s: 1.0\n');
    if (refused(p)) return;
    const c = loadCell(p);
    const s = new ArmStep(noZones(c.left.config), { required: { zone_view: false } });
    const w = new Float64Array(6);
    let k = 0;
    for (; k < 2000; k++) { s.setToolPose(k / 1000, 0, 0.55, 0.9, 0, 0, 0, 1); s.step(k / 1000, w); }
    s.setToolPose(k / 1000 + 0.95, 0, 0.55, 0.9, 0, 0, 0, 1); // stamped 0.95 s ahead (ceiling 1 s), then silence
    for (; k < 2900; k++) s.step(k / 1000, w);
    expect.fail(`accepted; 0.9 s after the last tool pose arrived (stale_after_s.tool_pose 0.05 s): held ${s.out.held}, speed ${Math.hypot(s.out.twist[0]!, s.out.twist[1]!).toFixed(3)} m/s`);
  });
});
