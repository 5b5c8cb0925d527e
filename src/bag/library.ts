/**
 * The definition search path: where the message definitions that decode a bag come from, in
 * this order:
 *   1. the bag itself (MCAP schemas, the sqlite3 `message_definitions` table);
 *   2. `--definitions` sources, in the order given: other bags, or folders that are a tree of
 *      ROS packages (`<pkg>/msg|srv|action/…`) or an install prefix (`share/<pkg>/…`);
 *   3. every prefix of `AMENT_PREFIX_PATH` (`<prefix>/share/<pkg>/msg|srv|action/…`);
 *   4. the definitions antiphon ships.
 * Nested types resolve through the same path (a bag's own dependency blocks first). Both schema
 * encodings are read: `ros2msg` (@foxglove/rosmsg) and `ros2idl` (@foxglove/ros2idl-parser).
 * Services and actions: `<pkg>/srv/<Name>_Request|_Response|_Event` are built from `<Name>.srv`
 * (or a schema holding `.srv` text), `<pkg>/action/<Name>_Goal|_Result|_Feedback|_FeedbackMessage`
 * and the action's goal services from `<Name>.action`.
 *
 * Problems (a definition that does not parse, a nested type that is missing, a cycle of nested
 * types) name the definition's file and line; they make that type undecodable, nothing else.
 */
import { existsSync, readFileSync, statSync } from 'node:fs';
import { basename, delimiter, join } from 'node:path';
import type { MessageDefinition, MessageDefinitionField } from '@foxglove/message-definition';
import { parse as parseMsg } from '@foxglove/rosmsg';
import { parseRos2idl } from '@foxglove/ros2idl-parser';
import type { Problem } from '../util/errors.js';
import { builtinMessages, canonicalType, STANDARD_SERVICES } from './definitions.js';
import type { DefinitionText } from './types.js';

/** Where a definition came from, in the order they are searched. */
export type DefinitionSourceKind = 'bag' | 'option' | 'environment' | 'builtin';

/** How `bag info` words each source (and `missing` when none has the type). */
export const SOURCE_WORDS: Record<DefinitionSourceKind | 'missing', string> = {
  bag: 'bag',
  option: 'option',
  environment: 'ROS environment',
  builtin: 'built in',
  missing: 'missing',
};

/** One type's definition as a source holds it, before its nested types are resolved. */
interface Entry {
  /** `pkg/msg/Type`, `pkg/srv/Name_Request`, `pkg/action/Name_Goal`, … */
  readonly type: string;
  readonly kind: DefinitionSourceKind;
  /** The file (or bag storage file) it came from, or `built-in`. */
  readonly file: string;
  /** For a schema inside a bag: which schema (the file then is the storage file). */
  readonly schema?: string;
  /** 1-based line in `file` (or in the schema text) where `text` starts. */
  readonly line: number;
  /** `.msg` text of this one type; absent when `fields` are built directly. */
  readonly text?: string;
  /** Fields already built (service events, feedback messages, IDL structs); types canonical. */
  readonly fields?: readonly MessageDefinitionField[];
  /** Line of each field, when known. */
  readonly fieldLines?: readonly number[];
  /** The text to write into an output bag for this type as the root (e.g. the `.srv` text). */
  readonly rootText: string;
  /** Part of a larger text (a `.srv`/`.action` or IDL file) written with its root: no own block. */
  readonly implied?: boolean;
  /** IDL: the whole IDL text this struct came from (written with encoding ros2idl). */
  readonly idl?: string;
}

/** A source of single-type definitions. */
interface Source {
  readonly kind: DefinitionSourceKind;
  /** What to show for it: a path or `built-in`. */
  readonly label: string;
  get(type: string): Entry | undefined;
  /** Dependency blocks that came with the root's own schema (bags only). */
  scope?(root: string): ReadonlyMap<string, Entry> | undefined;
}

/** A type resolved with every nested type: ready for the CDR reader. */
export interface Resolved {
  readonly ok: true;
  readonly type: string;
  readonly kind: DefinitionSourceKind;
  /** Where the root definition came from (a file or `built-in`). */
  readonly origin: string;
  /** Root first (named `type`), then each nested type once. */
  readonly definitions: MessageDefinition[];
  /** The definition text to record in an output bag, and its encoding. */
  readonly text: string;
  readonly encoding: 'ros2msg' | 'ros2idl';
}

