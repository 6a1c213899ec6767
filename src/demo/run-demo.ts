import { mkdir, readFile, writeFile } from 'node:fs/promises';
import { dirname, join, resolve } from 'node:path';
import { fileURLToPath } from 'node:url';
import { loadRecipe } from '../recipe/load.ts';
import { runRecipe, RunOptions, BuildSummary } from '../pipeline.ts';
import { demoDocuments } from './documents.ts';
import { startDemoServer } from './server.ts';
import { writeDemoSite } from './site.ts';

export { DEFAULT_DEMO_PORT } from './defaults.ts';

export interface DemoResult {
  folder: string;
  recipeFile: string;
  dataset: string;
  build: BuildSummary;
  requestsServed: Record<string, number>;
}

const TEMPLATE = join(dirname(fileURLToPath(import.meta.url)), '..', '..', 'manifests', 'demo.recipe.json');

/**
 * The whole job on invented data: paints the sample boards, serves them on
 * 127.0.0.1, writes the recipe, plans, harvests and builds, then stops the server.
 */
export async function runDemo(out: string, port: number, opts: RunOptions & { onStage?: (stage: string) => void } = {}): Promise<DemoResult> {
  const folder = resolve(out);
  const site = join(folder, 'site');
  await mkdir(folder, { recursive: true });
  opts.onStage?.('painting the sample boards');
  const boards = await writeDemoSite(site);
  const documents = new Map<string, unknown>();
  const server = await startDemoServer(site, documents, port);
  try {
    for (const [path, doc] of demoDocuments(server.base, boards)) documents.set(path, doc);
    await mkdir(join(site, 'documents'), { recursive: true });
    for (const [path, doc] of documents) {
      const file = join(site, 'documents', path);
      await mkdir(dirname(file), { recursive: true });
      await writeFile(file, `${JSON.stringify(doc, null, 2)}\n`);
    }
    const template = await readFile(TEMPLATE, 'utf8');
    const recipeFile = join(folder, 'recipe.json');
    await writeFile(recipeFile, template.replaceAll('{{base}}', server.base));
    const recipe = await loadRecipe(recipeFile);
    opts.onStage?.(`harvesting from ${server.base}`);
    const { build } = await runRecipe(recipe, { cacheDir: join(folder, '.swatchbook-cache'), ...opts });
    return { folder, recipeFile, dataset: recipe.output, build, requestsServed: Object.fromEntries([...server.counts.entries()].sort()) };
  } finally {
    await server.close();
  }
}
