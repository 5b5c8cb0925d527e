/**
 * The MuJoCo cell on a path whose orientations tilt the object (examples/path_tilt_cell.yaml, our
 * own invented layout: the beam rolled 18 degrees about its long axis and pitched -10 degrees into
 * the fixture): the wrist chain's Euler-rate relation against an outside reference, the chain
 * MuJoCo builds against it, the servos against rigid-body kinematics, a whole transfer, the
 * refusal near the chain's singularity, and the scenes that must not change.
 */
import { createHash } from 'node:crypto';
import { beforeAll, describe, expect, it } from 'vitest';
import { multiply, rotationMatrix } from 'mathjs';
import type { MainModule } from 'mujoco-js';
import { loadCell, type ArmConfig } from '../../src/params/config.js';
import { checkEpisodeSetup, closestToWristSingularity, runEpisodeWith } from '../../src/sim/episode.js';
import { SimCell } from '../../src/sim/cell.js';
import { buildMjcf, pathPoses } from '../../src/sim/mjcf.js';
import { loadMujoco } from '../../src/sim/mujoco.js';
import { simOptions } from '../../src/sim/options.js';
import { sampleWorld, type World } from '../../src/sim/world.js';
import { axisFromVertical, quatFromZxy, TILT_JOINT_NAMES, zxyFromQuat, zxyOmega, zxyRates } from '../../src/sim/wrist.js';
import { Rng } from '../../src/util/rng.js';

type M3 = number[][];
const deg = Math.PI / 180;

/** R = Rz(yaw) Rx(pitch) Ry(roll) from mathjs's axis-angle rotation matrices (the outside reference). */
function refR(yaw: number, pitch: number, roll: number): M3 {
  const z = rotationMatrix(yaw, [0, 0, 1]) as unknown as M3;
  const x = rotationMatrix(pitch, [1, 0, 0]) as unknown as M3;
  const y = rotationMatrix(roll, [0, 1, 0]) as unknown as M3;
  return multiply(multiply(z, x), y) as unknown as M3;
}

/** Rotation matrix of a unit quaternion (x, y, z, w): the handbook formula (common practice). */
function quatMatrix(q: ArrayLike<number>): M3 {
  const [x, y, z, w] = [q[0]!, q[1]!, q[2]!, q[3]!];
  return [
    [1 - 2 * (y * y + z * z), 2 * (x * y - z * w), 2 * (x * z + y * w)],
    [2 * (x * y + z * w), 1 - 2 * (x * x + z * z), 2 * (y * z - x * w)],
    [2 * (x * z - y * w), 2 * (y * z + x * w), 1 - 2 * (x * x + y * y)],
  ];
}

/** Angle between two orientations, rad: 2 acos |<q1, q2>| (common practice). */
function quatAngle(a: ArrayLike<number>, b: ArrayLike<number>): number {
  const na = Math.hypot(a[0]!, a[1]!, a[2]!, a[3]!), nb = Math.hypot(b[0]!, b[1]!, b[2]!, b[3]!);
  const d = Math.abs(a[0]! * b[0]! + a[1]! * b[1]! + a[2]! * b[2]! + a[3]! * b[3]!) / (na * nb);
  return 2 * Math.acos(Math.min(1, d));
}