export interface Unresolved {
  readonly ok: false;
  readonly type: string;
  /** The source whose root definition failed, or undefined when no source has the type. */
  readonly kind: DefinitionSourceKind | undefined;
  readonly origin: string | undefined;
  readonly problem: Problem;
}

export type Resolution = Resolved | Unresolved;

const SEPARATOR = '='.repeat(80);

/** Split `pkg/kind/Name` (either spelling). */
function splitType(type: string): { pkg: string; kind: string; name: string } | undefined {
  const parts = canonicalType(type).split('/');
  if (parts.length !== 3 || parts.some((p) => p === '')) return undefined;
  return { pkg: parts[0]!, kind: parts[1]!, name: parts[2]! };
}

const SRV_SUFFIXES = ['_Request', '_Response', '_Event'] as const;
const ACTION_SUFFIXES = [
  '_SendGoal_Request', '_SendGoal_Response', '_SendGoal_Event',
  '_GetResult_Request', '_GetResult_Response', '_GetResult_Event',
  '_FeedbackMessage', '_Goal', '_Result', '_Feedback',
] as const;

/** The interface file a type lives in: `{pkg, dir: msg|srv|action, base}`. */
function interfaceOf(type: string): { pkg: string; dir: 'msg' | 'srv' | 'action'; base: string } | undefined {
  const t = splitType(type);
  if (!t) return undefined;
  if (t.kind === 'msg') return { pkg: t.pkg, dir: 'msg', base: t.name };
  if (t.kind === 'srv') {
    for (const s of SRV_SUFFIXES) if (t.name.endsWith(s) && t.name.length > s.length) return { pkg: t.pkg, dir: 'srv', base: t.name.slice(0, -s.length) };
    return undefined;
  }
  if (t.kind === 'action') {
    for (const s of ACTION_SUFFIXES) if (t.name.endsWith(s) && t.name.length > s.length) return { pkg: t.pkg, dir: 'action', base: t.name.slice(0, -s.length) };
  }
  return undefined;
}

const complex = (name: string, type: string, opts: { bound?: number } = {}): MessageDefinitionField => ({
  name,
  type,
  isComplex: true,
  isArray: opts.bound !== undefined,
  ...(opts.bound !== undefined ? { arrayUpperBound: opts.bound } : {}),
});
const primitive = (name: string, type: string): MessageDefinitionField => ({ name, type, isComplex: false, isArray: false });

/** Split interface text at its `---` lines; each part with the 0-based line where it starts. */
function splitParts(text: string): { text: string; line: number }[] {
  const lines = text.split(/\r?\n/);
  const parts: { text: string; line: number }[] = [];
  let start = 0;
  for (let i = 0; i <= lines.length; i++) {
    if (i === lines.length || /^\s*---\s*$/.test(lines[i]!)) {
      parts.push({ text: lines.slice(start, i).join('\n'), line: start });
      start = i + 1;
    }
  }
  return parts;
}

/**
 * The entries a `.srv` (2 parts) or `.action` (3 parts) text defines, as `pkg/srv/Name_…` or
 * `pkg/action/Name_…` (from memory of rosidl's generation: a service event is `info`, then the
 * request and the response as sequences of at most one; an action's feedback message is the goal
 * id and the feedback; its goal services send the goal id with the goal, and get the status with
 * the result).
 */
