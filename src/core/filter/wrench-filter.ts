/**
 * Wrist wrench filter: splits the force-torque signal of one arm into a slow "correction"
 * band (what the partner arm pushes or pulls through the carried object, a few hertz) and a
 * fast "impact" band (knocks and contacts, broadband), with bias removal (tare) and optional
 * gravity compensation of a known payload.
 *
 * Per sample (`step`), in this order:
 *   u           = raw − payloadWrench(orientation)          (payload model, sensor frame)
 *   tare        : while pending, u goes into a sliding still-window; a still window sets
 *                 bias = mean(u) and resets the low-pass to the new steady state
 *   compensated = u − bias
 *   correction  = Butterworth low-pass(compensated)
 *   impact      = compensated − correction                  (exactly complementary)
 *   impactScore = max(|f_impact| / impact.force_n, |τ_impact| / impact.torque_nm)
 *   impactFlag  : rises once the score has stayed ≥ 1 for min_duration_s, falls once it has
 *                 stayed < release_ratio for hold_s
 *
 * Axis order everywhere: fx fy fz tx ty tz (N, N·m). Hot path: no allocation, closures or
 * exceptions per sample; all buffers are preallocated in the constructor.
 */
import { InputError, type Problem } from '../../util/errors.js';
import { SosCascade, butterworthSos, checkButterworthArgs } from './butterworth.js';

/** Standard acceleration of gravity, m/s² (ISO 80000-3; CGPM 1901). */
export const STANDARD_GRAVITY = 9.80665;

/** Filter parameters; keys map 1:1 to ROS parameters under `wrench_filter.`. */
export interface WrenchFilterConfig {
  /** Sample rate of the wrench stream, Hz (50..8000). */
  sample_rate_hz: number;
  /** Low-pass cutoff between the correction and impact bands, Hz (0 < cutoff < rate/2). */
  cutoff_hz: number;
  /** Butterworth order, 1..8. */
  order: number;
  tare: {
    /** Length of the still window used to estimate the bias, s. */
    window_s: number;
    /** Largest peak-to-peak of any force axis over the window that still counts as still, N. */
    still_force_n: number;
    /** Largest peak-to-peak of any torque axis over the window that still counts as still, N·m. */
    still_torque_nm: number;
    /** Tare as soon as the first still window is seen after start (or `reset()`). */
    on_start: boolean;
    /** Largest force / torque bias magnitude a tare may set (N, N·m); larger is refused. Default: no bound. */
    max_bias_n?: number;
    max_bias_nm?: number;
    /** Largest change from the start-up bias that a later tare may make (N, N·m). Default: no bound. */
    max_change_n?: number;
    max_change_nm?: number;
    /**
     * Largest horizontal part of the force bias in the world frame (z up, via `setOrientation`),
     * N. Weight is vertical, so a horizontal bias can only be sensor offset or a squeeze already
     * present: this keeps a tare (the start-up one included) from hiding a squeeze. Default: no bound.
     */
    max_horizontal_bias_n?: number;
  };
  payload: {
    /** Subtract the payload's weight, modelled from `setOrientation`. */
    enabled: boolean;
    /** Payload mass carried by this sensor, kg. */
    mass_kg: number;
    /** Payload centre of mass in the sensor frame, m. */
    com_m: [number, number, number];
  };
  impact: {
    /** Impact-band force norm that scores 1, N. */
    force_n: number;
    /** Impact-band torque norm that scores 1, N·m. */
    torque_nm: number;
    /** The flag falls once the score stays below this fraction of the rise level (0 < r ≤ 1). */
    release_ratio: number;
    /** The score must stay ≥ 1 this long before the flag rises, s (at least one sample). */
    min_duration_s: number;
    /** The score must stay < release_ratio this long before the flag falls, s (at least one sample). */
    hold_s: number;
  };
}

/**
 * Defaults for a 1 kHz wrist sensor: order-4 low-pass at 5 Hz (a partner's push lives in the
 * first few hertz; knocks are broadband), half-second still window for tare, impacts from
 * 15 N / 1.5 N·m in the fast band held for 3 ms.
 */
