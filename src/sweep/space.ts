/**
 * The sweep space file (YAML, a format of our own) and the candidates it names.
 *
 *   version: 1
 *   seed: 7                       # seed of the random samples (optional, default 1)
 *   max_candidates: 2000          # refuse a larger product (optional, default 10000)
 *   parameters:
 *     wrench_filter.impact.force_n:
 *       grid: [8.0, 10.0, 12.0, 15.0, 20.0]
 *     roles.period_s:
 *       range: { from: 0.25, to: 1.0, step: 0.25 }
 *     belief.noise_force_n:
 *       random: { from: 0.5, to: 3.0, count: 3 }
 *
 * Keys are the dotted keys of the parameter schema (`antiphon check-config --list`). Each key
 * takes exactly one of `grid` (listed values, any type the key has), `range` (numbers from
 * `from` to `to` inclusive in steps of `step`) or `random` (`count` uniform draws in
 * [from, to]; whole numbers for integer keys; from the file's seed and the key's position).
 * The candidates are the product of the keys' values in file order, the last key changing
 * fastest; candidate i is the same on every machine.
 *
 * Every value goes through the schema before anything runs: its type, range and hard ceiling,
 * and then each candidate's whole configuration with the base file through the cross-key
 * checks (`cellFromFile`). Every problem names the space file, line and column.
 */
import { closest } from 'fastest-levenshtein';
import { isMap, isScalar, isSeq, type Node } from 'yaml';
import { cellFromFile, type ArmConfig } from '../params/config.js';
import { describeAllowed, type ParamsFile, type SectionName } from '../params/load.js';
import { SCHEMA, SPEC_BY_KEY } from '../params/schema.js';
import type { ParamSpec, ParamValue } from '../params/spec.js';
import { InputError, type Place, type Problem } from '../util/errors.js';
import { readInputText } from '../util/read-input.js';
import { Rng } from '../util/rng.js';
import { parseYamlInput } from '../util/yaml.js';

export const SPACE_LIMIT_BYTES = 4 * 1024 * 1024;
export const DEFAULT_MAX_CANDIDATES = 10_000;
/** No space may name more than this many candidates, whatever `max_candidates` says. */
export const HARD_MAX_CANDIDATES = 1_000_000;
/** Most values one key may take. */
const MAX_VALUES_PER_KEY = 100_000;

export interface SpaceAxis {
  readonly key: string;
  readonly spec: ParamSpec;
  readonly how: 'grid' | 'range' | 'random';
  readonly values: readonly ParamValue[];
  /** Where the key is written (line, column of the key). */
  readonly line: number;
  readonly column: number;
}

export interface Space {
  readonly path: string;
  readonly text: string;
  readonly seed: number;
  readonly axes: readonly SpaceAxis[];
  readonly count: number;
}

export interface Candidate {
  readonly index: number;
  /** Dotted key to value, in the space's key order. */
  readonly values: Readonly<Record<string, ParamValue>>;
}

/** Keys a sweep cannot vary: arrays, per-zone keys, and the live node's own keys (no effect offline). */
function sweepable(spec: ParamSpec): string | undefined {
  if (spec.key.includes('*')) return 'a per-zone key (the zones are the task, not a tuning choice)';
  if (spec.type === 'double_array' || spec.type === 'string_array') return 'a list';
  if (spec.key.startsWith('ros.') || spec.key === 'use_sim_time') return 'a key of the live node only (replay and the simulated cell ignore it)';
  return undefined;
}

export function loadSpace(path: string): Space {
  const text = readInputText(path, { what: 'sweep space file', code: 'space', maxBytes: SPACE_LIMIT_BYTES, option: '--space' });
  return parseSpace(text, path);
}