function interfaceEntries(pkg: string, dir: 'srv' | 'action', base: string, text: string, at: Omit<Entry, 'type' | 'rootText' | 'line'> & { line: number }): Map<string, Entry> | string {
  const parts = splitParts(text);
  const out = new Map<string, Entry>();
  const add = (type: string, e: Partial<Entry>): void => {
    out.set(type, { kind: at.kind, file: at.file, ...(at.schema !== undefined ? { schema: at.schema } : {}), line: at.line, rootText: text, implied: true, type, ...e });
  };
  const part = (k: number): Partial<Entry> => ({ text: parts[k]!.text, line: at.line + parts[k]!.line });
  const event = (prefix: string, req: string, res: string): Partial<Entry> => ({
    fields: [complex('info', 'service_msgs/msg/ServiceEventInfo'), complex('request', req, { bound: 1 }), complex('response', res, { bound: 1 })],
  });
  const uuid = complex('goal_id', 'unique_identifier_msgs/msg/UUID');
  if (dir === 'srv') {
    if (parts.length !== 2) return `a .srv has one '---' line between request and response; found ${parts.length - 1}`;
    const p = `${pkg}/srv/${base}`;
    add(`${p}_Request`, part(0));
    add(`${p}_Response`, part(1));
    add(`${p}_Event`, event(p, `${p}_Request`, `${p}_Response`));
    return out;
  }
  if (parts.length !== 3) return `an .action has two '---' lines (goal, result, feedback); found ${parts.length - 1}`;
  const p = `${pkg}/action/${base}`;
  add(`${p}_Goal`, part(0));
  add(`${p}_Result`, part(1));
  add(`${p}_Feedback`, part(2));
  add(`${p}_FeedbackMessage`, { fields: [uuid, complex('feedback', `${p}_Feedback`)] });
  add(`${p}_SendGoal_Request`, { fields: [uuid, complex('goal', `${p}_Goal`)] });
  add(`${p}_SendGoal_Response`, { fields: [primitive('accepted', 'bool'), primitive('stamp', 'time')] });
  add(`${p}_SendGoal_Event`, event(p, `${p}_SendGoal_Request`, `${p}_SendGoal_Response`));
  add(`${p}_GetResult_Request`, { fields: [uuid] });
  add(`${p}_GetResult_Response`, { fields: [primitive('status', 'int8'), complex('result', `${p}_Result`)] });
  add(`${p}_GetResult_Event`, event(p, `${p}_GetResult_Request`, `${p}_GetResult_Response`));
  return out;
}

/** A problem with a type's definition, at a file and line. */
function problem(code: string, message: string, e: Pick<Entry, 'file' | 'schema'>, line: number | undefined, hint?: string): Problem {
  return {
    code,
    message,
    where: { file: e.file, ...(line !== undefined ? { line } : {}), ...(e.schema !== undefined ? { key: `schema ${e.schema}` } : {}) },
    ...(hint ? { hint } : {}),
  };
}

class EntryError extends Error {
  constructor(readonly problem: Problem) {
    super(problem.message);
  }
}

// ---- Sources --------------------------------------------------------------------------------------

/** Definitions a bag carries (or a map of texts given by the caller). */
class TextSource implements Source {
  readonly kind: DefinitionSourceKind;
  readonly label: string;
  readonly #entries = new Map<string, Entry>();
  readonly #scopes = new Map<string, Map<string, Entry>>();

  constructor(kind: DefinitionSourceKind, label: string, defs: ReadonlyMap<string, DefinitionText>) {
    this.kind = kind;
    this.label = label;
    for (const [recorded, d] of defs) this.#add(recorded, d);
  }

  #add(recorded: string, d: DefinitionText): void {
    const root = canonicalType(recorded);
    const encoding = d.encoding.trim().toLowerCase();
    const scope = new Map<string, Entry>();
    const base = { kind: this.kind, file: d.origin, schema: root };
    if (encoding === 'ros2idl') {
      scope.set(root, { ...base, type: root, line: 1, rootText: d.text, idl: d.text });
    } else if (encoding === 'ros2msg' || (encoding === '' && d.text.trim() !== '')) {
      // '' with text: older writers left the encoding out. ros2msg with no text: a type with no fields.
      const lines = d.text.split(/\r?\n/);
      let name = root;
      let start = 0;
      let first = true;
      const flush = (end: number): void => {
        const text = lines.slice(start, end).join('\n');
        const line = start + 1;
        const iface = first ? interfaceOf(name) : undefined;
        if (first && iface && iface.dir !== 'msg' && /^\s*---\s*$/m.test(text)) {
          // A service or action type recorded with its .srv/.action text (as rosbag2 does).
          const derived = interfaceEntries(iface.pkg, iface.dir, iface.base, text, { ...base, line });
          if (typeof derived === 'string') {
            scope.set(name, { ...base, type: name, line, rootText: d.text, fields: [], text: `\u0000${derived}` });
          } else {
            for (const [t, e] of derived) if (!scope.has(t)) scope.set(t, { ...e, rootText: d.text });
          }
        } else if (!scope.has(name)) {
          scope.set(name, { ...base, type: name, line, text, rootText: d.text });
        }
        first = false;
      };
      for (let i = 0; i < lines.length; i++) {
        if (/^={3,}\s*$/.test(lines[i]!)) {
          const m = /^(MSG|IDL):\s*(\S+)/.exec((lines[i + 1] ?? '').trim());
          if (m) {
            flush(i);
            name = canonicalType(m[2]!);
            start = i + 2;
            i++;
          }
        }
      }
      flush(lines.length);
    } else {
      return; // '' / 'unknown' without text: the recorder had no definition.
    }
    this.#scopes.set(root, scope);
    for (const [t, e] of scope) {
      // A type's own schema wins over a block inside another type's schema.
      const prev = this.#entries.get(t);
      if (!prev || (t === root && prev.schema !== root)) this.#entries.set(t, e);
    }
  }

  get(type: string): Entry | undefined {
    return this.#scopes.get(type)?.get(type) ?? this.#entries.get(type);
  }

  scope(root: string): ReadonlyMap<string, Entry> | undefined {
    return this.#scopes.get(root);
  }
}

