/**
 * The MuJoCo cell on a task with waypoints (examples/path_cell.yaml, our own invented layout):
 * the 3-D scene it builds, the z and wrist-yaw servos checked against handbook mechanics
 * (statics of a held beam, the coupling of two dampers, the rigid-body velocity v + w x r),
 * contacts at the zones' heights, a whole transfer, and what it refuses.
 */
import { beforeAll, describe, expect, it } from 'vitest';
import type { MainModule } from 'mujoco-js';
import { STANDARD_GRAVITY } from '../../src/core/filter/index.js';
import { loadCell, type ArmConfig, type ZoneConfig } from '../../src/params/config.js';
import { zoneSolid } from '../../src/params/task-geometry.js';
import { checkEpisodeSetup, runEpisodeWith } from '../../src/sim/episode.js';
import { buildMjcf, pathPoses } from '../../src/sim/mjcf.js';
import { loadMujoco } from '../../src/sim/mujoco.js';
import { simOptions } from '../../src/sim/options.js';
import { sampleWorld, type World } from '../../src/sim/world.js';

let mj: MainModule;
let left: ArmConfig;
let right: ArmConfig;
beforeAll(async () => {
  mj = await loadMujoco();
  const c = loadCell('examples/path_cell.yaml');
  left = c.left.config;
  right = c.right.config;
});

const quietSensors = { bias_force_n: 0, bias_torque_nm: 0, drift_force_n_s: 0, drift_torque_nm_s: 0, noise_force_n: 0, noise_torque_nm: 0 };

/** A world of the path cell with the given zones occupied, no jitter, quiet sensors. */
function world(occupied: readonly string[], seed = 5): World {
  const o = simOptions({ start_jitter_m: 0, goal_jitter_m: 0, sensor: quietSensors });
  const w = sampleWorld(left.task, o, seed);
  return { ...w, occupied: left.task.zones.map((z) => occupied.includes(z.name)) };
}

function attr(xml: string, name: string, key: string): string {
  const m = new RegExp(`<geom name="${name}"[^>]*?\\s${key}="([^"]*)"`).exec(xml);
  if (!m) throw new Error(`no ${key} on ${name}`);
  return m[1]!;
}
const nums = (s: string) => s.split(' ').map(Number);

describe('the scene of a path task', () => {
  it('puts every occupied zone at its heights: a yawed box, a vertical cylinder, a sphere', () => {
    const sphere: ZoneConfig = { name: 'lamp', shape: 'sphere', center_m: [1.6, -0.6], center_z_m: 1.3, radius_m: 0.15, size_m: [0, 0], observed_by: 'both', kind: 'other' };
    const task = { ...left.task, zones: [...left.task.zones, sphere] };
    const w = { ...world([]), occupied: task.zones.map(() => true) };
    const { xml, names } = buildMjcf(task, w, simOptions());
    expect(names.obstacleGeoms).toEqual(task.zones.map((z) => `zone_${z.name}`));
    for (const z of task.zones) {
      const q = zoneSolid(z, false);
      const g = `zone_${z.name}`;
      const pos = nums(attr(xml, g, 'pos'));
      expect(pos[0]).toBeCloseTo(q.cx, 9);
      expect(pos[1]).toBeCloseTo(q.cy, 9);
      expect(pos[2]).toBeCloseTo(q.cz, 9);
      const size = nums(attr(xml, g, 'size'));
      if (z.shape === 'box') {
        expect(attr(xml, g, 'type')).toBe('box');
        expect(size).toEqual([q.hx, q.hy, q.hz].map((v) => expect.closeTo(v, 9)));
        // MJCF quaternion w x y z of a turn about the vertical: (cos a/2, 0, 0, sin a/2).
        const [qw, qx, qy, qz] = nums(attr(xml, g, 'quat'));
        expect(qx).toBe(0);
        expect(qy).toBe(0);
        expect(2 * Math.atan2(qz!, qw!)).toBeCloseTo(z.yaw_rad ?? 0, 9);
      } else if (z.shape === 'sphere') {
        expect(attr(xml, g, 'type')).toBe('sphere');
        expect(size).toEqual([expect.closeTo(q.r, 9)]);
      } else {
        expect(attr(xml, g, 'type')).toBe('cylinder');
        expect(size).toEqual([expect.closeTo(q.r, 9), expect.closeTo(q.hz, 9)]);
      }
    }
    // The beam is the task's capsule, at the path's start height and orientation.
    expect(xml).toMatch(/<geom name="beam" type="capsule" fromto="0 -0.6 0 0 0.6 0" size="0.02"/);
    expect(xml).toMatch(/<body name="beam" pos="0 0 0.9" quat="1 0 0 0">/);
    // z and the wrist yaw are servoed; z carries its weight as a feed-forward.
    expect(xml).toMatch(/<general name="left_vz" joint="left_z"/);
    expect(xml).toMatch(/<velocity name="right_vyaw" joint="right_yaw"/);
  });

  it('gives the planar demo cell the same scene as before (no z servo, no wrist yaw)', () => {
    const demo = loadCell('config/demo_cell.yaml').left.config;
    const o = simOptions();
    const { xml } = buildMjcf(demo.task, sampleWorld(demo.task, o, 7), o);
    expect(xml).not.toMatch(/_yaw|_vz|capsule/);
    expect(xml).toMatch(/<joint name="left_z" type="slide" axis="0 0 1" limited="true" range="-0.3 0.3" stiffness=/);
  });
});

