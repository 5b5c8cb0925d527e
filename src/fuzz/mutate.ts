/**
 * Mutators for the fuzzer: bytes (truncations, bit flips, interesting values, huge declared
 * sizes), MCAP records (wrong lengths, duplicated, dropped and shuffled records, huge chunk
 * sizes, invalid log times), text (lines dropped, duplicated, shuffled; control characters;
 * numbers replaced by extreme or non-decimal ones; YAML aliases) and sqlite3 rows (NULLs and
 * wrong types in every column rosbag2 defines). Every choice comes from the seeded `Rng`.
 */
import type { Rng } from '../util/rng.js';

export type Mutation = { name: string; bytes: Uint8Array };

const INTERESTING_32 = [0, 1, 0x7f, 0x80, 0xff, 0x7fff, 0xffff, 0x7fffffff, 0x80000000, 0xfffffffe, 0xffffffff];
const INTERESTING_64 = [0n, 1n, 0x7fffffffffffffffn, 0x8000000000000000n, 0xffffffffffffffffn, 1n << 40n, 1_000_000_000_000n, 1_800_000_000n];
const CONTROL = ['\u0000', '\u0007', '\u0008', '\t', '\n', '\r', '\u001b[2J', '\u001b]0;x\u0007', '\u007f', '\u009b', '\u2028', '\ufeff', '\\', '"', "'"];

function pick<T>(rng: Rng, xs: readonly T[]): T {
  return xs[rng.int(xs.length)]!;
}

export function truncate(rng: Rng, b: Uint8Array): Uint8Array {
  return b.slice(0, rng.int(b.length + 1));
}

export function bitFlips(rng: Rng, b: Uint8Array): Uint8Array {
  const out = b.slice();
  const n = 1 + rng.int(8);
  for (let i = 0; i < n && out.length > 0; i++) out[rng.int(out.length)]! ^= 1 << rng.int(8);
  return out;
}

export function interestingValue(rng: Rng, b: Uint8Array): Uint8Array {
  const out = b.slice();
  if (out.length < 8) return out;
  const at = rng.int(out.length - 8);
  const v = new DataView(out.buffer);
  if (rng.uniform() < 0.5) v.setUint32(at, pick(rng, INTERESTING_32) >>> 0, true);
  else v.setBigUint64(at, pick(rng, INTERESTING_64), true);
  return out;
}

export function insertBytes(rng: Rng, b: Uint8Array): Uint8Array {
  const at = rng.int(b.length + 1);
  const n = 1 + rng.int(16);
  const ins = new Uint8Array(n);
  for (let i = 0; i < n; i++) ins[i] = rng.int(256);
  const out = new Uint8Array(b.length + n);
  out.set(b.subarray(0, at));
  out.set(ins, at);
  out.set(b.subarray(at), at + n);
  return out;
}

export function deleteBytes(rng: Rng, b: Uint8Array): Uint8Array {
  if (b.length === 0) return b;
  const at = rng.int(b.length);
  const n = 1 + rng.int(Math.min(64, b.length - at));
  const out = new Uint8Array(b.length - n);
  out.set(b.subarray(0, at));
  out.set(b.subarray(at + n), at);
  return out;
}

/** The generic byte mutators, chosen at random; 1–3 applied. */
export function mutateBytes(rng: Rng, b: Uint8Array): Mutation {
  const ops: [string, (r: Rng, x: Uint8Array) => Uint8Array][] = [
    ['truncate', truncate],
    ['bitflip', bitFlips],
    ['interesting', interestingValue],
    ['insert', insertBytes],
    ['delete', deleteBytes],
  ];
  let out = b;
  const names: string[] = [];
  const n = 1 + rng.int(3);
  for (let i = 0; i < n; i++) {
    const [name, f] = pick(rng, ops);
    out = f(rng, out);
    names.push(name);
  }
  return { name: names.join('+'), bytes: out };
}

// ---- MCAP records ---------------------------------------------------------------------------

interface Rec {
  at: number;
  op: number;
  len: number;
}