export function parseSpace(text: string, path: string): Space {
  const { doc, at } = parseYamlInput(text, path, 'space.yaml_syntax', { intAsBigInt: true });
  const problems: Problem[] = [];
  const root = doc.contents;
  const FORMAT = 'version: 1, seed (optional), max_candidates (optional), parameters: a map of dotted keys, each with grid, range or random';
  if (!isMap(root)) throw new InputError({ code: 'space.not_a_map', message: 'a sweep space file is a map', where: at(root ?? doc), hint: FORMAT });
  let seed = 1;
  let maxCandidates = DEFAULT_MAX_CANDIDATES;
  let params: Node | null = null;
  let sawVersion = false;
  for (const pair of root.items) {
    const k = isScalar(pair.key) ? String(pair.key.value) : '';
    const v = pair.value as Node | null;
    if (k === 'version') {
      sawVersion = true;
      if (!isScalar(v) || v.value !== 1n) problems.push({ code: 'space.bad_version', message: 'version must be 1', where: at(v ?? pair.key), hint: 'version: 1' });
    } else if (k === 'seed') {
      const n = isScalar(v) ? v.value : undefined;
      if (typeof n !== 'bigint' || n < 0n || n > 4294967295n) problems.push({ code: 'space.bad_seed', message: 'seed must be a whole number from 0 to 4294967295', where: at(v ?? pair.key) });
      else seed = Number(n);
    } else if (k === 'max_candidates') {
      const n = isScalar(v) ? v.value : undefined;
      if (typeof n !== 'bigint' || n < 1n || n > BigInt(HARD_MAX_CANDIDATES)) problems.push({ code: 'space.bad_max', message: `max_candidates must be a whole number from 1 to ${HARD_MAX_CANDIDATES}`, where: at(v ?? pair.key) });
      else maxCandidates = Number(n);
    } else if (k === 'parameters') {
      params = v;
    } else {
      problems.push({ code: 'space.unknown_field', message: `unknown field '${k}'`, where: at(pair.key), hint: `did you mean ${closest(k, ['version', 'seed', 'max_candidates', 'parameters'])}? ${FORMAT}` });
    }
  }
  if (!sawVersion) problems.push({ code: 'space.no_version', message: 'the space file needs version: 1', where: at(root), hint: FORMAT });
  if (!isMap(params) || params.items.length === 0) {
    problems.push({ code: 'space.no_parameters', message: 'parameters must be a map of at least one dotted key', where: at(params ?? root), hint: 'e.g. parameters:\n  wrench_filter.impact.force_n: { grid: [10.0, 15.0, 20.0] }' });
    throw new InputError(problems);
  }
  const axes: SpaceAxis[] = [];
  const schemaKeys = SCHEMA.filter((s) => sweepable(s) === undefined).map((s) => s.key);
  params.items.forEach((pair, axisIndex) => {
    const key = isScalar(pair.key) ? String(pair.key.value) : '';
    const keyAt = at(pair.key);
    const spec = SPEC_BY_KEY.get(key);
    if (!spec) {
      problems.push({ code: 'space.unknown_key', message: `unknown parameter ${key}`, where: { ...keyAt, key }, hint: `did you mean ${closest(key, schemaKeys)}? 'antiphon check-config --list' lists every parameter` });
      return;
    }
    const why = sweepable(spec);
    if (why) {
      problems.push({ code: 'space.not_sweepable', message: `${key} cannot be swept: it is ${why}`, where: { ...keyAt, key }, hint: 'sweep numbers, booleans or choices of the filter, watchdog, roles, belief, coupling, policy or task' });
      return;
    }
    const body = pair.value as Node | null;
    const values = axisValues(spec, body, key, keyAt, at, seed, axisIndex, problems);
    if (values) axes.push({ key, spec, how: values.how, values: values.values, line: keyAt.line ?? 0, column: keyAt.column ?? 0 });
  });
  if (problems.length) throw new InputError(problems);
  let count = 1;
  for (const a of axes) count *= a.values.length;
  if (count > maxCandidates) {
    throw new InputError({ code: 'space.too_many', message: `the space names ${count} candidates (${axes.map((a) => `${a.key}: ${a.values.length}`).join(' x ')}), more than max_candidates ${maxCandidates}`, where: at(params), hint: `raise max_candidates (at most ${HARD_MAX_CANDIDATES}) or use fewer values` });
  }
  return { path, text, seed, axes, count };
}

type At = (node: unknown) => Place;

