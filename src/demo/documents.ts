import { ANNOTATOR_WORDS, Board, SECOND_ARCHIVE_CABINET } from './boards.ts';
import { boardPlacement, canvasIdOf as canvasId, round3 as n, shapeToCanvas } from './canvas-geometry.ts';
import { secondArchiveDocuments } from './second-archive.ts';

export const DEMO_RIGHTS: Record<string, string> = {
  'east-cabinet': 'http://creativecommons.org/licenses/by/4.0/',
  'west-cabinet': 'http://creativecommons.org/publicdomain/zero/1.0/',
  'loan-cabinet': 'http://rightsstatements.org/vocab/InC-EDU/1.0/',
};

export function serviceFor(base: string, board: Board): Record<string, unknown> {
  switch (board.flavour) {
    case 'image3':
      return { id: `${base}/iiif/3/${board.slug}.png`, type: 'ImageService3', profile: 'level2' };
    case 'image2':
      return { '@id': `${base}/iiif/2/${board.slug}.png`, '@type': 'ImageService2', profile: 'http://iiif.io/api/image/2/level2.json' };
    case 'static0':
      return { id: `${base}/static/${board.slug}`, type: 'ImageService3', profile: 'level0' };
    case 'image1':
      // Image API 1.1 §5 context and §8 compliance URI; the trailing slash is as some published manifests write it.
      return { '@context': 'http://library.stanford.edu/iiif/image-api/1.1/context.json', '@id': `${base}/iiif/1/${board.slug}.png/`, profile: 'http://library.stanford.edu/iiif/image-api/1.1/compliance.html#level1' };
  }
}

/**
 * The demo's IIIF documents, all invented: one Presentation 3 collection of three
 * cabinet manifests, and one W3C AnnotationPage per cabinet written by two
 * annotators who name the same materials differently; and a second archive's
 * Presentation 2.1 collection, manifest and Open Annotation lists (`p2/`).
 */
export function demoDocuments(base: string, boards: readonly Board[]): Map<string, unknown> {
  const docs = new Map<string, unknown>();
  const cabinets = [...new Set(boards.map((b) => b.cabinet))].filter((c) => c !== SECOND_ARCHIVE_CABINET);
  docs.set('collection.json', {
    '@context': 'http://iiif.io/api/presentation/3/context.json',
    id: `${base}/collection.json`,
    type: 'Collection',
    label: { en: ['Sample boards of an invented decorative-painting workshop'] },
    items: cabinets.map((c) => ({ id: `${base}/manifests/${c}.json`, type: 'Manifest', label: { en: [c.replace('-', ' ')] } })),
  });
  for (const cabinet of cabinets) {
    const inCabinet = boards.map((b, i) => ({ b, i })).filter(({ b }) => b.cabinet === cabinet);
    docs.set(`manifests/${cabinet}.json`, {
      '@context': 'http://iiif.io/api/presentation/3/context.json',
      id: `${base}/manifests/${cabinet}.json`,
      type: 'Manifest',
      label: { en: [`Sample boards, ${cabinet.replace('-', ' ')}`] },
      summary: { en: ['Faux graining, marbling and gilding samples on a plain ground (invented demo data).'] },
      rights: DEMO_RIGHTS[cabinet],
      requiredStatement: { label: { en: ['Attribution'] }, value: { en: [`Example Workshop Archive, ${cabinet.replace('-', ' ')} (invented)`] } },
      provider: [{ id: `${base}/about`, type: 'Agent', label: { en: ['Example Workshop Archive (invented)'] } }],
      items: inCabinet.map(({ b, i }) => {
        const p = boardPlacement(b, i);
        const target = p.x === 0 && p.y === 0 && p.w === p.canvasWidth && p.h === p.canvasHeight ? canvasId(base, b) : `${canvasId(base, b)}#xywh=${p.x},${p.y},${p.w},${p.h}`;
        return {
          id: canvasId(base, b),
          type: 'Canvas',
          label: { en: [b.title] },
          width: p.canvasWidth,
          height: p.canvasHeight,
          service: [{ '@context': 'http://iiif.io/api/annex/services/physdim/1/context.json', profile: 'http://iiif.io/api/annex/services/physdim', physicalScale: b.mmPerPixel / b.canvasPerPixel, physicalUnits: 'mm' }],
          items: [{
            id: `${canvasId(base, b)}/page`,
            type: 'AnnotationPage',
            items: [{
              id: `${canvasId(base, b)}/paint`,
              type: 'Annotation',
              motivation: 'painting',
              target,
              body: { id: `${base}/images/${b.slug}.png`, type: 'Image', format: 'image/png', width: b.width, height: b.height, service: [serviceFor(base, b)] },
            }],
          }],
        };
      }),
      annotations: [{ id: `${base}/annotations/${cabinet}.json`, type: 'AnnotationPage' }],
    });
    const items: unknown[] = [];
    for (const { b, i } of inCabinet) {
      const p = boardPlacement(b, i);
      b.regions.forEach((region, k) => {
        const shape = shapeToCanvas(region.shape, b.canvasPerPixel, p.x, p.y);
        const target = shape.kind === 'rect'
          ? `${canvasId(base, b)}#xywh=${n(shape.rect.x)},${n(shape.rect.y)},${n(shape.rect.w)},${n(shape.rect.h)}`
          : {
              type: 'SpecificResource',
              source: canvasId(base, b),
              selector: { type: 'SvgSelector', value: `<svg xmlns="http://www.w3.org/2000/svg"><polygon points="${shape.rings[0].map((q) => `${n(q.x)},${n(q.y)}`).join(' ')}"/></svg>` },
            };
        items.push({
          id: `${base}/annotations/${cabinet}/${b.slug}-${k + 1}`,
          type: 'Annotation',
          motivation: 'tagging',
          creator: { type: 'Person', name: region.annotator },
          body: { type: 'TextualBody', value: ANNOTATOR_WORDS[region.annotator][region.material], purpose: 'tagging', language: 'en' },
          target,
        });
      });
    }
    docs.set(`annotations/${cabinet}.json`, {
      '@context': 'http://www.w3.org/ns/anno.jsonld',
      id: `${base}/annotations/${cabinet}.json`,
      type: 'AnnotationPage',
      items,
    });
  }
  for (const [path, doc] of secondArchiveDocuments(base, boards)) docs.set(path, doc);
  return docs;
}