export const DEFAULT_WRENCH_FILTER: WrenchFilterConfig = Object.freeze({
  sample_rate_hz: 1000,
  cutoff_hz: 5,
  order: 4,
  tare: Object.freeze({ window_s: 0.5, still_force_n: 1.5, still_torque_nm: 0.15, on_start: true }),
  payload: Object.freeze({ enabled: false, mass_kg: 0, com_m: Object.freeze([0, 0, 0]) as unknown as [number, number, number] }),
  impact: Object.freeze({ force_n: 15, torque_nm: 1.5, release_ratio: 0.5, min_duration_s: 0.003, hold_s: 0.1 }),
}) as WrenchFilterConfig;

/** Partial configuration: any subset of keys, the rest from `DEFAULT_WRENCH_FILTER`. */
export interface WrenchFilterOverrides {
  sample_rate_hz?: number;
  cutoff_hz?: number;
  order?: number;
  tare?: Partial<WrenchFilterConfig['tare']>;
  payload?: Partial<WrenchFilterConfig['payload']>;
  impact?: Partial<WrenchFilterConfig['impact']>;
}

/** A full configuration from defaults and overrides (not validated; the filter validates). */
export function wrenchFilterConfig(overrides: WrenchFilterOverrides = {}): WrenchFilterConfig {
  const d = DEFAULT_WRENCH_FILTER;
  const com = overrides.payload?.com_m ?? d.payload.com_m;
  return {
    sample_rate_hz: overrides.sample_rate_hz ?? d.sample_rate_hz,
    cutoff_hz: overrides.cutoff_hz ?? d.cutoff_hz,
    order: overrides.order ?? d.order,
    tare: { ...d.tare, ...overrides.tare },
    payload: { ...d.payload, ...overrides.payload, com_m: [com[0], com[1], com[2]] as [number, number, number] },
    impact: { ...d.impact, ...overrides.impact },
  };
}

const PREFIX = 'wrench_filter.';
const MAX_WINDOW_S = 10;
const MAX_MASS_KG = 500;
const MAX_COM_M = 5;
const MAX_MIN_DURATION_S = 1;
const MAX_HOLD_S = 10;

function isNum(v: unknown): v is number {
  return typeof v === 'number' && Number.isFinite(v);
}

