/**
 * RIHS01 type hashes (REP 2011, "Type Description Distribution"): how ROS 2 from Iron on names a
 * message type's exact shape. The hash is the SHA-256 of a canonical JSON form of the type
 * description, the type and every type it references:
 *
 *   {"type_description": {"type_name": "pkg/msg/T", "fields": [{"name": …, "type": {"type_id": …,
 *   "capacity": …, "string_capacity": …, "nested_type_name": …}}, …]},
 *   "referenced_type_descriptions": [<each nested type, sorted by name>]}
 *
 * with `, ` and `: ` as separators, keys in that order, no default values, and written
 * `RIHS01_<64 hex>`. Field type ids are those of type_description_interfaces/msg/FieldType.
 * The description is the one rosidl builds from the `.idl` form of a `.msg`: `byte` is an octet,
 * `char` a uint8, an empty struct has the member `structure_needs_at_least_one_member` (uint8),
 * constants are not members, `[N]` is an array of capacity N, `[<=N]` a bounded sequence of
 * capacity N, `string<=N` a bounded string of string capacity N.
 *
 * Only `ros2msg` texts are hashed (the `.msg` spelling keeps `byte` apart from `uint8`, which
 * the parsed definitions do not), of `pkg/msg/*` types and of a service's `_Request`, `_Response`
 * and `_Event` (from the `.srv` text rosbag2 records for service events). Anything else, or a nested type whose
 * definition is missing, gives no hash: a wrong hash would be worse than none.
 */
import { createHash } from 'node:crypto';
import { parse as parseMsg } from '@foxglove/rosmsg';
import { builtinText, canonicalType, splitDefinition } from './definitions.js';

export const RIHS01_PREFIX = 'RIHS01_';
export const RIHS01_PATTERN = /^RIHS01_[0-9a-f]{64}$/;

/** type_description_interfaces/msg/FieldType ids of the value types (add 48 / 96 / 144 for array / bounded / unbounded sequence). */
const PRIMITIVE_IDS: Record<string, number> = {
  int8: 2,
  uint8: 3,
  char: 3, // .msg char is an IDL uint8
  int16: 4,
  uint16: 5,
  int32: 6,
  uint32: 7,
  int64: 8,
  uint64: 9,
  float32: 10,
  float64: 11,
  bool: 15,
  byte: 16, // .msg byte is an IDL octet
  string: 17,
  wstring: 18,
};
const NESTED_ID = 1;
const BOUNDED_STRING_ID = 21;
const BOUNDED_WSTRING_ID = 22;
const ARRAY_OFFSET = 48;
const BOUNDED_SEQUENCE_OFFSET = 96;
const UNBOUNDED_SEQUENCE_OFFSET = 144;

export interface HashField {
  readonly name: string;
  readonly typeId: number;
  readonly capacity: number;
  readonly stringCapacity: number;
  readonly nestedTypeName: string;
}

export interface HashTypeDescription {
  /** `pkg/msg/Type`. */
  readonly typeName: string;
  readonly fields: readonly HashField[];
}

export type TypeHashResult = { readonly ok: true; readonly hash: string } | { readonly ok: false; readonly reason: string };

const IDENT = /^[A-Za-z][A-Za-z0-9_]*$/;
const TYPE_NAME = /^[A-Za-z][A-Za-z0-9_]*\/msg\/[A-Za-z][A-Za-z0-9_]*$/;
const SERVICE_PART = /^([A-Za-z][A-Za-z0-9_]*)\/srv\/([A-Za-z][A-Za-z0-9_]*)_(Request|Response|Event)$/;

class HashInputError extends Error {}

/** Resolve a nested type token of a `.msg` in package `pkg` to `pkg/msg/Type`. */
function nestedName(pkg: string, base: string): string {
  if (base === 'Header') return 'std_msgs/msg/Header';
  const parts = base.split('/');
  if (parts.length === 1) return `${pkg}/msg/${base}`;
  if (parts.length === 2) return `${parts[0]}/msg/${parts[1]}`;
  return base;
}

/**
 * The fields of one `.msg` text (no dependency blocks) as the type description lists them.
 * Throws HashInputError on a line it cannot read.
 */