/** Frame the records after the magic; stops at the first that does not fit. */
export function mcapRecords(b: Uint8Array): Rec[] {
  const out: Rec[] = [];
  if (b.length < 8) return out;
  const v = new DataView(b.buffer, b.byteOffset, b.byteLength);
  let p = 8;
  while (p + 9 <= b.length) {
    const len = Number(v.getBigUint64(p + 1, true));
    if (p + 9 + len > b.length) break;
    out.push({ at: p, op: b[p]!, len });
    p += 9 + len;
  }
  return out;
}

function splice(b: Uint8Array, at: number, remove: number, insert: Uint8Array): Uint8Array {
  const out = new Uint8Array(b.length - remove + insert.length);
  out.set(b.subarray(0, at));
  out.set(insert, at);
  out.set(b.subarray(at + remove), at + insert.length);
  return out;
}

/** Structure-aware MCAP mutations. Falls back to byte mutations when nothing frames. */
export function mutateMcap(rng: Rng, b: Uint8Array): Mutation {
  const recs = mcapRecords(b);
  if (recs.length === 0 || rng.uniform() < 0.25) return mutateBytes(rng, b);
  const out = b.slice();
  const v = new DataView(out.buffer);
  const r = pick(rng, recs);
  const choice = rng.int(9);
  switch (choice) {
    case 0: {
      // A wrong record length: off by a little, or huge.
      const d = pick(rng, [-9, -1, 1, 7, 1 << 20, 2 ** 40]);
      v.setBigUint64(r.at + 1, BigInt(Math.max(0, r.len + d)), true);
      return { name: 'mcap-length', bytes: out };
    }
    case 1: {
      const chunk = recs.filter((x) => x.op === 0x06);
      if (chunk.length === 0) break;
      const c = pick(rng, chunk);
      // uncompressed_size (after start/end times) and records length.
      const field = rng.uniform() < 0.7 ? c.at + 9 + 16 : c.at + 9 + 16 + 8 + 4;
      v.setBigUint64(field, pick(rng, INTERESTING_64), true);
      return { name: 'mcap-chunk-size', bytes: out };
    }
    case 2: {
      const msgs = recs.filter((x) => x.op === 0x05);
      if (msgs.length === 0) break;
      const m = pick(rng, msgs);
      v.setBigUint64(m.at + 9 + 6, pick(rng, [0x8000000000000000n, 0xffffffffffffffffn, 0n, 1n << 62n]), true);
      return { name: 'mcap-log-time', bytes: out };
    }
    case 3: {
      // Duplicate a record (a Channel or Schema again, possibly with a changed byte).
      const dup = b.slice(r.at, r.at + 9 + r.len);
      if (dup.length > 12 && rng.uniform() < 0.5) dup[12 + rng.int(dup.length - 12)]! ^= 0x20;
      return { name: 'mcap-duplicate', bytes: splice(b, r.at + 9 + r.len, 0, dup) };
    }
    case 4:
      return { name: 'mcap-drop', bytes: splice(b, r.at, 9 + r.len, new Uint8Array(0)) };
    case 5: {
      // Swap two records.
      const s = pick(rng, recs);
      if (s === r) break;
      const [a, c] = r.at < s.at ? [r, s] : [s, r];
      const A = b.slice(a.at, a.at + 9 + a.len);
      const C = b.slice(c.at, c.at + 9 + c.len);
      const mid = b.slice(a.at + 9 + a.len, c.at);
      const joined = new Uint8Array(A.length + mid.length + C.length);
      joined.set(C);
      joined.set(mid, C.length);
      joined.set(A, C.length + mid.length);
      return { name: 'mcap-shuffle', bytes: splice(b, a.at, c.at + 9 + c.len - a.at, joined) };
    }
    case 6:
      // Cut exactly at a record boundary (loses the summary, keeps whole chunks).
      return { name: 'mcap-cut-boundary', bytes: b.slice(0, r.at) };
    case 7: {
      // A declared string or array length inside the record set huge.
      if (r.len < 8) break;
      const at = r.at + 9 + rng.int(r.len - 4);
      v.setUint32(at, pick(rng, INTERESTING_32) >>> 0, true);
      return { name: 'mcap-inner-length', bytes: out };
    }
    case 8: {
      // Control characters into a Channel's topic (after id u16, schema id u16, length u32).
      const ch = recs.filter((x) => x.op === 0x04);
      if (ch.length === 0) break;
      const c = pick(rng, ch);
      const tlen = v.getUint32(c.at + 9 + 4, true);
      if (tlen > 1 && c.at + 13 + 4 + tlen <= out.length) out[c.at + 13 + 4 + 1 + rng.int(tlen - 1)] = pick(rng, [0x1b, 0x0a, 0x07, 0x00, 0x9b]);
      return { name: 'mcap-topic-control', bytes: out };
    }
  }
  return mutateBytes(rng, b);
}