describe('the wrist chain yaw-pitch-roll (Euler-rate relation against mathjs and numerical differentiation)', () => {
  const rng = new Rng(12);
  const draws = Array.from({ length: 50 }, () => [(rng.uniform() * 2 - 1) * Math.PI, (rng.uniform() * 2 - 1) * 75 * deg, (rng.uniform() * 2 - 1) * Math.PI] as const);

  it('quatFromZxy is Rz(yaw) Rx(pitch) Ry(roll) as mathjs multiplies its rotation matrices', () => {
    const q = new Float64Array(4);
    for (const [a, b, c] of draws) {
      quatFromZxy(a, b, c, q);
      const R = quatMatrix(q), S = refR(a, b, c);
      for (let i = 0; i < 3; i++) for (let j = 0; j < 3; j++) expect(R[i]![j]!).toBeCloseTo(S[i]![j]!, 12);
    }
  });

  it('zxyFromQuat recovers the angles (pitch within +-90 degrees)', () => {
    const q = new Float64Array(4), e = new Float64Array(3);
    for (const [a, b, c] of draws) {
      quatFromZxy(a, b, c, q);
      zxyFromQuat(q, e);
      expect(e[0]).toBeCloseTo(a, 10);
      expect(e[1]).toBeCloseTo(b, 10);
      expect(e[2]).toBeCloseTo(c, 10);
    }
  });

  it('w = E(angles) (angle rates) equals the axial vector of dR/dt R^T (central differences of the mathjs matrices; common practice)', () => {
    const w = new Float64Array(3);
    const h = 1e-6;
    for (const [a, b, c] of draws) {
      const r = [rng.uniform() - 0.5, rng.uniform() - 0.5, rng.uniform() - 0.5];
      const Rp = refR(a + h * r[0]!, b + h * r[1]!, c + h * r[2]!);
      const Rm = refR(a - h * r[0]!, b - h * r[1]!, c - h * r[2]!);
      const R = refR(a, b, c);
      const dR = Rp.map((row, i) => row.map((v, j) => (v - Rm[i]![j]!) / (2 * h)));
      const W = multiply(dR, R.map((_, i) => R.map((row) => row[i]!))) as unknown as M3; // dR R^T, skew-symmetric
      zxyOmega(a, b, r[0]!, r[1]!, r[2]!, w);
      expect(w[0]).toBeCloseTo(W[2]![1]!, 7);
      expect(w[1]).toBeCloseTo(W[0]![2]!, 7);
      expect(w[2]).toBeCloseTo(W[1]![0]!, 7);
      expect(W[1]![2]!).toBeCloseTo(-W[2]![1]!, 7);
    }
  });

  it('zxyRates inverts it, and det E = cos(pitch): singular with the long axis vertical', () => {
    const w = new Float64Array(3), r = new Float64Array(3);
    const cols = [new Float64Array(3), new Float64Array(3), new Float64Array(3)];
    for (const [a, b] of draws) {
      const u = [rng.uniform() - 0.5, rng.uniform() - 0.5, rng.uniform() - 0.5];
      zxyOmega(a, b, u[0]!, u[1]!, u[2]!, w);
      zxyRates(a, b, w[0]!, w[1]!, w[2]!, r);
      for (let k = 0; k < 3; k++) expect(r[k]).toBeCloseTo(u[k]!, 10);
      zxyOmega(a, b, 1, 0, 0, cols[0]!);
      zxyOmega(a, b, 0, 1, 0, cols[1]!);
      zxyOmega(a, b, 0, 0, 1, cols[2]!);
      const [p, q, s] = cols as [Float64Array, Float64Array, Float64Array];
      const det = p[0]! * (q[1]! * s[2]! - q[2]! * s[1]!) - p[1]! * (q[0]! * s[2]! - q[2]! * s[0]!) + p[2]! * (q[0]! * s[1]! - q[1]! * s[0]!);
      expect(det).toBeCloseTo(Math.cos(b), 12);
    }
  });

  it('axisFromVertical is the angle of the long axis (the matrix column of y) from the vertical: 90 degrees - |pitch|', () => {
    const q = new Float64Array(4);
    for (const [a, b, c] of draws) {
      quatFromZxy(a, b, c, q);
      const ay = refR(a, b, c).map((row) => row[1]!);
      expect(axisFromVertical(q)).toBeCloseTo(Math.acos(Math.abs(ay[2]!)), 10);
      expect(axisFromVertical(q)).toBeCloseTo(Math.PI / 2 - Math.abs(b), 10);
    }
  });
});

let mj: MainModule;
let left: ArmConfig;
let right: ArmConfig;
let yawOnly: ArmConfig;
beforeAll(async () => {
  mj = await loadMujoco();
  const c = loadCell('examples/path_tilt_cell.yaml');
  left = c.left.config;
  right = c.right.config;
  yawOnly = loadCell('examples/path_cell.yaml').left.config;
});

const quietSensors = { bias_force_n: 0, bias_torque_nm: 0, drift_force_n_s: 0, drift_torque_nm_s: 0, noise_force_n: 0, noise_torque_nm: 0 };

function world(cfg: ArmConfig, occupied: readonly string[], seed = 5): World {
  const o = simOptions({ start_jitter_m: 0, goal_jitter_m: 0, sensor: quietSensors });
  const w = sampleWorld(cfg.task, o, seed);
  return { ...w, occupied: cfg.task.zones.map((z) => occupied.includes(z.name)) };
}

