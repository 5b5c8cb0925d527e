/**
 * Loading ROS 2 parameters files (`<section>: ros__parameters: {...}`) against the schema.
 *
 * A file may hold a `/**` section (every arm) and sections per arm: the arm selectors `left`
 * and `right`, or fully qualified node names under the arm's namespace (`/left/antiphon`,
 * `/left/antiphon_roles`, `/right/**`), as `ros2 param dump` writes them. An arm's value comes
 * from its own sections, else `/**`, else the schema default. Nested maps
 * flatten to dotted keys as ROS does. Every problem names the dotted key, the file, line and
 * column, and what is allowed; all problems are reported at once and nothing is half-applied.
 */
import { closest } from 'fastest-levenshtein';
import { isMap, isScalar, isSeq, type Node, type Pair } from 'yaml';
import { InputError, type Problem } from '../util/errors.js';
import { INPUT_LIMITS, readInputText } from '../util/read-input.js';
import { parseYamlInput } from '../util/yaml.js';
import { SCHEMA, specFor } from './schema.js';
import { ARMS, type ArmName, type ParamSpec, type ParamValue, type ResolvedValue, type ValueSource } from './spec.js';

export const SECTIONS = ['/**', ...ARMS] as const;
export type SectionName = (typeof SECTIONS)[number];

/**
 * The section a file's top-level key selects: `/**`, an arm selector (`left`, `right`), or a
 * fully qualified node name in the arm's namespace (`/left/<node>` or `/left/**`), which is how
 * `ros2 param dump` names sections. Anything else is undefined (refused with a hint).
 */
export function resolveSectionName(name: string): SectionName | undefined {
  if ((SECTIONS as readonly string[]).includes(name)) return name as SectionName;
  const m = /^\/(left|right)\/(\*\*|[A-Za-z][A-Za-z0-9_]*)$/.exec(name);
  return m ? (m[1] as ArmName) : undefined;
}

/** One value as written in a file, before resolution. */
interface FileEntry {
  readonly key: string;
  readonly value: ParamValue;
  readonly source: ValueSource;
}

/** A parsed and validated parameters file. */
export interface ParamsFile {
  readonly path: string;
  readonly sections: ReadonlyMap<SectionName, ReadonlyMap<string, FileEntry>>;
}

/** Read and validate a parameters file. Throws InputError listing every problem. */
export function loadParamsFile(path: string): ParamsFile {
  // A regular file of at most INPUT_LIMITS.params bytes (no device, FIFO or folder).
  const text = readInputText(path, { what: 'parameters file', code: 'param', unreadableCode: 'param.file_unreadable', maxBytes: INPUT_LIMITS.params });
  return parseParamsText(text, path);
}

