import { fractalNoise, latticeHash } from './noise.ts';

export type Material = 'graining' | 'marbling' | 'gilding' | 'ground';
export type Rgb = [number, number, number];

const clamp = (v: number) => (v < 0 ? 0 : v > 255 ? 255 : Math.round(v));
const mix = (a: Rgb, b: Rgb, t: number): Rgb => [a[0] + (b[0] - a[0]) * t, a[1] + (b[1] - a[1]) * t, a[2] + (b[2] - a[2]) * t];

/**
 * The colour of a material at board pixel (x, y). Procedural and deterministic:
 * faux oak graining (wavy growth rings and pores), faux marbling (turbulent veins
 * on a pale ground), gilding (warm gold with leaf seams and burnish), and a plain
 * painted ground with a faint brush texture. `seed` varies the pattern per board.
 */
export function materialColour(m: Material, x: number, y: number, seed: number): Rgb {
  switch (m) {
    case 'graining': {
      const warp = fractalNoise(x / 90, y / 400, seed, 4) * 18;
      const ring = Math.sin((x / 7 + warp) * 1.3) * 0.5 + 0.5;
      const pores = latticeHash(Math.floor(x / 2), Math.floor(y / 9), seed) > 0.93 ? 0.35 : 0;
      const fine = fractalNoise(x / 3, y / 30, seed + 7, 2);
      const t = Math.min(1, ring * 0.75 + fine * 0.25 + pores);
      const c = mix([196, 150, 96], [112, 70, 36], t);
      return [clamp(c[0]), clamp(c[1]), clamp(c[2])];
    }
    case 'marbling': {
      const turb = fractalNoise(x / 60, y / 60, seed, 5) * 9;
      const vein = Math.abs(Math.sin((x + y * 0.6) / 45 + turb));
      const dark = Math.pow(1 - vein, 10);
      const cloud = fractalNoise(x / 120, y / 120, seed + 3, 3);
      const base = mix([236, 232, 224], [205, 200, 196], cloud);
      const c = mix(base, [70, 74, 84], dark);
      return [clamp(c[0]), clamp(c[1]), clamp(c[2])];
    }
    case 'gilding': {
      const leaf = 60;
      const seam = x % leaf < 2 || y % leaf < 2 ? 0.35 : 0;
      const burnish = fractalNoise(x / 25, y / 25, seed, 3);
      const glint = latticeHash(Math.floor(x / 3), Math.floor(y / 3), seed + 11) > 0.97 ? 0.5 : 0;
      const c = mix([214, 170, 64], [150, 108, 28], Math.min(1, burnish * 0.8 + seam));
      const g = mix(c, [255, 236, 170], glint);
      return [clamp(g[0]), clamp(g[1]), clamp(g[2])];
    }
    case 'ground': {
      const brush = fractalNoise(x / 4, y / 40, seed + 5, 2);
      const v = 214 + (brush - 0.5) * 10;
      return [clamp(v), clamp(v - 6), clamp(v - 18)];
    }
  }
}
