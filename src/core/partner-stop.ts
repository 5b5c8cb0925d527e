/**
 * Partner-stop detector: tells, from this arm's own correction force, that the partner has
 * stopped (held by its watchdog, its pipeline dead) while this arm keeps moving — without any
 * message between the arms.
 *
 * Coupling model (the one the belief uses): f = c (v_partner − v_own), so the partner's
 * velocity is estimated as v̂_p = v_own + f / c. A stopped partner has v̂_p ≈ 0 in every
 * direction; a partner that cooperates moves with this arm, a listener that slows down while
 * unsure still moves (at the confidence floor's fraction of the speed or more), and a partner
 * stepping sideways moves across. The statistic is the speed ratio
 *   ρ = |Σ v̂_p| / Σ |v_own|      over the windows of the last `window_s`,
 * and the verdict is `stopped` once the ring is full of windows in which this arm moved faster
 * than `min_speed_m_s` and ρ ≤ `speed_ratio`. A slower window, or one the arm step marks
 * unusable (impact, hold, untared, non-finite), empties the ring.
 *
 * Per belief window (the arm step's 100 Hz means of the cell-frame correction force and of its
 * own commanded velocity). Detection time after the partner stops: at most `window_s` plus the
 * correction band's lag, once this arm moves. Nothing is allocated after construction.
 */
export interface PartnerStopParams {
  readonly enabled: boolean;
  readonly speed_ratio: number;
  readonly window_s: number;
  readonly min_speed_m_s: number;
}

export class PartnerStopDetector {
  /** The partner looks stopped (latched by the watchdog; this only reports). */
  stopped = false;
  /** Partner-to-own speed ratio over the current ring (NaN while it is not full). */
  ratio = Number.NaN;
  private readonly px: Float64Array;
  private readonly py: Float64Array;
  private readonly sp: Float64Array;
  private readonly n: number;
  private head = 0;
  private count = 0;
  private sumPx = 0;
  private sumPy = 0;
  private sumSp = 0;
  private readonly invC: number;

  constructor(
    private readonly p: PartnerStopParams,
    damping_n_s_m: number,
    windowsPerSecond: number,
  ) {
    this.n = Math.max(2, Math.round(p.window_s * windowsPerSecond));
    this.px = new Float64Array(this.n);
    this.py = new Float64Array(this.n);
    this.sp = new Float64Array(this.n);
    this.invC = 1 / damping_n_s_m;
  }

  /** Windows in the ring. */
  get length(): number {
    return this.n;
  }

  reset(): void {
    this.head = 0;
    this.count = 0;
    this.sumPx = 0;
    this.sumPy = 0;
    this.sumSp = 0;
    this.ratio = Number.NaN;
    this.stopped = false;
  }

  /** One window: mean correction force (fx, fy) and own velocity (vx, vy), cell frame. */
  update(fx: number, fy: number, vx: number, vy: number): boolean {
    if (!this.p.enabled) return false;
    const speed = Math.sqrt(vx * vx + vy * vy);
    if (!(speed >= this.p.min_speed_m_s) || !Number.isFinite(fx) || !Number.isFinite(fy)) {
      this.reset();
      return false;
    }
    const h = this.head;
    if (this.count === this.n) {
      this.sumPx -= this.px[h]!;
      this.sumPy -= this.py[h]!;
      this.sumSp -= this.sp[h]!;
    } else {
      this.count++;
    }
    const pvx = vx + fx * this.invC;
    const pvy = vy + fy * this.invC;
    this.px[h] = pvx;
    this.py[h] = pvy;
    this.sp[h] = speed;
    this.sumPx += pvx;
    this.sumPy += pvy;
    this.sumSp += speed;
    this.head = h + 1 === this.n ? 0 : h + 1;
    if (this.count < this.n) {
      this.ratio = Number.NaN;
      this.stopped = false;
      return false;
    }
    this.ratio = Math.sqrt(this.sumPx * this.sumPx + this.sumPy * this.sumPy) / this.sumSp;
    this.stopped = this.ratio <= this.p.speed_ratio;
    return this.stopped;
  }

  snapshot(): Float64Array {
    const s = new Float64Array(7 + 3 * this.n);
    s[0] = this.head; s[1] = this.count; s[2] = this.sumPx; s[3] = this.sumPy; s[4] = this.sumSp; s[5] = this.ratio; s[6] = this.stopped ? 1 : 0;
    s.set(this.px, 7);
    s.set(this.py, 7 + this.n);
    s.set(this.sp, 7 + 2 * this.n);
    return s;
  }

  restore(s: Float64Array): void {
    this.head = s[0]!; this.count = s[1]!; this.sumPx = s[2]!; this.sumPy = s[3]!; this.sumSp = s[4]!; this.ratio = s[5]!; this.stopped = s[6] === 1;
    this.px.set(s.subarray(7, 7 + this.n));
    this.py.set(s.subarray(7 + this.n, 7 + 2 * this.n));
    this.sp.set(s.subarray(7 + 2 * this.n, 7 + 3 * this.n));
  }
}