export function msgFields(typeName: string, text: string): HashField[] {
  const pkg = typeName.split('/')[0]!;
  const fields: HashField[] = [];
  for (const raw of text.split(/\r?\n/)) {
    const line = raw.trim();
    if (line === '' || line.startsWith('#')) continue;
    const m = /^(\S+)\s+([A-Za-z][A-Za-z0-9_]*)(.*)$/.exec(line);
    if (!m) throw new HashInputError(`cannot read the line '${line}' of ${typeName}`);
    const [, typeToken, name, rest] = m as unknown as [string, string, string, string];
    // A constant (`type NAME=value`, spaces allowed around `=`) is not a member.
    if (/^\s*=/.test(rest)) continue;
    if (rest !== '' && !/^\s/.test(rest) && !rest.startsWith('#')) throw new HashInputError(`cannot read the line '${line}' of ${typeName}`);
    const tm = /^([A-Za-z][A-Za-z0-9_/]*?)(?:<=(\d+))?(?:\[(?:(<=)?(\d+))?\])?$/.exec(typeToken);
    if (!tm) throw new HashInputError(`cannot read the field type '${typeToken}' of ${typeName}`);
    const base = tm[1]!;
    const stringBound = tm[2];
    const isArray = typeToken.includes('[');
    const bounded = tm[3] === '<=';
    const size = tm[4];
    let valueId: number;
    let nested = '';
    let stringCapacity = 0;
    if (Object.hasOwn(PRIMITIVE_IDS, base)) {
      valueId = PRIMITIVE_IDS[base]!;
      if (stringBound !== undefined) {
        if (base === 'string') valueId = BOUNDED_STRING_ID;
        else if (base === 'wstring') valueId = BOUNDED_WSTRING_ID;
        else throw new HashInputError(`a bound on ${base} in ${typeName}`);
        stringCapacity = Number(stringBound);
      }
    } else {
      if (stringBound !== undefined) throw new HashInputError(`a bound on ${base} in ${typeName}`);
      nested = nestedName(pkg, base);
      if (!TYPE_NAME.test(nested)) throw new HashInputError(`the field type '${base}' of ${typeName} is not a message type`);
      valueId = NESTED_ID;
    }
    let typeId = valueId;
    let capacity = 0;
    if (isArray) {
      if (size === undefined) typeId += UNBOUNDED_SEQUENCE_OFFSET;
      else {
        typeId += bounded ? BOUNDED_SEQUENCE_OFFSET : ARRAY_OFFSET;
        capacity = Number(size);
      }
    }
    fields.push({ name, typeId, capacity, stringCapacity, nestedTypeName: nested });
  }
  // rosidl gives an empty struct one placeholder member.
  if (fields.length === 0) fields.push({ name: 'structure_needs_at_least_one_member', typeId: PRIMITIVE_IDS['uint8']!, capacity: 0, stringCapacity: 0, nestedTypeName: '' });
  return fields;
}

/**
 * `msgFields`, cross-checked with the .msg parser the readers use: a text it refuses, or whose
 * members it reads differently, gets no hash.
 */
function checkedFields(typeName: string, text: string): HashField[] {
  let parsed: ReturnType<typeof parseMsg>;
  try {
    parsed = parseMsg(text.replace(/^(\s*)([A-Za-z][A-Za-z0-9_]*)\/msg\/([A-Za-z][A-Za-z0-9_]*)/gm, '$1$2/$3'), { ros2: true, skipTypeFixup: true });
  } catch (err) {
    throw new HashInputError(`the definition of ${typeName} does not parse: ${(err as Error).message.split('\n')[0]}`);
  }
  const fields = msgFields(typeName, text);
  const members = (parsed[0]?.definitions ?? []).filter((f) => f.isConstant !== true).map((f) => f.name);
  const ours = fields.map((f) => f.name);
  const same = members.length === 0 ? ours.length === 1 && ours[0] === 'structure_needs_at_least_one_member' : members.join(',') === ours.join(',');
  if (!same) throw new HashInputError(`the fields of ${typeName} read differently (${ours.join(', ')} against ${members.join(', ')})`);
  return fields;
}

/** A JSON string as Python's json.dumps(ensure_ascii=True) writes it (names here are plain ASCII). */
function str(s: string): string {
  if (!/^[\x20-\x7e]*$/.test(s) || s.includes('"') || s.includes('\\')) throw new HashInputError(`the name '${s}' is not plain ASCII`);
  return `"${s}"`;
}

function individualJson(d: HashTypeDescription): string {
  const fields = d.fields.map(
    (f) =>
      `{"name": ${str(f.name)}, "type": {"type_id": ${f.typeId}, "capacity": ${f.capacity}, "string_capacity": ${f.stringCapacity}, "nested_type_name": ${str(f.nestedTypeName)}}}`,
  );
  return `{"type_name": ${str(d.typeName)}, "fields": [${fields.join(', ')}]}`;
}

/**
 * The canonical JSON the hash is taken of, for `root` and the individual descriptions of the
 * types it references (looked up in `types` by name). Throws HashInputError when one is missing.
 */