// ---- text -------------------------------------------------------------------------------------

const NUMBERS = ['1e308', '-1e308', '1e-320', 'NaN', '.nan', '.inf', '-.inf', '0x10', '0b101', '0o17', '-0', '9007199254740993', '1_000', '+5', '1e', '', '~', 'null', '2147483648', '-2147483649', '18446744073709551616', '10000000'];

/** Text mutations (CSV, YAML): line-level changes, numbers, control characters, aliases. */
export function mutateText(rng: Rng, text: string, kind: 'csv' | 'yaml'): Mutation {
  let lines = text.split('\n');
  const names: string[] = [];
  const n = 1 + rng.int(3);
  for (let i = 0; i < n; i++) {
    const k = rng.int(10);
    const li = rng.int(Math.max(1, lines.length));
    switch (k) {
      case 0:
        lines.splice(li, 1);
        names.push('drop-line');
        break;
      case 1:
        lines.splice(li, 0, lines[li] ?? '');
        names.push('dup-line');
        break;
      case 2: {
        const lj = rng.int(Math.max(1, lines.length));
        [lines[li], lines[lj]] = [lines[lj] ?? '', lines[li] ?? ''];
        names.push('swap-lines');
        break;
      }
      case 3: {
        // Replace one number with an extreme or non-decimal one.
        const line = lines[li] ?? '';
        const nums = [...line.matchAll(/-?\d+(\.\d+)?([eE][-+]?\d+)?/g)];
        if (nums.length > 0) {
          const m = pick(rng, nums);
          lines[li] = line.slice(0, m.index) + pick(rng, NUMBERS) + line.slice(m.index! + m[0].length);
        }
        names.push('number');
        break;
      }
      case 4: {
        const line = lines[li] ?? '';
        const at = rng.int(line.length + 1);
        lines[li] = line.slice(0, at) + pick(rng, CONTROL) + line.slice(at);
        names.push('control');
        break;
      }
      case 5:
        lines = lines.slice(0, rng.int(lines.length + 1));
        names.push('truncate');
        break;
      case 6:
        if (kind === 'yaml') {
          // Anchors and aliases, a deep nesting or a long list: bounded expansion is expected.
          const extra = pick(rng, [
            'a: &a [x, x, x, x, x, x, x, x, x]\nb: &b [*a, *a, *a, *a, *a, *a, *a, *a]\nc: &c [*b, *b, *b, *b, *b, *b, *b, *b]\nd: [*c, *c, *c, *c, *c, *c, *c, *c]',
            'deep: ' + '['.repeat(2000) + ']'.repeat(2000),
            'x: &x 1\ny: *x\nz: *x',
            'k: *missing',
            '? [complex, key]\n: 1',
            'dup: 1\ndup: 2',
          ]);
          lines.splice(li, 0, ...extra.split('\n'));
          names.push('yaml-extra');
        } else {
          lines.splice(li, 0, lines[li]?.replace(/,/g, ';') ?? '', 't,fx,fy,fz,tx,ty,tz');
          names.push('csv-extra');
        }
        break;
      case 7: {
        // Indentation or separators off.
        const line = lines[li] ?? '';
        lines[li] = kind === 'yaml' ? (rng.uniform() < 0.5 ? '\t' + line : line.replace(/^ {2}/, '')) : line.replace(/,/, rng.uniform() < 0.5 ? ',,' : '');
        names.push('layout');
        break;
      }
      case 8: {
        const line = lines[li] ?? '';
        lines[li] = line + line.repeat(rng.int(50));
        names.push('long-line');
        break;
      }
      default: {
        // Shuffle a block of records (CSV rows keep the header).
        const from = 1 + rng.int(Math.max(1, lines.length - 1));
        const to = Math.min(lines.length, from + 2 + rng.int(20));
        const block = lines.slice(from, to);
        for (let a = block.length - 1; a > 0; a--) {
          const b = rng.int(a + 1);
          [block[a], block[b]] = [block[b]!, block[a]!];
        }
        lines.splice(from, block.length, ...block);
        names.push('shuffle');
      }
    }
  }
  return { name: names.join('+'), bytes: new TextEncoder().encode(lines.join(rng.uniform() < 0.05 ? '\r\n' : '\n')) };
}

