/** Message batches: building, slicing, sorting and the k-way merge in log-time order. */
import type { MessageBatch } from './types.js';

export function makeBatch(
  bytes: Uint8Array,
  topicIndex: Uint32Array,
  logTimeNs: BigInt64Array,
  offset: Uint32Array,
  length: Uint32Array,
  count = topicIndex.length,
): MessageBatch {
  return {
    count,
    topicIndex,
    logTimeNs,
    offset,
    length,
    bytes,
    view: new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength),
  };
}

/** Entries [from, to) of a batch, sharing its buffers. */
export function sliceBatch(b: MessageBatch, from: number, to: number): MessageBatch {
  if (from === 0 && to === b.count) return b;
  return {
    count: to - from,
    topicIndex: b.topicIndex.subarray(from, to),
    logTimeNs: b.logTimeNs.subarray(from, to),
    offset: b.offset.subarray(from, to),
    length: b.length.subarray(from, to),
    bytes: b.bytes,
    view: b.view,
  };
}

/** True when log times never decrease. */
export function isSorted(t: BigInt64Array, count: number): boolean {
  for (let i = 1; i < count; i++) if (t[i]! < t[i - 1]!) return false;
  return true;
}

/** A stable sort by log time (rare: recorders write in arrival order). */
export function sortBatch(b: MessageBatch): MessageBatch {
  if (isSorted(b.logTimeNs, b.count)) return b;
  const idx = Array.from({ length: b.count }, (_, i) => i);
  const t = b.logTimeNs;
  idx.sort((i, j) => (t[i]! < t[j]! ? -1 : t[i]! > t[j]! ? 1 : i - j));
  const ti = new Uint32Array(b.count);
  const lt = new BigInt64Array(b.count);
  const of = new Uint32Array(b.count);
  const ln = new Uint32Array(b.count);
  for (let k = 0; k < idx.length; k++) {
    const i = idx[k]!;
    ti[k] = b.topicIndex[i]!;
    lt[k] = t[i]!;
    of[k] = b.offset[i]!;
    ln[k] = b.length[i]!;
  }
  return { count: b.count, topicIndex: ti, logTimeNs: lt, offset: of, length: ln, bytes: b.bytes, view: b.view };
}

/**
 * A source of sorted batches that does not start before `firstNs` (a lower bound is enough).
 * `open` is called only when the merge needs it, so chunks load lazily.
 */
export interface BatchSource {
  readonly firstNs: bigint;
  /** Tie-break rank for equal log times (lower first); default: position in the list. */
  readonly order?: number;
  open(): Iterator<MessageBatch>;
}

interface Cursor {
  order: number;
  it: Iterator<MessageBatch>;
  batch: MessageBatch;
  i: number;
}

function advance(c: Cursor): boolean {
  for (;;) {
    const r = c.it.next();
    if (r.done) return false;
    if (r.value.count > 0) {
      c.batch = r.value;
      c.i = 0;
      return true;
    }
  }
}

/** First index k in [from, count) with t[k] > limit (inclusive) or t[k] >= limit (exclusive). */
function runEnd(t: BigInt64Array, from: number, count: number, limit: bigint, inclusive: boolean): number {
  // Fast check: the whole rest fits (the common case of non-overlapping chunks and files).
  const last = t[count - 1]!;
  if (inclusive ? last <= limit : last < limit) return count;
  let lo = from;
  let hi = count;
  while (lo < hi) {
    const mid = (lo + hi) >>> 1;
    const v = t[mid]!;
    if (inclusive ? v <= limit : v < limit) lo = mid + 1;
    else hi = mid;
  }
  return lo;
}

/**
 * Merge sources into one stream in log-time order. Ties go to the lower `order` (default: the
 * source listed first). Each yielded batch is a run of consecutive entries of one source batch.
 */
export function* mergeSources(given: readonly BatchSource[]): Generator<MessageBatch> {
  const sources = given
    .map((s, i) => ({ firstNs: s.firstNs, order: s.order ?? i, open: () => s.open() }))
    .sort((a, b) => (a.firstNs < b.firstNs ? -1 : a.firstNs > b.firstNs ? 1 : a.order - b.order));
  if (sources.length === 1) {
    const it = sources[0]!.open();
    for (let r = it.next(); !r.done; r = it.next()) if (r.value.count > 0) yield r.value;
    return;
  }
  const active: Cursor[] = [];
  let next = 0;
  const minActive = (): bigint => {
    let m = active[0]!.batch.logTimeNs[active[0]!.i]!;
    for (let k = 1; k < active.length; k++) {
      const v = active[k]!.batch.logTimeNs[active[k]!.i]!;
      if (v < m) m = v;
    }
    return m;
  };
  for (;;) {
    while (next < sources.length && (active.length === 0 || sources[next]!.firstNs <= minActive())) {
      const src = sources[next]!;
      const c: Cursor = { order: src.order, it: src.open(), batch: undefined as unknown as MessageBatch, i: 0 };
      next++;
      if (advance(c)) active.push(c);
    }
    if (active.length === 0) return;
    // The cursor with the earliest (time, order).
    let best = 0;
    for (let k = 1; k < active.length; k++) {
      const a = active[k]!;
      const b = active[best]!;
      const ta = a.batch.logTimeNs[a.i]!;
      const tb = b.batch.logTimeNs[b.i]!;
      if (ta < tb || (ta === tb && a.order < b.order)) best = k;
    }
    const c = active[best]!;
    let limit: bigint | undefined;
    let inclusive = true;
    for (let k = 0; k < active.length; k++) {
      if (k === best) continue;
      const o = active[k]!;
      const v = o.batch.logTimeNs[o.i]!;
      const inc = c.order < o.order;
      if (limit === undefined || v < limit || (v === limit && !inc)) {
        limit = v;
        inclusive = inc;
      }
    }
    if (next < sources.length) {
      // Sources are sorted by (firstNs, order): `next` has the lowest order among those that
      // could tie at its first time.
      const v = sources[next]!.firstNs;
      const inc = c.order < sources[next]!.order;
      if (limit === undefined || v < limit || (v === limit && !inc)) {
        limit = v;
        inclusive = inc;
      }
    }
    const end = limit === undefined ? c.batch.count : runEnd(c.batch.logTimeNs, c.i, c.batch.count, limit, inclusive);
    const stop = Math.max(end, c.i + 1); // the earliest entry always goes out
    yield sliceBatch(c.batch, c.i, stop);
    c.i = stop;
    if (c.i >= c.batch.count && !advance(c)) active.splice(best, 1);
  }
}