/** The task with one waypoint's orientation replaced by the quaternion q (x, y, z, w). */
function withQuat(cfg: ArmConfig, k: number, q: ArrayLike<number>): ArmConfig {
  const O = [...cfg.task.path!.orientations_xyzw!];
  O.splice(4 * k, 4, ...Array.from(q));
  return { ...cfg, task: { ...cfg.task, path: { ...cfg.task.path!, orientations_xyzw: O } } };
}

/** The task with one waypoint's orientation replaced by Rz(yaw) Rx(pitch) Ry(roll). */
function withOrientation(cfg: ArmConfig, k: number, yaw: number, pitch: number, roll: number): ArmConfig {
  const q = new Float64Array(4);
  quatFromZxy(yaw, pitch, roll, q);
  return withQuat(cfg, k, q);
}

describe('the scene of a tilting path', () => {
  it('has yaw, pitch and roll hinges under velocity servos, the weight of the wrist links carried, the beam at the start orientation', () => {
    const o = simOptions();
    const { xml } = buildMjcf(left.task, world(left, []), o);
    for (const side of ['left', 'right']) {
      for (const j of ['yaw', 'pitch', 'roll']) expect(xml).toMatch(new RegExp(`<velocity name="${side}_v${j}" joint="${side}_${j}"`));
    }
    expect(xml).toMatch(/<joint name="left_pitch" type="hinge" axis="1 0 0"/);
    expect(xml).toMatch(/<joint name="left_roll" type="hinge" axis="0 1 0"/);
    const p = pathPoses(left.task);
    expect(p.tilts).toBe(true);
    // The last waypoint's angles as the example's comment says: yaw 15, pitch -10, roll 18 degrees.
    expect(p.endZxy.map((a) => a / deg)).toEqual([expect.closeTo(15, 4), expect.closeTo(-10, 4), expect.closeTo(18, 4)]);
  });

  it('builds the chain the rate relation assumes: the tool frame at joint angles d is Rz Rx Ry of the start angles plus d (left; the right turned half a turn about its z)', () => {
    // Start the path tilted so that the links' frames are not the identity.
    const tilted = withOrientation(withOrientation(left, 0, 0.3, 0.2, -0.25), 1, 0.3, 0.2, -0.25);
    const o = simOptions({ sensor: quietSensors });
    const cell = new SimCell(mj, tilted.task, world(tilted, []), o);
    try {
      expect(cell.tilt).toBe(true);
      expect(cell.jointNames).toEqual(TILT_JOINT_NAMES);
      const d = [0.4, -0.3, 0.7];
      const qpos = (cell.data as unknown as { qpos: Float64Array }).qpos;
      for (const side of ['left', 'right'] as const) {
        const jp = new Float64Array(6);
        cell.jointPositions(side, jp);
        expect([...jp]).toEqual([0, 0, 0, 0, 0, 0]);
      }
      // The wrist joints follow x, y, z in qpos (left arm: after the beam's free joint, 7 numbers).
      const leftAdr = 7;
      for (let k = 0; k < 3; k++) qpos[leftAdr + 3 + k] = d[k]!;
      for (let k = 0; k < 3; k++) qpos[leftAdr + 6 + 3 + k] = d[k]!;
      mj.mj_forward(cell.model, cell.data);
      for (const side of ['left', 'right'] as const) {
        const jp = new Float64Array(6);
        cell.jointPositions(side, jp);
        expect([...jp]).toEqual([0, 0, 0, ...d]);
      }
      const ang = new Float64Array(3);
      cell.wristAngles('left', ang);
      expect([...ang]).toEqual([0.3 + 0.4, 0.2 - 0.3, -0.25 + 0.7].map((v) => expect.closeTo(v, 12)));
      const want = new Float64Array(4);
      quatFromZxy(ang[0]!, ang[1]!, ang[2]!, want);
      const pose = new Float64Array(7);
      cell.toolPose('left', pose);
      expect(quatAngle(pose.subarray(3), want)).toBeLessThan(1e-6);
      cell.toolPose('right', pose);
      // The right tool: R Rz(pi), i.e. the quaternion times (0, 0, 1, 0).
      const r = [want[1]!, -want[0]!, want[3]!, -want[2]!];
      expect(quatAngle(pose.subarray(3), r)).toBeLessThan(1e-6);
    } finally {
      cell.dispose();
    }
  });

  it('holds a beam that starts tilted where it is, each wrist carrying half its weight and its gripper (statics)', () => {
    const tilted = withOrientation(withOrientation(left, 0, 0.3, 0.2, -0.25), 1, 0.3, 0.2, -0.25);
    const r = runEpisodeWith(mj, { left: tilted, right: { ...right, task: tilted.task }, strategy: { name: 'centralized', k: null }, seed: 5, world: world(tilted, []), duration_s: 1.0, options: { sensor: quietSensors, settle_s: 10 } });
    const rec = r.record!;
    const i = rec.samples - 1;
    const q0 = new Float64Array(4);
    quatFromZxy(0.3, 0.2, -0.25, q0);
    expect(quatAngle(rec.beamPose.subarray(7 * i + 3, 7 * i + 7), q0)).toBeLessThan(0.1 * deg);
    const start = pathPoses(tilted.task).start;
    expect(Math.hypot(rec.beamPose[7 * i]! - start[0], rec.beamPose[7 * i + 1]! - start[1], rec.beamPose[7 * i + 2]! - start[2])).toBeLessThan(1e-3);
    // Two supports symmetric about the centre of mass share the weight equally whatever the tilt;
    // standard gravity 9.80665 m/s^2 (CGPM 1901).
    const half = (left.task.object.mass_kg / 2 + simOptions().tool_mass_kg) * 9.80665;
    expect(rec.left.forceCell[3 * i + 2]!).toBeCloseTo(-half, 1);
    expect(rec.right.forceCell[3 * i + 2]!).toBeCloseTo(-half, 1);
  });

  it('pitches the beam at the commanded rate when each tool moves with v + w x r and the wrist with E^-1 w (rigid-body kinematics)', () => {
    const w = 0.1; // rad/s about the cell x axis, from t = 1 s
    const g = left.task.object.grasp_offset_m;
    const rates = new Float64Array(3);
    const r = runEpisodeWith(mj, {
      left, right, strategy: { name: 'centralized', k: null }, seed: 5, world: world(left, []), duration_s: 2.0,
      options: { sensor: quietSensors, settle_s: 0 },
      commandOverride: (t, side, out) => {
        const on = t >= 1;
        const a = on ? w * (t - 1) : 0; // the pitch so far; yaw and roll stay 0
        const s = side === 'left' ? g : -g; // r = s (0, cos a, sin a)
        out[0] = 0;
        out[1] = on ? -w * s * Math.sin(a) : 0;
        out[2] = on ? w * s * Math.cos(a) : 0;
        zxyRates(0, a, on ? w : 0, 0, 0, rates);
        out[3] = rates[0]!;
        out[4] = rates[1]!;
        out[5] = rates[2]!;
      },
    });
    const rec = r.record!;
    const i = rec.samples - 1;
    const want = new Float64Array(4);
    quatFromZxy(0, w * (rec.t[i]! - 1), 0, want);
    expect(quatAngle(rec.beamPose.subarray(7 * i + 3, 7 * i + 7), want)).toBeLessThan(0.5 * deg);
    // The centre stays at the start (it turns about it).
    const z0 = pathPoses(left.task).start[2];
    expect(Math.hypot(rec.beamPose[7 * i]!, rec.beamPose[7 * i + 1]!, rec.beamPose[7 * i + 2]! - z0)).toBeLessThan(2e-3);
    let peak = 0;
    for (let k = 1200; k < rec.samples; k++) peak = Math.max(peak, Math.abs(rec.internalForce[k]!));
    expect(peak).toBeLessThan(0.5);
  });
});

