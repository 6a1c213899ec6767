import { mkdir, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
const PER_MANIFEST = 100;
const B = 'https://bench.example.org';
async function writeSources(dir: string, n: number): Promise<string> {
  const manifests: string[] = [];
  for (let m = 0; m * PER_MANIFEST < n; m++) {
    const items = [];
    for (let i = m * PER_MANIFEST; i < Math.min(n, (m + 1) * PER_MANIFEST); i++) {
      const svc = { '@context': 'http://iiif.io/api/image/3/context.json', id: `${B}/iiif/${i}`, type: 'ImageService3', protocol: 'http://iiif.io/api/image', profile: 'level1', width: 2000, height: 1500 };
      const c = `${B}/canvas/${i}`;
      items.push({
        id: c, type: 'Canvas', width: 2000, height: 1500,
        items: [{ id: `${c}/p`, type: 'AnnotationPage', items: [{ id: `${c}/a`, type: 'Annotation', motivation: 'painting', target: c, body: { id: `${svc.id}/full/max/0/default.jpg`, type: 'Image', service: [svc] } }] }],
        annotations: [{ id: `${c}/t`, type: 'AnnotationPage', items: [{ id: `${c}/t/1`, type: 'Annotation', motivation: 'tagging', bodyValue: i % 2 ? 'oak' : 'marble', target: `${c}#xywh=200,200,600,400` }] }],
      });
    }
    const file = `m${m}.json`;
    await writeFile(join(dir, file), JSON.stringify({ '@context': 'http://iiif.io/api/presentation/3/context.json', id: `${B}/m/${m}`, type: 'Manifest', label: { en: [`bench ${m}`] }, items }));
    manifests.push(file);
  }
  const recipe = { name: 'plan-memory', seed: 'bench', sources: manifests.map((manifest) => ({ manifest })), labels: { oak: [], marble: [] }, scale: { pixelsPerCanvasUnit: 0.25 }, patch: { size: 32 }, negatives: { ratio: 1 } };
  await writeFile(join(dir, 'recipe.json'), JSON.stringify(recipe));
  return join(dir, 'recipe.json');
}
const dir = process.argv[3]!; await mkdir(dir, { recursive: true });
console.log(await writeSources(dir, Number(process.argv[2])));
