/**
 * The demo cell's parameters file shipped inside the package (`config/demo_cell.yaml`, listed
 * in package.json `files`): the built-in default of `simulate` and `compare` (and the
 * parameters of the shipped demo family). Found next to the sources (src/sim) or the build
 * (dist/src/sim); never from the working directory.
 */
import { existsSync } from 'node:fs';
import { fileURLToPath } from 'node:url';

/** Absolute path of the shipped demo cell's parameters file. */
export function demoCellPath(): string {
  const candidates = [new URL('../../config/demo_cell.yaml', import.meta.url), new URL('../../../config/demo_cell.yaml', import.meta.url)].map((u) => fileURLToPath(u));
  for (const c of candidates) if (existsSync(c)) return c;
  throw new Error(`the package's demo cell parameters are missing (looked for ${candidates.join(', ')})`);
}

/** The one line a command prints when it falls back to the demo cell. */
export function demoCellNote(command: string): string {
  return `${command}: no --params given, using the demo cell's parameters shipped in the package (${demoCellPath()})`;
}
