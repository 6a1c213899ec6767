import { describe, expect, it } from 'vitest';
import { readdirSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { spawnSync } from 'node:child_process';

const PURE = ['iiif', 'annotation', 'geometry', 'plan', 'patch', 'split', 'probe'];
const FORBIDDEN = /from '(node:fs|node:fs\/promises|fs|got|sharp|node:http|node:child_process)'|\bprocess\./;

describe('architecture', () => {
  it.each(PURE)('src/%s is pure: no file system, network, image library or process access', (folder) => {
    for (const f of readdirSync(join('src', folder))) {
      const text = readFileSync(join('src', folder, f), 'utf8');
      expect(FORBIDDEN.test(text), `${folder}/${f}`).toBe(false);
    }
  });
  it('the dataset stage writes what it is given: src/dataset imports nothing from the network layer', () => {
    for (const f of readdirSync(join('src', 'dataset'))) {
      const text = readFileSync(join('src', 'dataset', f), 'utf8');
      expect(/from '\.\.\/net\//.test(text), `dataset/${f}`).toBe(false);
    }
  });
  it('assembling a dataset is pure: src/dataset/assemble.ts touches no file system, network, image library or process', () => {
    expect(FORBIDDEN.test(readFileSync(join('src', 'dataset', 'assemble.ts'), 'utf8'))).toBe(false);
  });
  it('the cut stage reads pieces from the store by sha256 and never imports the fetcher', () => {
    for (const f of readdirSync(join('src', 'cut'))) expect(/net\/fetcher|from 'got'/.test(readFileSync(join('src', 'cut', f), 'utf8')), `cut/${f}`).toBe(false);
  });
  it('importing the library has no side effects (no output, no files, no listeners)', () => {
    const r = spawnSync(process.execPath, ['--import', 'tsx', '-e', "await import('./src/index.ts'); console.log(JSON.stringify(process.getActiveResourcesInfo()))"], { encoding: 'utf8', timeout: 20_000 });
    expect(r.stderr).toBe('');
    expect(r.status).toBe(0); // exits on its own: nothing keeps it alive
    const active: string[] = JSON.parse(r.stdout.trim());
    expect(active.filter((x) => /Server|TCP|Timeout|Immediate|Interval|Process|Signal/.test(x))).toEqual([]);
  });
});
