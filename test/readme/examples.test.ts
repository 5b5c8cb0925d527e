/**
 * Every example in the README runs as written, twice (the second run must work too: examples
 * write into their own folders with --overwrite), and prints something. A line in a ```sh block
 * (or a ```console block, after its `$ ` prompt) that starts with `npx antiphon` is an example; `# exit N` at its end declares another exit
 * code than 0, and `# needs ROS 2` marks one that only a ROS 2 host can run (skipped here, run by
 * the opt-in host suite). `npx antiphon` is run as `node dist/src/cli/main.js` (what npx runs).
 * Our own behaviour, no outside reference.
 */
import { spawnSync } from 'node:child_process';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { ROOT } from '../support/files.js';

export interface Example {
  readonly line: number;
  readonly command: string;
  readonly exit: number;
  readonly needsRos: boolean;
}

/** The examples of a README text, in order. */
export function readmeExamples(text: string): Example[] {
  const out: Example[] = [];
  let inSh = false;
  // A line ending in a backslash goes on on the next one, as in a shell.
  const lines = text.split('\n');
  lines.forEach((raw, k) => {
    // In a console block the command follows the prompt.
    let line = raw.trim().replace(/^\$\s+(?=npx antiphon)/, '');
    if (line.endsWith('\\') && inSh && line.startsWith('npx antiphon')) {
      for (let j = k + 1; j < lines.length && line.endsWith('\\'); j++) {
        line = line.slice(0, -1).trimEnd() + ' ' + lines[j]!.trim();
        lines[j] = '';
      }
    }
    if (line.startsWith('```')) {
      inSh = !inSh && /^```(sh|bash|shell|console)\b/.test(line);
      return;
    }
    if (!inSh || !line.startsWith('npx antiphon')) return;
    const exit = /#\s*exit\s+(\d+)\s*$/.exec(line);
    const needsRos = /#\s*needs ROS 2/.test(line);
    const command = line.replace(/\s+#.*$/, '');
    out.push({ line: k + 1, command, exit: exit ? Number(exit[1]) : 0, needsRos });
  });
  return out;
}

const MAIN = join(ROOT, 'dist/src/cli/main.js');
const examples = readmeExamples(readFileSync(join(ROOT, 'README.md'), 'utf8'));

describe('README examples', () => {
  it('finds the examples', () => {
    expect(examples.length).toBeGreaterThan(5);
  });

  for (const pass of [1, 2]) {
    for (const ex of examples.filter((e) => !e.needsRos)) {
      it(`pass ${pass}, README.md:${ex.line}: ${ex.command}`, () => {
        const cmd = ex.command.replace(/^npx antiphon\b/, `node ${JSON.stringify(MAIN)}`).replace(/\|\s*npx antiphon\b/g, `| node ${JSON.stringify(MAIN)}`);
        const r = spawnSync('bash', ['-c', cmd], { cwd: ROOT, encoding: 'utf8', env: { ...process.env, FORCE_COLOR: '0' }, maxBuffer: 256 * 1024 * 1024 });
        expect(r.status, `${ex.command}\nstdout:\n${r.stdout.slice(-2000)}\nstderr:\n${r.stderr.slice(-2000)}`).toBe(ex.exit);
        // Something a user can act on: at least one line of output.
        expect((r.stdout + r.stderr).trim().length).toBeGreaterThan(0);
      }, 900_000);
    }
  }
});