function axisValues(spec: ParamSpec, body: Node | null, key: string, keyAt: Place, at: At, seed: number, axisIndex: number, problems: Problem[]): { how: SpaceAxis['how']; values: ParamValue[] } | undefined {
  const allowed = describeAllowed(spec);
  const fail = (code: string, message: string, node: unknown, hint = allowed): undefined => {
    problems.push({ code, message, where: { ...at(node ?? body), key }, hint });
    return undefined;
  };
  if (!isMap(body) || body.items.length !== 1 || !isScalar(body.items[0]!.key)) {
    return fail('space.bad_axis', `${key} must hold exactly one of grid, range or random`, body ?? keyAt, 'grid: [a, b, ...], range: { from, to, step } or random: { from, to, count }');
  }
  const how = String((body.items[0]!.key as { value: unknown }).value);
  const v = body.items[0]!.value as Node | null;
  const before = problems.length;
  const checked = (raw: unknown, node: unknown, label: string): ParamValue | undefined => checkOne(spec, raw, node, `${key} ${label}`, at, problems);
  if (how === 'grid') {
    if (!isSeq(v)) return fail('space.bad_grid', `${key}.grid must be a list of values`, v ?? body.items[0]!.key);
    if (v.items.length === 0) return fail('space.empty_grid', `${key}.grid is empty: a key with no values names no candidate`, v);
    if (v.items.length > MAX_VALUES_PER_KEY) return fail('space.too_many', `${key}.grid has ${v.items.length} values`, v, `at most ${MAX_VALUES_PER_KEY}`);
    const out: ParamValue[] = [];
    v.items.forEach((item, k) => {
      const x = checked(isScalar(item) ? item.value : item, item, `grid[${k}]`);
      if (x !== undefined) out.push(x);
    });
    const seen = new Set(out.map((x) => JSON.stringify(x)));
    if (seen.size !== out.length) fail('space.duplicate_value', `${key}.grid lists a value twice`, v, 'each value once');
    return problems.length > before ? undefined : { how, values: out };
  }
  if (how !== 'range' && how !== 'random') return fail('space.bad_axis', `${key}: unknown way '${how}'`, body.items[0]!.key, `did you mean ${closest(how, ['grid', 'range', 'random'])}? grid, range or random`);
  if (spec.type !== 'double' && spec.type !== 'integer') return fail('space.not_numeric', `${key} is a ${spec.type}: only a grid can list its values`, body.items[0]!.key, `grid: [...] (${allowed})`);
  if (!isMap(v)) return fail('space.bad_axis', `${key}.${how} must be a map`, v ?? body.items[0]!.key, how === 'range' ? '{ from, to, step }' : '{ from, to, count }');
  const fields = new Map<string, Node>();
  const wanted = how === 'range' ? ['from', 'to', 'step'] : ['from', 'to', 'count'];
  for (const p of v.items) {
    const f = isScalar(p.key) ? String(p.key.value) : '';
    if (!wanted.includes(f)) fail('space.unknown_field', `${key}.${how}: unknown field '${f}'`, p.key, `did you mean ${closest(f, wanted)}? ${wanted.join(', ')}`);
    else fields.set(f, p.value as Node);
  }
  for (const f of wanted) if (!fields.has(f)) fail('space.missing_field', `${key}.${how} needs ${f}`, v, wanted.join(', '));
  if (problems.length > before) return undefined;
  const from = checked(scalarOf(fields.get('from')!), fields.get('from'), `${how}.from`) as number | undefined;
  const to = checked(scalarOf(fields.get('to')!), fields.get('to'), `${how}.to`) as number | undefined;
  if (from === undefined || to === undefined) return undefined;
  if (to < from) return fail('space.bad_range', `${key}.${how}: to (${to}) is below from (${from})`, fields.get('to'), 'from <= to');
  if (how === 'range') {
    const stepNode = fields.get('step')!;
    const step = Number(scalarOf(stepNode));
    if (!(step > 0) || !Number.isFinite(step)) return fail('space.bad_step', `${key}.range.step must be a positive number`, stepNode, 'step > 0');
    if (spec.type === 'integer' && !Number.isInteger(step)) return fail('space.bad_step', `${key}.range.step must be a whole number for an integer key`, stepNode);
    const n = Math.floor((to - from) / step + 1e-9) + 1;
    if (n > MAX_VALUES_PER_KEY) return fail('space.too_many', `${key}.range names ${n} values`, stepNode, `at most ${MAX_VALUES_PER_KEY}`);
    // Values from + k step, rounded to 12 significant digits (0.1 + 0.2 is 0.3 here).
    const values = Array.from({ length: n }, (_, k) => Number((from + k * step).toPrecision(12)));
    return { how, values };
  }
  const countNode = fields.get('count')!;
  const count = scalarOf(countNode);
  if (typeof count !== 'bigint' || count < 1n || count > BigInt(MAX_VALUES_PER_KEY)) return fail('space.bad_count', `${key}.random.count must be a whole number from 1 to ${MAX_VALUES_PER_KEY}`, countNode);
  const rng = new Rng((seed ^ Math.imul(axisIndex + 1, 0x85ebca6b)) >>> 0);
  const values: number[] = [];
  for (let k = 0; k < Number(count); k++) {
    values.push(spec.type === 'integer' ? from + rng.int(to - from + 1) : Number(rng.range(from, to).toPrecision(12)));
  }
  return { how, values };
}

function scalarOf(node: Node | undefined): unknown {
  return isScalar(node) ? node.value : node;
}

