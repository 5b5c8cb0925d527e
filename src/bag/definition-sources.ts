/**
 * `--definitions <bag | folder>` (repeatable): each is another bag (a bag directory, `.mcap` or
 * `.db3`), whose carried definitions are taken, or a folder of definition files: a tree of ROS
 * packages (`<pkg>/msg/*.msg`, `<pkg>/srv/*.srv`, `<pkg>/action/*.action`), one package folder,
 * or an install prefix (`share/<pkg>/…`).
 */
import { existsSync, readdirSync, statSync } from 'node:fs';
import { extname, join, resolve } from 'node:path';
import { InputError } from '../util/errors.js';
import type { LibraryOptions } from './library.js';
import { openBag } from './open.js';

const BAG_EXT = new Set(['.mcap', '.db3', '.zstd']);

function isBagDir(dir: string): boolean {
  if (existsSync(join(dir, 'metadata.yaml'))) return true;
  try {
    return readdirSync(dir).some((n) => BAG_EXT.has(extname(n).toLowerCase()));
  } catch {
    return false;
  }
}

/** Load the `--definitions` sources, in the order given. Throws InputError naming the option. */
export async function loadDefinitionSources(paths: readonly string[] | undefined, option = '--definitions'): Promise<NonNullable<LibraryOptions['extra']>> {
  const out: NonNullable<LibraryOptions['extra']>[number][] = [];
  for (const p of paths ?? []) {
    const abs = resolve(p);
    let st;
    try {
      st = statSync(abs);
    } catch {
      throw new InputError({
        code: 'cli.definitions_not_found',
        message: `${option} ${p}: no such file or folder`,
        where: { option, file: p },
        hint: 'pass a bag (folder, .mcap or .db3) or a folder of ROS packages (<pkg>/msg/*.msg) or an install prefix (share/<pkg>/msg)',
      });
    }
    if (st.isDirectory() && !isBagDir(abs)) {
      out.push(abs);
      continue;
    }
    const bag = await openBag(abs);
    try {
      out.push({ label: p, definitions: new Map(bag.definitions()) });
    } finally {
      bag.close();
    }
  }
  return out;
}