export function canonicalTypeDescriptionJson(root: string, types: ReadonlyMap<string, HashTypeDescription>): string {
  const top = types.get(root);
  if (!top) throw new HashInputError(`no description of ${root}`);
  const refs = new Set<string>();
  const queue = top.fields.map((f) => f.nestedTypeName).filter((n) => n !== '');
  while (queue.length > 0) {
    const name = queue.pop()!;
    if (refs.has(name)) continue;
    const d = types.get(name);
    if (!d) throw new HashInputError(`no definition of ${name} (referenced by ${root})`);
    refs.add(name);
    for (const f of d.fields) if (f.nestedTypeName !== '') queue.push(f.nestedTypeName);
  }
  const referenced = [...refs].sort((a, b) => (a < b ? -1 : a > b ? 1 : 0)).map((n) => individualJson(types.get(n)!));
  return `{"type_description": ${individualJson(top)}, "referenced_type_descriptions": [${referenced.join(', ')}]}`;
}

/** `RIHS01_` + the SHA-256 of a canonical JSON text. */
export function rihs01(canonicalJson: string): string {
  return RIHS01_PREFIX + createHash('sha256').update(canonicalJson, 'utf8').digest('hex');
}

export interface TypeHashOptions {
  /** Single-type `.msg` texts for nested types missing from the text (default: the shipped ones). */
  readonly lookup?: (type: string) => string | undefined;
}

/**
 * The RIHS01 hash of `type` from its definition text as a bag records it (`ros2msg`: the root
 * text, then a block per dependency). Nested types absent from the text are taken from
 * `lookup` (the shipped definitions by default). Never throws.
 */
export function typeHash(type: string, text: string, encoding = 'ros2msg', opts: TypeHashOptions = {}): TypeHashResult {
  const root = canonicalType(type);
  const service = SERVICE_PART.exec(root);
  if (!TYPE_NAME.test(root) && !service) return { ok: false, reason: `${root} is neither a message type (pkg/msg/Type) nor a service's request, response or event; only those are hashed` };
  if (encoding === '') return { ok: false, reason: 'no definition is recorded for it' };
  if (encoding !== 'ros2msg') return { ok: false, reason: `its definition is '${encoding}'; only ros2msg definitions are hashed` };
  const lookup = opts.lookup ?? builtinText;
  try {
    const blocks = splitDefinition(root, text);
    if (blocks.some((b) => b.idl)) return { ok: false, reason: 'its definition holds IDL blocks; only ros2msg definitions are hashed' };
    const texts = new Map<string, string>();
    for (const b of blocks) {
      const name = canonicalType(b.name);
      if (!texts.has(name)) texts.set(name, b.text);
    }
    const types = new Map<string, HashTypeDescription>();
    if (service) {
      // A service's `.srv` text (request, `---`, response); the event type is rosidl's:
      // info, request[<=1], response[<=1].
      const parts = (texts.get(root) ?? '').split(/^---[ \t]*\r?$/m);
      if (parts.length !== 2) throw new HashInputError(`the definition of ${root} is no service text (request, ---, response)`);
      const base = `${service[1]}/srv/${service[2]}`;
      types.set(`${base}_Request`, { typeName: `${base}_Request`, fields: checkedFields(`${base}_Request`, parts[0]!) });
      types.set(`${base}_Response`, { typeName: `${base}_Response`, fields: checkedFields(`${base}_Response`, parts[1]!) });
      const part = (name: string, nested: string, typeId: number, capacity: number): HashField => ({ name, typeId, capacity, stringCapacity: 0, nestedTypeName: nested });
      types.set(`${base}_Event`, {
        typeName: `${base}_Event`,
        fields: [
          part('info', 'service_msgs/msg/ServiceEventInfo', NESTED_ID, 0),
          part('request', `${base}_Request`, NESTED_ID + BOUNDED_SEQUENCE_OFFSET, 1),
          part('response', `${base}_Response`, NESTED_ID + BOUNDED_SEQUENCE_OFFSET, 1),
        ],
      });
    }
    const visit = (name: string): void => {
      if (types.has(name)) return;
      const t = texts.get(name) ?? lookup(name);
      if (t === undefined) throw new HashInputError(`no definition of ${name} (referenced by ${root})`);
      const d = { typeName: name, fields: checkedFields(name, t) };
      types.set(name, d);
      for (const f of d.fields) if (f.nestedTypeName !== '') visit(f.nestedTypeName);
    };
    if (service) {
      for (const d of [...types.values()]) for (const f of d.fields) if (f.nestedTypeName !== '') visit(f.nestedTypeName);
    } else {
      visit(root);
    }
    for (const name of types.keys()) if (!IDENT.test(name.split('/')[2]!)) throw new HashInputError(`bad type name ${name}`);
    return { ok: true, hash: rihs01(canonicalTypeDescriptionJson(root, types)) };
  } catch (err) {
    if (err instanceof HashInputError) return { ok: false, reason: err.message };
    throw err;
  }
}
