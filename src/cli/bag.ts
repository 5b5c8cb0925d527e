/**
 * `antiphon bag info <bag>` and `antiphon bag dump <bag>`: look into rosbag2 recordings (MCAP or
 * sqlite3, directories or single files) with the same readers replay uses.
 */
import type { Command } from 'commander';
import { bagDecoders, describeQos, openBag, toJsonValue, type Bag } from '../bag/index.js';
import { EXIT_CHECKS_FAILED, EXIT_OK, InputError, formatProblem, type Problem } from '../util/errors.js';
import { printable } from '../util/printable.js';
import { integerOption, numberOption, printJson, printText, runCommand } from './common.js';

/** Warnings meaning some recorded messages could not be read. */
const DATA_LOSS = new Set([
  'bag.mcap_chunk_corrupt', 'bag.mcap_truncated', 'bag.mcap_no_footer', 'bag.mcap_unknown_channel', 'bag.sqlite_unknown_topic',
  'bag.messages_missing', 'bag.invalid_log_time', 'bag.sqlite_bad_timestamp',
]);
/** Per topic, this many undecodable messages are reported one by one, then only counted. */
const REPORT_PER_TOPIC = 20;

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

function infoJson(bag: Bag): Record<string, unknown> {
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
      type: t.type,
      serialization_format: t.serializationFormat,
      count: t.count,
      offered_qos: t.offeredQos,
      ...(t.typeHash ? { type_hash: t.typeHash } : {}),
    })),
    warnings: bag.warnings.map((w) => ({ code: w.code, message: w.message, ...(w.where ? { where: w.where } : {}) })),
  };
}

function infoText(bag: Bag): string {
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
  const shown = topics.map((t) => ({ name: printable(t.name), type: printable(t.type), fmt: printable(t.serializationFormat) }));
  const wName = Math.max(0, ...shown.map((t) => t.name.length));
  const wType = Math.max(0, ...shown.map((t) => t.type.length));
  const wCount = Math.max(0, ...topics.map((t) => String(t.count).length));
  topics.forEach((t, k) => {
    const s = shown[k]!;
    L.push(`  ${s.name.padEnd(wName)}  ${s.type.padEnd(wType)}  ${String(t.count).padStart(wCount)} msgs  ${s.fmt}`);
    for (const q of t.offeredQos) L.push(`  ${''.padEnd(wName)}  QoS: ${printable(describeQos(q))}`);
  });
  for (const w of bag.warnings) L.push(`warning:   ${printable(formatProblem(w))}`);
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
  definitions?: string;
}

async function dump(path: string, opts: DumpOptions): Promise<number> {
  const start = numberOption('--start', opts.start, 0, 1e10);
  const end = numberOption('--end', opts.end, 0, 1e10);
  const limit = integerOption('--limit', opts.limit, 0, Number.MAX_SAFE_INTEGER);
  if (start !== undefined && end !== undefined && end < start) {
    throw new InputError({ code: 'cli.bad_range', message: `--end ${end} is before --start ${start}`, where: { option: '--end' } });
  }
  let extra: Map<string, { encoding: string; text: string; origin: string }> | undefined;
  if (opts.definitions !== undefined) {
    extra = await withBag(opts.definitions, (other) => new Map(other.definitions()));
  }
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
    const decoders = bagDecoders(bag, extra ? { extra } : {});
    const failures = new Map<string, number>();
    let failed = 0;
    let broken = false;
    const onError = (err: NodeJS.ErrnoException): void => {
      if (err.code === 'EPIPE') broken = true;
    };
    process.stdout.on('error', onError);
    try {
      let out = '';
      let n = 0;
      const flush = async (): Promise<void> => {
        if (out === '' || broken) return;
        const ok = process.stdout.write(out);
        out = '';
        if (!ok) {
          await new Promise<void>((resolve) => {
            const done = (): void => {
              process.stdout.off('drain', done);
              process.stdout.off('error', done);
              resolve();
            };
            process.stdout.on('drain', done);
            process.stdout.on('error', done);
          });
        } else {
          // Let a closed pipe (EPIPE, e.g. `| head`) be noticed.
          await new Promise<void>((resolve) => setImmediate(resolve));
        }
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
        let value: unknown;
        try {
          value = decoders.decode(m.type, m.data, { topic: m.topic, logTimeNs: m.logTimeNs });
        } catch (err) {
          if (!(err instanceof InputError)) throw err;
          failed++;
          const k = (failures.get(m.topic) ?? 0) + 1;
          failures.set(m.topic, k);
          if (k <= REPORT_PER_TOPIC) {
            const p: Problem = err.problems[0]!;
            process.stderr.write(`antiphon: topic ${printable(m.topic)}, log time ${m.logTimeNs} ns: ${printable(p.message)}${p.hint ? ` (${printable(p.hint)})` : ''}\n`);
          }
          continue;
        }
        let line: string;
        try {
          line = JSON.stringify({ topic: m.topic, type: m.type, log_time_ns: m.logTimeNs.toString(), message: toJsonValue(value) }) + '\n';
        } catch (err) {
          // A message too large for one JavaScript string (about 512 MB of text): reported, counted.
          if (!(err instanceof RangeError)) throw err;
          failed++;
          process.stderr.write(`antiphon: topic ${printable(m.topic)}, log time ${m.logTimeNs} ns: message of ${m.data.length} bytes is too large to print as one JSON line\n`);
          continue;
        }
        out += line;
        if (out.length >= 1 << 16) await flush();
      }
      await flush();
    } finally {
      // After a broken pipe, later write errors may still arrive: keep swallowing them.
      if (!broken) process.stdout.off('error', onError);
    }
    if (broken) return EXIT_OK;
    for (const [topic, k] of failures) {
      if (k > REPORT_PER_TOPIC) process.stderr.write(`antiphon: topic ${topic}: ${k - REPORT_PER_TOPIC} more messages could not be decoded\n`);
    }
    const lost = bag.warnings.filter((w) => DATA_LOSS.has(w.code));
    for (const w of bag.warnings) process.stderr.write(`antiphon: warning: ${printable(formatProblem(w))}\n`);
    return failed > 0 || lost.length > 0 ? EXIT_CHECKS_FAILED : EXIT_OK;
  });
}

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
    .action(async (path: string, opts: { json?: boolean }) =>
      runCommand(!!opts.json, () =>
        withBag(path, (b) => {
          if (opts.json) printJson({ ok: true, ...infoJson(b) });
          else printText(infoText(b));
          // Listed, and exit 1: some recorded messages cannot be read (cut, damaged, bad times).
          return b.warnings.some((w) => DATA_LOSS.has(w.code)) ? EXIT_CHECKS_FAILED : EXIT_OK;
        }),
      ),
    );

  bag
    .command('dump')
    .description(
      'Every message decoded, one JSON line each: {"topic","type","log_time_ns","message"} (64-bit integers as strings, uint8/byte arrays as base64). ' +
        'Messages that cannot be decoded are reported on stderr and make the exit code 1.',
    )
    .argument('<bag>', 'bag directory, .mcap or .db3 file')
    .option('--topic <name...>', 'only these topics (repeatable)')
    .option('--start <s>', 'skip messages before this many seconds after the bag start')
    .option('--end <s>', 'stop after this many seconds after the bag start (inclusive)')
    .option('--limit <n>', 'stop after n messages')
    .option('--definitions <bag>', 'take message definitions from this other bag first (e.g. the MCAP twin of a .db3 without them)')
    .action(async (path: string, opts: DumpOptions) => runCommand(false, () => dump(path, opts)));
}