/** Parse parameters-file text (exposed for tests and for the ROS adapter). */
export function parseParamsText(text: string, path: string): ParamsFile {
  const { doc, at } = parseYamlInput(text, path, 'param.yaml_syntax', { intAsBigInt: true, uniqueKeys: true });
  const problems: Problem[] = [];

  const sections = new Map<SectionName, Map<string, FileEntry>>();
  const root = doc.contents;
  if (root === null || root === undefined) {
    return { path, sections };
  }
  if (!isMap(root)) {
    throw new InputError({ code: 'param.not_a_map', message: 'a parameters file is a map of sections', where: at(root), hint: 'e.g. "/**:\\n  ros__parameters:\\n    roles:\\n      period_s: 0.5"' });
  }
  for (const pair of root.items) {
    const name = isScalar(pair.key) ? String(pair.key.value) : '';
    const section = resolveSectionName(name);
    if (section === undefined) {
      problems.push({ code: 'param.unknown_section', message: `unknown section '${name}': a section is /**, an arm selector, or a fully qualified node name in an arm's namespace (/left/antiphon, /right/antiphon_roles, /left/**)`, where: at(pair.key as Node), hint: `allowed sections: ${SECTIONS.join(', ')}` });
      continue;
    }
    const body = pair.value as Node | null;
    if (!isMap(body) || body.items.length !== 1 || !isScalar(body.items[0]!.key) || body.items[0]!.key.value !== 'ros__parameters') {
      problems.push({ code: 'param.no_ros_parameters', message: `section '${name}' must hold exactly one key, ros__parameters`, where: at(body ?? (pair.key as Node)) });
      continue;
    }
    // Several sections may select one arm (e.g. a dump of both of its nodes): they merge, and
    // a key given twice with different values is refused.
    const entries = new Map<string, FileEntry>();
    flatten(body.items[0]!.value as Node | null, '', name, entries, problems, at);
    const merged = sections.get(section) ?? new Map<string, FileEntry>();
    for (const [key, e] of entries) {
      const prev = merged.get(key);
      if (prev && JSON.stringify(prev.value) !== JSON.stringify(e.value)) {
        problems.push({ code: 'param.conflicting_sections', message: `${key} is set to ${JSON.stringify(prev.value)} in section '${prev.source.section}' and to ${JSON.stringify(e.value)} in section '${name}', both for the ${section} arm`, where: { key, file: path, line: e.source.line, column: e.source.column }, hint: 'give each key once per arm' });
        continue;
      }
      merged.set(key, e);
    }
    sections.set(section, merged);
  }
  // Names chosen by the user (zone names) are ROS-style identifiers: they travel in messages.
  for (const [, entries] of sections) {
    for (const inst of patternInstances(entries.keys())) {
      const name = inst.prefix.split('.').pop()!;
      if (!/^[A-Za-z][A-Za-z0-9_]{0,62}$/.test(name)) {
        const first = [...entries.values()].find((e) => e.key.startsWith(inst.prefix + '.'))!;
        problems.push({ code: 'param.bad_name', message: `'${name}' is not allowed as a name`, where: { key: inst.prefix, file: path, line: first.source.line, column: first.source.column }, hint: 'a letter, then letters, digits or underscores (ASCII, at most 63 characters)' });
      }
    }
  }
  // Required keys of each named pattern instance (e.g. every zone needs a shape).
  for (const [section, entries] of sections) {
    for (const inst of patternInstances(entries.keys())) {
      for (const s of SCHEMA) {
        if (s.default !== undefined || !s.key.startsWith(inst.pattern + '.')) continue;
        const key = inst.prefix + s.key.slice(inst.pattern.length);
        if (!entries.has(key) && !(section !== '/**' && sections.get('/**')?.has(key))) {
          const first = entries.get([...entries.keys()].find((k) => k.startsWith(inst.prefix + '.'))!)!;
          problems.push({ code: 'param.missing_required', message: `${key} is required`, where: { key, file: path, line: first.source.line, column: first.source.column }, hint: describeAllowed(s) });
        }
      }
    }
  }
  if (problems.length) throw new InputError(problems);
  return { path, sections };
}

function flatten(
  node: Node | null,
  prefix: string,
  section: string,
  out: Map<string, FileEntry>,
  problems: Problem[],
  at: (n: Node | Pair | null | undefined) => { file: string; line?: number; column?: number },
): void {
  if (!isMap(node)) {
    problems.push({ code: 'param.not_a_map', message: `${prefix || 'ros__parameters'} must be a map of parameters`, where: at(node) });
    return;
  }
  for (const pair of node.items) {
    const seg = isScalar(pair.key) ? String(pair.key.value) : '';
    const key = prefix ? `${prefix}.${seg}` : seg;
    const where = at(pair.key as Node);
    const valueNode = pair.value as Node | null;
    const spec = specFor(key);
    if (isMap(valueNode)) {
      // A map: descend, unless the schema says this key is a leaf.
      if (spec) {
        problems.push({ code: 'param.wrong_type', message: `${key} must be a ${typeName(spec)}, got a map`, where: { ...where, key }, hint: describeAllowed(spec) });
        continue;
      }
      if (!SCHEMA.some((s) => keyPrefixMatches(s.key, key))) {
        problems.push(unknownKey(key, where));
        continue;
      }
      flatten(valueNode, key, section, out, problems, at);
      continue;
    }
    if (!spec) {
      problems.push(unknownKey(key, where));
      continue;
    }
    const valueWhere = { ...at(valueNode ?? (pair.key as Node)), key };
    const checked = checkValue(spec, valueNode, key, valueWhere, problems);
    if (checked === undefined) continue;
    out.set(key, { key, value: checked, source: { kind: 'file', file: where.file, section, line: valueWhere.line, column: valueWhere.column } });
  }
}