/** Every problem with a configuration (empty when it is allowed). */
export function checkWrenchFilterConfig(cfg: WrenchFilterConfig): Problem[] {
  const out: Problem[] = [];
  const bad = (key: string, value: unknown, hint: string, code = 'param.out_of_range'): void => {
    out.push({ code, message: `${PREFIX}${key} = ${JSON.stringify(value) ?? String(value)} is not allowed`, where: { key: PREFIX + key }, hint });
  };
  if (cfg === null || typeof cfg !== 'object') {
    out.push({ code: 'param.wrong_type', message: 'wrench filter configuration is not an object', where: { key: 'wrench_filter' }, hint: 'an object with the keys of DEFAULT_WRENCH_FILTER' });
    return out;
  }
  for (const p of checkButterworthArgs(cfg.order, cfg.cutoff_hz, cfg.sample_rate_hz, {
    order: PREFIX + 'order',
    cutoffHz: PREFIX + 'cutoff_hz',
    sampleRateHz: PREFIX + 'sample_rate_hz',
  })) {
    out.push({ ...p, message: `${p.where.key} = ${JSON.stringify(valueAt(cfg, p.where.key.slice(PREFIX.length)))}: ${p.message}` });
  }
  const fs = isNum(cfg.sample_rate_hz) && cfg.sample_rate_hz > 0 ? cfg.sample_rate_hz : Number.NaN;

  const tare = cfg.tare;
  if (tare === null || typeof tare !== 'object') {
    bad('tare', tare, 'an object with window_s, still_force_n, still_torque_nm, on_start', 'param.wrong_type');
  } else {
    const minWin = Number.isFinite(fs) ? 2 / fs : 0;
    if (!isNum(tare.window_s) || tare.window_s <= 0 || tare.window_s > MAX_WINDOW_S || (Number.isFinite(fs) && Math.round(tare.window_s * fs) < 2)) {
      bad('tare.window_s', tare.window_s, `seconds, at least two samples (${Number.isFinite(fs) ? minWin : '2/sample_rate_hz'} s) and at most ${MAX_WINDOW_S} s`);
    }
    if (!isNum(tare.still_force_n) || tare.still_force_n <= 0) bad('tare.still_force_n', tare.still_force_n, 'a force in newtons greater than 0');
    if (!isNum(tare.still_torque_nm) || tare.still_torque_nm <= 0) bad('tare.still_torque_nm', tare.still_torque_nm, 'a torque in newton-metres greater than 0');
    if (typeof tare.on_start !== 'boolean') bad('tare.on_start', tare.on_start, 'true or false', 'param.wrong_type');
  }

  const pl = cfg.payload;
  if (pl === null || typeof pl !== 'object') {
    bad('payload', pl, 'an object with enabled, mass_kg, com_m', 'param.wrong_type');
  } else {
    if (typeof pl.enabled !== 'boolean') bad('payload.enabled', pl.enabled, 'true or false', 'param.wrong_type');
    if (!isNum(pl.mass_kg) || pl.mass_kg < 0 || pl.mass_kg > MAX_MASS_KG) bad('payload.mass_kg', pl.mass_kg, `a mass in kilograms from 0 to ${MAX_MASS_KG}`);
    const c = pl.com_m as unknown;
    if (!Array.isArray(c) || c.length !== 3 || !c.every((v) => isNum(v) && Math.abs(v) <= MAX_COM_M)) {
      bad('payload.com_m', c, `three finite coordinates in metres [x, y, z], each within ±${MAX_COM_M} m`, Array.isArray(c) && c.length === 3 ? 'param.out_of_range' : 'param.wrong_type');
    }
  }

  const im = cfg.impact;
  if (im === null || typeof im !== 'object') {
    bad('impact', im, 'an object with force_n, torque_nm, release_ratio, min_duration_s, hold_s', 'param.wrong_type');
  } else {
    if (!isNum(im.force_n) || im.force_n <= 0) bad('impact.force_n', im.force_n, 'a force in newtons greater than 0');
    if (!isNum(im.torque_nm) || im.torque_nm <= 0) bad('impact.torque_nm', im.torque_nm, 'a torque in newton-metres greater than 0');
    if (!isNum(im.release_ratio) || im.release_ratio <= 0 || im.release_ratio > 1) bad('impact.release_ratio', im.release_ratio, 'a ratio with 0 < release_ratio ≤ 1');
    if (!isNum(im.min_duration_s) || im.min_duration_s < 0 || im.min_duration_s > MAX_MIN_DURATION_S) {
      bad('impact.min_duration_s', im.min_duration_s, `seconds from 0 to ${MAX_MIN_DURATION_S} (rounded to samples, at least one)`);
    }
    if (!isNum(im.hold_s) || im.hold_s < 0 || im.hold_s > MAX_HOLD_S) bad('impact.hold_s', im.hold_s, `seconds from 0 to ${MAX_HOLD_S} (rounded to samples, at least one)`);
  }
  return out;
}

function valueAt(cfg: WrenchFilterConfig, key: string): unknown {
  return (cfg as unknown as Record<string, unknown>)[key];
}

/** Throw `InputError` listing every problem with the configuration. */
export function validateWrenchFilterConfig(cfg: WrenchFilterConfig): void {
  const problems = checkWrenchFilterConfig(cfg);
  if (problems.length > 0) throw new InputError(problems);
}

const SNAPSHOT_MAGIC = 0x57464c54; // identifies a WrenchFilter snapshot
const N_SCALARS = 21;

/** `WrenchFilter.tareOutcome` values. */
export const TARE_NONE = 0;
export const TARE_TAKEN = 1;
export const TARE_REFUSED = 2;
/** `WrenchFilter.tareRefusedWhy` codes (why a still window's mean was not taken as the bias). */
export const TARE_REFUSED_BIAS_FORCE = 1;
export const TARE_REFUSED_BIAS_TORQUE = 2;
export const TARE_REFUSED_CHANGE_FORCE = 3;
export const TARE_REFUSED_CHANGE_TORQUE = 4;
export const TARE_REFUSED_HORIZONTAL = 5;
export const TARE_REFUSED_MOVING = 6;
/** Plain-language reason per refusal code. */
export const TARE_REFUSAL_TEXT: readonly string[] = [
  '',
  'the force bias would exceed wrench_filter.tare.max_bias_n',
  'the torque bias would exceed wrench_filter.tare.max_bias_nm',
  'the force bias would move from the start-up tare by more than wrench_filter.tare.max_change_n',
  'the torque bias would move from the start-up tare by more than wrench_filter.tare.max_change_nm',
  'the force bias would have a horizontal part (weight is vertical: a squeeze or an offset) above wrench_filter.tare.max_horizontal_bias_n',
  'the arm started moving while the tare waited for a still window',
];

