import { describe, expect, it } from 'vitest';
import { execFileSync } from 'node:child_process';
import { materialColour } from '../../src/demo/textures.ts';
import { lbpCodes, lbpHistogram } from '../../src/probe/lbp.ts';
import { glcm, glcmProperties } from '../../src/probe/glcm.ts';
import { averagePrecision } from '../../src/probe/retrieval.ts';
import { seededUnit } from '../../src/util/hash.ts';
import { scikitAvailable } from '../servers/availability.ts';

// Independent references: Debian's scikit-image and scikit-learn through /usr/bin/python3, on the same patches.
// Grey patches of the invented demo textures (64×64), and a seeded noise patch.
const N = 64;
function patch(kind: 'graining' | 'marbling' | 'gilding' | 'noise', seed: number): number[] {
  const out: number[] = [];
  for (let y = 0; y < N; y++) for (let x = 0; x < N; x++) {
    if (kind === 'noise') out.push(Math.floor(seededUnit('noise', seed, x, y) * 256));
    else {
      const [r, g, b] = materialColour(kind, x + 40, y + 40, seed);
      out.push(Math.round(0.299 * r + 0.587 * g + 0.114 * b)); // ITU-R BT.601 luma
    }
  }
  return out;
}
const patches = [patch('graining', 3), patch('marbling', 4), patch('gilding', 5), patch('noise', 6)];

describe.runIf(scikitAvailable())('the probe cores agree with scikit-image and scikit-learn', () => {
  it('LBP codes (P=8,R=1 and P=16,R=2; default, uniform = riu2, nri_uniform = u2) equal scikit-image exactly', () => {
    const script = [
      'import json, sys, numpy as np',
      'from skimage.feature import local_binary_pattern',
      'ps = json.load(sys.stdin)',
      'out = []',
      'for p in ps:',
      `    img = np.array(p, dtype=np.uint8).reshape(${N}, ${N})`,
      "    out.append({f'{P},{R},{m}': local_binary_pattern(img, P, R, m).astype(int).ravel().tolist() for P, R in [(8, 1), (16, 2)] for m in ['default', 'uniform', 'nri_uniform'] if not (P == 16 and m == 'default')})",
      'print(json.dumps(out))',
    ].join('\n');
    const ref: Record<string, number[]>[] = JSON.parse(execFileSync('/usr/bin/python3', ['-c', script], { input: JSON.stringify(patches), encoding: 'utf8', maxBuffer: 64 << 20 }));
    const names = { default: 'default', uniform: 'riu2', nri_uniform: 'u2' } as const;
    patches.forEach((p, i) => {
      for (const [key, codes] of Object.entries(ref[i])) {
        const [P, R, m] = key.split(',');
        const ours = [...lbpCodes({ width: N, height: N, data: p }, Number(P), Number(R), names[m as keyof typeof names])];
        const differ = ours.filter((v, k) => v !== codes[k]).length;
        expect(differ, `patch ${i} ${key}`).toBe(0);
      }
      // and the histograms are not degenerate: the texture uses several bins
      expect(lbpHistogram({ width: N, height: N, data: p }, 8, 1, 'riu2').filter((v) => v > 0.01).length).toBeGreaterThan(3);
    });
  }, 60_000);

  it('GLCM properties (8 levels, d 1 and 2, four angles, symmetric, normed) equal scikit-image within 1e-9', () => {
    const q = patches.map((p) => p.map((v) => Math.floor((v * 8) / 256)));
    const angles = [0, Math.PI / 4, Math.PI / 2, (3 * Math.PI) / 4];
    const script = [
      'import json, sys, numpy as np',
      'from skimage.feature import graycomatrix, graycoprops',
      'ps = json.load(sys.stdin)',
      'out = []',
      'for p in ps:',
      `    img = np.array(p, dtype=np.uint8).reshape(${N}, ${N})`,
      '    m = graycomatrix(img, [1, 2], [0, np.pi/4, np.pi/2, 3*np.pi/4], levels=8, symmetric=True, normed=True)',
      "    out.append({k: graycoprops(m, k).tolist() for k in ['contrast', 'dissimilarity', 'homogeneity', 'ASM', 'energy', 'correlation']})",
      'print(json.dumps(out))',
    ].join('\n');
    const ref: Record<string, number[][]>[] = JSON.parse(execFileSync('/usr/bin/python3', ['-c', script], { input: JSON.stringify(q), encoding: 'utf8' }));
    q.forEach((p, i) => {
      [1, 2].forEach((d, di) => angles.forEach((a, ai) => {
        const ours = glcmProperties(glcm({ width: N, height: N, data: p }, 8, d, a, { symmetric: true, normed: true }), 8);
        const theirs = { contrast: ref[i].contrast[di][ai], dissimilarity: ref[i].dissimilarity[di][ai], homogeneity: ref[i].homogeneity[di][ai], asm: ref[i].ASM[di][ai], energy: ref[i].energy[di][ai], correlation: ref[i].correlation[di][ai] };
        for (const k of Object.keys(theirs) as (keyof typeof theirs)[]) expect(Math.abs(ours[k] - theirs[k]), `patch ${i} d${d} θ${ai} ${k}`).toBeLessThan(1e-9);
      }));
    });
  }, 60_000);

  it('average precision equals scikit-learn\'s average_precision_score on seeded rankings (no ties)', () => {
    const cases = Array.from({ length: 20 }, (_, c) => Array.from({ length: 30 }, (_, i) => ({ rel: seededUnit('ap', c, i) < 0.3 ? 1 : 0, score: seededUnit('ap-score', c, i) })).filter((_, i, a) => a.some((x) => x.rel)));
    const script = [
      'import json, sys',
      'from sklearn.metrics import average_precision_score',
      'cs = json.load(sys.stdin)',
      "print(json.dumps([average_precision_score([x['rel'] for x in c], [x['score'] for x in c]) for c in cs]))",
    ].join('\n');
    const ref: number[] = JSON.parse(execFileSync('/usr/bin/python3', ['-c', script], { input: JSON.stringify(cases), encoding: 'utf8' }));
    cases.forEach((c, i) => {
      const ranked = [...c].sort((a, b) => b.score - a.score).map((x) => x.rel);
      expect(averagePrecision(ranked), `case ${i}`).toBeCloseTo(ref[i], 12);
    });
  }, 60_000);
});
