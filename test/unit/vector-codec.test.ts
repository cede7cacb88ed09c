import { describe, expect, it } from 'vitest';
import { decodeVector, encodeVector } from '../../src/store/vector-codec.js';

describe('stored mention vectors', () => {
  it('round-trip sparse and dense vectors bit for bit', () => {
    const sparse = {
      kind: 'sparse' as const,
      indices: Uint32Array.from([3, 70_000, 4_294_967_295]),
      values: Float32Array.from([0.1, -0.5, 1 / 3]),
    };
    const dense = { kind: 'dense' as const, values: Float32Array.from({ length: 384 }, (_, i) => Math.sin(i)) };
    expect(decodeVector(encodeVector(sparse))).toEqual(sparse);
    expect(decodeVector(encodeVector(dense))).toEqual(dense);
    // From a view into a larger buffer at an odd offset, as a database driver may hand it over.
    const bytes = encodeVector(sparse);
    const padded = Buffer.concat([Buffer.from([9]), bytes]);
    expect(decodeVector(padded.subarray(1))).toEqual(sparse);
  });

  it('refuses damaged bytes with a clear error', () => {
    const bytes = encodeVector({ kind: 'dense', values: Float32Array.from([1, 2]) });
    expect(() => decodeVector(bytes.subarray(0, bytes.length - 1))).toThrow(/damaged/);
    expect(() => decodeVector(Buffer.from([7, 0, 0, 0, 0]))).toThrow(/damaged/);
    expect(() => decodeVector(Buffer.alloc(2))).toThrow(/damaged/);
  });
});
