import { mkdir, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import { demoDocuments } from '../../src/demo/documents.ts';
import { startDemoServer } from '../../src/demo/server.ts';
import { writeDemoSite } from '../../src/demo/site.ts';
import { loadRecipe } from '../../src/recipe/load.ts';
import type { Recipe } from '../../src/recipe/types.ts';

/**
 * The demo boards served by two image servers on 127.0.0.1 (two ports: two
 * hosts), the first archive's collection from one and the second's from the
 * other, and a recipe over both. For sharded runs, where crops split by host.
 */
export async function twoArchives(dir: string): Promise<{ recipe: Recipe; hosts: string[]; close: () => Promise<void> }> {
  const site = join(dir, 'site');
  const boards = await writeDemoSite(site);
  const servers = [];
  for (let i = 0; i < 2; i++) {
    const documents = new Map<string, unknown>();
    const server = await startDemoServer(site, documents, 0);
    for (const [path, doc] of demoDocuments(server.base, boards)) documents.set(path, doc);
    servers.push(server);
  }
  const [a, b] = servers as [(typeof servers)[number], (typeof servers)[number]];
  const doc = {
    name: 'two-archives',
    description: 'The invented sample boards, from two servers.',
    seed: 'two-archives-1',
    sources: [{ collection: `${a.base}/collection.json` }, { collection: `${b.base}/p2/collection.json` }],
    labels: { graining: ['faux oak', 'wood graining'], marbling: ['faux marble', 'marbling'], gilding: ['gold leaf', 'gilding'] },
    scale: { pixelsPerMm: 2 },
    patch: { size: 48, stride: 48, minCoverage: 0.9 },
    negatives: { ratio: 1, margin: 8, label: 'background' },
    split: { fractions: { train: 0.7, val: 0.15, test: 0.15 }, groupBy: 'canvas' },
    request: { format: 'png' },
    network: { contact: 'mailto:tests@example.org', concurrency: 4, perHost: 2, perHostRate: 1000, retries: 1 },
    output: 'two-archives-dataset',
  };
  await mkdir(dir, { recursive: true });
  const file = join(dir, 'recipe.json');
  await writeFile(file, JSON.stringify(doc, null, 2));
  return { recipe: await loadRecipe(file), hosts: [new URL(a.base).host, new URL(b.base).host].sort(), close: async () => { await a.close(); await b.close(); } };
}
