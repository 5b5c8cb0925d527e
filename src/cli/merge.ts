/** `antiphon merge <dir>... --out <dir>`: join the shard outputs of one sweep or one comparison. */
import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import type { Command } from 'commander';
import { mergeDirs } from '../sweep/merge.js';
import { writeSweepFiles } from '../sweep/output.js';
import { withOutputDir } from '../util/outdir.js';
import { compareJson } from './compare.js';
import { printJson, printText, runCommand } from './common.js';

export function register(program: Command): void {
  program
    .command('merge')
    .description('Join the shard outputs of a sweep (sweep.json) or a compare (compare-shard.json) into the result of the unsharded run.')
    .argument('<dirs...>', 'the --out folders of the shards (every shard of one run)')
    .requiredOption('--out <dir>', 'output folder: sweep.json, tuned.yaml, report.html (a sweep) or compare.json (a compare)')
    .option('--overwrite', 'replace an output folder antiphon wrote before')
    .option('--json', 'print a summary as JSON')
    .action(async (dirs: string[], opts: { out: string; overwrite?: boolean; json?: boolean }) =>
      runCommand(!!opts.json, async () => {
        const merged = mergeDirs(dirs);
        const files = await withOutputDir(opts.out, { overwrite: !!opts.overwrite, inputs: dirs }, async (tmp) => {
          if (merged.kind === 'sweep') return writeSweepFiles(tmp, merged.document);
          // Exactly what `compare --json` prints for the unsharded run (with several families: one entry each).
          const r = merged.results;
          writeFileSync(join(tmp, 'compare.json'), JSON.stringify(r.length === 1 ? compareJson(r[0]!) : { families: r.map(compareJson) }, null, 2) + '\n');
          return ['compare.json'];
        });
        if (opts.json) printJson({ kind: merged.kind, shards: dirs.length, out: opts.out, files });
        else printText(`merged ${dirs.length} ${merged.kind} shards into ${files.map((f) => join(opts.out, f)).join(', ')}`);
        return 0;
      }),
    );
}
