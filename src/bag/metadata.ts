/**
 * metadata.yaml: reading every version rosbag2 has written (1–9) and writing version 5.
 * Optional fields may be missing; 64-bit integers are read exactly (bigint).
 */
import { parse as parseYaml, parseDocument, YAMLParseError, stringify as stringifyYaml } from 'yaml';
import { InputError } from '../util/errors.js';
import type { QosProfile } from './types.js';

export interface MetadataTopic {
  readonly name: string;
  readonly type: string;
  readonly serializationFormat: string;
  /** The QoS as a YAML string (versions < 9 store it so; version 9 lists are re-serialized). */
  readonly offeredQosText: string;
  readonly offeredQos: readonly QosProfile[];
  readonly typeDescriptionHash: string;
  readonly messageCount: number;
}

export interface MetadataFile {
  readonly path: string;
  readonly startingTimeNs: bigint;
  readonly durationNs: bigint;
  readonly messageCount: number;
}

export interface BagMetadata {
  readonly version: number;
  /** '' when missing (very old bags): the storage is then recognised from the files. */
  readonly storageIdentifier: string;
  readonly durationNs: bigint;
  readonly startingTimeNs: bigint;
  readonly messageCount: number;
  readonly topics: readonly MetadataTopic[];
  readonly compressionFormat: string;
  readonly compressionMode: string;
  readonly relativeFilePaths: readonly string[];
  readonly files: readonly MetadataFile[];
  readonly customData: Readonly<Record<string, string>>;
  readonly rosDistro: string;
}

/** rosbag2 writes INT64_MAX as the starting time of an empty bag. */
export const INT64_MAX = 9223372036854775807n;

function asBigInt(v: unknown, fallback = 0n): bigint {
  if (typeof v === 'bigint') return v;
  if (typeof v === 'number' && Number.isFinite(v)) return BigInt(Math.trunc(v));
  if (typeof v === 'string' && /^-?\d+$/.test(v.trim())) return BigInt(v.trim());
  return fallback;
}

function asNumber(v: unknown, fallback = 0): number {
  if (typeof v === 'bigint') return Number(v);
  if (typeof v === 'number') return v;
  if (typeof v === 'string' && v.trim() !== '' && Number.isFinite(Number(v))) return Number(v);
  return fallback;
}

function asString(v: unknown, fallback = ''): string {
  if (typeof v === 'string') return v;
  if (v === null || v === undefined) return fallback;
  return String(v);
}

function asRecord(v: unknown): Record<string, unknown> {
  return v !== null && typeof v === 'object' && !Array.isArray(v) ? (v as Record<string, unknown>) : {};
}

function bigintsToNumbers(v: unknown): unknown {
  if (typeof v === 'bigint') return Number(v);
  if (Array.isArray(v)) return v.map(bigintsToNumbers);
  if (v !== null && typeof v === 'object') {
    return Object.fromEntries(Object.entries(v as Record<string, unknown>).map(([k, x]) => [k, bigintsToNumbers(x)]));
  }
  return v;
}

/**
 * Parse an `offered_qos_profiles` value: a YAML string (versions < 9, sqlite3 and MCAP channel
 * metadata) or an already-nested list (version 9). Returns [] for '' or unparseable text.
 */
export function parseQos(value: unknown): { profiles: QosProfile[]; text: string; error?: string } {
  if (value === null || value === undefined) return { profiles: [], text: '' };
  if (typeof value === 'string') {
    if (value.trim() === '') return { profiles: [], text: value };
    try {
      const parsed = parseYaml(value) as unknown;
      const list = Array.isArray(parsed) ? parsed : parsed && typeof parsed === 'object' ? [parsed] : [];
      return { profiles: list.map((p) => asRecord(p)), text: value };
    } catch (err) {
      return { profiles: [], text: value, error: (err as Error).message };
    }
  }
  const plain = bigintsToNumbers(value);
  const list = Array.isArray(plain) ? plain : [plain];
  const profiles = list.map((p) => asRecord(p));
  return { profiles, text: stringifyYaml(profiles).trimEnd() };
}

