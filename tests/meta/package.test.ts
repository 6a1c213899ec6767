import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { execFileSync, spawnSync } from 'node:child_process';
import { mkdir, mkdtemp, readFile, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { VERSION } from '../../src/version.ts';

// The project as its users get it: `npm pack`, installed into an empty folder, used as a command and as a library.
// Dependencies come from the npm cache that `npm ci` filled (or the registry); nothing else is contacted.

let dir: string;
let installed: string;
const npm = (args: string[], cwd: string) => execFileSync('npm', args, { cwd, encoding: 'utf8', stdio: ['ignore', 'pipe', 'pipe'], env: { ...process.env, npm_config_update_notifier: 'false', npm_config_fund: 'false', npm_config_audit: 'false' } });

beforeAll(async () => {
  dir = await mkdtemp(join(tmpdir(), 'swatchbook-pack-'));
  // the build is fresh: `npm test` builds first (pretest)
  const packed = JSON.parse(npm(['pack', '--ignore-scripts', '--json', '--pack-destination', dir], process.cwd()));
  const tarball = join(dir, packed[0].filename);
  installed = join(dir, 'consumer');
  await mkdir(installed);
  await writeFile(join(installed, 'package.json'), JSON.stringify({ name: 'consumer', private: true, type: 'module' }));
  npm(['install', '--prefer-offline', '--no-package-lock', tarball], installed);
}, 300_000);

afterAll(async () => {
  await rm(dir, { recursive: true, force: true });
});

describe('the packed npm package', () => {
  it('ships the compiled build, not the TypeScript sources', async () => {
    const pkg = JSON.parse(await readFile(join(installed, 'node_modules', 'swatchbook', 'package.json'), 'utf8'));
    expect(pkg.exports['.']).toEqual({ types: './dist/index.d.ts', import: './dist/index.js' });
    expect(pkg.dependencies.tsx).toBeUndefined();
    const files = execFileSync('find', ['node_modules/swatchbook', '-name', '*.ts', '-not', '-name', '*.d.ts'], { cwd: installed, encoding: 'utf8' });
    expect(files.trim()).toBe('');
  });

  it('runs `swatchbook --version` and `plan` on a local fixture from its bin', async () => {
    const bin = join(installed, 'node_modules', '.bin', 'swatchbook');
    expect(execFileSync(bin, ['--version'], { encoding: 'utf8' }).trim()).toBe(VERSION);
    // a manifest whose image service is embedded in full: planning needs no request at all
    const C = 'https://pack.example.org/canvas/1';
    const service = { '@context': 'http://iiif.io/api/image/3/context.json', id: 'https://pack.example.org/iiif/1', type: 'ImageService3', protocol: 'http://iiif.io/api/image', profile: 'level2', width: 800, height: 600 };
    await writeFile(join(installed, 'manifest.json'), JSON.stringify({
      '@context': 'http://iiif.io/api/presentation/3/context.json', id: 'https://pack.example.org/m', type: 'Manifest', label: { en: ['m'] },
      items: [{ id: C, type: 'Canvas', width: 800, height: 600,
        items: [{ id: `${C}/p`, type: 'AnnotationPage', items: [{ id: `${C}/a`, type: 'Annotation', motivation: 'painting', target: C, body: { id: 'https://pack.example.org/iiif/1/full/max/0/default.jpg', type: 'Image', service: [service] } }] }],
        annotations: [{ id: `${C}/t`, type: 'AnnotationPage', items: [{ id: `${C}/t/1`, type: 'Annotation', motivation: 'tagging', bodyValue: 'oak', target: `${C}#xywh=100,100,300,200` }] }] }],
    }));
    await writeFile(join(installed, 'recipe.json'), JSON.stringify({ name: 'packed', sources: [{ manifest: 'manifest.json' }], labels: { oak: [] }, scale: { pixelsPerCanvasUnit: 1 }, patch: { size: 64 }, network: { contact: 'mailto:t@example.org' } }));
    const r = spawnSync(bin, ['plan', 'recipe.json', '--json'], { cwd: installed, encoding: 'utf8' });
    expect(r.status, r.stderr).toBe(0);
    const summary = JSON.parse(r.stdout);
    expect(summary.regionsPerClass).toEqual({ oak: 1 });
    // 300×200 units at 1 px per unit, 64-px patches on a grid anchored at the canvas origin: x origins 128, 192, 256, 320 and y 128, 192
    expect(summary.patchesPerClass.oak).toBe(8);
    // one request for the region's crop and one per negative (ratio 1: 8 negatives, each its own crop)
    expect(Object.values(summary.patchesPerClass).reduce((a: number, b) => a + (b as number), 0)).toBe(16);
    expect(summary.requests).toBe(9);
  });

  it('imports the library API from a plain .mjs file', async () => {
    await writeFile(join(installed, 'use.mjs'), [
      "import { VERSION, parseInfoJson, imageRequestUrl, SwatchbookError } from 'swatchbook';",
      "const svc = parseInfoJson({ '@context': 'http://iiif.io/api/image/3/context.json', id: 'https://x.example.org/i', type: 'ImageService3', protocol: 'http://iiif.io/api/image', profile: 'level1', width: 100, height: 50 }, 'https://x.example.org/i/info.json');",
      "console.log(JSON.stringify({ VERSION, level: svc.level, url: imageRequestUrl(svc.base, 3, { region: { x: 1, y: 2, w: 3, h: 4 }, size: { kind: 'max' }, quality: 'default', format: 'jpg' }), err: typeof SwatchbookError }));",
    ].join('\n'));
    const out = JSON.parse(execFileSync(process.execPath, ['use.mjs'], { cwd: installed, encoding: 'utf8' }));
    expect(out).toEqual({ VERSION, level: 1, url: 'https://x.example.org/i/1,2,3,4/max/0/default.jpg', err: 'function' });
  });
});