describe('the z servo with gravity feed-forward (handbook mechanics)', () => {
  it('holds the beam at the path height with the wrists carrying the weight below them (static equilibrium)', () => {
    const r = runEpisodeWith(mj, { left, right, strategy: { name: 'centralized', k: null }, seed: 5, world: world([]), duration_s: 1.0, options: { sensor: quietSensors, settle_s: 10 } });
    const rec = r.record!;
    const last = rec.samples - 1;
    const o = simOptions();
    // Each wrist carries its gripper and half the beam: (m/2 + m_tool) g, standard gravity 9.80665 m/s^2 (CGPM 1901).
    const half = (left.task.object.mass_kg / 2 + o.tool_mass_kg) * STANDARD_GRAVITY;
    expect(rec.left.forceCell[3 * last + 2]!).toBeCloseTo(-half, 2);
    expect(rec.right.forceCell[3 * last + 2]!).toBeCloseTo(-half, 2);
    // The feed-forward carries it: the beam stays within 1 mm of the path's start height.
    const z0 = pathPoses(left.task).start[2];
    for (let i = 0; i < rec.samples; i += 50) expect(Math.abs(rec.beamPose[7 * i + 2]! - z0)).toBeLessThan(1e-3);
  });

  it('a partner moving up alone gives f = c (v_partner - v_own) vertically, with c = D / 2 (two dampers on a rigid body)', () => {
    const v = 0.05;
    const D = simOptions().admittance_damping_n_s_m;
    const r = runEpisodeWith(mj, {
      left, right, strategy: { name: 'centralized', k: null }, seed: 5, world: world([]), duration_s: 2.0,
      options: { sensor: quietSensors, settle_s: 0 },
      commandOverride: (_t, side, out) => {
        out[0] = 0; out[1] = 0; out[3] = 0;
        out[2] = side === 'left' ? v : 0;
      },
    });
    const rec = r.record!;
    const i = rec.samples - 1;
    const o = simOptions();
    const half = (left.task.object.mass_kg / 2 + o.tool_mass_kg) * STANDARD_GRAVITY;
    // Quasi-static: both tools rise at v/2; the beam side pushes the leading arm down, the other up.
    expect(rec.left.forceCell[3 * i + 2]! + half).toBeCloseTo((D / 2) * (0 - v), 1);
    expect(rec.right.forceCell[3 * i + 2]! + half).toBeCloseTo((D / 2) * (v - 0), 1);
    expect(rec.beamVelocity[6 * i + 2]!).toBeCloseTo(v / 2, 3);
  });
});

describe('the wrist yaw servo (rigid-body kinematics: v_tool = v + w x r)', () => {
  it('turns the beam at the commanded yaw rate when each tool moves with the object twist, with little internal force', () => {
    const w = 0.1;
    const r = runEpisodeWith(mj, {
      left, right, strategy: { name: 'centralized', k: null }, seed: 5, world: world([]), duration_s: 2.0,
      options: { sensor: quietSensors, settle_s: 0 },
      commandOverride: (t, side, out) => {
        // r from the centre to the grasp: +-g along the beam's current axis (yaw a = w (t - 1)).
        const on = t >= 1;
        const a = on ? w * (t - 1) : 0;
        const g = left.task.object.grasp_offset_m * (side === 'left' ? 1 : -1);
        const rx = -g * Math.sin(a), ry = g * Math.cos(a);
        out[0] = on ? -w * ry : 0;
        out[1] = on ? w * rx : 0;
        out[2] = 0;
        out[3] = on ? w : 0;
      },
    });
    const rec = r.record!;
    const i = rec.samples - 1;
    const q = rec.beamPose.subarray(7 * i + 3, 7 * i + 7);
    const yaw = 2 * Math.atan2(q[2]!, q[3]!);
    expect(yaw).toBeCloseTo(w * (rec.t[i]! - 1), 2);
    // The beam's centre stays put (it turns about it).
    expect(Math.hypot(rec.beamPose[7 * i]!, rec.beamPose[7 * i + 1]!)).toBeLessThan(2e-3);
    let peak = 0;
    for (let k = 1200; k < rec.samples; k++) peak = Math.max(peak, Math.abs(rec.internalForce[k]!));
    expect(peak).toBeLessThan(0.5);
  });
});