/** Parse metadata.yaml text. Throws InputError (code `bag.metadata_*`) naming `file`. */
export function parseMetadataYaml(text: string, file: string): BagMetadata {
  let root: unknown;
  try {
    const doc = parseDocument(text, { intAsBigInt: true, uniqueKeys: false });
    if (doc.errors.length > 0) throw doc.errors[0];
    root = doc.toJS({ maxAliasCount: 100 });
  } catch (err) {
    const e = err as YAMLParseError;
    const pos = e.linePos?.[0];
    throw new InputError({
      code: 'bag.metadata_yaml',
      message: `metadata.yaml is not valid YAML: ${e.message.split('\n')[0]}`,
      where: { file, ...(pos ? { line: pos.line, column: pos.col } : {}), ...(e.pos ? { byteOffset: e.pos[0] } : {}) },
    });
  }
  const top = asRecord(root);
  // The metadata table of sqlite3 bags holds the same document without the top key.
  const info = asRecord('rosbag2_bagfile_information' in top ? top['rosbag2_bagfile_information'] : top);
  if (Object.keys(info).length === 0 || !('version' in info || 'storage_identifier' in info || 'relative_file_paths' in info)) {
    throw new InputError({
      code: 'bag.metadata_not_rosbag2',
      message: 'metadata.yaml has no rosbag2_bagfile_information',
      where: { file, key: 'rosbag2_bagfile_information' },
      hint: 'this does not look like a rosbag2 bag directory',
    });
  }
  const version = asNumber(info['version'], 1);
  const topics: MetadataTopic[] = [];
  const rawTopics = Array.isArray(info['topics_with_message_count']) ? (info['topics_with_message_count'] as unknown[]) : [];
  for (const [i, raw] of rawTopics.entries()) {
    const entry = asRecord(raw);
    const tm = asRecord(entry['topic_metadata']);
    const name = asString(tm['name']);
    if (name === '') {
      throw new InputError({
        code: 'bag.metadata_topic',
        message: `topics_with_message_count[${i}] has no topic_metadata.name`,
        where: { file, key: `topics_with_message_count[${i}]` },
      });
    }
    const qos = parseQos(tm['offered_qos_profiles']);
    topics.push({
      name,
      type: asString(tm['type']),
      serializationFormat: asString(tm['serialization_format'], 'cdr'),
      offeredQosText: qos.text,
      offeredQos: qos.profiles,
      typeDescriptionHash: asString(tm['type_description_hash']),
      messageCount: asNumber(entry['message_count']),
    });
  }
  const rel = Array.isArray(info['relative_file_paths']) ? (info['relative_file_paths'] as unknown[]).map((p) => asString(p)) : [];
  const files: MetadataFile[] = [];
  if (Array.isArray(info['files'])) {
    for (const raw of info['files'] as unknown[]) {
      const f = asRecord(raw);
      files.push({
        path: asString(f['path']),
        startingTimeNs: asBigInt(asRecord(f['starting_time'])['nanoseconds_since_epoch']),
        durationNs: asBigInt(asRecord(f['duration'])['nanoseconds']),
        messageCount: asNumber(f['message_count']),
      });
    }
  }
  const customData: Record<string, string> = {};
  for (const [k, v] of Object.entries(asRecord(info['custom_data']))) customData[k] = asString(v);
  return {
    version,
    storageIdentifier: asString(info['storage_identifier']),
    durationNs: asBigInt(asRecord(info['duration'])['nanoseconds']),
    startingTimeNs: asBigInt(asRecord(info['starting_time'])['nanoseconds_since_epoch']),
    messageCount: asNumber(info['message_count']),
    topics,
    compressionFormat: asString(info['compression_format']),
    compressionMode: asString(info['compression_mode']),
    relativeFilePaths: rel,
    files,
    customData,
    rosDistro: asString(info['ros_distro']),
  };
}

/** A YAML double-quoted scalar (JSON strings are valid YAML double-quoted scalars). */
function q(s: string): string {
  return JSON.stringify(s);
}

/**
 * Write metadata.yaml in the version-5 layout (read by every distro from Humble on): QoS as an
 * embedded YAML string, `files` present, no custom_data / ros_distro. Each topic also carries its
 * `type_description_hash` (RIHS01, '' when unknown), the key version 7 added: rosbag2's readers
 * look a topic's keys up by name, so a reader of version 5 passes over it (from memory of the
 * rosbag2 sources), while antiphon and readers that know the key read it.
 * Deterministic: the same metadata gives the same text.
 */