/** Does some prefix of schema key `pattern` match the concrete prefix `key`? */
function keyPrefixMatches(pattern: string, key: string): boolean {
  const pp = pattern.split('.');
  const kk = key.split('.');
  if (kk.length >= pp.length) return false;
  return kk.every((k, n) => pp[n] === '*' || pp[n] === k);
}

/** The schema keys split once (unknownKey runs once per unknown key: 100,000 in a hostile file). */
let schemaParts: string[][] | undefined;

function unknownKey(key: string, where: { file: string; line?: number; column?: number }): Problem {
  // Candidates: every schema key, with `*` filled from the user's own segments.
  const kk = key.split('.');
  schemaParts ??= SCHEMA.map((s) => s.key.split('.'));
  const candidates = SCHEMA.map((s, i) => (s.key.includes('*') ? schemaParts![i]!.map((p, n) => (p === '*' ? (kk[n] ?? p) : p)).join('.') : s.key));
  // Compare against keys of the same depth first, then any.
  const nearest = closest(key, candidates);
  return {
    code: 'param.unknown_key',
    message: `unknown parameter ${key}`,
    where: { ...where, key },
    hint: `did you mean ${nearest}? 'antiphon check-config --list' lists every parameter`,
  };
}

function typeName(spec: ParamSpec): string {
  switch (spec.type) {
    case 'double': return 'floating-point number';
    case 'integer': return 'whole number';
    case 'bool': return 'boolean (true or false)';
    case 'string': return 'string';
    case 'double_array': return `list of ${spec.length ?? 'any number of'} floating-point numbers`;
    case 'string_array': return 'list of strings';
  }
}

/** What is allowed, in words, for error hints and docs. */
export function describeAllowed(spec: ParamSpec): string {
  const parts = [typeName(spec)];
  if (spec.choices) parts.push(`one of ${spec.choices.join(', ')}`);
  if (spec.min !== undefined && spec.max !== undefined) {
    const hi = spec.ceiling !== undefined ? Math.min(spec.max, spec.ceiling) : spec.max;
    parts.push(`from ${spec.min} to ${hi}${spec.unit && spec.unit !== '1' ? ' ' + spec.unit : ''}`);
  }
  if (spec.ceiling !== undefined) parts.push(`hard ceiling ${spec.ceiling} ${spec.unit}`);
  return parts.join(', ');
}

function checkValue(spec: ParamSpec, node: Node | null, key: string, where: { file: string; line?: number; column?: number; key: string }, problems: Problem[]): ParamValue | undefined {
  const bad = (message: string, code = 'param.wrong_type'): undefined => {
    problems.push({ code, message, where, hint: describeAllowed(spec) });
    return undefined;
  };
  const checkNumber = (raw: unknown, label: string): number | undefined => {
    if (spec.type === 'double' || spec.type === 'double_array') {
      if (typeof raw === 'bigint') return bad(`${label} must be written as a floating-point number (e.g. ${raw}.0): ROS 2 reads ${raw} as an integer and refuses it for a double parameter`);
      if (typeof raw !== 'number') return bad(`${label} must be a number, got ${describeRaw(raw)}`);
    } else {
      if (typeof raw !== 'bigint') return bad(`${label} must be a whole number, got ${describeRaw(raw)}`);
    }
    const n = Number(raw);
    if (!Number.isFinite(n)) return bad(`${label} must be finite, got ${n}`, 'param.out_of_range');
    if (spec.ceiling !== undefined && n > spec.ceiling) {
      problems.push({ code: 'param.above_ceiling', message: `${label} = ${n} is above its hard safety ceiling ${spec.ceiling} ${spec.unit}; refused whatever the file says`, where, hint: 'a ceiling changes only with the code and the cell\'s risk assessment' });
      return undefined;
    }
    if ((spec.min !== undefined && n < spec.min) || (spec.max !== undefined && n > spec.max)) {
      return bad(`${label} = ${n} is out of range`, 'param.out_of_range');
    }
    return n;
  };
  switch (spec.type) {
    case 'double':
    case 'integer': {
      if (!isScalar(node)) return bad(`${key} must be a ${typeName(spec)}`);
      return checkNumber(node.value, key);
    }
    case 'bool':
      if (!isScalar(node) || typeof node.value !== 'boolean') return bad(`${key} must be true or false, got ${describeRaw(isScalar(node) ? node.value : node)}`);
      return node.value;
    case 'string': {
      if (!isScalar(node) || typeof node.value !== 'string') return bad(`${key} must be a string, got ${describeRaw(isScalar(node) ? node.value : node)}`);
      if (spec.choices && !spec.choices.includes(node.value)) return bad(`${key} = '${node.value}' is not allowed`, 'param.bad_choice');
      return node.value;
    }
    case 'double_array': {
      if (!isSeq(node)) return bad(`${key} must be a list`);
      if (spec.length !== undefined && node.items.length !== spec.length) return bad(`${key} must have exactly ${spec.length} elements, got ${node.items.length}`, 'param.bad_length');
      const out: number[] = [];
      for (let k = 0; k < node.items.length; k++) {
        const item = node.items[k] as Node;
        const n = checkNumber(isScalar(item) ? item.value : item, `${key}[${k}]`);
        if (n === undefined) return undefined;
        out.push(n);
      }
      return out;
    }
    case 'string_array': {
      if (!isSeq(node)) return bad(`${key} must be a list`);
      const out: string[] = [];
      for (const item of node.items) {
        if (!isScalar(item) || typeof item.value !== 'string') return bad(`${key} must be a list of strings`);
        out.push(item.value);
      }
      return out;
    }
  }
}

