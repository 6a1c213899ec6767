import nock from 'nock';
import { mkdir, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import type { Board } from '../../src/demo/boards.ts';
import { renderBoard } from '../../src/demo/boards.ts';
import { demoDocuments } from '../../src/demo/documents.ts';
import { normaliseRecipe } from '../../src/recipe/load.ts';
import type { Recipe } from '../../src/recipe/types.ts';
import type { RgbImage } from '../../src/image/pixels.ts';
import { latticeHash } from '../../src/demo/noise.ts';
import { mockImageService } from '../coord-image.ts';

export const BASE = 'https://boards.example.org';

/** Seven small invented boards in three cabinets; the last is a pixel copy of the first, served as Image API 2. */
export function scenarioBoards(): Board[] {
  const mk = (i: number, cabinet: string, flavour: Board['flavour'], regions: Board['regions'], extra: Partial<Board> = {}): Board => ({
    slug: `b${i}`, title: `Board ${i}`, width: 320, height: 240, canvasPerPixel: i === 2 ? 0.5 : 1, mmPerPixel: 0.25, seed: 50 + i, flavour, regions, cabinet, ...extra,
  });
  const rect = (x: number, y: number, w: number, h: number) => ({ kind: 'rect' as const, rect: { x, y, w, h } });
  const tri = { kind: 'polygon' as const, rings: [[{ x: 170, y: 20 }, { x: 300, y: 20 }, { x: 170, y: 150 }]] };
  const boards = [
    mk(1, 'east-cabinet', 'image3', [{ material: 'graining', shape: rect(20, 20, 120, 100), annotator: 'annotator-a' }, { material: 'marbling', shape: tri, annotator: 'annotator-b' }]),
    mk(2, 'east-cabinet', 'static0', [{ material: 'gilding', shape: rect(20, 120, 140, 100), annotator: 'annotator-a' }, { material: 'graining', shape: rect(180, 20, 120, 100), annotator: 'annotator-b' }]),
    mk(3, 'east-cabinet', 'image2', [{ material: 'marbling', shape: rect(30, 30, 110, 110), annotator: 'annotator-b' }, { material: 'gilding', shape: rect(170, 110, 130, 110), annotator: 'annotator-a' }]),
    mk(4, 'west-cabinet', 'image3', [{ material: 'gilding', shape: rect(20, 20, 120, 100), annotator: 'annotator-b' }, { material: 'marbling', shape: rect(180, 110, 120, 110), annotator: 'annotator-a' }]),
    mk(5, 'west-cabinet', 'image3', [{ material: 'graining', shape: rect(160, 20, 140, 110), annotator: 'annotator-a' }, { material: 'gilding', shape: rect(20, 130, 120, 90), annotator: 'annotator-b' }]),
    mk(6, 'west-cabinet', 'image3', [{ material: 'marbling', shape: rect(20, 20, 130, 100), annotator: 'annotator-a' }, { material: 'graining', shape: rect(170, 120, 130, 100), annotator: 'annotator-b' }]),
  ];
  boards.push({ ...boards[0], slug: 'b7', title: 'Board 1 (loan copy)', cabinet: 'loan-cabinet', flavour: 'image2', copyOf: 'b1' });
  return boards;
}

export interface ServedScenario {
  counts: Map<string, number>[];
  documents: Map<string, unknown>;
}

/**
 * Serves the scenario through nock: documents, and each board as an image
 * service of its flavour (v3 level 2, v2 level 2, v3 level 0 with 128-px tiles).
 */
export function serveScenario(boards: readonly Board[], opts: { shuffleSeed?: number; only?: string[] } = {}): ServedScenario {
  const documents = demoDocuments(BASE, boards);
  const docScope = nock(BASE).persist();
  for (const [path, doc] of documents) docScope.get(`/${path}`).reply(200, JSON.stringify(doc), { 'content-type': 'application/ld+json' });
  const counts: Map<string, number>[] = [];
  const images = new Map<string, RgbImage>();
  for (const b of boards) {
    const key = b.copyOf ?? b.slug;
    if (!images.has(key)) images.set(key, renderBoard(b));
    const img = images.get(key)!;
    const delayMs = opts.shuffleSeed === undefined ? undefined : (p: string) => Math.floor(latticeHash(p.length, [...p].reduce((a, c) => a * 31 + c.charCodeAt(0), 0) | 0, opts.shuffleSeed!) * 25);
    const common = { ...(delayMs ? { delayMs } : {}) };
    if (b.flavour === 'image3') counts.push(mockImageService(BASE, `/iiif/3/${b.slug}.png`, img, { version: 3, level: 2, ...common }).counts);
    else if (b.flavour === 'image2') counts.push(mockImageService(BASE, `/iiif/2/${b.slug}.png`, img, { version: 2, level: 2, ...common }).counts);
    else counts.push(mockImageService(BASE, `/static/${b.slug}`, img, { version: 3, level: 0, tiles: [{ width: 128, scaleFactors: [1, 2, 4] }], ...common }).counts);
  }
  return { counts, documents };
}

export async function scenarioRecipe(dir: string, overrides: Record<string, unknown> = {}, sources?: unknown[]): Promise<Recipe> {
  const doc = {
    name: 'scenario',
    description: 'Invented boards for tests.',
    seed: 'scenario-seed',
    sources: sources ?? [{ collection: `${BASE}/collection.json` }],
    labels: { graining: ['faux oak', 'wood graining'], marbling: ['faux marble', 'marbling'], gilding: ['gold leaf', 'gilding'] },
    scale: { pixelsPerMm: 4 },
    patch: { size: 32, stride: 32, minCoverage: 0.9 },
    negatives: { ratio: 1, margin: 4, label: 'background' },
    split: { fractions: { train: 0.6, val: 0.2, test: 0.2 }, groupBy: 'canvas' },
    dedupe: { maxDistance: 4 },
    request: { format: 'png' },
    network: { contact: 'mailto:tests@example.org', perHostRate: 1000, perHost: 8, concurrency: 8, retries: 1 },
    output: 'out',
    ...overrides,
  };
  await mkdir(dir, { recursive: true });
  const file = join(dir, 'recipe.json');
  await writeFile(file, JSON.stringify(doc));
  return normaliseRecipe(doc, file, dir);
}
