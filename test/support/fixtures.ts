/**
 * Where the real ROS 2 recordings are (rosbag2 test resources, see the fixtures' README.md):
 * $ANTIPHON_FIXTURES when it is set (and only there: a setting that points nowhere means the
 * fixtures are missing, never "look elsewhere"), else ../shared/fixtures/rosbag2 beside the
 * repository.
 *
 * The rule for outside material: without the fixtures, tests that need them are skipped on a
 * developer machine with a message, and FAIL under CI=true (a green CI run must have read them).
 */
import { existsSync } from 'node:fs';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';

const SIBLING = fileURLToPath(new URL('../../../shared/fixtures/rosbag2', import.meta.url));
const ENV = process.env['ANTIPHON_FIXTURES'];
/** Where the fixtures were looked for, in words (for messages). */
export const FIXTURES_LOOKED_AT = ENV !== undefined && ENV !== '' ? `$ANTIPHON_FIXTURES = ${ENV}` : `${SIBLING} (set $ANTIPHON_FIXTURES to use another folder)`;

/** The fixtures folder, or undefined when it is missing (a folder holding mcap-talker/). */
export const FIXTURES: string | undefined = (() => {
  const dir = ENV !== undefined && ENV !== '' ? ENV : SIBLING;
  return existsSync(join(dir, 'mcap-talker')) ? dir : undefined;
})();

/** Under CI every fixture test must run (and fail when the fixtures are missing). */
export const IN_CI = Boolean(process.env['CI']) && process.env['CI'] !== 'false' && process.env['CI'] !== '0';

/** Skip fixture tests: only off CI, and only when the fixtures are missing. */
export const SKIP_FIXTURES = FIXTURES === undefined && !IN_CI;

export const FIXTURES_MISSING = `rosbag2 fixtures missing: no mcap-talker/ at ${FIXTURES_LOOKED_AT}`;

let warned = false;
if (SKIP_FIXTURES && !warned) {
  warned = true;
  console.warn(`${FIXTURES_MISSING}; the tests that read them are skipped here (they fail under CI=true)`);
}

/** Path of one fixture bag; throws (failing the test) when the fixtures are missing. */
export function fixture(name: string): string {
  if (FIXTURES === undefined) throw new Error(`${FIXTURES_MISSING}. CI must provide them (.ci/run), or set $ANTIPHON_FIXTURES.`);
  return join(FIXTURES, name);
}
