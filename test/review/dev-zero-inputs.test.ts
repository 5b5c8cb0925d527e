/**
 * Review (issue 9): `check-config /dev/zero`, `classify --csv /dev/zero`, `analyze --model
 * /dev/zero` and `replay --expect /dev/zero` read until 16 GB and aborted. Now only regular
 * files are read: each is refused at once with exit 2 naming the file. The child runs under a
 * 1 GB heap and a 30 s bound, so an unbounded read fails the test (source of the device's
 * behaviour: Linux /dev/zero yields zero bytes without end, common practice).
 */
import { describe, expect, it } from 'vitest';
import { antiphon } from './child.js';

const CASES: [string, string[], RegExp][] = [
  ['check-config', ['check-config', '/dev/zero'], /parameters file is a character device, not a regular file/],
  ['classify --csv', ['classify', '--csv', '/dev/zero'], /CSV is a character device, not a regular file/],
  ['classify --params', ['classify', '--csv', 'examples/beam-carry-wrench.csv', '--params', '/dev/zero'], /parameters file is a character device/],
  ['analyze --model', ['analyze', '--model', '/dev/zero'], /model file is a character device, not a regular file/],
  ['replay --expect', ['replay', 'no-such-bag', '--expect', '/dev/zero'], /expectations file is a character device, not a regular file/],
  ['replay --params', ['replay', 'no-such-bag', '--params', '/dev/zero'], /parameters file is a character device/],
];

describe('review: /dev/zero as an input is refused at once', () => {
  for (const [name, args, message] of CASES) {
    it(`${name} /dev/zero: exit 2, no unbounded read`, () => {
      const r = antiphon(args);
      expect(r.signal).toBeNull();
      expect(r.status).toBe(2);
      expect(r.stderr).toMatch(message);
      expect(r.stderr).toContain('/dev/zero');
      expect(r.stderr).not.toMatch(/internal error|heap/);
    });
  }

  it('a folder as --model and a FIFO-like path are refused the same way', () => {
    const r = antiphon(['analyze', '--model', 'examples']);
    expect(r.status).toBe(2);
    expect(r.stderr).toMatch(/model file is a folder, not a regular file/);
  });
});
