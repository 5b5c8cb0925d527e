/**
 * The tool-point wrist of the MuJoCo cell on a path whose orientations tilt the object: three
 * hinges in series, yaw about the cell's vertical, then pitch about the yawed x axis, then roll
 * about the resulting y axis (the object's long axis). The chain's orientation is
 *
 *   R = Rz(yaw) Rx(pitch) Ry(roll),
 *
 * so the object's long axis (its local y) is R ey = (-sin(yaw) cos(pitch), cos(yaw) cos(pitch),
 * sin(pitch)). The angular velocity in the cell frame is the sum of each joint's rate times its
 * axis as the chain places it (common practice for serial chains):
 *
 *   w = E(yaw, pitch) (yaw', pitch', roll'),  E = [ez, Rz(yaw) ex, Rz(yaw) Rx(pitch) ey]
 *
 * with det E = cos(pitch): the chain loses a direction (gimbal lock) when the long axis is
 * vertical. Yaw, pitch and roll stay meaningful names for a beam: a beam is rarely carried on
 * end, so the singularity sits where a carry does not go, and set-up refuses a path that comes
 * within `WRIST_SINGULARITY_MARGIN_RAD` of it.
 *
 * Everything here is set-up or per-sample arithmetic without allocation (results into `out`).
 */

/** The tool point's joints on a tilting path: three slides, then the wrist's yaw, pitch, roll (m; rad). */
export const TILT_JOINT_NAMES = ['x', 'y', 'z', 'yaw', 'pitch', 'roll'] as const;

/** Closest a path may bring the object's long axis to the vertical (the wrist's singularity), rad: 10 degrees. */
export const WRIST_SINGULARITY_MARGIN_RAD = (10 * Math.PI) / 180;

/** Whether a quaternion (x, y, z, w) turns about anything but the vertical (the test the yaw-only wrist used). */
export function quatTilts(q: ArrayLike<number>, offset = 0): boolean {
  const x = q[offset]!, y = q[offset + 1]!, z = q[offset + 2]!, w = q[offset + 3]!;
  return Math.hypot(x, y) / Math.hypot(x, y, z, w) > 1e-6;
}

/**
 * Yaw, pitch, roll of R = Rz(yaw) Rx(pitch) Ry(roll) from a quaternion (x, y, z, w; need not be
 * unit). Writes out[0..2]; pitch in [-pi/2, pi/2].
 */
export function zxyFromQuat(q: ArrayLike<number>, out: Float64Array, offset = 0): void {
  const n = Math.hypot(q[offset]!, q[offset + 1]!, q[offset + 2]!, q[offset + 3]!);
  const x = q[offset]! / n, y = q[offset + 1]! / n, z = q[offset + 2]! / n, w = q[offset + 3]! / n;
  // The rotation matrix entries needed (row, column).
  const r01 = 2 * (x * y - z * w);
  const r11 = 1 - 2 * (x * x + z * z);
  const r20 = 2 * (x * z - y * w);
  const r21 = 2 * (y * z + x * w);
  const r22 = 1 - 2 * (x * x + y * y);
  out[0] = Math.atan2(-r01, r11);
  out[1] = Math.atan2(r21, Math.hypot(r20, r22));
  out[2] = Math.atan2(-r20, r22);
}

/** Quaternion (x, y, z, w) of Rz(yaw) Rx(pitch) Ry(roll). Writes out[0..3]. */
export function quatFromZxy(yaw: number, pitch: number, roll: number, out: Float64Array): void {
  const cz = Math.cos(yaw / 2), sz = Math.sin(yaw / 2);
  const cx = Math.cos(pitch / 2), sx = Math.sin(pitch / 2);
  const cy = Math.cos(roll / 2), sy = Math.sin(roll / 2);
  // qz * qx = (cz sx, sz sx, sz cx, cz cx) as (x, y, z, w); then times qy = (0, sy, 0, cy).
  const ax = cz * sx, ay = sz * sx, az = sz * cx, aw = cz * cx;
  out[0] = ax * cy - az * sy;
  out[1] = aw * sy + ay * cy;
  out[2] = az * cy + ax * sy;
  out[3] = aw * cy - ay * sy;
}

/** The angular velocity (cell frame) of the chain at (yaw, pitch) for joint rates (yaw', pitch', roll'): w = E rates. Writes out[0..2]. */
export function zxyOmega(yaw: number, pitch: number, dYaw: number, dPitch: number, dRoll: number, out: Float64Array): void {
  const cp = Math.cos(yaw), sp = Math.sin(yaw);
  const ct = Math.cos(pitch), st = Math.sin(pitch);
  out[0] = cp * dPitch - sp * ct * dRoll;
  out[1] = sp * dPitch + cp * ct * dRoll;
  out[2] = dYaw + st * dRoll;
}

/**
 * The joint rates (yaw', pitch', roll') that give the angular velocity (wx, wy, wz) (cell frame)
 * at (yaw, pitch): E^-1 w. Writes out[0..2]. Grows as 1 / cos(pitch) toward the singularity
 * (set-up keeps the path 10 degrees away: at most 5.8 times the angular speed).
 */
export function zxyRates(yaw: number, pitch: number, wx: number, wy: number, wz: number, out: Float64Array): void {
  const cp = Math.cos(yaw), sp = Math.sin(yaw);
  const ct = Math.cos(pitch), st = Math.sin(pitch);
  const dRoll = (cp * wy - sp * wx) / ct;
  out[0] = wz - st * dRoll;
  out[1] = cp * wx + sp * wy;
  out[2] = dRoll;
}

/** Angle between the long axis (local y) of a quaternion's frame and the vertical, rad (0: on end; the wrist's singularity). */
export function axisFromVertical(q: ArrayLike<number>, offset = 0): number {
  const n2 = q[offset]! ** 2 + q[offset + 1]! ** 2 + q[offset + 2]! ** 2 + q[offset + 3]! ** 2;
  const x = q[offset]!, y = q[offset + 1]!, z = q[offset + 2]!, w = q[offset + 3]!;
  const az = (2 * (y * z + x * w)) / n2;
  return Math.acos(Math.min(1, Math.abs(az)));
}
