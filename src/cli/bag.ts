/**
 * `antiphon bag info <bag>` and `antiphon bag dump <bag>`: look into rosbag2 recordings (MCAP or
 * sqlite3, directories or single files) with the same readers replay uses.
 */
import type { Command } from 'commander';
import { bagDecoders, describeQos, openBag, toJsonValue, type Bag } from '../bag/index.js';
import type { DefinitionOrigin, MessageDecoders } from '../bag/decode.js';
import { canonicalType } from '../bag/definitions.js';
import { loadDefinitionSources } from '../bag/definition-sources.js';
import { howToSupply, SOURCE_WORDS } from '../bag/library.js';
import { EXIT_CHECKS_FAILED, EXIT_OK, InputError, formatPlace, problemToJson } from '../util/errors.js';
import { warnOnce } from '../util/log.js';
import { printable } from '../util/printable.js';
import { integerOption, numberOption, printJson, printText, runCommand, stdoutFailed, writeStdout } from './common.js';

/** Warnings meaning some recorded messages could not be read. */
const DATA_LOSS = new Set([
  'bag.mcap_chunk_corrupt', 'bag.mcap_truncated', 'bag.mcap_no_footer', 'bag.mcap_unknown_channel', 'bag.sqlite_unknown_topic',
  'bag.messages_missing', 'bag.invalid_log_time', 'bag.sqlite_bad_timestamp',
]);

function seconds(ns: bigint): string {
  const neg = ns < 0n;
  const a = neg ? -ns : ns;
  return `${neg ? '-' : ''}${a / 1_000_000_000n}.${(a % 1_000_000_000n).toString().padStart(9, '0')}`;
}

function isoTime(ns: bigint): string {
  // Floor division, so a time before the epoch keeps a non-negative fraction of a second.
  const frac = ((ns % 1_000_000_000n) + 1_000_000_000n) % 1_000_000_000n;
  const d = new Date(Number((ns - frac) / 1_000_000n));
  if (Number.isNaN(d.getTime())) return '?';
  return d.toISOString().replace(/\.\d{3}Z$/, `.${frac.toString().padStart(9, '0')}Z`);
}

function originJson(o: DefinitionOrigin): Record<string, unknown> {
  return { source: SOURCE_WORDS[o.source], ...(o.from !== undefined ? { from: o.from } : {}), ...(o.problem ? { problem: problemToJson(o.problem) } : {}) };
}

function originText(o: DefinitionOrigin): string {
  if (o.source !== 'missing') return `${SOURCE_WORDS[o.source]}${o.from && o.from !== 'built-in' ? ` (${o.from})` : ''}`;
  const place = o.problem ? formatPlace(o.problem.where) : '';
  return `missing${o.problem ? `: ${place ? `${place}: ` : ''}${o.problem.message}${o.problem.hint ? ` (${o.problem.hint})` : ''}` : ''}`;
}

function infoJson(bag: Bag, dec: MessageDecoders): Record<string, unknown> {
  return {
    path: bag.path,
    storage: bag.storage,
    files: bag.files,
    start_ns: bag.startNs.toString(),
    end_ns: bag.endNs.toString(),
    duration_ns: (bag.endNs - bag.startNs).toString(),
    message_count: bag.messageCount,
    topics: bag.topics().map((t) => ({
      name: t.name,
      type: canonicalType(t.type),
      ...(canonicalType(t.type) !== t.type ? { recorded_type: t.type } : {}),
      definition: originJson(dec.origin(t.type)),
      serialization_format: t.serializationFormat,
      count: t.count,
      offered_qos: t.offeredQos,
      ...(t.typeHash ? { type_hash: t.typeHash } : {}),
    })),
    warnings: bag.warnings.map((w) => ({ code: w.code, message: w.message, ...(w.where ? { where: w.where } : {}) })),
  };
}

