import { endianness } from 'node:os';
import { deflateSync, inflateSync } from 'node:zlib';

/** How an mzML binary array is compressed (only those this reader decodes). */
export type BinaryCompression = 'none' | 'zlib';
/** Width of the little-endian IEEE 754 floats in an mzML binary array. */
export type BinaryPrecision = 32 | 64;

/** A binary array that cannot be decoded (bad base64, corrupt zlib data, a byte count that is no whole number of values). */
export class BinaryDecodeError extends Error {
  override readonly name = 'BinaryDecodeError';
  readonly code = 'bad-binary';
}

const BASE64 = /^[A-Za-z0-9+/]*={0,2}$/;
const WHITESPACE = /\s+/g;
const LITTLE_ENDIAN_HOST = endianness() === 'LE';

/**
 * Decodes one mzML `<binary>` text: base64, then zlib when asked, then little-endian floats.
 * Returns a typed array (a view on the decoded bytes when they are aligned, else a copy); throws
 * {@link BinaryDecodeError} for input that is not what it claims to be.
 */
export function decodeBinaryArray(
  text: string,
  compression: BinaryCompression,
  precision: BinaryPrecision,
): Float64Array | Float32Array {
  let b64 = text;
  if (!BASE64.test(b64)) {
    // XML Schema base64Binary allows whitespace inside; anything else is corrupt.
    b64 = b64.replace(WHITESPACE, '');
    if (!BASE64.test(b64)) throw new BinaryDecodeError('binary data is not valid base64');
  }
  if (b64.length % 4 === 1) throw new BinaryDecodeError('binary data is not valid base64 (truncated)');
  let bytes: Buffer = Buffer.from(b64, 'base64');
  if (compression === 'zlib') {
    if (bytes.length === 0) return precision === 64 ? new Float64Array(0) : new Float32Array(0);
    try {
      bytes = inflateSync(bytes);
    } catch (cause) {
      throw new BinaryDecodeError(`zlib data is corrupt (${(cause as Error).message})`, { cause });
    }
  }
  const size = precision / 8;
  if (bytes.byteLength % size !== 0) {
    throw new BinaryDecodeError(`${bytes.byteLength} bytes is not a whole number of ${precision}-bit values`);
  }
  const n = bytes.byteLength / size;
  if (LITTLE_ENDIAN_HOST && bytes.byteOffset % size === 0) {
    return precision === 64
      ? new Float64Array(bytes.buffer, bytes.byteOffset, n)
      : new Float32Array(bytes.buffer, bytes.byteOffset, n);
  }
  const out = precision === 64 ? new Float64Array(n) : new Float32Array(n);
  const view = new DataView(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  if (precision === 64) for (let i = 0; i < n; i++) out[i] = view.getFloat64(i * 8, true);
  else for (let i = 0; i < n; i++) out[i] = view.getFloat32(i * 4, true);
  return out;
}

/** Encodes numbers as an mzML `<binary>` text (little-endian floats, optionally zlib, base64) — the inverse of {@link decodeBinaryArray}. */
export function encodeBinaryArray(
  values: ArrayLike<number>,
  compression: BinaryCompression,
  precision: BinaryPrecision,
): string {
  const size = precision / 8;
  const buf = Buffer.allocUnsafe(values.length * size);
  if (precision === 64) for (let i = 0; i < values.length; i++) buf.writeDoubleLE(values[i]!, i * 8);
  else for (let i = 0; i < values.length; i++) buf.writeFloatLE(values[i]!, i * 4);
  return (compression === 'zlib' ? deflateSync(buf) : buf).toString('base64');
}
