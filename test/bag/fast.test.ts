/**
 * The fixed-layout decoders and encoders against the generic CDR reader and writer
 * (@foxglove/rosmsg2-serialization driven by the definitions), on generated messages and on a
 * generated bag. The ROS 2 fixtures hold no WrenchStamped / TwistStamped / PoseStamped /
 * JointState messages, so there is no fixture message of these types to compare.
 */
import { MessageReader, MessageWriter } from '@foxglove/rosmsg2-serialization';
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import {
  bagDecoders,
  builtinDefinition,
  decodePoseStamped,
  decodeTwistStamped,
  decodeWrenchStamped,
  encodeJointState,
  encodePoseStamped,
  encodeTwistStamped,
  encodeWrenchStamped,
  JointStateDecoder,
  openBag,
  parseDefinition,
  readFrameId,
  readTopicSeries,
} from '../../src/bag/index.js';
import { InputError } from '../../src/util/errors.js';
import { SKIP_FIXTURES, fixture, tempDir, writeCellBag } from './helpers.js';

function generic(type: string): { reader: MessageReader; writer: MessageWriter } {
  const defs = parseDefinition(type, builtinDefinition(type)!);
  return { reader: new MessageReader(defs), writer: new MessageWriter(defs) };
}

const W = generic('geometry_msgs/msg/WrenchStamped');
const T = generic('geometry_msgs/msg/TwistStamped');
const P = generic('geometry_msgs/msg/PoseStamped');
const J = generic('sensor_msgs/msg/JointState');

const dv = (b: Uint8Array): DataView => new DataView(b.buffer, b.byteOffset, b.byteLength);
const double = fc.double({ noNaN: false });
const sec = fc.integer({ min: -(2 ** 31), max: 2 ** 31 - 1 });
const nanosec = fc.integer({ min: 0, max: 999_999_999 });
// ASCII for byte-for-byte comparisons: @foxglove/cdr's writer counts a string's length in UTF-16
// units, not UTF-8 bytes, so its output is wrong for other text (checked separately below).
const frame = fc.string({ unit: 'grapheme-ascii', maxLength: 24 });
const unicode = fc.string({ unit: 'grapheme', maxLength: 24 });
const same = (a: number, b: number): boolean => Object.is(a, b) || (Number.isNaN(a) && Number.isNaN(b));

