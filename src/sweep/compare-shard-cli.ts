/** `compare --shard i/n --out <dir>`: the command side of a comparison shard (called from src/cli/compare.ts). */
import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import type { CompareInput } from '../sim/compare.js';
import type { Family } from '../sim/family.js';
import { InputError } from '../util/errors.js';
import { checkOutputDir, withOutputDir } from '../util/outdir.js';
import { printJson, printText } from '../cli/common.js';
import { COMPARE_SHARD_FILE, parseShard, runCompareShard } from './shard.js';

export async function compareShardCommand(input: CompareInput, opts: { shard?: string; out?: string; overwrite?: boolean; params?: string; family?: string[]; json?: boolean }, families: readonly Family[] = []): Promise<number> {
  if (opts.shard === undefined || opts.out === undefined) throw new InputError({ code: 'cli.shard_needs_out', message: '--shard and --out go together: a shard writes compare-shard.json into its folder', where: { option: opts.shard === undefined ? '--shard' : '--out' }, hint: 'compare --shard i/n --out <dir>; then antiphon merge <dirs...> --out <dir>' });
  const shard = parseShard(opts.shard)!;
  const inputs = [opts.params, ...(opts.family ?? [])];
  checkOutputDir(opts.out, { overwrite: !!opts.overwrite, inputs });
  const doc = await runCompareShard(input, shard, families);
  await withOutputDir(opts.out, { overwrite: !!opts.overwrite, inputs }, async (tmp) => writeFileSync(join(tmp, COMPARE_SHARD_FILE), JSON.stringify(doc, null, 2) + '\n'));
  if (opts.json) printJson({ compare_id: doc.compare_id, shard: doc.shard, world_range: doc.world_range, runs: doc.runs.length, out: opts.out });
  else printText(`compare shard ${shard.index}/${shard.count}: worlds ${doc.world_range[0]}..${doc.world_range[1] - 1}${doc.families ? ` of ${doc.families.map((f) => f.name).join(', ')}` : ''}, ${doc.runs.length} runs in ${join(opts.out, COMPARE_SHARD_FILE)}; join the shards with antiphon merge <dirs...> --out <dir>`);
  return 0;
}