/**
 * Interface files on disk. `roots` are folders to look in for `<pkg>/msg|srv|action/<Name>.<ext>`:
 * for an install prefix `<prefix>/share`, for a package tree the folder itself, for a single
 * package folder its parent (matched by its name).
 */
class FileSource implements Source {
  readonly kind: DefinitionSourceKind;
  readonly label: string;
  readonly #roots: readonly string[];
  readonly #single: { name: string; dir: string } | undefined;
  readonly #files = new Map<string, Map<string, Entry> | null>();

  constructor(kind: DefinitionSourceKind, dir: string) {
    this.kind = kind;
    this.label = dir;
    const roots: string[] = [];
    if (isDir(join(dir, 'share'))) roots.push(join(dir, 'share'));
    roots.push(dir);
    this.#roots = roots;
    const own = ['msg', 'srv', 'action'].some((k) => isDir(join(dir, k)));
    this.#single = own ? { name: basename(dir), dir } : undefined;
  }

  #candidates(pkg: string, sub: string, file: string): string[] {
    const out = this.#roots.map((r) => join(r, pkg, sub, file));
    if (this.#single?.name === pkg) out.push(join(this.#single.dir, sub, file));
    return out;
  }

  get(type: string): Entry | undefined {
    const iface = interfaceOf(type);
    if (!iface) return undefined;
    const key = `${iface.pkg}/${iface.dir}/${iface.base}`;
    let entries = this.#files.get(key);
    if (entries === undefined) {
      entries = this.#load(iface.pkg, iface.dir, iface.base);
      this.#files.set(key, entries);
    }
    return entries?.get(canonicalType(type));
  }

  #load(pkg: string, dir: 'msg' | 'srv' | 'action', base: string): Map<string, Entry> | null {
    const exts = dir === 'msg' ? ['.msg', '.idl'] : [`.${dir}`];
    for (const ext of exts) {
      for (const path of this.#candidates(pkg, dir, base + ext)) {
        if (!existsSync(path)) continue;
        let text: string;
        try {
          text = readFileSync(path, 'utf8');
        } catch {
          continue;
        }
        const at = { kind: this.kind, file: path, line: 1 };
        if (ext === '.idl') {
          const type = `${pkg}/msg/${base}`;
          return new Map([[type, { ...at, type, rootText: text, idl: text }]]);
        }
        if (dir === 'msg') {
          const type = `${pkg}/msg/${base}`;
          return new Map([[type, { ...at, type, text, rootText: text }]]);
        }
        const derived = interfaceEntries(pkg, dir, base, text, at);
        if (typeof derived === 'string') {
          const m = new Map<string, Entry>();
          for (const s of dir === 'srv' ? SRV_SUFFIXES : ACTION_SUFFIXES) {
            const type = `${pkg}/${dir}/${base}${s}`;
            m.set(type, { ...at, type, rootText: text, fields: [], text: `\u0000${derived}` });
          }
          return m;
        }
        return derived;
      }
    }
    return null;
  }
}

/** What antiphon ships. */
class BuiltinSource implements Source {
  readonly kind = 'builtin' as const;
  readonly label = 'built-in';
  readonly #msgs = builtinMessages();
  readonly #derived = new Map<string, Entry>();

  constructor() {
    for (const [key, text] of Object.entries(STANDARD_SERVICES)) {
      const t = splitType(key)!;
      const d = interfaceEntries(t.pkg, 'srv', t.name, text, { kind: 'builtin', file: 'built-in', line: 1 });
      if (typeof d !== 'string') for (const [k, e] of d) this.#derived.set(k, e);
    }
  }

