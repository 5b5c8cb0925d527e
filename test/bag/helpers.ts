/** Shared by the bag tests: where the rosbag2 fixtures are, temp dirs, generated bags. */
import { McapIndexedReader } from '@mcap/core';
import { FileHandleReadable } from '@mcap/nodejs';
import { cpSync, mkdtempSync, rmSync } from 'node:fs';
import { open } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { afterAll } from 'vitest';
import { createBagWriter, encodeJointState, encodePoseStamped, encodeTwistStamped, encodeWrenchStamped, type BagWriterOptions, type WrittenBag } from '../../src/bag/index.js';

/** The real ROS 2 recordings: see test/support/fixtures.ts (skipped locally when missing, failing under CI). */
export { FIXTURES, fixture, SKIP_FIXTURES } from '../support/fixtures.js';
import { fixture } from '../support/fixtures.js';

const made: string[] = [];
afterAll(() => {
  for (const d of made) rmSync(d, { recursive: true, force: true });
});

/** A fresh temp dir, removed after the file's tests. */
export function tempDir(): string {
  const d = mkdtempSync(join(tmpdir(), 'antiphon-bag-test-'));
  made.push(d);
  return d;
}

/** Copy a fixture bag directory into a temp dir (to modify it); returns the copy's path. */
export function copyFixture(name: string): string {
  const dst = join(tempDir(), name);
  cpSync(fixture(name), dst, { recursive: true });
  return dst;
}

/** A deterministic pseudo-random sequence (mulberry32), for generated messages. */
export function prng(seed: number): () => number {
  let a = seed >>> 0;
  return () => {
    a = (a + 0x6d2b79f5) >>> 0;
    let t = a;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

export const T0 = 1_700_000_000_000_000_000n;

/**
 * A generated dual-arm style bag: /left/wrench (WrenchStamped, 1 kHz), /left/joint_states
 * (JointState, 500 Hz, 7 joints, no effort), /left/tool_pose (PoseStamped, 100 Hz), /left/twist
 * (TwistStamped, 100 Hz) for `seconds` seconds.
 */
export async function writeCellBag(dir: string, seconds: number, opts: BagWriterOptions = {}): Promise<WrittenBag> {
  const w = await createBagWriter(dir, opts);
  const wrench = await w.addTopic({ name: '/left/wrench', type: 'geometry_msgs/msg/WrenchStamped' });
  const joints = await w.addTopic({ name: '/left/joint_states', type: 'sensor_msgs/msg/JointState' });
  const pose = await w.addTopic({ name: '/left/tool_pose', type: 'geometry_msgs/msg/PoseStamped' });
  const twist = await w.addTopic({ name: '/left/twist', type: 'geometry_msgs/msg/TwistStamped' });
  const rnd = prng(7);
  const names = ['j1', 'j2', 'j3', 'j4', 'j5', 'j6', 'j7'];
  const row = new Float64Array(9);
  const buf = new Uint8Array(256);
  for (let k = 0; k < seconds * 1000; k++) {
    const t = T0 + BigInt(k) * 1_000_000n;
    const sec = Number(t / 1_000_000_000n);
    const nsec = Number(t % 1_000_000_000n);
    row[0] = sec;
    row[1] = nsec;
    for (let i = 2; i < 8; i++) row[i] = (rnd() - 0.5) * 40;
    await w.write(wrench, t, encodeWrenchStamped(row, 0, 'left_ft', buf));
    if (k % 2 === 0) {
      const pos = names.map(() => (rnd() - 0.5) * 6);
      const vel = names.map(() => rnd() - 0.5);
      await w.write(joints, t + 100_000n, encodeJointState(sec, nsec, '', names, pos, vel, []));
    }
    if (k % 10 === 0) {
      for (let i = 2; i < 9; i++) row[i] = rnd();
      await w.write(pose, t + 200_000n, encodePoseStamped(row, 0, 'base', buf));
      await w.write(twist, t + 300_000n, encodeTwistStamped(row, 0, 'base', buf));
    }
  }
  return w.close();
}

/** The summary of an MCAP file as the MCAP library's indexed reader sees it (the reference reader). */
export async function mcapSummary(file: string) {
  const fh = await open(file);
  try {
    return await McapIndexedReader.Initialize({ readable: new FileHandleReadable(fh) });
  } finally {
    await fh.close();
  }
}
