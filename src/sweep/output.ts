/** The files of a sweep's output folder: sweep.json always; tuned.yaml and report.html for a whole sweep (not a shard). */
import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { renderSweepReport } from './report.js';
import type { SweepDocument } from './run.js';
import { tunedYaml } from './tuned.js';

export function sweepJsonText(doc: SweepDocument): string {
  return JSON.stringify(doc, null, 2) + '\n';
}

/** Write into `dir` (the temporary folder of withOutputDir); returns the file names. */
export function writeSweepFiles(dir: string, doc: SweepDocument): string[] {
  // Everything is computed before the first file is written.
  const files: [string, string][] = [['sweep.json', sweepJsonText(doc)]];
  if (doc.shard === null) {
    files.push(['tuned.yaml', tunedYaml(doc).text]);
    files.push(['report.html', renderSweepReport(doc)]);
  }
  for (const [name, text] of files) writeFileSync(join(dir, name), text);
  return files.map(([n]) => n);
}
