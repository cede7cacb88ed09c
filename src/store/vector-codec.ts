/**
 * A mention's vector as bytes, so consolidation can rebuild an event from its mentions
 * exactly as they were linked (no re-embedding, which a transformer would pay for and which
 * TF-IDF would answer differently once document frequencies have moved).
 *
 *   sparse: 0x01, n (uint32 LE), n feature indices (uint32 LE), n values (float32 LE)
 *   dense:  0x02, n (uint32 LE), n values (float32 LE)
 */
import { StrandError } from '../errors.js';
import type { Vector } from '../records.js';

const SPARSE = 1;
const DENSE = 2;

/** The bytes of a vector. */
export function encodeVector(v: Vector): Buffer {
  const n = v.kind === 'sparse' ? v.indices.length : v.values.length;
  const b = Buffer.alloc(5 + n * (v.kind === 'sparse' ? 8 : 4));
  b.writeUInt8(v.kind === 'sparse' ? SPARSE : DENSE, 0);
  b.writeUInt32LE(n, 1);
  let at = 5;
  if (v.kind === 'sparse')
    for (const f of v.indices) {
      b.writeUInt32LE(f, at);
      at += 4;
    }
  for (const x of v.values) {
    b.writeFloatLE(x, at);
    at += 4;
  }
  return b;
}

/** Inverse of encodeVector; refuses bytes of the wrong length or kind. */
export function decodeVector(bytes: Uint8Array): Vector {
  const b = Buffer.from(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  const kind = b.length >= 5 ? b.readUInt8(0) : 0;
  const n = b.length >= 5 ? b.readUInt32LE(1) : -1;
  const expected = kind === SPARSE ? 5 + n * 8 : kind === DENSE ? 5 + n * 4 : -1;
  if (expected !== b.length)
    throw new StrandError('STRAND_STORE_FAILED', `stored mention vector is damaged (${b.length} bytes, kind ${kind})`);
  // One copy into fresh (aligned) memory, then typed views: the bytes are little-endian,
  // as are the platforms Node runs on here (checked once below).
  const body = new Uint8Array(b.length - 5);
  body.set(b.subarray(5));
  if (!LITTLE_ENDIAN) return decodeSlowly(b, kind, n);
  if (kind === DENSE) return { kind: 'dense', values: new Float32Array(body.buffer, 0, n) };
  return { kind: 'sparse', indices: new Uint32Array(body.buffer, 0, n), values: new Float32Array(body.buffer, n * 4, n) };
}

/** 32-bit words (a MinHash sketch) as little-endian bytes, and back. */
export function encodeWords(words: Uint32Array): Buffer {
  const b = Buffer.alloc(words.length * 4);
  words.forEach((w, i) => b.writeUInt32LE(w, i * 4));
  return b;
}

export function decodeWords(bytes: Uint8Array): Uint32Array {
  const b = Buffer.from(bytes.buffer, bytes.byteOffset, bytes.byteLength);
  const out = new Uint32Array(b.length >> 2);
  for (let i = 0; i < out.length; i++) out[i] = b.readUInt32LE(i * 4);
  return out;
}

const LITTLE_ENDIAN = new Uint8Array(new Uint32Array([1]).buffer)[0] === 1;

function decodeSlowly(b: Buffer, kind: number, n: number): Vector {
  let at = 5;
  if (kind === DENSE) {
    const values = new Float32Array(n);
    for (let i = 0; i < n; i++) {
      values[i] = b.readFloatLE(at);
      at += 4;
    }
    return { kind: 'dense', values };
  }
  const indices = new Uint32Array(n);
  const values = new Float32Array(n);
  for (let i = 0; i < n; i++) {
    indices[i] = b.readUInt32LE(at);
    at += 4;
  }
  for (let i = 0; i < n; i++) {
    values[i] = b.readFloatLE(at);
    at += 4;
  }
  return { kind: 'sparse', indices, values };
}
