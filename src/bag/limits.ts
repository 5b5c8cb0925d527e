/**
 * The bag layer's limits on what a file may make it allocate. Every decompression (MCAP chunks,
 * `.mcap.zstd` / `.db3.zstd` files, sqlite3 message compression) is checked against the declared
 * uncompressed size BEFORE anything is allocated; every declared count or length is checked
 * against the bytes that are left.
 *
 * `ANTIPHON_MAX_UNCOMPRESSED_BYTES` (default 1 GiB) caps one decompression; the `OpenOptions`
 * field `maxUncompressedBytes` overrides it per bag. Read once per open.
 */
import { InputError } from '../util/errors.js';

/** Default cap on one decompressed chunk, file or message: 1 GiB. */
export const DEFAULT_MAX_UNCOMPRESSED_BYTES = 1 << 30;
/** metadata.yaml larger than this is refused (real ones are a few kB). */
export const MAX_METADATA_BYTES = 16 << 20;
/** A message definition text larger than this is refused (real ones are a few kB). */
export const MAX_DEFINITION_BYTES = 16 << 20;
/** The smallest MCAP Message record: 9-byte record header + 22-byte message prefix. */
export const MIN_MCAP_MESSAGE_RECORD = 31;

const ENV = 'ANTIPHON_MAX_UNCOMPRESSED_BYTES';

/** The cap on one decompression: `given`, else $ANTIPHON_MAX_UNCOMPRESSED_BYTES, else 1 GiB. */
export function maxUncompressedBytes(given?: number): number {
  if (given !== undefined) return given;
  const raw = process.env[ENV];
  if (raw === undefined || raw.trim() === '') return DEFAULT_MAX_UNCOMPRESSED_BYTES;
  const v = Number(raw);
  if (!/^\s*\d+\s*$/.test(raw) || !Number.isSafeInteger(v) || v < 1) {
    throw new InputError({
      code: 'bag.bad_limit',
      message: `${ENV} must be a whole number of bytes, got '${raw}'`,
      where: { option: ENV },
      hint: `default ${DEFAULT_MAX_UNCOMPRESSED_BYTES} (1 GiB)`,
    });
  }
  return v;
}

/** How to raise the cap, for error hints. */
export function limitHint(limit: number): string {
  return `the limit is ${limit} bytes; raise it with ${ENV}=<bytes> if the file is genuine`;
}

/**
 * Test seam for the fuzzer's planted-defect check: `ANTIPHON_FUZZ_PLANT=<name>` switches off
 * the one named bounds check. Never set it outside that test.
 */
export function planted(name: string): boolean {
  return process.env['ANTIPHON_FUZZ_PLANT'] === name;
}