/** One value against the key's schema entry: type, choices, range and hard ceiling. */
function checkOne(spec: ParamSpec, raw: unknown, node: unknown, label: string, at: At, problems: Problem[]): ParamValue | undefined {
  const where = { ...at(node), key: spec.key };
  const bad = (code: string, message: string, hint = describeAllowed(spec)): undefined => {
    problems.push({ code, message, where, hint });
    return undefined;
  };
  switch (spec.type) {
    case 'double':
    case 'integer': {
      if (typeof raw !== 'bigint' && typeof raw !== 'number') return bad('space.wrong_type', `${label} must be a number, got ${describe(raw)}`);
      const n = Number(raw);
      if (!Number.isFinite(n)) return bad('space.out_of_range', `${label} must be finite`);
      if (spec.type === 'integer' && !Number.isInteger(n)) return bad('space.wrong_type', `${label} must be a whole number, got ${n}`);
      if (spec.ceiling !== undefined && n > spec.ceiling) return bad('space.above_ceiling', `${label} = ${n} is above the hard safety ceiling ${spec.ceiling} ${spec.unit} of ${spec.key}`, 'a ceiling changes only with the code and the cell\'s risk assessment');
      if ((spec.min !== undefined && n < spec.min) || (spec.max !== undefined && n > spec.max)) return bad('space.out_of_range', `${label} = ${n} is out of range`);
      return n;
    }
    case 'bool':
      if (typeof raw !== 'boolean') return bad('space.wrong_type', `${label} must be true or false, got ${describe(raw)}`);
      return raw;
    case 'string':
      if (typeof raw !== 'string') return bad('space.wrong_type', `${label} must be a string, got ${describe(raw)}`);
      if (spec.choices && !spec.choices.includes(raw)) return bad('space.bad_choice', `${label} = '${raw}' is not allowed`);
      return raw;
    default:
      return bad('space.not_sweepable', `${label}: lists cannot be swept`);
  }
}

function describe(raw: unknown): string {
  if (raw === null || raw === undefined) return 'nothing';
  if (typeof raw === 'string') return `the string '${raw}'`;
  if (typeof raw === 'object') return isSeq(raw) ? 'a list' : isMap(raw) ? 'a map' : 'a structure';
  return String(raw);
}

/** Candidate i of the product (last key fastest). */
export function candidateAt(space: Space, index: number): Candidate {
  const values: Record<string, ParamValue> = {};
  let rest = index;
  const picks = new Array<number>(space.axes.length);
  for (let a = space.axes.length - 1; a >= 0; a--) {
    const n = space.axes[a]!.values.length;
    picks[a] = rest % n;
    rest = Math.floor(rest / n);
  }
  space.axes.forEach((a, k) => (values[a.key] = a.values[picks[k]!]!));
  return { index, values };
}

export function allCandidates(space: Space): Candidate[] {
  return Array.from({ length: space.count }, (_, i) => candidateAt(space, i));
}

/**
 * The base file with a candidate's values: each key set in `/**` and in every arm section that
 * sets it itself (so an arm's own value cannot hide the candidate's). Sources name the space
 * file, so a cross-key problem points at the line that caused it.
 */
export function overlay(base: ParamsFile, space: Space, c: Candidate): ParamsFile {
  type Entry = ParamsFile['sections'] extends ReadonlyMap<SectionName, ReadonlyMap<string, infer E>> ? E : never;
  const sections = new Map<SectionName, Map<string, Entry>>();
  for (const [name, entries] of base.sections) sections.set(name, new Map(entries));
  if (!sections.has('/**')) sections.set('/**', new Map());
  for (const axis of space.axes) {
    const value = c.values[axis.key]!;
    for (const [name, entries] of sections) {
      if (name !== '/**' && !entries.has(axis.key)) continue;
      entries.set(axis.key, { key: axis.key, value, source: { kind: 'file', file: space.path, section: name, line: axis.line, column: axis.column } });
    }
  }
  return { path: base.path, sections };
}

export interface CandidateConfig {
  readonly index: number;
  readonly left: ArmConfig;
  readonly right: ArmConfig;
}

/**
 * Every candidate's configuration for both arms, checked whole (cross-key checks included)
 * before any work. Problems of many candidates are listed once each with the first candidate
 * that has them.
 */
export function candidateConfigs(base: ParamsFile, space: Space, indices: readonly number[]): CandidateConfig[] {
  const out: CandidateConfig[] = [];
  const problems = new Map<string, Problem>();
  for (const i of indices) {
    const c = candidateAt(space, i);
    try {
      const cell = cellFromFile(overlay(base, space, c), base.path);
      out.push({ index: i, left: cell.left.config, right: cell.right.config });
    } catch (err) {
      if (!(err instanceof InputError)) throw err;
      for (const p of err.problems) {
        const k = `${p.code}|${p.where?.key ?? ''}`;
        if (!problems.has(k)) problems.set(k, { ...p, message: `candidate ${i} (${Object.entries(c.values).map(([k2, v]) => `${k2}=${JSON.stringify(v)}`).join(', ')}): ${p.message}` });
      }
    }
  }
  if (problems.size) throw new InputError([...problems.values()]);
  return out;
}

