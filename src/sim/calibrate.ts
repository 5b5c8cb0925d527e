/**
 * Calibrating the coupling model the arm step assumes, f ≈ c (v_partner_cmd − v_own_cmd), from
 * a recorded episode: a least-squares fit of c through the origin over the horizontal axes of
 * both arms, using the correction-band force rotated into the cell frame with each arm's tool
 * pose, and the residual spread (compare with belief.noise_force_n). Samples are skipped while
 * either arm is untared, held or flags an impact.
 */
import type { ArmRecord, EpisodeRecord } from './record.js';

export interface CouplingFit {
  /** Fitted coupling constant, N*s/m. */
  readonly c_n_s_m: number;
  /** Standard deviation of f − c Δv, N. */
  readonly residual_sd_n: number;
  /** RMS of the commanded velocity difference over the fit, m/s (how much the fit had to go on). */
  readonly dv_rms_m_s: number;
  /** Axis samples used (two per arm per sample). */
  readonly points: number;
}

function cellXY(a: ArmRecord, i: number, out: Float64Array): void {
  const fx = a.correction[6 * i]!, fy = a.correction[6 * i + 1]!, fz = a.correction[6 * i + 2]!;
  const qx = a.toolPose[7 * i + 3]!, qy = a.toolPose[7 * i + 4]!, qz = a.toolPose[7 * i + 5]!, qw = a.toolPose[7 * i + 6]!;
  out[0] = (1 - 2 * (qy * qy + qz * qz)) * fx + 2 * (qx * qy - qz * qw) * fy + 2 * (qx * qz + qy * qw) * fz;
  out[1] = 2 * (qx * qy + qz * qw) * fx + (1 - 2 * (qx * qx + qz * qz)) * fy + 2 * (qy * qz - qx * qw) * fz;
}

export function fitCoupling(rec: EpisodeRecord): CouplingFit {
  const f = new Float64Array(2);
  let sxy = 0, sxx = 0, syy = 0, n = 0;
  const usable = (a: ArmRecord, i: number) => a.tared[i] === 1 && a.held[i] === 0 && a.impactFlag[i] === 0;
  for (let i = 0; i < rec.samples; i++) {
    if (!usable(rec.left, i) || !usable(rec.right, i)) continue;
    for (const [own, other] of [[rec.left, rec.right], [rec.right, rec.left]] as const) {
      cellXY(own, i, f);
      for (let a = 0; a < 2; a++) {
        const dv = other.command[2 * i + a]! - own.command[2 * i + a]!;
        sxy += f[a]! * dv;
        sxx += dv * dv;
        syy += f[a]! * f[a]!;
        n++;
      }
    }
  }
  const c = sxx > 0 ? sxy / sxx : Number.NaN;
  // Sum of (f − c dv)² = syy − 2 c sxy + c² sxx.
  const ss = Math.max(0, syy - 2 * c * sxy + c * c * sxx);
  return { c_n_s_m: c, residual_sd_n: n ? Math.sqrt(ss / n) : Number.NaN, dv_rms_m_s: n ? Math.sqrt(sxx / n) : 0, points: n };
}