describe('fixed-layout decoders and encoders (checked against the generic CDR reader/writer)', () => {
  it('WrenchStamped and TwistStamped: same values and the same bytes as the generic path', () => {
    fc.assert(
      fc.property(sec, nanosec, frame, fc.array(double, { minLength: 6, maxLength: 6 }), (s, ns, f, v) => {
        for (const [codec, enc, dec, a, b] of [
          [W, encodeWrenchStamped, decodeWrenchStamped, 'force', 'torque'],
          [T, encodeTwistStamped, decodeTwistStamped, 'linear', 'angular'],
        ] as const) {
          const msg = {
            header: { stamp: { sec: s, nanosec: ns }, frame_id: f },
            [codec === W ? 'wrench' : 'twist']: { [a]: { x: v[0], y: v[1], z: v[2] }, [b]: { x: v[3], y: v[4], z: v[5] } },
          };
          // Source: OMG CDR / XCDR1 encapsulation, as written by the generic CDR writer.
          const ref = codec.writer.writeMessage(msg);
          const ours = enc([s, ns, ...v], 0, f);
          expect(Buffer.from(ours).equals(Buffer.from(ref))).toBe(true);
          const out = new Float64Array(10).fill(-1);
          dec(dv(ref), 0, ref.length, out, 1);
          const back = codec.reader.readMessage(ref) as typeof msg;
          expect(out[1]).toBe(back.header.stamp.sec);
          expect(out[2]).toBe(back.header.stamp.nanosec);
          for (let i = 0; i < 6; i++) expect(same(out[3 + i]!, v[i]!)).toBe(true);
          expect(out[0]).toBe(-1);
          expect(out[9]).toBe(-1);
          expect(readFrameId(dv(ref), 0, ref.length)).toBe(f);
        }
      }),
      { numRuns: 300 },
    );
  });

  it('PoseStamped: same values and bytes as the generic path', () => {
    fc.assert(
      fc.property(sec, nanosec, frame, fc.array(double, { minLength: 7, maxLength: 7 }), (s, ns, f, v) => {
        const msg = {
          header: { stamp: { sec: s, nanosec: ns }, frame_id: f },
          pose: { position: { x: v[0], y: v[1], z: v[2] }, orientation: { x: v[3], y: v[4], z: v[5], w: v[6] } },
        };
        const ref = P.writer.writeMessage(msg);
        expect(Buffer.from(encodePoseStamped([s, ns, ...v], 0, f)).equals(Buffer.from(ref))).toBe(true);
        const out = new Float64Array(9);
        decodePoseStamped(dv(ref), 0, ref.length, out, 0);
        const back = P.reader.readMessage(ref) as typeof msg;
        expect([out[0], out[1]]).toEqual([back.header.stamp.sec, back.header.stamp.nanosec]);
        for (let i = 0; i < 7; i++) expect(same(out[2 + i]!, v[i]!)).toBe(true);
      }),
      { numRuns: 300 },
    );
  });

  it('JointState: same values and bytes as the generic path, empty arrays as NaN', () => {
    const jointArb = fc.integer({ min: 0, max: 9 }).chain((n) =>
      fc.record({
        names: fc.array(fc.string({ unit: 'grapheme-ascii', maxLength: 12 }), { minLength: n, maxLength: n }),
        position: fc.oneof(fc.constant([] as number[]), fc.array(double, { minLength: n, maxLength: n })),
        velocity: fc.oneof(fc.constant([] as number[]), fc.array(double, { minLength: n, maxLength: n })),
        effort: fc.oneof(fc.constant([] as number[]), fc.array(double, { minLength: n, maxLength: n })),
      }),
    );
    const dec = new JointStateDecoder(9);
    fc.assert(
      fc.property(sec, nanosec, frame, jointArb, (s, ns, f, j) => {
        const msg = {
          header: { stamp: { sec: s, nanosec: ns }, frame_id: f },
          name: j.names,
          position: Float64Array.from(j.position),
          velocity: Float64Array.from(j.velocity),
          effort: Float64Array.from(j.effort),
        };
        const ref = J.writer.writeMessage(msg);
        const ours = encodeJointState(s, ns, f, j.names, j.position, j.velocity, j.effort);
        expect(Buffer.from(ours).equals(Buffer.from(ref))).toBe(true);
        // Decode at an odd offset inside a larger buffer, as in a chunk.
        const big = new Uint8Array(ref.length + 13);
        big.set(ref, 5);
        const out = new Float64Array(2 + 27);
        const n = dec.decode(dv(big), 5, ref.length, out, 0);
        const back = J.reader.readMessage(ref) as typeof msg;
        expect(n).toBe(back.name.length);
        expect(dec.names).toEqual(back.name);
        expect([out[0], out[1]]).toEqual([back.header.stamp.sec, back.header.stamp.nanosec]);
        ['position', 'velocity', 'effort'].forEach((k, a) => {
          const arr = back[k as 'position'];
          for (let i = 0; i < 9; i++) expect(same(out[2 + a * 9 + i]!, i < arr.length ? arr[i]! : NaN)).toBe(true);
        });
      }),
      { numRuns: 300 },
    );
  });

  it('non-ASCII frame ids and joint names: the generic reader reads our bytes back', () => {
    fc.assert(
      fc.property(unicode, fc.array(unicode, { maxLength: 4 }), (f, names) => {
        // Source: OMG CDR: a string is a uint32 octet count (with the NUL), the UTF-8 octets, a NUL.
        const w = encodeWrenchStamped([1, 2, 3, 4, 5, 6, 7, 8], 0, f);
        expect((W.reader.readMessage(w) as { header: { frame_id: string } }).header.frame_id).toBe(f);
        expect(readFrameId(dv(w), 0, w.length)).toBe(f);
        const j = encodeJointState(1, 2, f, names, names.map((_, i) => i), [], []);
        const back = J.reader.readMessage(j) as { name: string[]; position: Float64Array };
        expect(back.name).toEqual(names);
        expect(Array.from(back.position)).toEqual(names.map((_, i) => i));
        const d = new JointStateDecoder(4);
        d.decode(dv(j), 0, j.length, new Float64Array(d.stride), 0);
        expect(d.names).toEqual(names);
      }),
      { numRuns: 200 },
    );
  });

  it('JointState names are decoded again only when they change', () => {
    // Source: common practice (decode strings only when their bytes change).
    const d = new JointStateDecoder(2);
    const out = new Float64Array(d.stride);
    const a = encodeJointState(1, 2, '', ['a', 'b'], [1, 2], [], []);
    const b = encodeJointState(1, 3, '', ['a', 'c'], [1, 2], [], []);
    d.decode(dv(a), 0, a.length, out, 0);
    expect([d.namesChanged, d.names]).toEqual([true, ['a', 'b']]);
    d.decode(dv(a), 0, a.length, out, 0);
    expect(d.namesChanged).toBe(false);
    d.decode(dv(b), 0, b.length, out, 0);
    expect([d.namesChanged, d.names]).toEqual([true, ['a', 'c']]);
  });

  it('big-endian CDR (00 00) decodes too', () => {
    // Source: OMG CDR encapsulation identifiers (CDR_BE = 0x0000). Build by byte-swapping fields.
    const le = encodeWrenchStamped([7, 8, 1.5, -2, 3, 4, 5, 6], 0, 'ab');
    const be = new Uint8Array(le);
    const v = dv(be);
    const l = dv(le);
    v.setUint16(0, 0, false);
    v.setInt32(4, l.getInt32(4, true), false);
    v.setUint32(8, l.getUint32(8, true), false);
    v.setUint32(12, l.getUint32(12, true), false);
    for (let k = 0; k < 6; k++) v.setFloat64(20 + 8 * k, l.getFloat64(20 + 8 * k, true), false);
    const out = new Float64Array(8);
    decodeWrenchStamped(v, 0, be.length, out, 0);
    expect(Array.from(out)).toEqual([7, 8, 1.5, -2, 3, 4, 5, 6]);
  });

  it('cut or foreign bytes are an InputError, never a wrong row', () => {
    // Source: OMG CDR / XCDR1 encapsulation (00 00 / 00 01 are plain CDR; 00 03 is PL_CDR_LE).
    const m = encodeWrenchStamped([1, 2, 3, 4, 5, 6, 7, 8], 0, 'tool');
    const out = new Float64Array(8);
    for (let cut = 0; cut < m.length; cut++) {
      expect(() => decodeWrenchStamped(dv(m), 0, cut, out, 0)).toThrow(InputError);
    }
    const pl = new Uint8Array(m);
    pl[1] = 3; // PL_CDR_LE: not plain CDR
    expect(() => decodeWrenchStamped(dv(pl), 0, pl.length, out, 0)).toThrow(/not plain CDR/);
    const js = encodeJointState(0, 0, '', ['a', 'b', 'c'], [1, 2, 3], [], []);
    expect(() => new JointStateDecoder(2).decode(dv(js), 0, js.length, new Float64Array(8), 0)).toThrow(/maxJoints/);
  });

  it('a generated cell bag reads into typed arrays equal to the generic decoder', async () => {
    const dir = tempDir() + '/cell';
    await writeCellBag(dir, 0.2, { chunkSize: 4096 });
    const bag = await openBag(dir);
    try {
      // Source: the generic decoder (@foxglove/rosmsg2-serialization with the shipped definitions).
      const dec = bagDecoders(bag);
      const wrench = readTopicSeries(bag, '/left/wrench');
      const joints = readTopicSeries(bag, '/left/joint_states');
      const pose = readTopicSeries(bag, '/left/tool_pose');
      const twist = readTopicSeries(bag, '/left/twist');
      expect([wrench.count, joints.count, pose.count, twist.count]).toEqual([200, 100, 20, 20]);
      expect(joints.stride).toBe(2 + 3 * 7);
      expect(joints.names).toEqual(['j1', 'j2', 'j3', 'j4', 'j5', 'j6', 'j7']);
      const rows: Record<string, number[][]> = { '/left/wrench': [], '/left/joint_states': [], '/left/tool_pose': [], '/left/twist': [] };
      for (const m of bag.messages()) {
        const v = dec.decode(m.type, m.data) as Record<string, any>;
        const st = [v['header'].stamp.sec, v['header'].stamp.nanosec];
        if (m.topic === '/left/wrench') rows[m.topic]!.push([...st, ...['force', 'torque'].flatMap((k) => [v['wrench'][k].x, v['wrench'][k].y, v['wrench'][k].z])]);
        if (m.topic === '/left/twist') rows[m.topic]!.push([...st, ...['linear', 'angular'].flatMap((k) => [v['twist'][k].x, v['twist'][k].y, v['twist'][k].z])]);
        if (m.topic === '/left/tool_pose') {
          const p = v['pose'];
          rows[m.topic]!.push([...st, p.position.x, p.position.y, p.position.z, p.orientation.x, p.orientation.y, p.orientation.z, p.orientation.w]);
        }
        if (m.topic === '/left/joint_states') rows[m.topic]!.push([...st, ...v['position'], ...v['velocity'], ...Array(7).fill(NaN)]);
      }
      for (const s of [wrench, joints, pose, twist]) {
        const got = Array.from({ length: s.count }, (_, i) => Array.from(s.values.subarray(i * s.stride, (i + 1) * s.stride)));
        expect(got).toEqual(rows[s.topic]);
      }
      expect(() => readTopicSeries(bag, '/nope')).toThrow(InputError);
    } finally {
      bag.close();
    }
  });

  it.skipIf(SKIP_FIXTURES)('fixtures hold no messages of the fast types (so none to compare)', async () => {
    // Source: rosbag2 test resources README (the recorded types).
    for (const name of ['mcap-talker', 'sqlite3-talker', 'mcap-cdr_test', 'sqlite3-cdr_test']) {
      const bag = await openBag(fixture(name));
      const types = bag.topics().map((t) => t.type);
      bag.close();
      expect(types.filter((t) => /WrenchStamped|TwistStamped|PoseStamped|JointState/.test(t))).toEqual([]);
    }
  });
});