  get(type: string): Entry | undefined {
    const text = this.#msgs.get(type);
    if (text !== undefined) return { kind: 'builtin', file: 'built-in', schema: type, line: 1, type, text, rootText: text };
    return this.#derived.get(type);
  }
}

function isDir(p: string): boolean {
  try {
    return statSync(p).isDirectory();
  } catch {
    return false;
  }
}

// ---- Parsing one entry ------------------------------------------------------------------------------

const BUILTIN_PRIMITIVES = new Set(['bool', 'int8', 'uint8', 'int16', 'uint16', 'int32', 'uint32', 'int64', 'uint64', 'float32', 'float64', 'string', 'wstring', 'time', 'duration']);

/** `Point` in package geometry_msgs → `geometry_msgs/msg/Point`; `Header` → std_msgs; `a/B` → `a/msg/B`. */
function qualify(pkg: string, type: string): string {
  if (type === 'Header') return 'std_msgs/msg/Header';
  if (type.includes('/')) return canonicalType(type);
  return `${pkg}/msg/${type}`;
}

interface Parsed {
  readonly def: MessageDefinition;
  readonly lines: readonly (number | undefined)[];
  /** Extra structs that came with it (IDL). */
  readonly more: MessageDefinition[];
}

/** Parse one entry's own fields (nested types not resolved yet). Throws EntryError. */
function parseEntry(e: Entry): Parsed {
  if (e.idl !== undefined) return parseIdlEntry(e);
  if (e.text?.startsWith('\u0000')) throw new EntryError(problem('bag.definition_unparsed', `definition of ${e.type} does not parse: ${e.text.slice(1)}`, e, e.line));
  const pkg = e.type.split('/')[0]!;
  if (e.fields) {
    return { def: { name: e.type, definitions: e.fields.map((f) => ({ ...f })) }, lines: e.fields.map(() => e.line), more: [] };
  }
  const text = e.text ?? '';
  // Lines as @foxglove/rosmsg sees them: trimmed, without empty and comment lines.
  const raw = text.split(/\r?\n/);
  const kept: { line: string; no: number }[] = [];
  raw.forEach((l, i) => {
    const t = l.trim();
    if (t !== '' && !t.startsWith('#')) kept.push({ line: t, no: e.line + i });
  });
  let defs: MessageDefinition[];
  try {
    defs = parseMsg(kept.map((k) => k.line).join('\n'), { ros2: true, skipTypeFixup: true });
  } catch (err) {
    // Find the line that does not parse.
    for (const k of kept) {
      try {
        parseMsg(k.line, { ros2: true, skipTypeFixup: true });
      } catch (lineErr) {
        throw new EntryError(problem('bag.definition_unparsed', `definition of ${e.type} does not parse: ${(lineErr as Error).message}`, e, k.no));
      }
    }
    throw new EntryError(problem('bag.definition_unparsed', `definition of ${e.type} does not parse: ${(err as Error).message}`, e, e.line));
  }
  const fields = (defs[0]?.definitions ?? []).map((f) => (f.isComplex === true ? { ...f, type: qualify(pkg, f.type) } : { ...f }));
  if (kept.length !== fields.length) {
    // Should not happen (one field per kept line); lines are then unknown.
    return { def: { name: e.type, definitions: fields }, lines: fields.map(() => undefined), more: [] };
  }
  return { def: { name: e.type, definitions: fields }, lines: kept.map((k) => k.no), more: [] };
}

/**
 * An IDL text: the `====`/`IDL: name` headers blanked (so line numbers stay), parsed whole. Types
 * it names but does not define are stubbed, then resolved through the search path like any
 * nested type.
 */
