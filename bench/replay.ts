/**
 * Replay throughput on a generated 60 s dual-arm bag of our scenario (wrenches 1 kHz, joint
 * states 500 Hz, tool poses 100 Hz, area sensor 10 Hz, per arm; zstd chunks):
 * messages per second and times real time of the full replay (read, decode, both arm steps,
 * nothing written), against a plain iteration of the same file with the MCAP reader's indexed
 * readMessages() and no decoding. Goal: full replay >= 500x real time.
 */
import { open } from 'node:fs/promises';
import { join } from 'node:path';
import { tmpdir } from 'node:os';
import { mkdtempSync, rmSync } from 'node:fs';
import { McapIndexedReader } from '@mcap/core';
import { FileHandleReadable } from '@mcap/nodejs';
import { loadDecompressHandlers } from '@mcap/support';
import { openBag } from '../src/bag/index.js';
import { loadCell } from '../src/params/config.js';
import { replayBag } from '../src/replay/replay.js';
import { writeDemoBag } from '../src/sim/demo-bag.js';
import { round } from './harness.js';

async function plainIteration(file: string): Promise<{ messages: number; seconds: number }> {
  const handle = await open(file, 'r');
  try {
    const decompressHandlers = await loadDecompressHandlers();
    const reader = await McapIndexedReader.Initialize({ readable: new FileHandleReadable(handle), decompressHandlers });
    const t0 = process.hrtime.bigint();
    let n = 0;
    for await (const _ of reader.readMessages()) n++;
    return { messages: n, seconds: Number(process.hrtime.bigint() - t0) / 1e9 };
  } finally {
    await handle.close();
  }
}

export async function benchReplay(durationS = 60): Promise<Record<string, unknown>> {
  const dir = mkdtempSync(join(tmpdir(), 'antiphon-bench-'));
  try {
    const cell = loadCell('config/demo_cell.yaml');
    const bagDir = join(dir, 'bag');
    const { bag } = await writeDemoBag(bagDir, { left: cell.left.config, right: cell.right.config, occupied: [true, true], seed: 1, duration_s: durationS, poseEvery: 10 });
    // Best of several runs of each (the first pays for JIT and WebAssembly start-up).
    const plainRuns = [];
    for (let k = 0; k < 4; k++) plainRuns.push(await plainIteration(bag.file));
    const plain = plainRuns.reduce((a, b) => (b.seconds < a.seconds ? b : a));
    const fullRuns: number[] = [];
    let messages = 0;
    for (let k = 0; k < 5; k++) {
      const b = await openBag(bagDir);
      const t0 = process.hrtime.bigint();
      const rec = await replayBag(b, { arms: ['left', 'right'], configs: { left: cell.left.config, right: cell.right.config } });
      fullRuns.push(Number(process.hrtime.bigint() - t0) / 1e9);
      messages = b.messageCount;
      b.close();
      if (rec.arms[0]!.samples !== durationS * 1000) throw new Error('replay lost samples');
    }
    const full = Math.min(...fullRuns);
    return {
      bag: { duration_s: durationS, messages, storage_bytes: (await (await open(bag.file, 'r')).stat()).size, composition: 'per arm: wrench 1 kHz, joint_states 500 Hz, tool_pose 100 Hz, zone_view 10 Hz; zstd chunks' },
      full_replay: { seconds: round(full), messages_per_s: Math.round(messages / full), times_real_time: round(durationS / full), runs_s: fullRuns.map(round) },
      plain_iteration: { runs_s: plainRuns.map((r) => round(r.seconds)), seconds: round(plain.seconds), messages_per_s: Math.round(plain.messages / plain.seconds), times_real_time: round(durationS / plain.seconds) },
      ratio_full_to_plain: round(plain.seconds / full),
      goal_times_real_time: 500,
      meets_goal: durationS / full >= 500,
    };
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}
