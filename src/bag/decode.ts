/**
 * Generic CDR decoding from message definitions, via the definition search path (library.ts:
 * the bag, `--definitions` sources, AMENT_PREFIX_PATH, the shipped definitions) and
 * @foxglove/rosmsg2-serialization (read). A definition that fails on a message (throws, or leaves
 * more than 3 bytes unread) is set aside for the next source's, once, with a note: some bags carry
 * placeholder definitions.
 */
import { MessageReader } from '@foxglove/rosmsg2-serialization';
import { formatPlace, InputError, type Problem } from '../util/errors.js';
import { canonicalType, checkElementSizes } from './definitions.js';
import { DefinitionLibrary, howToSupply, type DefinitionSourceKind, type LibraryOptions, type Resolution } from './library.js';
import type { Bag, DefinitionText } from './types.js';

/** Trailing bytes a writer may leave as padding to a 4-byte boundary. */
const MAX_PADDING = 3;

interface Candidate {
  readonly resolution: Resolution;
  reader?: MessageReader | undefined;
  error?: string | undefined;
}

interface TypeState {
  candidates: Candidate[];
  preferred: number;
}

export interface DecoderOptions {
  /** Definitions given by the caller, keyed by type (either spelling): searched after the bag's. */
  readonly extra?: ReadonlyMap<string, DefinitionText | string>;
  /** `--definitions` sources in order: folders, or definition maps of other bags. */
  readonly definitions?: LibraryOptions['extra'];
  /** AMENT_PREFIX_PATH (default: the environment's). */
  readonly amentPrefixPath?: string;
  /** Fall back to antiphon's shipped definitions (default true). */
  readonly builtin?: boolean;
}

export interface DecodePlace {
  readonly topic?: string;
  readonly file?: string;
  readonly logTimeNs?: bigint;
}

/** Where a type's definition comes from, for `bag info`. */
export interface DefinitionOrigin {
  readonly source: DefinitionSourceKind | 'missing';
  /** A file, a bag storage file, or `built-in`; absent when missing. */
  readonly from?: string;
  /** Why it is missing or unusable. */
  readonly problem?: Problem;
}

export class MessageDecoders {
  readonly library: DefinitionLibrary;
  readonly #types = new Map<string, TypeState>();
  /** Definition fallbacks taken (one per type). */
  readonly notes: Problem[] = [];

  constructor(library: DefinitionLibrary = new DefinitionLibrary()) {
    this.library = library;
  }

  #state(type: string): TypeState {
    const key = canonicalType(type);
    let s = this.#types.get(key);
    if (s) return s;
    s = { candidates: this.library.candidates(key).map((resolution) => ({ resolution })), preferred: 0 };
    const firstOk = s.candidates.findIndex((c) => c.resolution.ok);
    if (firstOk > 0) s.preferred = firstOk;
    this.#types.set(key, s);
    return s;
  }

  /** True when some source has a definition for the type (it may still fail to resolve or fit). */
  has(type: string): boolean {
    return this.#state(type).candidates.length > 0;
  }

  /** Where the definition of `type` comes from (the first that resolves with its nested types). */
  origin(type: string): DefinitionOrigin {
    const s = this.#state(type);
    const c = s.candidates[s.preferred];
    if (!c) return { source: 'missing', problem: { code: 'bag.no_definition', message: `no definition of ${canonicalType(type)} on the search path`, hint: howToSupply(canonicalType(type)) } };
    if (c.resolution.ok) return { source: c.resolution.kind, from: c.resolution.origin };
    return { source: 'missing', problem: c.resolution.problem };
  }

  #reader(c: Candidate): MessageReader | undefined {
    if (c.reader || c.error !== undefined) return c.reader;
    const r = c.resolution;
    if (!r.ok) {
      const place = formatPlace(r.problem.where);
      c.error = `${place ? `${place}: ` : ''}${r.problem.message}`;
      return undefined;
    }
    try {
      // Whatever path resolved the definition: no zero-size sequence elements, no self-containing types.
      checkElementSizes(r.definitions);
      c.reader = new MessageReader(r.definitions);
    } catch (err) {
      c.error = `definition from ${r.origin} is not usable: ${(err as Error).message}`;
    }
    return c.reader;
  }

  /**
   * Decode one CDR message of `type`. Throws InputError `bag.no_definition` when no definition is
   * known, the definition's own problem code when none resolves, `bag.decode_failed` when none
   * fits the bytes.
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
        hint: `the bag carries none and the search path has none; ${howToSupply(canonicalType(type))}`,
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
    let anyReader = false;
    for (const k of order) {
      const c = s.candidates[k]!;
      const reader = this.#reader(c);
      if (!reader) {
        reasons.push(c.error!);
        continue;
      }
      anyReader = true;
      const origin = c.resolution.origin ?? '?';
      let value: unknown;
      try {
        value = reader.readMessage(data);
      } catch (err) {
        reasons.push(`definition from ${origin}: ${(err as Error).message}`);
        continue;
      }
      const left = data.length - reader.lastReadByteLength();
      if (left > MAX_PADDING) {
        reasons.push(`definition from ${origin} leaves ${left} of ${data.length} bytes unread`);
        continue;
      }
      if (k !== s.preferred) {
        const first = s.candidates[s.preferred]!;
        const note: Problem = {
          code: 'bag.definition_fallback',
          message: `definition of ${type} from ${first.resolution.origin ?? '?'} does not fit its messages (${reasons[0] ?? first.error ?? '?'}); using the one from ${origin}`,
          where: place,
        };
        this.notes.push(note);
        s.preferred = k;
      }
      return value;
    }
    const unresolved = s.candidates.map((c) => c.resolution).find((r): r is Extract<Resolution, { ok: false }> => !r.ok);
    if (!anyReader && unresolved) {
      // No definition resolves: the first one's own problem (its file and line) is the reason.
      throw new InputError({ ...unresolved.problem, message: reasons.join('; '), where: { ...place, ...unresolved.problem.where } });
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

/** The definition search path for a bag: its own definitions, then `opts`' sources, the environment, the shipped ones. */
export function bagLibrary(bag: Pick<Bag, 'definitions'> | undefined, opts: DecoderOptions = {}): DefinitionLibrary {
  const extra: NonNullable<LibraryOptions['extra']>[number][] = [];
  if (opts.extra) {
    const m = new Map<string, DefinitionText>();
    for (const [k, v] of opts.extra) m.set(k, typeof v === 'string' ? { encoding: 'ros2msg', text: v, origin: 'given' } : v);
    extra.push({ label: 'given', definitions: m });
  }
  extra.push(...(opts.definitions ?? []));
  return new DefinitionLibrary({
    ...(bag ? { bag: bag.definitions() } : {}),
    extra,
    ...(opts.amentPrefixPath !== undefined ? { amentPrefixPath: opts.amentPrefixPath } : {}),
    ...(opts.builtin !== undefined ? { builtin: opts.builtin } : {}),
  });
}

/** Decoders for a bag's messages, with its carried definitions first on the search path. */
export function bagDecoders(bag: Pick<Bag, 'definitions'>, opts: DecoderOptions = {}): MessageDecoders {
  return new MessageDecoders(bagLibrary(bag, opts));
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
