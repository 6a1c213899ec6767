/**
 * Probe speed: descriptors (LBP 8/1 and 16/2, GLCM, colour) for N synthetic
 * 64-px RGB patches, against a raw loop over the same pixels (grey conversion
 * and a 256-bin histogram: the least any descriptor must do), then the whole
 * probe path on N PNG files (decode and describe on the worker pool, one thread
 * per core). Prints JSON.
 *   tsx bench/probe-speed.ts [N=100000]
 */
import { performance } from 'node:perf_hooks';
import { mkdtemp, rm, writeFile } from 'node:fs/promises';
import { availableParallelism, tmpdir } from 'node:os';
import { join } from 'node:path';
import sharp from 'sharp';
import { describePatch } from '../src/probe/describe.ts';
import { describeFiles } from '../src/image/describe-pool.ts';

const N = Number(process.argv[2] ?? 100_000);
const S = 64;
/** Seeded texture-like patches: a few sinusoidal stripes plus noise, from an LCG (Numerical Recipes constants). */
function patches(n: number): Uint8Array[] {
  let s = 12345;
  const r = () => ((s = (Math.imul(s, 1664525) + 1013904223) >>> 0) / 2 ** 32);
  const base: Uint8Array[] = [];
  for (let k = 0; k < 64; k++) {
    const fx = r() * 0.6, fy = r() * 0.6, ph = r() * 6;
    const d = new Uint8Array(S * S * 3);
    for (let i = 0; i < S * S; i++) {
      const v = 128 + 90 * Math.sin(fx * (i % S) + fy * Math.floor(i / S) + ph) + (r() - 0.5) * 40;
      d[i * 3] = Math.max(0, Math.min(255, v));
      d[i * 3 + 1] = Math.max(0, Math.min(255, v * 0.8 + 20));
      d[i * 3 + 2] = Math.max(0, Math.min(255, v * 0.5));
    }
    base.push(d);
  }
  return Array.from({ length: n }, (_, i) => base[i % base.length]!);
}
const data = patches(N);
let t = performance.now();
let sink = 0;
for (const d of data) {
  const h = new Uint32Array(256);
  for (let i = 0; i < S * S; i++) h[Math.round(0.299 * d[i * 3]! + 0.587 * d[i * 3 + 1]! + 0.114 * d[i * 3 + 2]!)]!++;
  sink += h[128]!;
}
const raw = performance.now() - t;
t = performance.now();
let dims = 0;
for (const d of data) {
  const f = describePatch({ width: S, height: S, data: d });
  dims = f.lbp8.length + f.lbp16.length + f.glcm.length + f.colour.length;
}
const ours = performance.now() - t;
// The same patches as PNG files, through the pool.
const dir = await mkdtemp(join(tmpdir(), 'swatchbook-probe-speed-'));
const pngs = await Promise.all(data.slice(0, 64).map((d) => sharp(Buffer.from(d), { raw: { width: S, height: S, channels: 3 } }).png().toBuffer()));
const files = data.map((_, i) => join(dir, `${i}.png`));
for (let i = 0; i < N; i++) await writeFile(files[i]!, pngs[i % 64]!);
t = performance.now();
await describeFiles(files);
const pool = performance.now() - t;
await rm(dir, { recursive: true, force: true });
console.log(JSON.stringify({
  patches: N, size: S, dims, threads: availableParallelism(),
  rawMs: Math.round(raw), describeMs: Math.round(ours), describeRatioToRaw: +(ours / raw).toFixed(2),
  filesDecodedAndDescribedOnPoolMs: Math.round(pool), poolRatioToRaw: +(pool / raw).toFixed(2),
  descriptorMatrixFloat32Mb: +((N * dims * 4) / 2 ** 20).toFixed(1), sink,
}));