/** Six-axis wrench filter for one wrist sensor. See the module comment for the pipeline. */
export class WrenchFilter {
  readonly config: WrenchFilterConfig;
  /** Design of the low-pass, [b0,b1,b2,1,a1,a2] per section. */
  readonly sos: Float64Array;
  /** Samples in the tare window. */
  readonly tareWindowSamples: number;
  /** Samples the score must stay ≥ 1 before the flag rises. */
  readonly riseSamples: number;
  /** Samples the score must stay < release_ratio before the flag falls. */
  readonly holdSamples: number;

  /** raw − bias − payload wrench (latest sample). */
  readonly compensated = new Float64Array(6);
  /** Low-pass band of `compensated`. */
  readonly correction = new Float64Array(6);
  /** `compensated − correction`. */
  readonly impact = new Float64Array(6);
  /** Current bias estimate (sensor offset; includes an unmodelled payload when payload is off). */
  readonly bias = new Float64Array(6);
  /** Modelled payload wrench in the sensor frame (zero when payload compensation is off). */
  readonly payloadWrench = new Float64Array(6);
  impactScore = 0;
  /** Whether the torque ratio, not the force ratio, sets the impact score (for the trip's input label). */
  impactByTorque = false;
  impactFlag = false;
  /** A bias has been estimated at least once since construction or `reset()`. */
  tared = false;
  /** A tare is waiting for a still window. */
  tarePending = false;
  /** Windows of `tare.window_s` that were not still while a tare was pending. */
  tareRefusals = 0;
  /** Samples accepted by `step`. */
  samples = 0;
  /** Samples ignored by `step` because a value was NaN or infinite. */
  nonFiniteSamples = 0;
  /** What the last `step` did to a pending tare: TARE_NONE, TARE_TAKEN or TARE_REFUSED. */
  tareOutcome = TARE_NONE;
  /** Why the last tare was refused: a TARE_REFUSED_* code (0 when none). */
  tareRefusedWhy = 0;
  /** The magnitude and bound behind the last refusal (N or N·m). */
  tareRefusedValue = 0;
  tareRefusedLimit = 0;
  /** The bias of the first tare since construction or `reset()` (zero until then). */
  readonly startBias = new Float64Array(6);
  /** `bias − startBias`: how far later tares moved the bias. */
  readonly biasChange = new Float64Array(6);

  private readonly cascade: SosCascade;
  private readonly fs: number;
  private readonly invForce: number;
  private readonly invTorque: number;
  private readonly release: number;
  private readonly stillForce: number;
  private readonly stillTorque: number;
  private readonly mass: number;
  private readonly comX: number;
  private readonly comY: number;
  private readonly comZ: number;
  private readonly payloadOn: boolean;
  private readonly quat = new Float64Array([0, 0, 0, 1]);
  private readonly u = new Float64Array(6);
  private readonly zero6 = new Float64Array(6);
  private primed = false;
  private above = 0;
  private below = 0;
  // Tare window: ring of the last N values of u, plus per axis a max and a min monotonic
  // deque of absolute sample indices (deque 2a is the max of axis a, 2a+1 the min).
  private readonly ring: Float64Array;
  private ringCount = 0;
  private windowNext = 0;
  private tareWait = 0;
  private readonly dq: Float64Array;
  private readonly dqHead = new Float64Array(12);
  private readonly dqLen = new Float64Array(12);
  private readonly candidate = new Float64Array(6);
  private readonly maxBiasN: number;
  private readonly maxBiasNm: number;
  private readonly maxChangeN: number;
  private readonly maxChangeNm: number;
  private readonly maxHorizontalN: number;
  private startTared = false;

