/**
 * Generic CDR decoding from message definitions, via @foxglove/rosmsg (parse) and
 * @foxglove/rosmsg2-serialization (read). Definitions are tried in this order: ones the caller
 * passes, the one the bag carries, the one antiphon ships. A definition that fails on a message
 * (throws, or leaves more than 3 bytes unread) is set aside for the next, once, with a warning:
 * some bags carry placeholder definitions.
 */
import { MessageReader } from '@foxglove/rosmsg2-serialization';
import { InputError, type Problem } from '../util/errors.js';
import { logger } from '../util/log.js';
import { builtinDefinition, canonicalType, parseDefinition } from './definitions.js';
import type { Bag, DefinitionText } from './types.js';

/** Trailing bytes a writer may leave as padding to a 4-byte boundary. */
const MAX_PADDING = 3;

interface Candidate {
  readonly origin: string;
  readonly encoding: string;
  readonly text: string;
  reader?: MessageReader | undefined;
  error?: string | undefined;
}

interface TypeState {
  candidates: Candidate[];
  preferred: number;
}

export interface DecoderOptions {
  /** Definitions that take precedence over the bag's, keyed by type (either spelling). */
  readonly extra?: ReadonlyMap<string, DefinitionText | string>;
  /** Fall back to antiphon's shipped definitions (default true). */
  readonly builtin?: boolean;
}

export interface DecodePlace {
  readonly topic?: string;
  readonly file?: string;
  readonly logTimeNs?: bigint;
}

export class MessageDecoders {
  readonly #bagDefinition: (type: string) => DefinitionText | undefined;
  readonly #extra = new Map<string, DefinitionText>();
  readonly #builtin: boolean;
  readonly #types = new Map<string, TypeState>();
  /** Definition fallbacks taken (also logged once each). */
  readonly notes: Problem[] = [];

  constructor(bagDefinition: (type: string) => DefinitionText | undefined = () => undefined, opts: DecoderOptions = {}) {
    this.#bagDefinition = bagDefinition;
    this.#builtin = opts.builtin ?? true;
    for (const [k, v] of opts.extra ?? []) {
      this.#extra.set(canonicalType(k), typeof v === 'string' ? { encoding: 'ros2msg', text: v, origin: 'given' } : v);
    }
  }

  #state(type: string): TypeState {
    const key = canonicalType(type);
    let s = this.#types.get(key);
    if (s) return s;
    const candidates: Candidate[] = [];
    const add = (d: DefinitionText | undefined): void => {
      if (!d || d.text.trim() === '') return;
      if (candidates.some((c) => c.text === d.text)) return;
      candidates.push({ origin: d.origin, encoding: d.encoding, text: d.text });
    };
    add(this.#extra.get(key));
    add(this.#bagDefinition(type));
    if (this.#builtin) {
      const text = builtinDefinition(key);
      if (text !== undefined) add({ encoding: 'ros2msg', text, origin: 'built-in' });
    }
    s = { candidates, preferred: 0 };
    this.#types.set(key, s);
    return s;
  }

  /** True when some definition is available for the type (it may still fail on messages). */
  has(type: string): boolean {
    return this.#state(type).candidates.length > 0;
  }

  #reader(type: string, c: Candidate): MessageReader | undefined {
    if (c.reader || c.error !== undefined) return c.reader;
    if (c.encoding !== 'ros2msg' && c.encoding !== '') {
      c.error = `definition encoding '${c.encoding}' is not supported (only ros2msg)`;
      return undefined;
    }
    try {
      c.reader = new MessageReader(parseDefinition(type, c.text));
    } catch (err) {
      c.error = `definition from ${c.origin} does not parse: ${(err as Error).message}`;
    }
    return c.reader;
  }