// ---- sqlite3 -------------------------------------------------------------------------------

/** Column values that are wrong for rosbag2: NULL, text, blobs, reals, negative and huge integers. */
const SQL_VALUES = ['NULL', 'NULL', "'text'", "''", "x'00ff'", '1.5', '-5', '9223372036854775807', '-9223372036854775808', "'\u001b[31m\n'", '0'];

/** One SQL statement that plants a bad value in a rosbag2 table, or damages its structure. */
export function sqliteMutation(rng: Rng): { name: string; sql: string } {
  const v = pick(rng, SQL_VALUES);
  const cases: [string, string][] = [
    // Rows are chosen by position (deterministic), among the first ones a `--limit` dump reads.
    ['data', `UPDATE messages SET data = ${v} WHERE id IN (SELECT id FROM messages ORDER BY timestamp, id LIMIT ${1 + rng.int(3)} OFFSET ${rng.int(12)})`],
    ['timestamp', `UPDATE messages SET timestamp = ${v} WHERE id IN (SELECT id FROM messages ORDER BY id LIMIT ${1 + rng.int(3)} OFFSET ${rng.int(12)})`],
    ['topic_id', `UPDATE messages SET topic_id = ${v} WHERE id IN (SELECT id FROM messages ORDER BY id LIMIT 2 OFFSET ${rng.int(12)})`],
    ['topic-name', `UPDATE topics SET name = ${v} WHERE id = (SELECT MIN(id) FROM topics)`],
    ['topic-type', `UPDATE topics SET type = ${v} WHERE id = (SELECT MAX(id) FROM topics)`],
    ['topic-format', `UPDATE topics SET serialization_format = ${v}`],
    ['topic-qos', `UPDATE topics SET offered_qos_profiles = ${v}`],
    ['definition', `UPDATE message_definitions SET encoded_message_definition = ${v}`],
    ['definition-type', `UPDATE message_definitions SET topic_type = ${v}`],
    ['schema', `UPDATE schema SET schema_version = ${v}`],
    ['metadata', `UPDATE metadata SET metadata = ${v}`],
    ['dup-topic', 'INSERT INTO topics SELECT id + 1000, name, type, serialization_format, offered_qos_profiles, type_description_hash FROM topics LIMIT 1'],
    ['drop-topics', 'DELETE FROM topics'],
    ['drop-table', `DROP TABLE ${pick(rng, ['messages', 'topics', 'schema', 'metadata', 'message_definitions'])}`],
    ['data-trunc', 'UPDATE messages SET data = substr(data, 1, 5) WHERE id = (SELECT MIN(id) FROM messages)'],
    ['data-big', 'UPDATE messages SET data = zeroblob(300000) WHERE id = (SELECT MIN(id) FROM messages)'],
  ];
  // The message columns are read for every message: they get a third of the cases.
  const [name, sql] = rng.uniform() < 0.35 ? cases[rng.int(2)]! : pick(rng, cases);
  return { name: `sql-${name}`, sql };
}
