/** The k-way merge behind `messages()` / `batches()`, and MCAP files whose chunks overlap in time. */
import { McapIndexedReader, McapWriter } from '@mcap/core';
import { FileHandleReadable } from '@mcap/nodejs';
import fc from 'fast-check';
import { open } from 'node:fs/promises';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { makeBatch, mergeSources, type BatchSource } from '../../src/bag/batch.js';
import { openBag } from '../../src/bag/index.js';
import { tempDir } from './helpers.js';

function source(times: bigint[][], tag: number, order?: number): BatchSource & { tag: number } {
  const first = times.flat().reduce((m, t) => (t < m ? t : m), times.flat()[0] ?? 0n);
  return {
    tag,
    firstNs: first,
    ...(order !== undefined ? { order } : {}),
    open: () =>
      times
        .map((ts, b) => {
          const n = ts.length;
          const idx = Uint32Array.from(ts, (_, i) => tag * 1000 + b * 100 + i);
          return makeBatch(new Uint8Array(0), idx, BigInt64Array.from(ts), new Uint32Array(n), new Uint32Array(n));
        })
        [Symbol.iterator](),
  };
}

describe('merge of sorted sources', () => {
  it('equals a stable sort by (time, source order) for any sorted inputs', () => {
    // Source: common practice (stable k-way merge).
    const run = fc.array(fc.integer({ min: 0, max: 30 }), { maxLength: 12 }).map((a) => a.sort((x, y) => x - y).map(BigInt));
    const src = fc.array(run, { minLength: 1, maxLength: 3 }).map((batches) => {
      // Batches of one source continue each other: shift each to start at or after the previous end.
      let base = 0n;
      return batches.map((b) => {
        const shifted = b.map((t) => t + base);
        if (shifted.length) base = shifted[shifted.length - 1]!;
        return shifted;
      });
    });
    fc.assert(
      fc.property(fc.array(src, { minLength: 1, maxLength: 5 }), fc.boolean(), (all, reversedOrder) => {
        const sources = all.map((times, k) => source(times, k, reversedOrder ? all.length - k : undefined));
        const rank = (k: number) => (reversedOrder ? all.length - k : k);
        const want = all
          .flatMap((times, k) => times.flatMap((ts, b) => ts.map((t, i) => ({ t, k, id: k * 1000 + b * 100 + i }))))
          .sort((x, y) => (x.t < y.t ? -1 : x.t > y.t ? 1 : rank(x.k) - rank(y.k) || x.id - y.id))
          .map((x) => [x.t, x.id]);
        const got: [bigint, number][] = [];
        for (const b of mergeSources(sources)) for (let i = 0; i < b.count; i++) got.push([b.logTimeNs[i]!, b.topicIndex[i]!]);
        expect(got).toEqual(want);
      }),
      { numRuns: 400 },
    );
  });

  it('an MCAP file with overlapping, unsorted chunks reads in log-time order', async () => {
    const path = join(tempDir(), 'overlap.mcap');
    const fh = await open(path, 'w');
    let pos = 0n;
    const w = new McapWriter({ writable: { write: async (b: Uint8Array) => { await fh.write(b); pos += BigInt(b.length); }, position: () => pos }, chunkSize: 200 });
    await w.start({ profile: 'ros2', library: 'test' });
    const ch = await w.registerChannel({ topic: '/t', schemaId: 0, messageEncoding: 'cdr', metadata: new Map() });
    // Times jump back and forth, so chunks overlap and hold unsorted messages.
    const times = Array.from({ length: 120 }, (_, i) => BigInt(((i * 37) % 101) * 10 + (i % 3)));
    for (const [i, t] of times.entries()) await w.addMessage({ channelId: ch, sequence: i, logTime: t, publishTime: t, data: new Uint8Array([0, 1, 0, 0, i]) });
    await w.end();
    await fh.close();
    const bag = await openBag(path);
    const got = [...bag.messages()].map((m) => [m.logTimeNs, m.data[4]]);
    bag.close();
    // Source: @mcap/core McapIndexedReader (reference reader, log-time order).
    const rh = await open(path);
    const ref = await McapIndexedReader.Initialize({ readable: new FileHandleReadable(rh) });
    const want: [bigint, number][] = [];
    for await (const m of ref.readMessages()) want.push([m.logTime, m.data[4]!]);
    await rh.close();
    expect(got.map((g) => g[0])).toEqual(want.map((x) => x[0]));
    expect([...got].sort((a, b) => Number(a[1]) - Number(b[1]))).toEqual([...want].sort((a, b) => a[1] - b[1]));
  });
});