function infoText(bag: Bag, dec: MessageDecoders): string {
  const L: string[] = [];
  L.push(`bag:       ${printable(bag.path)}`);
  L.push(`storage:   ${bag.storage} (${bag.files.length} file${bag.files.length === 1 ? '' : 's'})`);
  for (const f of bag.files) L.push(`           ${printable(f)}`);
  if (bag.messageCount > 0) {
    L.push(`duration:  ${seconds(bag.endNs - bag.startNs)} s`);
    L.push(`start:     ${isoTime(bag.startNs)} (${seconds(bag.startNs)})`);
    L.push(`end:       ${isoTime(bag.endNs)} (${seconds(bag.endNs)})`);
  } else {
    L.push('duration:  0 s (no messages)');
  }
  L.push(`messages:  ${bag.messageCount}`);
  const topics = bag.topics();
  L.push(`topics:    ${topics.length}`);
  // Names come from the file: control characters are escaped before they reach a terminal.
  const shown = topics.map((t) => ({ name: printable(t.name), type: printable(canonicalType(t.type)), fmt: printable(t.serializationFormat) }));
  const wName = Math.max(0, ...shown.map((t) => t.name.length));
  const wType = Math.max(0, ...shown.map((t) => t.type.length));
  const wCount = Math.max(0, ...topics.map((t) => String(t.count).length));
  topics.forEach((t, k) => {
    const s = shown[k]!;
    const type = canonicalType(t.type);
    L.push(`  ${s.name.padEnd(wName)}  ${s.type.padEnd(wType)}  ${String(t.count).padStart(wCount)} msgs  ${s.fmt}${type !== t.type ? `  (recorded as ${printable(t.type)})` : ''}`);
    L.push(`  ${''.padEnd(wName)}  definition: ${printable(originText(dec.origin(t.type)))}`);
    for (const q of t.offeredQos) L.push(`  ${''.padEnd(wName)}  QoS: ${printable(describeQos(q))}`);
  });
  // The warnings themselves went to stderr once, when they were found.
  if (bag.warnings.length > 0) L.push(`warnings:  ${bag.warnings.length} (on stderr)`);
  return L.join('\n');
}

async function withBag<T>(path: string, body: (bag: Bag) => Promise<T> | T): Promise<T> {
  const bag = await openBag(path);
  try {
    return await body(bag);
  } finally {
    bag.close();
  }
}

interface DumpOptions {
  topic?: string[];
  start?: string;
  end?: string;
  limit?: string;
  definitions?: string[];
  allowUndecoded?: boolean;
}

/** The definitions option of info and dump (repeatable). */
const collect = (v: string, acc: string[] = []): string[] => [...acc, v];


async function dump(path: string, opts: DumpOptions): Promise<number> {
  const start = numberOption('--start', opts.start, 0, 1e10);
  const end = numberOption('--end', opts.end, 0, 1e10);
  const limit = integerOption('--limit', opts.limit, 0, Number.MAX_SAFE_INTEGER);
  if (start !== undefined && end !== undefined && end < start) {
    throw new InputError({ code: 'cli.bad_range', message: `--end ${end} is before --start ${start}`, where: { option: '--end' } });
  }
  const sources = await loadDefinitionSources(opts.definitions);
  return withBag(path, async (bag) => {
    const known = new Set(bag.topics().map((t) => t.name));
    for (const t of opts.topic ?? []) {
      if (!known.has(t)) {
        throw new InputError({
          code: 'cli.unknown_topic',
          message: `topic ${t} is not in the bag`,
          where: { option: '--topic', topic: t },
          hint: `topics: ${[...known].join(', ') || '(none)'}`,
        });
      }
    }
    const toNs = (s: number): bigint => bag.startNs + BigInt(Math.round(s * 1e9));
    const decoders = bagDecoders(bag, { definitions: sources });
    // Per topic: how many messages were left undecoded, the type and the first reason.
    const failures = new Map<string, { type: string; count: number; reason: string }>();
    let failed = 0;
    let broken = false;
    {
      let out = '';
      let n = 0;
      // The one stdout writer (src/cli/common.ts): a closed pipe ends the dump quietly, any other
      // write error (ENOSPC) is reported by runCommand with a non-zero exit.
      const flush = async (): Promise<void> => {
        if (out === '' || broken) return;
        const ok = await writeStdout(out);
        out = '';
        if (!ok) broken = true;
      };
      const read = {
        ...(opts.topic ? { topics: opts.topic } : {}),
        ...(start !== undefined ? { startNs: toNs(start) } : {}),
        ...(end !== undefined ? { endNs: toNs(end) } : {}),
      };
      for (const m of bag.messages(read)) {
        if (limit !== undefined && n >= limit) break;
        if (broken) break;
        n++;
        const type = canonicalType(m.type);
        let value: unknown;
        try {
          value = decoders.decode(m.type, m.data, { topic: m.topic });
        } catch (err) {
          if (!(err instanceof InputError)) throw err;
          failed++;
          const p = err.problems[0]!;
          const f = failures.get(m.topic) ?? { type, count: 0, reason: p.message };
          f.count++;
          failures.set(m.topic, f);
          // Nothing dropped: the message as it was recorded, with why it is not decoded.
          out +=
            JSON.stringify({
              topic: m.topic,
              type,
              log_time_ns: m.logTimeNs.toString(),
              cdr_base64: Buffer.from(m.data.buffer, m.data.byteOffset, m.data.byteLength).toString('base64'),
              undecoded: p.message,
            }) + '\n';
          if (out.length >= 1 << 16) await flush();
          continue;
        }
        let line: string;
        try {
          line = JSON.stringify({ topic: m.topic, type, log_time_ns: m.logTimeNs.toString(), message: toJsonValue(value) }) + '\n';
        } catch (err) {
          // A message too large for one JavaScript string (about 512 MB of text): reported, counted.
          if (!(err instanceof RangeError)) throw err;
          failed++;
          const f = failures.get(m.topic) ?? { type, count: 0, reason: `a message of ${m.data.length} bytes is too large to print as one JSON line` };
          f.count++;
          failures.set(m.topic, f);
          continue;
        }
        out += line;
        if (out.length >= 1 << 16) await flush();
      }
      await flush();
    }
    if (broken || stdoutFailed()) return EXIT_OK;
    // One warning per topic, never one per message (the bag's own warnings were given when found).
    for (const n of decoders.notes) warnOnce('bag', n);
    for (const [topic, f] of failures) {
      warnOnce(
        'bag',
        {
          code: 'bag.undecoded',
          message: `${f.count} message${f.count === 1 ? '' : 's'} of type ${f.type} left undecoded (emitted as cdr_base64): ${f.reason}`,
          where: { topic },
          hint: howToSupply(f.type),
        },
        { type: f.type, count: f.count },
      );
    }
    const lost = bag.warnings.filter((w) => DATA_LOSS.has(w.code));
    return (failed > 0 && !opts.allowUndecoded) || lost.length > 0 ? EXIT_CHECKS_FAILED : EXIT_OK;
  });
}