  /**
   * Decode one CDR message of `type`. Throws InputError `bag.no_definition` when no definition is
   * known, `bag.decode_failed` when none fits the bytes.
   */
  decode(type: string, data: Uint8Array, where: DecodePlace = {}): unknown {
    const s = this.#state(type);
    const place = {
      ...(where.file !== undefined ? { file: where.file } : {}),
      ...(where.topic !== undefined ? { topic: where.topic } : {}),
    };
    const at = where.logTimeNs !== undefined ? ` at log time ${where.logTimeNs}` : '';
    if (s.candidates.length === 0) {
      throw new InputError({
        code: 'bag.no_definition',
        message: `no message definition for type ${type}${at}`,
        where: place,
        hint: 'the bag carries none and antiphon ships none; pass definitions from a bag that has them (e.g. --definitions <bag>)',
      });
    }
    if (data.length < 4) {
      throw new InputError({ code: 'bag.decode_failed', message: `message of ${data.length} bytes has no CDR header${at}`, where: place });
    }
    if (data[0] !== 0 || data[1]! > 1) {
      throw new InputError({
        code: 'bag.decode_failed',
        message: `unsupported CDR encapsulation ${hex(data[0]!)} ${hex(data[1]!)}${at} (expected 00 00 or 00 01)`,
        where: place,
      });
    }
    const reasons: string[] = [];
    const order = [s.preferred, ...s.candidates.keys()].filter((v, i, a) => a.indexOf(v) === i);
    for (const k of order) {
      const c = s.candidates[k]!;
      const reader = this.#reader(type, c);
      if (!reader) {
        reasons.push(c.error!);
        continue;
      }
      let value: unknown;
      try {
        value = reader.readMessage(data);
      } catch (err) {
        reasons.push(`definition from ${c.origin}: ${(err as Error).message}`);
        continue;
      }
      const left = data.length - reader.lastReadByteLength();
      if (left > MAX_PADDING) {
        reasons.push(`definition from ${c.origin} leaves ${left} of ${data.length} bytes unread`);
        continue;
      }
      if (k !== s.preferred) {
        const first = s.candidates[s.preferred]!;
        const note: Problem = {
          code: 'bag.definition_fallback',
          message: `definition of ${type} from ${first.origin} does not fit its messages (${reasons[0] ?? first.error ?? '?'}); using the one from ${c.origin}`,
          where: place,
        };
        this.notes.push(note);
        logger('bag').warn({ code: note.code, type, topic: where.topic }, note.message);
        s.preferred = k;
      }
      return value;
    }
    throw new InputError({
      code: 'bag.decode_failed',
      message: `cannot decode ${type}${at}: ${reasons.join('; ')}`,
      where: place,
    });
  }
}

function hex(b: number): string {
  return b.toString(16).padStart(2, '0');
}

/** Decoders for a bag's messages, with its carried definitions. */
export function bagDecoders(bag: Pick<Bag, 'definition'>, opts: DecoderOptions = {}): MessageDecoders {
  return new MessageDecoders((t) => bag.definition(t), opts);
}

/**
 * A decoded message as plain JSON: 64-bit integers as strings, uint8/byte/char arrays as base64,
 * other typed arrays as arrays, NaN and infinities as the strings "NaN", "Infinity", "-Infinity".
 */
export function toJsonValue(v: unknown): unknown {
  if (typeof v === 'bigint') return v.toString();
  if (typeof v === 'number') return Number.isFinite(v) ? v : String(v);
  if (v === null || typeof v !== 'object') return v;
  if (v instanceof Uint8Array) return Buffer.from(v.buffer, v.byteOffset, v.byteLength).toString('base64');
  if (v instanceof BigInt64Array || v instanceof BigUint64Array) return Array.from(v, (x) => x.toString());
  if (ArrayBuffer.isView(v)) return Array.from(v as unknown as ArrayLike<number>, (x) => toJsonValue(x));
  if (Array.isArray(v)) return v.map(toJsonValue);
  const out: Record<string, unknown> = {};
  for (const [k, x] of Object.entries(v as Record<string, unknown>)) out[k] = toJsonValue(x);
  return out;
}
