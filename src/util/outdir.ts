/**
 * Output folders written whole or not at all: everything goes to a temporary sibling folder,
 * which is renamed into place only when complete. A failed run leaves no folder that looks
 * finished.
 */
import { existsSync, mkdirSync, readdirSync, renameSync, rmSync, writeFileSync } from 'node:fs';
import { basename, dirname, join, resolve } from 'node:path';
import { InputError } from './errors.js';

export async function withOutputDir<T>(out: string, overwrite: boolean, body: (tmp: string) => Promise<T>): Promise<T> {
  const final = resolve(out);
  if (existsSync(final) && readdirSync(final).length > 0 && !overwrite) {
    throw new InputError({ code: 'out.exists', message: `output folder ${out} exists and is not empty`, where: { file: out }, hint: 'choose another --out or pass --overwrite' });
  }
  mkdirSync(dirname(final), { recursive: true });
  const tmp = join(dirname(final), `.${basename(final)}.partial-${process.pid}`);
  rmSync(tmp, { recursive: true, force: true });
  mkdirSync(tmp, { recursive: true });
  try {
    const result = await body(tmp);
    if (existsSync(final)) rmSync(final, { recursive: true, force: true });
    renameSync(tmp, final);
    return result;
  } catch (err) {
    rmSync(tmp, { recursive: true, force: true });
    throw err;
  }
}

/** Write a file via a temporary name in the same folder, renamed when complete. */
export function writeFileAtomic(path: string, data: string | Uint8Array): void {
  const tmp = join(dirname(path), `.${basename(path)}.partial-${process.pid}`);
  writeFileSync(tmp, data);
  renameSync(tmp, path);
}