  constructor(config: WrenchFilterConfig = DEFAULT_WRENCH_FILTER) {
    validateWrenchFilterConfig(config);
    const c = config;
    this.config = Object.freeze({
      sample_rate_hz: c.sample_rate_hz,
      cutoff_hz: c.cutoff_hz,
      order: c.order,
      tare: Object.freeze({ ...c.tare }),
      payload: Object.freeze({ ...c.payload, com_m: Object.freeze([c.payload.com_m[0], c.payload.com_m[1], c.payload.com_m[2]]) as unknown as [number, number, number] }),
      impact: Object.freeze({ ...c.impact }),
    }) as WrenchFilterConfig;
    this.fs = c.sample_rate_hz;
    this.sos = butterworthSos(c.order, c.cutoff_hz, c.sample_rate_hz, {
      order: PREFIX + 'order',
      cutoffHz: PREFIX + 'cutoff_hz',
      sampleRateHz: PREFIX + 'sample_rate_hz',
    });
    this.cascade = new SosCascade(this.sos, 6);
    this.invForce = 1 / c.impact.force_n;
    this.invTorque = 1 / c.impact.torque_nm;
    this.release = c.impact.release_ratio;
    this.riseSamples = Math.max(1, Math.round(c.impact.min_duration_s * this.fs));
    this.holdSamples = Math.max(1, Math.round(c.impact.hold_s * this.fs));
    this.stillForce = c.tare.still_force_n;
    this.stillTorque = c.tare.still_torque_nm;
    this.payloadOn = c.payload.enabled;
    this.mass = c.payload.mass_kg;
    this.comX = c.payload.com_m[0];
    this.comY = c.payload.com_m[1];
    this.comZ = c.payload.com_m[2];
    this.maxBiasN = c.tare.max_bias_n ?? Number.POSITIVE_INFINITY;
    this.maxBiasNm = c.tare.max_bias_nm ?? Number.POSITIVE_INFINITY;
    this.maxChangeN = c.tare.max_change_n ?? Number.POSITIVE_INFINITY;
    this.maxChangeNm = c.tare.max_change_nm ?? Number.POSITIVE_INFINITY;
    this.maxHorizontalN = c.tare.max_horizontal_bias_n ?? Number.POSITIVE_INFINITY;
    const n = Math.round(c.tare.window_s * this.fs);
    this.tareWindowSamples = n;
    this.ring = new Float64Array(n * 6);
    this.dq = new Float64Array(n * 12);
    this.reset();
  }

  /** Back to the state right after construction (identity orientation, no bias). */
  reset(): void {
    this.cascade.clear();
    this.compensated.fill(0);
    this.correction.fill(0);
    this.impact.fill(0);
    this.bias.fill(0);
    this.startBias.fill(0);
    this.biasChange.fill(0);
    this.startTared = false;
    this.tareOutcome = TARE_NONE;
    this.tareRefusedWhy = 0;
    this.tareRefusedValue = 0;
    this.tareRefusedLimit = 0;
    this.impactScore = 0;
    this.impactFlag = false;
    this.tared = false;
    this.tarePending = this.config.tare.on_start;
    this.tareRefusals = 0;
    this.samples = 0;
    this.nonFiniteSamples = 0;
    this.primed = false;
    this.above = 0;
    this.below = 0;
    this.clearWindow();
    this.setOrientation(0, 0, 0, 1);
  }

  /**
   * Ask for a new bias estimate from the next still window (samples from now on). Does
   * nothing while a tare is already pending.
   */
  requestTare(): void {
    if (this.tarePending) return;
    this.tarePending = true;
    this.clearWindow();
  }

  /** End a pending tare as refused (code `why`, e.g. TARE_REFUSED_MOVING); the bias stays. */
  cancelTare(why: number): void {
    if (!this.tarePending) return;
    this.tarePending = false;
    this.clearWindow();
    this.tareOutcome = TARE_REFUSED;
    this.tareRefusedWhy = why;
    this.tareRefusedValue = 0;
    this.tareRefusedLimit = 0;
    this.tareRefusals++;
  }