export function formatMetadataYaml(m: Omit<BagMetadata, 'version' | 'customData' | 'rosDistro'>): string {
  const L: string[] = [];
  L.push('rosbag2_bagfile_information:');
  L.push('  version: 5');
  L.push(`  storage_identifier: ${m.storageIdentifier}`);
  L.push('  duration:');
  L.push(`    nanoseconds: ${m.durationNs}`);
  L.push('  starting_time:');
  L.push(`    nanoseconds_since_epoch: ${m.startingTimeNs}`);
  L.push(`  message_count: ${m.messageCount}`);
  if (m.topics.length === 0) L.push('  topics_with_message_count: []');
  else L.push('  topics_with_message_count:');
  for (const t of m.topics) {
    L.push('    - topic_metadata:');
    L.push(`        name: ${q(t.name)}`);
    L.push(`        type: ${q(t.type)}`);
    L.push(`        serialization_format: ${q(t.serializationFormat)}`);
    L.push(`        offered_qos_profiles: ${q(t.offeredQosText)}`);
    L.push(`        type_description_hash: ${q(t.typeDescriptionHash)}`);
    L.push(`      message_count: ${t.messageCount}`);
  }
  L.push(`  compression_format: ${q(m.compressionFormat)}`);
  L.push(`  compression_mode: ${q(m.compressionMode)}`);
  L.push('  relative_file_paths:');
  for (const p of m.relativeFilePaths) L.push(`    - ${q(p)}`);
  L.push('  files:');
  for (const f of m.files) {
    L.push(`    - path: ${q(f.path)}`);
    L.push('      starting_time:');
    L.push(`        nanoseconds_since_epoch: ${f.startingTimeNs}`);
    L.push('      duration:');
    L.push(`        nanoseconds: ${f.durationNs}`);
    L.push(`      message_count: ${f.messageCount}`);
  }
  return L.join('\n') + '\n';
}

// ---- QoS in words (for `bag info`) -------------------------------------------------------------

const HISTORY: Record<number, string> = { 0: 'system_default', 1: 'keep_last', 2: 'keep_all', 3: 'unknown' };
const RELIABILITY: Record<number, string> = { 0: 'system_default', 1: 'reliable', 2: 'best_effort', 3: 'unknown', 4: 'best_available' };
const DURABILITY: Record<number, string> = { 0: 'system_default', 1: 'transient_local', 2: 'volatile', 3: 'unknown', 4: 'best_available' };
const LIVELINESS: Record<number, string> = { 0: 'system_default', 1: 'automatic', 3: 'manual_by_topic', 4: 'unknown', 5: 'best_available' };

function enumName(v: unknown, names: Record<number, string>): string {
  if (typeof v === 'number') return names[v] ?? `unknown(${v})`;
  if (typeof v === 'string') return v.toLowerCase();
  return '?';
}

/** True for the several spellings of an infinite duration. */
export function isInfiniteDuration(d: unknown): boolean {
  const r = asRecord(d);
  const sec = asNumber(r['sec'], -1);
  const nsec = asNumber(r['nsec'], -1);
  return (
    (sec === 9223372036 && nsec === 854775807) ||
    (sec === 2147483647 && (nsec === 4294967295 || nsec === 2147483647)) ||
    (sec === 0 && nsec === 0) // rmw's "default" (unset) deadline / lifespan / lease
  );
}

function durationWords(d: unknown): string | undefined {
  if (d === null || typeof d !== 'object' || isInfiniteDuration(d)) return undefined;
  const r = asRecord(d);
  return `${asNumber(r['sec'])}.${String(asNumber(r['nsec'])).padStart(9, '0')} s`;
}

/** One line per profile, e.g. `reliable, volatile, keep_last depth 10`. */
export function describeQos(p: QosProfile): string {
  const parts = [enumName(p['reliability'], RELIABILITY), enumName(p['durability'], DURABILITY)];
  const history = enumName(p['history'], HISTORY);
  parts.push(history === 'keep_last' || history === 'unknown' ? `${history} depth ${asNumber(p['depth'])}` : history);
  const liveliness = enumName(p['liveliness'], LIVELINESS);
  if (liveliness !== 'automatic' && liveliness !== 'system_default') parts.push(`liveliness ${liveliness}`);
  for (const key of ['deadline', 'lifespan', 'liveliness_lease_duration']) {
    const w = durationWords(p[key]);
    if (w) parts.push(`${key} ${w}`);
  }
  return parts.join(', ');
}