describe('a whole transfer on the tilting path', () => {
  it('reaches the fixture rolled and pitched as the path says, with every zone occupied, without touching one', () => {
    const r = runEpisodeWith(mj, { left, right, strategy: { name: 'alternating', k: 500 }, seed: 7, world: world(left, ['column', 'low_clamp', 'tray_drop'], 7) });
    const s = r.summary;
    expect(s.success).toBe(true);
    expect(s.collisions.count).toBe(0);
    expect(s.holds.count).toBe(0);
    const rec = r.record!;
    const i = rec.samples - 1;
    const O = left.task.path!.orientations_xyzw!;
    const last = O.slice(O.length - 4);
    // Open loop in the arm step (the twist's w follows the progress), as the yaw-only turn: within 3 degrees.
    expect(quatAngle(rec.beamPose.subarray(7 * i + 3, 7 * i + 7), last)).toBeLessThan(3 * deg);
    // The tilt is really there: the final orientation is 20 degrees or more from the yaw-only path's.
    expect(quatAngle(rec.beamPose.subarray(7 * i + 3, 7 * i + 7), [0, 0, Math.sin(7.5 * deg), Math.cos(7.5 * deg)])).toBeGreaterThan(15 * deg);
  });
});

describe('what the MuJoCo cell refuses on a tilting path', () => {
  it('an orientation within 10 degrees of the wrist singularity (the long axis near vertical), with where and what is allowed', () => {
    const steep = withOrientation(left, 4, 0, 85 * deg, 0);
    const p = checkEpisodeSetup(steep, simOptions());
    const t = p.find((x) => x.code === 'sim.path_orientation_near_singularity')!;
    expect(t).toBeDefined();
    expect(t.message).toMatch(/within 5\.0 degrees of the vertical at s = 2\.\d{3} m \(between waypoints 3 and 4\)/);
    expect(t.where).toEqual({ key: 'task.path.orientations_xyzw' });
    expect(t.hint).toMatch(/at least 10\.0 degrees from the vertical: a pitch within \+-80\.0 degrees/);
  });

  it('a path whose waypoints are clear of the singularity but whose slerp between them passes through it', () => {
    // Turned 70 degrees about x, then 110 degrees: each 20 degrees from the vertical, on end half-way.
    const rx = (a: number) => [Math.sin(a / 2), 0, 0, Math.cos(a / 2)];
    const over = withQuat(withQuat(withQuat(left, 2, rx(70 * deg)), 3, rx(110 * deg)), 4, rx(110 * deg));
    expect(axisFromVertical(rx(70 * deg))).toBeCloseTo(20 * deg, 12);
    expect(axisFromVertical(rx(110 * deg))).toBeCloseTo(20 * deg, 12);
    const near = closestToWristSingularity(over.task);
    expect(near.waypoint).toBe(2);
    expect(near.angle).toBeLessThan(1 * deg);
    expect(checkEpisodeSetup(over, simOptions()).map((x) => x.code)).toContain('sim.path_orientation_near_singularity');
  });

  it('accepts tilts that keep away from it (pitch 75 degrees, any roll), the example, and the old tilt refusal is gone', () => {
    expect(checkEpisodeSetup(withOrientation(left, 4, 0.2, 75 * deg, 2.5), simOptions())).toEqual([]);
    expect(checkEpisodeSetup(left, simOptions())).toEqual([]);
    expect(right.task.path!.orientations_xyzw).toEqual(left.task.path!.orientations_xyzw);
  });

  it('the six-joint arm on a path, saying what it runs and what runs a path', () => {
    const t = checkEpisodeSetup(left, simOptions({ arm_model: 'six_joint' })).find((x) => x.code === 'sim.path_needs_tool_point')!;
    expect(t.message).toMatch(/six-joint arm runs planar tasks only/);
    expect(t.hint).toMatch(/tool_point \(the default\) for a task with waypoints, with any orientations; six_joint for a planar task/);
  });
});

