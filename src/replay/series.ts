/** Growable typed columns for full-rate records (amortised doubling; no per-sample objects). */
export class Column {
  private buf: Float64Array;
  length = 0;
  constructor(capacity = 4096) {
    this.buf = new Float64Array(capacity);
  }
  push(v: number): void {
    if (this.length === this.buf.length) {
      const next = new Float64Array(this.buf.length * 2);
      next.set(this.buf);
      this.buf = next;
    }
    this.buf[this.length++] = v;
  }
  /** The values written so far (a view). */
  view(): Float64Array {
    return this.buf.subarray(0, this.length);
  }
}