describe('contacts at the zones heights', () => {
  // The tray drop hangs from 0.8 m to the ceiling at x = 1.0 m: a beam carried straight along x at
  // 0.9 m meets it, the same beam lowered to 0.7 m passes under it.
  const drive = (lowerFirst: boolean) =>
    runEpisodeWith(mj, {
      left, right, strategy: { name: 'centralized', k: null }, seed: 5, world: world(['tray_drop']), duration_s: lowerFirst ? 10.5 : 7.5,
      options: { sensor: quietSensors, settle_s: 0, hold_timeout_s: 0 },
      commandOverride: (t, _side, out) => {
        const lowering = lowerFirst && t < 2;
        out[0] = lowering ? 0 : 0.15;
        out[1] = 0;
        out[2] = lowering ? -0.1 : 0;
        out[3] = 0;
      },
    });

  it('the beam at the path height touches the hanging tray drop', () => {
    const s = drive(false).summary;
    expect(s.collisions.per_zone['tray_drop']).toBeGreaterThan(0);
  });

  it('the beam lowered below the tray drop passes under it', () => {
    const r = drive(true);
    expect(r.summary.collisions.count).toBe(0);
    expect(r.summary.final_position_m[0]).toBeGreaterThan(1.2);
  });
});

describe('a whole transfer on the path', () => {
  it('reaches the fixture turned as the path says, with every zone occupied, without touching one', () => {
    const r = runEpisodeWith(mj, { left, right, strategy: { name: 'alternating', k: 500 }, seed: 7, world: world(['column', 'low_clamp', 'tray_drop'], 7) });
    const s = r.summary;
    expect(s.success).toBe(true);
    expect(s.collisions.count).toBe(0);
    expect(s.holds.count).toBe(0);
    const rec = r.record!;
    const i = rec.samples - 1;
    const q = rec.beamPose.subarray(7 * i + 3, 7 * i + 7);
    // The turn is open loop in the arm step (the twist's yaw rate follows the progress): within 3 degrees.
    expect(Math.abs(2 * Math.atan2(q[2]!, q[3]!) - pathPoses(left.task).endYaw)).toBeLessThan((3 * Math.PI) / 180);
  });

  it('lifts the beam over the raised clamp when the tray drop is free (the over-detour)', () => {
    const r = runEpisodeWith(mj, { left, right, strategy: { name: 'alternating', k: 500 }, seed: 7, world: world(['low_clamp'], 7) });
    expect(r.summary.success).toBe(true);
    expect(r.summary.collisions.count).toBe(0);
    const rec = r.record!;
    // Over the clamp's top (1.05 m) with the capsule's radius (0.02 m).
    let top = 0;
    for (let k = 0; k < rec.samples; k++) top = Math.max(top, rec.beamPose[7 * k + 2]!);
    expect(top).toBeGreaterThan(1.05 + 0.02);
  });
});

describe('what the MuJoCo cell refuses on a path task', () => {
  it('the six-joint arm (no servo for heights and turns)', () => {
    const p = checkEpisodeSetup(left, simOptions({ arm_model: 'six_joint' }));
    expect(p.map((x) => x.code)).toContain('sim.path_needs_tool_point');
    expect(p.find((x) => x.code === 'sim.path_needs_tool_point')!.where).toEqual({ option: '--arm-model' });
  });

  it('not an orientation that tilts the object: the wrist gets pitch and roll hinges (test/sim/path-tilt.test.ts)', () => {
    const O = [...left.task.path!.orientations_xyzw];
    O.splice(4, 4, 0.0998334, 0, 0, 0.9950042); // waypoint 1 rolled 0.2 rad about x
    const tilted = { ...left, task: { ...left.task, path: { ...left.task.path!, orientations_xyzw: O } } };
    expect(checkEpisodeSetup(tilted, simOptions())).toEqual([]);
  });

  it('a path that leaves the cell', () => {
    const W = [...left.task.path!.waypoints_m];
    W[W.length - 3] = 3.2; // the fixture past x = 3 m
    const far = { ...left, task: { ...left.task, path: { ...left.task.path!, waypoints_m: W } } };
    expect(checkEpisodeSetup(far, simOptions()).map((x) => x.code)).toContain('sim.path_outside_cell');
  });

  it('runs the example itself (no problems)', () => {
    expect(checkEpisodeSetup(left, simOptions())).toEqual([]);
    expect(right.task.path!.waypoints_m).toEqual(left.task.path!.waypoints_m);
  });
});
