/**
 * Message definition texts (ROS 2 `.msg`, the `ros2msg` schema encoding): type-name spellings,
 * splitting and joining the multi-definition text bags carry (root text, then per dependency a
 * line of `=` and `MSG: pkg/Type`), dependency discovery, and the definitions antiphon ships for
 * bags that carry none. The search path over bags, definition folders, the ROS environment and
 * the shipped definitions is in `library.ts`.
 */
import { readdirSync, readFileSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { parse as parseMsg } from '@foxglove/rosmsg';
import { InputError } from '../util/errors.js';
import { planted } from './limits.js';

/** A parsed definition, as @foxglove/rosmsg returns it. */
export type MessageDefinition = ReturnType<typeof parseMsg>[number];

/** `pkg/Type` or `pkg/msg/Type` → `pkg/msg/Type` (other interface kinds kept as they are). */
export function canonicalType(type: string): string {
  const parts = type.split('/');
  if (parts.length === 2) return `${parts[0]}/msg/${parts[1]}`;
  return type;
}

/** `pkg/msg/Type` → `pkg/Type` (the spelling used after `MSG:` and inside .msg fields). */
export function shortType(type: string): string {
  const parts = type.split('/');
  if (parts.length === 3 && parts[1] === 'msg') return `${parts[0]}/${parts[2]}`;
  return type;
}

export const PRIMITIVES = new Set([
  'bool', 'byte', 'char', 'float32', 'float64', 'int8', 'uint8', 'int16', 'uint16',
  'int32', 'uint32', 'int64', 'uint64', 'string', 'wstring', 'time', 'duration',
]);

const SEPARATOR = '='.repeat(80);

export interface DefinitionBlock {
  /** `pkg/Type` spelling; the root block carries the type given to `splitDefinition`. */
  readonly name: string;
  readonly text: string;
  readonly idl: boolean;
}

/** Split a multi-definition text into blocks. Duplicated dependency blocks are dropped. */
export function splitDefinition(rootType: string, text: string): DefinitionBlock[] {
  const lines = text.split(/\r?\n/);
  const blocks: DefinitionBlock[] = [];
  let name = shortType(rootType);
  let idl = false;
  let current: string[] = [];
  const seen = new Set<string>();
  const flush = (): void => {
    if (!seen.has(name)) {
      seen.add(name);
      blocks.push({ name, text: current.join('\n'), idl });
    }
  };
  for (let i = 0; i < lines.length; i++) {
    const line = lines[i]!;
    if (/^={3,}\s*$/.test(line)) {
      const head = (lines[i + 1] ?? '').trim();
      const m = /^(MSG|IDL):\s*(\S+)/.exec(head);
      if (m) {
        flush();
        name = shortType(m[2]!);
        idl = m[1] === 'IDL';
        current = [];
        i++;
        continue;
      }
    }
    current.push(line);
  }
  flush();
  return blocks;
}

/** Field types named by a .msg text (complex ones only), resolved to `pkg/Type`. */
export function fieldDependencies(pkg: string, text: string): string[] {
  const out: string[] = [];
  for (const raw of text.split(/\r?\n/)) {
    const line = raw.replace(/#.*$/, '').trim();
    if (line === '') continue;
    const typeToken = line.split(/\s+/)[0]!;
    // A constant line is `type NAME=value`; its type is always primitive.
    let base = typeToken.replace(/\[.*$/, '').replace(/<=\d+$/, '');
    if (PRIMITIVES.has(base)) continue;
    if (base === 'Header') base = 'std_msgs/Header';
    const resolved = base.includes('/') ? shortType(base) : `${pkg}/${base}`;
    if (!out.includes(resolved)) out.push(resolved);
  }
  return out;
}

/** Rewrite field types spelled `pkg/msg/Type` to `pkg/Type` (what the .msg parser expects). */
function normalizeFieldTypes(text: string): string {
  return text.replace(/^(\s*)([A-Za-z][A-Za-z0-9_]*)\/msg\/([A-Za-z][A-Za-z0-9_]*)/gm, '$1$2/$3');
}

/** Join blocks back into the standard multi-definition text. */
export function joinDefinition(blocks: readonly { name: string; text: string }[]): string {
  let out = blocks[0]?.text ?? '';
  for (const b of blocks.slice(1)) out += `\n${SEPARATOR}\nMSG: ${b.name}\n${b.text}`;
  return out;
}

/**
 * Parse a `ros2msg` multi-definition text into the definitions the CDR reader needs, root first
 * and named `rootType`. Throws a plain Error when the text cannot be parsed or a dependency is
 * missing.
 */
export function parseDefinition(rootType: string, text: string): MessageDefinition[] {
  const blocks = splitDefinition(rootType, text);
  if (blocks.some((b) => b.idl)) throw new Error('IDL definitions (ros2idl) are not supported');
  const normalized = joinDefinition(blocks.map((b) => ({ name: b.name, text: normalizeFieldTypes(b.text) })));
  const defs = parseMsg(normalized, { ros2: true });
  const root = defs[0];
  if (!root) throw new Error('empty definition');
  const named = [{ ...root, name: shortType(rootType) }, ...defs.slice(1)];
  const known = new Set(named.map((d) => d.name));
  for (const d of named) {
    for (const f of d.definitions) {
      if (f.isComplex === true && !known.has(f.type)) throw new Error(`type ${f.type} (field ${f.name} of ${d.name}) is not defined`);
    }
  }
  checkElementSizes(named);
  return named;
}

const PRIMITIVE_BYTES: Record<string, number> = {
  bool: 1, byte: 1, char: 1, int8: 1, uint8: 1, int16: 2, uint16: 2, int32: 4, uint32: 4, float32: 4,
  int64: 8, uint64: 8, float64: 8, string: 4, wstring: 4, time: 8, duration: 8,
};

/**
 * Refuse definitions a reader could loop on without consuming bytes: an array or sequence whose
 * element type takes no bytes in CDR (e.g. `Z[] items` where Z holds only `uint8[0] pad`: a
 * count of 2^32-1 would decode forever), and types that contain themselves. A type without
 * data fields is one byte in CDR (ROS 2 adds a placeholder member), so it is fine.
 */
export function checkElementSizes(defs: readonly MessageDefinition[]): void {
  const byName = new Map(defs.map((d) => [d.name ?? '', d]));
  const size = new Map<string, number>();
  const visiting = new Set<string>();
  const minSize = (name: string): number => {
    const known = size.get(name);
    if (known !== undefined) return known;
    if (visiting.has(name)) throw new Error(`type ${name} contains itself`);
    visiting.add(name);
    const d = byName.get(name)!;
    const fields = d.definitions.filter((f) => f.isConstant !== true);
    let total = fields.length === 0 ? 1 : 0;
    for (const f of fields) {
      const elem = f.isComplex === true ? minSize(f.type) : (PRIMITIVE_BYTES[f.type] ?? 1);
      if (f.isComplex === true && f.isArray === true && elem === 0 && !planted('zero-size-elements')) {
        throw new Error(
          `field ${f.name} of ${name} is ${f.arrayLength === undefined ? 'a sequence' : 'an array'} of ${f.type}, which takes no bytes in CDR; such a field is refused (a count could make a reader loop without consuming bytes)`,
        );
      }
      if (f.isArray !== true) total += elem;
      else if (f.arrayLength === undefined) total += 4; // the count
      else total += f.arrayLength * elem;
    }
    visiting.delete(name);
    size.set(name, total);
    return total;
  };
  for (const d of defs) minSize(d.name ?? '');
}

// ---- Shipped definitions --------------------------------------------------------------------------
// The field lists of the standard ROS 2 interfaces antiphon reads and writes (comments are ours).

const STANDARD: Record<string, string> = {
  'builtin_interfaces/Time': 'int32 sec\nuint32 nanosec',
  'builtin_interfaces/Duration': 'int32 sec\nuint32 nanosec',
  'std_msgs/Header': '# Stamp and coordinate frame of the data.\nbuiltin_interfaces/Time stamp\nstring frame_id',
  'std_msgs/String': 'string data',
  'geometry_msgs/Vector3': 'float64 x\nfloat64 y\nfloat64 z',
  'geometry_msgs/Point': 'float64 x\nfloat64 y\nfloat64 z',
  'geometry_msgs/Quaternion': 'float64 x 0\nfloat64 y 0\nfloat64 z 0\nfloat64 w 1',
  'geometry_msgs/Pose': 'Point position\nQuaternion orientation',
  'geometry_msgs/PoseStamped': 'std_msgs/Header header\nPose pose',
  'geometry_msgs/Twist': 'Vector3 linear\nVector3 angular',
  'geometry_msgs/TwistStamped': 'std_msgs/Header header\nTwist twist',
  'geometry_msgs/Wrench': 'Vector3 force\nVector3 torque',
  'geometry_msgs/WrenchStamped': 'std_msgs/Header header\nWrench wrench',
  'sensor_msgs/JointState':
    'std_msgs/Header header\n# Per joint, in the same order; an array may be empty when not measured.\nstring[] name\nfloat64[] position\nfloat64[] velocity\nfloat64[] effort',
  'diagnostic_msgs/KeyValue': 'string key\nstring value',
  'diagnostic_msgs/DiagnosticStatus':
    'byte OK=0\nbyte WARN=1\nbyte ERROR=2\nbyte STALE=3\nbyte level\nstring name\nstring message\nstring hardware_id\nKeyValue[] values',
  'diagnostic_msgs/DiagnosticArray': 'std_msgs/Header header\nDiagnosticStatus[] status',
  // /rosout is in nearly every recording; shipping it lets bags without (or with placeholder)
  // definitions decode their log messages.
  // Every ROS 2 from Iron on records service events with this header (from memory: the
  // service_msgs package of rcl_interfaces).
  'service_msgs/ServiceEventInfo':
    'uint8 REQUEST_SENT = 0\nuint8 REQUEST_RECEIVED = 1\nuint8 RESPONSE_SENT = 2\nuint8 RESPONSE_RECEIVED = 3\nuint8 event_type\nbuiltin_interfaces/Time stamp\nchar[16] client_gid\nint64 sequence_number',
  // Goal identity and status of actions (from memory: unique_identifier_msgs and action_msgs).
  'unique_identifier_msgs/UUID': 'uint8[16] uuid',
  'action_msgs/GoalInfo': 'unique_identifier_msgs/UUID goal_id\nbuiltin_interfaces/Time stamp',
  'action_msgs/GoalStatus':
    'int8 STATUS_UNKNOWN = 0\nint8 STATUS_ACCEPTED = 1\nint8 STATUS_EXECUTING = 2\nint8 STATUS_CANCELING = 3\nint8 STATUS_SUCCEEDED = 4\nint8 STATUS_CANCELED = 5\nint8 STATUS_ABORTED = 6\nGoalInfo goal_info\nint8 status',
  'action_msgs/GoalStatusArray': 'GoalStatus[] status_list',
  'rcl_interfaces/Log':
    'byte DEBUG=10\nbyte INFO=20\nbyte WARN=30\nbyte ERROR=40\nbyte FATAL=50\nbuiltin_interfaces/Time stamp\nuint8 level\nstring name\nstring msg\nstring file\nstring function\nuint32 line',
};

/** Shipped service definitions (`.srv` text: request, `---`, response), keyed `pkg/srv/Name`. */
export const STANDARD_SERVICES: Record<string, string> = {
  // Cancelling action goals (from memory: action_msgs/srv/CancelGoal).
  'action_msgs/srv/CancelGoal':
    'GoalInfo goal_info\n---\nint8 ERROR_NONE = 0\nint8 ERROR_REJECTED = 1\nint8 ERROR_UNKNOWN_GOAL_ID = 2\nint8 ERROR_GOAL_TERMINATED = 3\nint8 return_code\nGoalInfo[] goals_canceling',
};

/** The shipped single-type `.msg` texts, keyed `pkg/msg/Type`. */
export function builtinMessages(): ReadonlyMap<string, string> {
  const out = new Map<string, string>();
  for (const [k, v] of Object.entries(STANDARD)) out.set(canonicalType(k), v);
  for (const [k, v] of Object.entries(projectMessages())) out.set(canonicalType(k), v);
  return out;
}

let project: Record<string, string> | undefined;

/** The project's own messages from the top-level `msg/` folder, as `antiphon/<Name>`. */
function projectMessages(): Record<string, string> {
  if (project) return project;
  project = {};
  // src/bag/*.ts (tests) is two levels below the package root; dist/src/bag/*.js three.
  for (const rel of ['../../msg/', '../../../msg/']) {
    const dir = fileURLToPath(new URL(rel, import.meta.url));
    let names: string[];
    try {
      names = readdirSync(dir).filter((n) => n.endsWith('.msg'));
    } catch {
      continue;
    }
    for (const n of names.sort()) project[`antiphon/${n.slice(0, -4)}`] = readFileSync(dir + n, 'utf8').replace(/\s+$/, '');
    if (names.length > 0) break;
  }
  return project;
}

/** The single-type text (no dependencies) of a shipped type, or undefined. */
export function builtinText(type: string): string | undefined {
  const key = shortType(type);
  return STANDARD[key] ?? projectMessages()[key];
}

/** The types antiphon ships definitions for (`pkg/msg/Type`). */
export function builtinTypes(): string[] {
  return [...Object.keys(STANDARD), ...Object.keys(projectMessages())].map(canonicalType).sort();
}

/**
 * The full multi-definition text of `type` (dependencies appended once each, in order of first
 * use, in the standard `====`/`MSG: pkg/Type` form), using `lookup` for single-type texts.
 * Throws InputError `bag.no_definition` naming the missing type.
 */
export function assembleDefinition(type: string, lookup: (shortName: string) => string | undefined = builtinText): string {
  const order: { name: string; text: string }[] = [];
  const seen = new Set<string>();
  const visit = (name: string, from: string | undefined): void => {
    if (seen.has(name)) return;
    seen.add(name);
    const text = lookup(name);
    if (text === undefined) {
      throw new InputError({
        code: 'bag.no_definition',
        message: `no message definition for ${canonicalType(name)}${from ? ` (needed by ${canonicalType(from)})` : ''}`,
        hint: `antiphon ships ${builtinTypes().length} types; pass the definition text for others`,
      });
    }
    order.push({ name, text });
    const pkg = name.split('/')[0]!;
    for (const dep of fieldDependencies(pkg, text)) visit(dep, name);
  };
  visit(shortType(type), undefined);
  return joinDefinition(order);
}

/** Shipped full definition text of a type, or undefined when antiphon does not ship it. */
export function builtinDefinition(type: string): string | undefined {
  if (builtinText(type) === undefined) return undefined;
  try {
    return assembleDefinition(type);
  } catch {
    return undefined;
  }
}