  /**
   * Orientation of the sensor frame in a world frame with z up (unit quaternion x, y, z, w;
   * it is normalised here). Updates the payload model. Returns false and keeps the previous
   * orientation when the quaternion is not finite or has (near) zero norm.
   */
  setOrientation(qx: number, qy: number, qz: number, qw: number): boolean {
    const nn = qx * qx + qy * qy + qz * qz + qw * qw;
    if (!Number.isFinite(nn) || nn < 1e-12) return false;
    const inv = 1 / Math.sqrt(nn);
    const x = qx * inv;
    const y = qy * inv;
    const z = qz * inv;
    const w = qw * inv;
    const q = this.quat;
    q[0] = x;
    q[1] = y;
    q[2] = z;
    q[3] = w;
    const pw = this.payloadWrench;
    if (!this.payloadOn || this.mass === 0) {
      pw.fill(0);
      return true;
    }
    // F = m · Rᵀ · (0, 0, −g): minus m·g times the third row of R (sensor → world).
    const r20 = 2 * (x * z - w * y);
    const r21 = 2 * (y * z + w * x);
    const r22 = 1 - 2 * (x * x + y * y);
    const mg = this.mass * STANDARD_GRAVITY;
    const fx = -mg * r20;
    const fy = -mg * r21;
    const fz = -mg * r22;
    pw[0] = fx;
    pw[1] = fy;
    pw[2] = fz;
    // τ = com × F
    pw[3] = this.comY * fz - this.comZ * fy;
    pw[4] = this.comZ * fx - this.comX * fz;
    pw[5] = this.comX * fy - this.comY * fx;
    return true;
  }

  /** Process one raw sample (fx fy fz tx ty tz). A sample with a NaN or infinity is ignored. */
  step(raw: Float64Array): void {
    for (let i = 0; i < 6; i++) {
      if (!Number.isFinite(raw[i]!)) {
        this.nonFiniteSamples++;
        return;
      }
    }
    this.samples++;
    this.tareOutcome = TARE_NONE;
    const u = this.u;
    const pw = this.payloadWrench;
    for (let i = 0; i < 6; i++) u[i] = raw[i]! - pw[i]!;

    let justTared = false;
    if (this.tarePending) justTared = this.pushTare(u);

    const comp = this.compensated;
    const bias = this.bias;
    for (let i = 0; i < 6; i++) comp[i] = u[i]! - bias[i]!;

    if (justTared) {
      // New bias: the still window's mean is now zero, which is the new steady state.
      this.cascade.resetTo(this.zero6);
      this.primed = true;
    } else if (!this.primed) {
      // First sample: start from its steady state instead of ringing up from zero.
      this.cascade.resetTo(comp);
      this.primed = true;
    }
    const corr = this.correction;
    const imp = this.impact;
    this.cascade.process(comp, corr);
    for (let i = 0; i < 6; i++) imp[i] = comp[i]! - corr[i]!;

    const f = Math.sqrt(imp[0]! * imp[0]! + imp[1]! * imp[1]! + imp[2]! * imp[2]!) * this.invForce;
    const t = Math.sqrt(imp[3]! * imp[3]! + imp[4]! * imp[4]! + imp[5]! * imp[5]!) * this.invTorque;
    const score = f > t ? f : t;
    this.impactScore = score;
    this.impactByTorque = t > f;
    this.above = score >= 1 ? this.above + 1 : 0;
    this.below = score < this.release ? this.below + 1 : 0;
    if (!this.impactFlag) {
      if (this.above >= this.riseSamples) this.impactFlag = true;
    } else if (this.below >= this.holdSamples) {
      this.impactFlag = false;
    }
  }

  /** Peak-to-peak over the current tare window for axis 0..5 (0 when the window is empty). */
  windowPeakToPeak(axis: number): number {
    if (this.ringCount === 0 || axis < 0 || axis > 5) return 0;
    return this.frontValue(2 * axis) - this.frontValue(2 * axis + 1);
  }

  /** Length of a snapshot. */
  get snapshotLength(): number {
    return N_SCALARS + 8 * 6 + 4 + this.cascade.stateLength + this.ring.length + this.dq.length + 24;
  }

  /** All state in one array (allocates; for replay seeking). Configuration is not included. */
  snapshot(): Float64Array {
    const s = new Float64Array(this.snapshotLength);
    let o = 0;
    s[o++] = SNAPSHOT_MAGIC;
    s[o++] = this.tareWindowSamples;
    s[o++] = this.cascade.stateLength;
    s[o++] = this.tared ? 1 : 0;
    s[o++] = this.tarePending ? 1 : 0;
    s[o++] = this.tareRefusals;
    s[o++] = this.primed ? 1 : 0;
    s[o++] = this.samples;
    s[o++] = this.nonFiniteSamples;
    s[o++] = this.impactFlag ? 1 : 0;
    s[o++] = this.impactScore;
    s[o++] = this.above;
    s[o++] = this.below;
    s[o++] = this.ringCount;
    s[o++] = this.windowNext;
    s[o++] = this.tareWait;
    s[o++] = this.tareOutcome;
    s[o++] = this.tareRefusedWhy;
    s[o++] = this.tareRefusedValue;
    s[o++] = this.tareRefusedLimit;
    s[o++] = this.startTared ? 1 : 0;
    for (const a of this.stateArrays()) {
      s.set(a, o);
      o += a.length;
    }
    this.cascade.snapshotInto(s, o);
    return s;
  }