describe('the scenes that must not change (planar and yaw-only path)', () => {
  // SHA-256 of the MJCF for seed 7, pinned from the build before the wrist got pitch and roll
  // (the same text the before/after `simulate` outputs were compared byte for byte with).
  const pinned: Record<string, string> = {
    'config/demo_cell.yaml': '90bcd0f736d0e48c68bc5ead37998582f434a03e8e2fadd8de7bbf4dace15890',
    'examples/path_cell.yaml': '7228d73aa2af068662044245343795e1fdf8ba40fbd6c7ba521af088c9d9a52b',
  };
  for (const [file, hash] of Object.entries(pinned)) {
    it(`${file}: the same MJCF, byte for byte`, () => {
      const task = loadCell(file).left.config.task;
      const o = simOptions();
      const { xml } = buildMjcf(task, sampleWorld(task, o, 7), o);
      expect(createHash('sha256').update(xml).digest('hex')).toBe(hash);
      expect(xml).not.toMatch(/_pitch|_roll|_wyaw/);
    });
  }

  it('the yaw-only path keeps four joints per arm (x, y, z, yaw)', () => {
    const o = simOptions();
    const cell = new SimCell(mj, yawOnly.task, sampleWorld(yawOnly.task, o, 7), o);
    try {
      expect(cell.tilt).toBe(false);
      expect(cell.jointNames).toEqual(['x', 'y', 'z', 'yaw']);
    } finally {
      cell.dispose();
    }
  });
});
