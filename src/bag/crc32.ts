/** CRC-32 (IEEE 802.3, reflected, polynomial 0xEDB88320), as used by MCAP chunk and summary CRCs. */
import zlib from 'node:zlib';

// Slicing-by-8 tables: TABLE[k * 256 + b] is the CRC of byte b followed by k zero bytes.
const TABLE = (() => {
  const t = new Int32Array(256 * 8);
  for (let n = 0; n < 256; n++) {
    let c = n;
    for (let k = 0; k < 8; k++) c = c & 1 ? 0xedb88320 ^ (c >>> 1) : c >>> 1;
    t[n] = c;
  }
  for (let n = 0; n < 256; n++) {
    let c = t[n]!;
    for (let k = 1; k < 8; k++) {
      c = t[c & 0xff]! ^ (c >>> 8);
      t[k * 256 + n] = c;
    }
  }
  return t;
})();

/** The same CRC in JavaScript (slicing-by-8); the fallback where Node lacks zlib.crc32. */
export function crc32Js(bytes: Uint8Array): number {
  const t = TABLE;
  const n = bytes.length;
  let crc = -1;
  let i = 0;
  for (; i + 8 <= n; i += 8) {
    const a = crc ^ (bytes[i]! | (bytes[i + 1]! << 8) | (bytes[i + 2]! << 16) | (bytes[i + 3]! << 24));
    crc =
      t[1792 + (a & 0xff)]! ^
      t[1536 + ((a >>> 8) & 0xff)]! ^
      t[1280 + ((a >>> 16) & 0xff)]! ^
      t[1024 + (a >>> 24)]! ^
      t[768 + bytes[i + 4]!]! ^
      t[512 + bytes[i + 5]!]! ^
      t[256 + bytes[i + 6]!]! ^
      t[bytes[i + 7]!]!;
  }
  for (; i < n; i++) crc = t[(crc ^ bytes[i]!) & 0xff]! ^ (crc >>> 8);
  return (crc ^ -1) >>> 0;
}

const native = (zlib as unknown as { crc32?: (data: Uint8Array) => number }).crc32;

/** CRC-32 of the bytes: Node's native zlib.crc32 (Node >= 20.15), else the JavaScript one. */
export const crc32: (bytes: Uint8Array) => number = native ? (bytes) => native(bytes) >>> 0 : crc32Js;