const DEFINITIONS_HELP =
  'more message definitions, searched after the bag`s own and before AMENT_PREFIX_PATH and the built-in ones (repeatable): ' +
  'another bag, a folder of ROS packages (<pkg>/msg|srv|action/…) or an install prefix (share/<pkg>/…)';

export function register(program: Command): void {
  const bag = program.command('bag').description('Inspect rosbag2 recordings (MCAP or sqlite3; a bag directory or one storage file).');

  bag
    .command('info')
    .description(
      'Storage, duration, start and end, message count, topics with types, counts and QoS (read from the storage files). ' +
        'Warnings are listed; the exit code is 1 when some recorded messages cannot be read (a cut or damaged file, invalid times, fewer than metadata.yaml promises).',
    )
    .argument('<bag>', 'bag directory, .mcap or .db3 file')
    .option('--json', 'one JSON object on stdout')
    .option('--definitions <bag|dir>', DEFINITIONS_HELP, collect)
    .action(async (path: string, opts: { json?: boolean; definitions?: string[] }) =>
      runCommand(!!opts.json, async () => {
        const sources = await loadDefinitionSources(opts.definitions);
        return withBag(path, (b) => {
          const dec = bagDecoders(b, { definitions: sources });
          if (opts.json) printJson({ ok: true, ...infoJson(b, dec) });
          else printText(infoText(b, dec));
          // Exit 1: some recorded messages cannot be read (cut, damaged, bad times, fewer than promised).
          return b.warnings.some((w) => DATA_LOSS.has(w.code)) ? EXIT_CHECKS_FAILED : EXIT_OK;
        });
      }),
    );

  bag
    .command('dump')
    .description(
      'Every message, one JSON line each: {"topic","type","log_time_ns","message"} (64-bit integers as strings, uint8/byte arrays as base64). ' +
        'A message that cannot be decoded is emitted as {"topic","type","log_time_ns","cdr_base64","undecoded":"<reason>"}, with one warning per topic on stderr, and makes the exit code 1 (unless --allow-undecoded).',
    )
    .argument('<bag>', 'bag directory, .mcap or .db3 file')
    .option('--topic <name...>', 'only these topics (repeatable)')
    .option('--start <s>', 'skip messages before this many seconds after the bag start')
    .option('--end <s>', 'stop after this many seconds after the bag start (inclusive)')
    .option('--limit <n>', 'stop after n messages')
    .option('--definitions <bag|dir>', DEFINITIONS_HELP, collect)
    .option('--allow-undecoded', 'exit 0 even when some messages were left undecoded')
    .action(async (path: string, opts: DumpOptions) => runCommand(false, () => dump(path, opts)));
}
