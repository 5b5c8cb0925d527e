/**
 * MCAP files WITHOUT a Statistics record: the message counts per topic, the total and the time
 * range come from reading the chunks (src/bag/mcap-reader.ts). The MCAP specification makes
 * every summary record optional, so a writer may leave Statistics out (source: MCAP
 * specification; @mcap/core's McapWriter `useStatistics: false` writes such files). The oracle
 * is what this test wrote: known counts on several topics over many chunks, so a reader that
 * drops or doubles one message per chunk fails.
 */
import { open } from 'node:fs/promises';
import { join } from 'node:path';
import { McapWriter } from '@mcap/core';
import { describe, expect, it } from 'vitest';
import { openBag } from '../../src/bag/index.js';
import { mcapSummary, tempDir } from './helpers.js';

/** std_msgs/msg/String in CDR (little-endian encapsulation 00 01 00 00, then a uint32 length with the NUL, then the bytes). */
function cdrString(s: string): Uint8Array {
  const text = new TextEncoder().encode(s);
  const out = new Uint8Array(4 + 4 + text.length + 1);
  out.set([0, 1, 0, 0], 0);
  new DataView(out.buffer).setUint32(4, text.length + 1, true);
  out.set(text, 8);
  return out;
}

const TOPICS = [
  { topic: '/left/chatter', n: 97 },
  { topic: '/right/chatter', n: 41 },
  { topic: '/status', n: 13 },
];
const TOTAL = TOPICS.reduce((a, t) => a + t.n, 0);
const T0 = 1_700_000_000_000_000_000n;

type Layout = { name: string; summary: boolean; chunkIndex: boolean; messageIndex: boolean; compression: '' | 'zstd' };
const LAYOUTS: Layout[] = [
  { name: 'summary with chunk and message indexes, no Statistics', summary: true, chunkIndex: true, messageIndex: true, compression: '' },
  { name: 'summary with chunk indexes only, no Statistics', summary: true, chunkIndex: true, messageIndex: false, compression: '' },
  { name: 'summary with chunk indexes, zstd chunks, no Statistics', summary: true, chunkIndex: true, messageIndex: true, compression: 'zstd' },
  { name: 'summary without chunk indexes, no Statistics', summary: true, chunkIndex: false, messageIndex: true, compression: '' },
  { name: 'no summary at all (chunks only)', summary: false, chunkIndex: false, messageIndex: false, compression: '' },
];

/** Writes the messages interleaved (round robin while each topic has some left), 1 ms apart. */
async function writeFile(path: string, l: Layout): Promise<{ first: bigint; last: bigint }> {
  const fh = await open(path, 'w');
  let pos = 0n;
  const zstd = l.compression === 'zstd' ? (await import('@foxglove/wasm-zstd')) : undefined;
  if (zstd) await zstd.isLoaded;
  const w = new McapWriter({
    writable: { write: async (b: Uint8Array) => { await fh.write(b); pos += BigInt(b.length); }, position: () => pos },
    useChunks: true,
    chunkSize: 300,
    useStatistics: false,
    useSummaryOffsets: l.summary,
    useChunkIndex: l.chunkIndex,
    useMessageIndex: l.messageIndex,
    useAttachmentIndex: l.summary,
    useMetadataIndex: l.summary,
    repeatSchemas: l.summary,
    repeatChannels: l.summary,
    ...(zstd ? { compressChunk: (data: Uint8Array) => ({ compression: 'zstd', compressedData: zstd.compress(data, 3) }) } : {}),
  });
  await w.start({ profile: 'ros2', library: 'antiphon test' });
  const schemaId = await w.registerSchema({ name: 'std_msgs/msg/String', encoding: 'ros2msg', data: new TextEncoder().encode('string data\n') });
  const ids: number[] = [];
  for (const t of TOPICS) ids.push(await w.registerChannel({ topic: t.topic, schemaId, messageEncoding: 'cdr', metadata: new Map() }));
  const left = TOPICS.map((t) => t.n);
  let k = 0n;
  let first = -1n;
  let last = -1n;
  while (left.some((n) => n > 0)) {
    for (let c = 0; c < TOPICS.length; c++) {
      if (left[c]! === 0) continue;
      left[c]!--;
      const t = T0 + k * 1_000_000n;
      if (first < 0n) first = t;
      last = t;
      await w.addMessage({ channelId: ids[c]!, sequence: Number(k), logTime: t, publishTime: t, data: cdrString(`msg ${k} on ${TOPICS[c]!.topic}`) });
      k++;
    }
  }
  await w.end();
  await fh.close();
  return { first, last };
}

describe('MCAP message counts without a Statistics record', () => {
  it.each(LAYOUTS)('$name: counts per topic and in total, time range, over many chunks', async (l) => {
    const path = join(tempDir(), `no-stats-${l.name.replace(/\W+/g, '-')}.mcap`);
    const { first, last } = await writeFile(path, l);
    if (l.summary && l.chunkIndex) {
      // The file is what this case claims: chunk indexes but no Statistics (read with @mcap/core).
      const s = await mcapSummary(path);
      expect(s.statistics).toBeUndefined();
      expect(s.chunkIndexes.length).toBeGreaterThan(10);
    }
    const bag = await openBag(path);
    expect(bag.topics().map((t) => [t.name, t.count])).toEqual([...TOPICS].sort((a, b) => (a.topic < b.topic ? -1 : 1)).map((t) => [t.topic, t.n]));
    expect(bag.messageCount).toBe(TOTAL);
    expect(bag.startNs).toBe(first);
    expect(bag.endNs).toBe(last);
    // Reading agrees with the counts.
    const seen = new Map<string, number>();
    for (const m of bag.messages()) seen.set(m.topic, (seen.get(m.topic) ?? 0) + 1);
    expect(Object.fromEntries(seen)).toEqual(Object.fromEntries(TOPICS.map((t) => [t.topic, t.n])));
    expect(bag.warnings.filter((w) => w.code !== 'bag.no_metadata')).toEqual([]);
    bag.close();
  });
});