function parseIdlEntry(e: Entry): Parsed {
  const lines = e.idl!.split(/\r?\n/);
  for (let i = 0; i < lines.length; i++) {
    if (/^={3,}\s*$/.test(lines[i]!) && /^IDL:\s*\S+/.test((lines[i + 1] ?? '').trim())) {
      lines[i] = '';
      lines[i + 1] = '';
    }
  }
  let text = lines.join('\n');
  const stubs = new Set<string>();
  for (let round = 0; ; round++) {
    let defs: MessageDefinition[];
    try {
      defs = parseRos2idl(text);
    } catch (err) {
      const msg = (err as Error).message;
      const missing = /Could not find node ([A-Za-z0-9_:]+) in/.exec(msg);
      if (missing && round < 256) {
        const scoped = missing[1]!.split('::');
        const name = scoped.join('/');
        if (!stubs.has(name) && scoped.length >= 2) {
          stubs.add(name);
          const struct = scoped[scoped.length - 1]!;
          const modules = scoped.slice(0, -1);
          text += `\n${modules.map((m) => `module ${m} {`).join(' ')} struct ${struct} { uint8 antiphon_stub; }; ${modules.map(() => '};').join(' ')}\n`;
          continue;
        }
      }
      const tok = (err as { token?: { line?: number } }).token;
      const at = tok?.line !== undefined ? e.line + tok.line - 1 : /line (\d+)/.exec(msg) ? e.line + Number(/line (\d+)/.exec(msg)![1]) - 1 : e.line;
      throw new EntryError(problem('bag.definition_unparsed', `IDL definition of ${e.type} does not parse: ${msg.split('\n')[0]}`, e, at));
    }
    const out: MessageDefinition[] = [];
    for (const d of defs) {
      const name = canonicalType(d.name ?? '');
      if (stubs.has(name)) continue;
      let fields = d.definitions.map((f) => (f.isComplex === true ? { ...f, type: canonicalType(f.type) } : { ...f }));
      // The IDL parser renames Time/Duration `nanosec` to `nsec`; ROS 2 calls it nanosec.
      if (name === 'builtin_interfaces/msg/Time' || name === 'builtin_interfaces/msg/Duration') fields = fields.map((f) => (f.name === 'nsec' ? { ...f, name: 'nanosec' } : f));
      // rosidl gives an empty .msg this one placeholder member in IDL: it is the same empty struct.
      if (fields.length === 1 && fields[0]!.name === 'structure_needs_at_least_one_member') fields = [];
      out.push({ name, definitions: fields });
    }
    const root = out.find((d) => d.name === e.type) ?? out.find((d) => !(d.definitions.length > 0 && d.definitions.every((f) => f.isConstant === true)));
    if (!root) throw new EntryError(problem('bag.definition_unparsed', `IDL definition of ${e.type} defines no struct`, e, e.line));
    const idlLine = (needle: string): number | undefined => {
      const k = lines.findIndex((l) => l.includes(needle));
      return k >= 0 ? e.line + k : undefined;
    };
    return {
      def: { name: e.type, definitions: root.definitions },
      lines: root.definitions.map((f) => idlLine(` ${f.name}`)),
      more: out.filter((d) => d !== root),
    };
  }
}

// ---- The library -------------------------------------------------------------------------------------

export interface LibraryOptions {
  /** The bag's own definitions (searched first). */
  readonly bag?: ReadonlyMap<string, DefinitionText>;
  /** `--definitions` sources, in order: definition maps (from other bags) or folders. */
  readonly extra?: readonly (string | { readonly label: string; readonly definitions: ReadonlyMap<string, DefinitionText> })[];
  /** AMENT_PREFIX_PATH value (default: the process environment's). '' for none. */
  readonly amentPrefixPath?: string;
  /** Include the shipped definitions (default true). */
  readonly builtin?: boolean;
}

/** The search path, with every resolution cached. */
export class DefinitionLibrary {
  readonly #sources: Source[] = [];
  readonly #cache = new Map<string, Resolution[]>();

  constructor(opts: LibraryOptions = {}) {
    if (opts.bag) this.#sources.push(new TextSource('bag', 'bag', opts.bag));
    for (const x of opts.extra ?? []) {
      this.#sources.push(typeof x === 'string' ? new FileSource('option', x) : new TextSource('option', x.label, x.definitions));
    }
    const ament = opts.amentPrefixPath ?? process.env['AMENT_PREFIX_PATH'] ?? '';
    for (const prefix of ament.split(delimiter)) {
      if (prefix.trim() === '') continue;
      this.#sources.push(new FileSource('environment', prefix));
    }
    if (opts.builtin ?? true) this.#sources.push(new BuiltinSource());
  }

  /** The sources in search order (kind and label). */
  sources(): { kind: DefinitionSourceKind; label: string }[] {
    return this.#sources.map((s) => ({ kind: s.kind, label: s.label }));
  }

  /**
   * One resolution per source that has a root definition for `type`, in search order; nested
   * types always go through the whole path. Empty when no source has the type.
   */
  candidates(type: string): readonly Resolution[] {
    const key = canonicalType(type);
    let list = this.#cache.get(key);
    if (list) return list;
    list = [];
    const seen = new Set<string>();
    for (const s of this.#sources) {
      const e = s.get(key);
      if (!e) continue;
      const sig = `${e.rootText}\u0000${e.idl !== undefined}`;
      if (seen.has(sig)) continue; // the same text twice (e.g. a bag of ours that copied the built-in one)
      seen.add(sig);
      list.push(this.#resolve(key, e, s.scope?.(key)));
    }
    this.#cache.set(key, list);
    return list;
  }

  /** The first resolution that works, else the first failure, else undefined (no source has it). */
  resolve(type: string): Resolution | undefined {
    const c = this.candidates(type);
    return c.find((r) => r.ok) ?? c[0];
  }

  #lookup(type: string, scope: ReadonlyMap<string, Entry> | undefined): Entry | undefined {
    const own = scope?.get(type);
    if (own) return own;
    for (const s of this.#sources) {
      const e = s.get(type);
      if (e) return e;
    }
    return undefined;
  }

  #resolve(root: string, rootEntry: Entry, scope: ReadonlyMap<string, Entry> | undefined): Resolution {
    const defs = new Map<string, MessageDefinition>();
    const used: Entry[] = [];
    const stack: string[] = [];
    const visit = (type: string, e: Entry): void => {
      stack.push(type);
      const parsed = parseEntry(e);
      used.push(e);
      defs.set(type, parsed.def);
      for (const m of parsed.more) if (!defs.has(m.name!)) defs.set(m.name!, m);
      const nested = (owner: string, fields: readonly MessageDefinitionField[], lines: readonly (number | undefined)[]): void => {
        fields.forEach((f, i) => {
          if (f.isComplex !== true) return;
          if (stack.includes(f.type)) {
            const cycle = [...stack.slice(stack.indexOf(f.type)), f.type].join(' -> ');
            throw new EntryError(problem('bag.definition_cycle', `nested types form a cycle: ${cycle} (field ${f.name} of ${owner})`, e, lines[i], 'a message cannot contain itself; fix the definition'));
          }
          if (defs.has(f.type)) return;
          const dep = this.#lookup(f.type, scope);
          if (!dep) {
            throw new EntryError(
              problem('bag.definition_missing_nested', `nested type ${f.type} (field ${f.name} of ${owner}) is not defined anywhere on the search path`, e, lines[i], howToSupply(f.type)),
            );
          }
          visit(f.type, dep);
        });
      };
      nested(type, parsed.def.definitions, parsed.lines);
      for (const m of parsed.more) nested(m.name!, m.definitions, []);
      stack.pop();
    };
    try {
      visit(root, rootEntry);
    } catch (err) {
      if (!(err instanceof EntryError)) throw err;
      return { ok: false, type: root, kind: rootEntry.kind, origin: rootEntry.file, problem: err.problem };
    }
    const list = [...defs.values()];
    // The CDR reader takes the first non-constant struct as the root: a root of only constants
    // (or none) is an empty struct on the wire.
    const r = list[0]!;
    if (r.definitions.length > 0 && r.definitions.every((f) => f.isConstant === true)) list[0] = { name: r.name, definitions: [] };
    return { ok: true, type: root, kind: rootEntry.kind, origin: rootEntry.file, definitions: list, ...textOf(rootEntry, used) };
  }
}

/** The text to record for a resolved type: the root's text, then each nested type's block. */
function textOf(root: Entry, used: readonly Entry[]): { text: string; encoding: 'ros2msg' | 'ros2idl' } {
  if (root.idl !== undefined) return { text: root.idl, encoding: 'ros2idl' };
  let text = root.rootText;
  const done = new Set<string>([root.type]);
  for (const e of used.slice(1)) {
    if (done.has(e.type) || e.rootText === root.rootText) continue;
    done.add(e.type);
    if (e.idl !== undefined || e.fields) continue;
    if (e.implied) continue;
    text += `\n${SEPARATOR}\nMSG: ${e.type}\n${e.text ?? ''}`;
  }
  return { text, encoding: 'ros2msg' };
}

/** How a user supplies a missing definition of `type`. */
export function howToSupply(type: string): string {
  const i = interfaceOf(type);
  const file = i ? `${i.pkg}/${i.dir}/${i.base}.${i.dir}` : `${type}.msg`;
  return `pass --definitions <bag | folder with ${file}>, or source a ROS 2 setup that has it (AMENT_PREFIX_PATH/share/${file})`;
}