  /** Restore state from `snapshot()` of a filter with the same configuration. */
  restore(s: Float64Array): void {
    if (
      !(s instanceof Float64Array) ||
      s.length !== this.snapshotLength ||
      s[0] !== SNAPSHOT_MAGIC ||
      s[1] !== this.tareWindowSamples ||
      s[2] !== this.cascade.stateLength
    ) {
      throw new InputError({
        code: 'filter.bad_snapshot',
        message: 'this snapshot was not taken from a wrench filter with the same configuration',
        where: { key: 'snapshot' },
        hint: 'restore only snapshots from WrenchFilter.snapshot() of the same sample rate, order and tare window',
      });
    }
    let o = 3;
    this.tared = s[o++] === 1;
    this.tarePending = s[o++] === 1;
    this.tareRefusals = s[o++]!;
    this.primed = s[o++] === 1;
    this.samples = s[o++]!;
    this.nonFiniteSamples = s[o++]!;
    this.impactFlag = s[o++] === 1;
    this.impactScore = s[o++]!;
    this.above = s[o++]!;
    this.below = s[o++]!;
    this.ringCount = s[o++]!;
    this.windowNext = s[o++]!;
    this.tareWait = s[o++]!;
    this.tareOutcome = s[o++]!;
    this.tareRefusedWhy = s[o++]!;
    this.tareRefusedValue = s[o++]!;
    this.tareRefusedLimit = s[o++]!;
    this.startTared = s[o++] === 1;
    for (const a of this.stateArrays()) {
      a.set(s.subarray(o, o + a.length));
      o += a.length;
    }
    this.cascade.restore(s, o);
  }

  private stateArrays(): Float64Array[] {
    return [
      this.compensated,
      this.correction,
      this.impact,
      this.bias,
      this.startBias,
      this.biasChange,
      this.payloadWrench,
      this.u,
      this.quat,
      this.ring,
      this.dq,
      this.dqHead,
      this.dqLen,
    ];
  }

  private clearWindow(): void {
    this.ringCount = 0;
    this.windowNext = 0;
    this.tareWait = 0;
    this.dqHead.fill(0);
    this.dqLen.fill(0);
  }

  private frontValue(d: number): number {
    const n = this.tareWindowSamples;
    const idx = this.dq[d * n + this.dqHead[d]!]!;
    return this.ring[(idx % n) * 6 + (d >> 1)]!;
  }