function describeRaw(raw: unknown): string {
  if (raw === null || raw === undefined) return 'nothing';
  if (typeof raw === 'bigint') return `the whole number ${raw}`;
  if (typeof raw === 'string') return `the string '${raw}'`;
  if (typeof raw === 'object') return isSeq(raw) ? 'a list' : 'a map';
  return `${typeof raw} ${String(raw)}`;
}

/** Named instances of `*` patterns present among the keys, e.g. `task.zones.clamp_post`. */
function patternInstances(keys: Iterable<string>): { pattern: string; prefix: string }[] {
  const found = new Map<string, { pattern: string; prefix: string }>();
  for (const key of keys) {
    const spec = specFor(key);
    if (!spec || !spec.key.includes('*')) continue;
    const pp = spec.key.split('.');
    const star = pp.indexOf('*');
    const prefix = key.split('.').slice(0, star + 1).join('.');
    found.set(prefix, { pattern: pp.slice(0, star + 1).join('.'), prefix });
  }
  return [...found.values()];
}

/**
 * Resolve every parameter for one arm: its own section, else `/**`, else the default.
 * Pattern keys (`task.zones.*`) resolve per instance named in the file.
 */
export function resolveForArm(file: ParamsFile | undefined, arm: ArmName): Map<string, ResolvedValue> {
  const out = new Map<string, ResolvedValue>();
  for (const s of SCHEMA) {
    if (s.key.includes('*') || s.default === undefined) continue;
    out.set(s.key, { key: s.key, value: s.armDefault ? s.armDefault[arm] : s.default, source: { kind: 'default' }, spec: s });
  }
  if (!file) return out;
  const layers = [file.sections.get('/**'), file.sections.get(arm)];
  const instances = new Set<string>();
  for (const layer of layers) {
    if (!layer) continue;
    for (const inst of patternInstances(layer.keys())) instances.add(`${inst.pattern}|${inst.prefix}`);
  }
  for (const tag of instances) {
    const [pattern, prefix] = tag.split('|') as [string, string];
    for (const s of SCHEMA) {
      if (!s.key.startsWith(pattern + '.') || s.default === undefined) continue;
      const key = prefix + s.key.slice(pattern.length);
      out.set(key, { key, value: s.default, source: { kind: 'default' }, spec: s });
    }
  }
  for (const layer of layers) {
    if (!layer) continue;
    for (const entry of layer.values()) out.set(entry.key, { key: entry.key, value: entry.value, source: entry.source, spec: specFor(entry.key)! });
  }
  return new Map([...out.entries()].sort(([a], [b]) => (a < b ? -1 : a > b ? 1 : 0)));
}
