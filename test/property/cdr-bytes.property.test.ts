/**
 * CDR decoding of random bytes throws nothing but the project's typed error (InputError), on
 * both paths: the fixed-layout decoders of the hot types and the generic decoder driven by
 * definitions (the shipped ones, as a bag without schemas resolves them). Random bytes are
 * mostly a valid CDR header (00 01 or 00 00) followed by noise, so the decoders get past the
 * header; the layouts are those of ROS 2's own message files (common_interfaces). Fixed seed,
 * bounded runs.
 */
import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { bagDecoders, decodePoseStamped, decodeTwistStamped, decodeWrenchStamped, JointStateDecoder, readFrameId } from '../../src/bag/index.js';
import { InputError } from '../../src/util/errors.js';

const bytes = fc.oneof(
  fc.uint8Array({ maxLength: 200 }),
  fc.tuple(fc.constantFrom([0, 1, 0, 0], [0, 0, 0, 0]), fc.uint8Array({ maxLength: 300 })).map(([h, b]) => Uint8Array.from([...h, ...b])),
  // A header whose frame_id length is small, so the fields after it are reached.
  fc.tuple(fc.uint8Array({ minLength: 8, maxLength: 8 }), fc.integer({ min: 0, max: 40 }), fc.uint8Array({ maxLength: 300 })).map(([stamp, len, b]) => Uint8Array.from([0, 1, 0, 0, ...stamp, len, 0, 0, 0, ...b])),
);

/** Runs fn; passes when it returns or throws an InputError, fails on anything else. */
function typedOnly(fn: () => unknown): 'ok' | 'input_error' {
  try {
    fn();
    return 'ok';
  } catch (err) {
    if (err instanceof InputError) return 'input_error';
    throw new Error(`threw ${(err as Error)?.constructor?.name}: ${(err as Error)?.message}`);
  }
}

const TYPES = ['geometry_msgs/msg/WrenchStamped', 'geometry_msgs/msg/PoseStamped', 'sensor_msgs/msg/JointState', 'std_msgs/msg/String', 'geometry_msgs/msg/TwistStamped', 'rcl_interfaces/msg/Log', 'diagnostic_msgs/msg/DiagnosticArray'];

describe('CDR decoding of random bytes (properties)', () => {
  it('the fixed-layout decoders return or throw InputError', () => {
    const out = new Float64Array(2 + 3 * 16);
    const js = new JointStateDecoder(16);
    const seen = new Set<string>();
    fc.assert(
      fc.property(bytes, fc.integer({ min: 0, max: 8 }), (b, pad) => {
        const buf = new Uint8Array(pad + b.length);
        buf.set(b, pad);
        const view = new DataView(buf.buffer);
        for (const dec of [decodeWrenchStamped, decodeTwistStamped, decodePoseStamped]) seen.add(typedOnly(() => dec(view, pad, b.length, out, 0)));
        seen.add(typedOnly(() => js.decode(view, pad, b.length, out, 0)));
        seen.add(typedOnly(() => readFrameId(view, pad, b.length)));
      }),
      { seed: 1541, numRuns: 1500 },
    );
    // Not vacuous: both outcomes occurred.
    expect([...seen].sort()).toEqual(['input_error', 'ok']);
  });

  it('the generic decoder returns or throws InputError', () => {
    const dec = bagDecoders({ definitions: () => new Map() } as never, { amentPrefixPath: '' });
    const present = TYPES.filter((t) => dec.has(t));
    expect(present.length).toBeGreaterThanOrEqual(4);
    const seen = new Set<string>();
    fc.assert(
      fc.property(bytes, fc.constantFrom(...present), (b, type) => {
        seen.add(typedOnly(() => dec.decode(type, b, { topic: '/fuzz' })));
      }),
      { seed: 1542, numRuns: 1500 },
    );
    expect(seen.has('input_error')).toBe(true);
  });
});
