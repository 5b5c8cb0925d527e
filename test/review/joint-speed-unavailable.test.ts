/**
 * Review finding: the joint-speed check was silently off when JointState carried no
 * velocities; SAFETY.md did not say so and diagnostics did not show it. Our own synthetic
 * streams (invented data).
 */
import { describe, expect, it } from 'vitest';
import { ArmStep } from '../../src/core/arm-step.js';
import { CHECK } from '../../src/core/watchdog.js';
import { loadCell, type ArmConfig } from '../../src/params/config.js';

const base = loadCell('config/demo_cell.yaml').left.config;
const cfg = (require: boolean): ArmConfig => ({ ...base, task: { ...base.task, zones: [] }, watchdog: { ...base.watchdog, require_joint_velocity: require } });

function run(require: boolean, withVelocities: boolean): ArmStep {
  const s = new ArmStep(cfg(require), { jointCount: 6, required: { tool_pose: false, zone_view: false } });
  const w = new Float64Array(6);
  const v = new Float64Array(6);
  for (let k = 0; k < 1000; k++) {
    const t = k / 1000;
    if (k % 2 === 0) s.setJointState(t, v, withVelocities ? 6 : 0);
    s.step(t, w);
  }
  return s;
}

describe('review: the joint-speed check says when it cannot run', () => {
  it('reports itself unavailable when JointState carries no velocities', () => {
    expect(run(false, false).out.jointVelocityAvailable).toBe(false);
    expect(run(false, true).out.jointVelocityAvailable).toBe(true);
    expect(run(false, false).out.held).toBe(false);
  });

  it('holds with joint_velocity_absent when the cell requires velocities', () => {
    const s = run(true, false);
    expect(s.out.held).toBe(true);
    expect(s.watchdog.trips[0]!.check).toBe(CHECK.joint_velocity_absent);
    expect(run(true, true).out.held).toBe(false);
  });
});
