/**
 * `antiphon merge`: the shard folders of one sweep (sweep.json with `shard`) or one comparison
 * (compare-shard.json) joined into the result of the unsharded run, exactly: candidates (or
 * runs) are put back in index order and the choice, front, ROC, tuned.yaml and report (or the
 * comparison's table) are computed from them as the unsharded run computes them.
 */
import { existsSync } from 'node:fs';
import { join } from 'node:path';
import type { CompareResult } from '../sim/compare.js';
import { InputError, type Problem } from '../util/errors.js';
import { readInputText } from '../util/read-input.js';
import { objectiveByName, type CandidateResult } from './objective.js';
import { buildDocument, SWEEP_FORMAT, type SweepDocument } from './run.js';
import { checkShardSet, COMPARE_SHARD_FILE, COMPARE_SHARD_FORMAT, mergeCompareShards, type CompareShardDocument } from './shard.js';
import { parseSpace } from './space.js';

const LIMIT = 1024 * 1024 * 1024;

function readJson(file: string): unknown {
  const text = readInputText(file, { what: 'shard result', code: 'merge', maxBytes: LIMIT });
  try {
    return JSON.parse(text);
  } catch (err) {
    throw new InputError({ code: 'merge.bad_json', message: `not JSON: ${(err as Error).message}`, where: { file } });
  }
}

/** A merged sweep, or a merged comparison: one result per family (one without a family). */
export type Merged = { kind: 'sweep'; document: SweepDocument } | { kind: 'compare'; results: readonly CompareResult[] };

export function mergeDirs(dirs: readonly string[]): Merged {
  if (dirs.length === 0) throw new InputError({ code: 'merge.no_input', message: 'no shard folder given', hint: 'antiphon merge <dir>... --out <dir>' });
  const problems: Problem[] = [];
  const sweeps: { dir: string; doc: SweepDocument }[] = [];
  const compares: { dir: string; doc: CompareShardDocument }[] = [];
  for (const dir of dirs) {
    const s = join(dir, 'sweep.json');
    const c = join(dir, COMPARE_SHARD_FILE);
    if (existsSync(s)) {
      const doc = readJson(s) as SweepDocument;
      if (doc?.format !== SWEEP_FORMAT) problems.push({ code: 'merge.bad_format', message: `sweep.json has format ${JSON.stringify(doc?.format)}, not ${SWEEP_FORMAT}`, where: { file: s } });
      else sweeps.push({ dir, doc });
    } else if (existsSync(c)) {
      const doc = readJson(c) as CompareShardDocument;
      if (doc?.format !== COMPARE_SHARD_FORMAT) problems.push({ code: 'merge.bad_format', message: `${COMPARE_SHARD_FILE} has format ${JSON.stringify(doc?.format)}, not ${COMPARE_SHARD_FORMAT}`, where: { file: c } });
      else compares.push({ dir, doc });
    } else problems.push({ code: 'merge.not_a_shard', message: `${dir} holds neither sweep.json nor ${COMPARE_SHARD_FILE}`, where: { file: dir }, hint: 'give the --out folders of sweep --shard or compare --shard' });
  }
  if (problems.length) throw new InputError(problems);
  if (sweeps.length && compares.length) throw new InputError({ code: 'merge.mixed', message: 'the folders mix sweep and compare shards', where: { file: compares[0]!.dir }, hint: 'merge one run at a time' });
  if (compares.length) return { kind: 'compare', results: mergeCompareShards(compares) };
  checkShardSet(sweeps.map((s) => ({ dir: s.dir, id: s.doc.sweep_id, shard: s.doc.shard })), 'sweep');
  const first = sweeps[0]!.doc;
  const byIndex = new Map<number, CandidateResult>();
  for (const { doc } of sweeps) for (const c of doc.candidates) byIndex.set(c.index, c);
  if (byIndex.size !== first.candidates_total) {
    const missing = Array.from({ length: first.candidates_total }, (_, i) => i).filter((i) => !byIndex.has(i));
    throw new InputError({ code: 'merge.incomplete', message: `the shards hold ${byIndex.size} of ${first.candidates_total} candidates (missing ${missing.slice(0, 10).join(', ')}${missing.length > 10 ? ', ...' : ''})`, where: { file: sweeps[0]!.dir }, hint: 'an interrupted shard: finish it with --resume first' });
  }
  const candidates = Array.from({ length: first.candidates_total }, (_, i) => byIndex.get(i)!);
  const space = parseSpace(first.space.text, first.space.file);
  const document = buildDocument({ id: first.sweep_id, shard: null, space, baseText: first.base.text, basePath: first.base.file, data: first.data, objective: objectiveByName(first.objective.name), candidates });
  return { kind: 'sweep', document };
}