  /** Add u to the tare window; returns true when the window is still and the bias was set. */
  private pushTare(u: Float64Array): boolean {
    const n = this.tareWindowSamples;
    const t = this.windowNext++;
    const dq = this.dq;
    const head = this.dqHead;
    const len = this.dqLen;
    // Drop deque fronts that leave the window (their ring slot is about to be overwritten).
    const oldest = t - n;
    for (let d = 0; d < 12; d++) {
      const base = d * n;
      while (len[d]! > 0 && dq[base + head[d]!]! <= oldest) {
        head[d] = head[d]! + 1 === n ? 0 : head[d]! + 1;
        len[d] = len[d]! - 1;
      }
    }
    const slot = (t % n) * 6;
    const ring = this.ring;
    for (let a = 0; a < 6; a++) ring[slot + a] = u[a]!;
    if (this.ringCount < n) this.ringCount++;
    for (let a = 0; a < 6; a++) {
      const v = u[a]!;
      // Max deque (values non-increasing from front to back).
      let d = 2 * a;
      let base = d * n;
      while (len[d]! > 0) {
        const backPos = (head[d]! + len[d]! - 1) % n;
        if (ring[(dq[base + backPos]! % n) * 6 + a]! <= v) len[d] = len[d]! - 1;
        else break;
      }
      dq[base + ((head[d]! + len[d]!) % n)] = t;
      len[d] = len[d]! + 1;
      // Min deque (values non-decreasing from front to back).
      d = 2 * a + 1;
      base = d * n;
      while (len[d]! > 0) {
        const backPos = (head[d]! + len[d]! - 1) % n;
        if (ring[(dq[base + backPos]! % n) * 6 + a]! >= v) len[d] = len[d]! - 1;
        else break;
      }
      dq[base + ((head[d]! + len[d]!) % n)] = t;
      len[d] = len[d]! + 1;
    }
    this.tareWait++;
    if (this.ringCount < n) return false;

    let still = true;
    for (let a = 0; a < 6 && still; a++) {
      const ptp = this.frontValue(2 * a) - this.frontValue(2 * a + 1);
      if (ptp > (a < 3 ? this.stillForce : this.stillTorque)) still = false;
    }
    if (!still) {
      if (this.tareWait >= n) {
        this.tareRefusals++;
        this.tareWait = 0;
      }
      return false;
    }
    // Still: the bias is the window mean (summed afresh, no drift from a running sum).
    const cand = this.candidate;
    for (let a = 0; a < 6; a++) {
      let sum = 0;
      for (let k = 0; k < n; k++) sum += ring[k * 6 + a]!;
      cand[a] = sum / n;
    }
    // A tare must never hide a load: bound the bias and, after the start-up tare, its change.
    const bf = Math.sqrt(cand[0]! * cand[0]! + cand[1]! * cand[1]! + cand[2]! * cand[2]!);
    const bt = Math.sqrt(cand[3]! * cand[3]! + cand[4]! * cand[4]! + cand[5]! * cand[5]!);
    let why = 0, value = 0, limit = 0;
    const q = this.quat;
    const qx = q[0]!, qy = q[1]!, qz = q[2]!, qw = q[3]!;
    const hx = (1 - 2 * (qy * qy + qz * qz)) * cand[0]! + 2 * (qx * qy - qz * qw) * cand[1]! + 2 * (qx * qz + qy * qw) * cand[2]!;
    const hy = 2 * (qx * qy + qz * qw) * cand[0]! + (1 - 2 * (qx * qx + qz * qz)) * cand[1]! + 2 * (qy * qz - qx * qw) * cand[2]!;
    const bh = Math.sqrt(hx * hx + hy * hy);
    if (bf > this.maxBiasN) { why = TARE_REFUSED_BIAS_FORCE; value = bf; limit = this.maxBiasN; }
    else if (bh > this.maxHorizontalN) { why = TARE_REFUSED_HORIZONTAL; value = bh; limit = this.maxHorizontalN; }
    else if (bt > this.maxBiasNm) { why = TARE_REFUSED_BIAS_TORQUE; value = bt; limit = this.maxBiasNm; }
    else if (this.startTared) {
      const s0 = this.startBias;
      const dx = cand[0]! - s0[0]!, dy = cand[1]! - s0[1]!, dz = cand[2]! - s0[2]!;
      const rx = cand[3]! - s0[3]!, ry = cand[4]! - s0[4]!, rz = cand[5]! - s0[5]!;
      const cf = Math.sqrt(dx * dx + dy * dy + dz * dz);
      const ct = Math.sqrt(rx * rx + ry * ry + rz * rz);
      if (cf > this.maxChangeN) { why = TARE_REFUSED_CHANGE_FORCE; value = cf; limit = this.maxChangeN; }
      else if (ct > this.maxChangeNm) { why = TARE_REFUSED_CHANGE_TORQUE; value = ct; limit = this.maxChangeNm; }
    }
    this.clearWindow();
    if (why !== 0) {
      this.tareOutcome = TARE_REFUSED;
      this.tareRefusedWhy = why;
      this.tareRefusedValue = value;
      this.tareRefusedLimit = limit;
      this.tareRefusals++;
      // Until a first tare is taken the arm cannot run, so the start-up tare keeps trying on
      // later windows; a requested re-tare ends with the refusal (the old bias stays).
      if (this.startTared) this.tarePending = false;
      return false;
    }
    const bias = this.bias;
    bias.set(cand);
    if (!this.startTared) {
      this.startTared = true;
      this.startBias.set(cand);
    }
    for (let a = 0; a < 6; a++) this.biasChange[a] = bias[a]! - this.startBias[a]!;
    this.tared = true;
    this.tarePending = false;
    this.tareOutcome = TARE_TAKEN;
    this.tareRefusedWhy = 0;
    return true;
  }
}
