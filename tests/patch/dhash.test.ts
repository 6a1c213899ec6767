import { describe, expect, it } from 'vitest';
import { dHash, hammingHex, shrinkGrey } from '../../src/patch/dhash.ts';

const grey = (w: number, h: number, f: (x: number, y: number) => number) => {
  const out = new Uint8Array(w * h * 3);
  for (let y = 0; y < h; y++) for (let x = 0; x < w; x++) out.fill(f(x, y), (y * w + x) * 3, (y * w + x) * 3 + 3);
  return out;
};

describe('difference hash, step by step (Krawetz 2013, from memory)', () => {
  it('a 9×8 input needs no shrinking; bit = left < right, row by row, most significant first', () => {
    // Worked input: row y holds values that rise except between columns y and y+1, where they fall.
    const img = grey(9, 8, (x, y) => (x === y + 1 ? 10 : 100 + x * 10));
    const { hash } = dHash(img, 9, 8);
    // Row y: bits for x = 0..7 are 1 except at x = y (left 100+y·10 > right 10) and x = y+1 (10 < next: 1).
    const bits: number[] = [];
    for (let y = 0; y < 8; y++) for (let x = 0; x < 8; x++) {
      const left = x === y + 1 ? 10 : 100 + x * 10, right = x + 1 === y + 1 ? 10 : 100 + (x + 1) * 10;
      bits.push(left < right ? 1 : 0);
    }
    const expected = BigInt(`0b${bits.join('')}`).toString(16).padStart(16, '0');
    expect(hash).toBe(expected);
    expect(hash).toBe('7fbfdfeff7fbfdfe');
  });
  it('rising rows hash to all ones, falling to all zeros', () => {
    expect(dHash(grey(90, 80, (x) => x * 2), 90, 80).hash).toBe('ffffffffffffffff');
    expect(dHash(grey(90, 80, (x) => 200 - x * 2), 90, 80).hash).toBe('0000000000000000');
  });
  it('shrinks by exact area averaging (grey of a 18×16 two-tone image)', () => {
    const g = shrinkGrey(grey(18, 16, (x) => (x < 9 ? 0 : 90)), 18, 16, 9, 8);
    expect(Array.from(g.slice(0, 9)).map((v) => Math.round(v))).toEqual([0, 0, 0, 0, 45, 90, 90, 90, 90]);
  });
  it('marks flat patches as untextured', () => {
    expect(dHash(grey(32, 32, () => 128), 32, 32).textured).toBe(false);
    expect(dHash(grey(32, 32, (x, y) => (x * 7 + y * 13) % 256), 32, 32).textured).toBe(true);
  });
  it('counts differing bits', () => {
    expect(hammingHex('ffffffffffffffff', '0000000000000000')).toBe(64);
    expect(hammingHex('8000000000000001', '0000000000000000')).toBe(2);
  });
});
