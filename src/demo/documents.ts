import type { Shape } from '../geometry/shape.ts';
import { ANNOTATOR_WORDS, Board } from './boards.ts';

export const DEMO_RIGHTS: Record<string, string> = {
  'east-cabinet': 'http://creativecommons.org/licenses/by/4.0/',
  'west-cabinet': 'http://creativecommons.org/publicdomain/zero/1.0/',
  'loan-cabinet': 'http://rightsstatements.org/vocab/InC-EDU/1.0/',
};

/** Where a board is painted on its canvas (canvas units): the whole canvas, or inset for every ninth board. */
export function boardPlacement(board: Board, index: number): { canvasWidth: number; canvasHeight: number; x: number; y: number; w: number; h: number } {
  const w = board.width * board.canvasPerPixel, h = board.height * board.canvasPerPixel;
  if (index % 9 === 5) return { canvasWidth: w + 120, canvasHeight: h + 80, x: 120, y: 40, w, h };
  return { canvasWidth: w, canvasHeight: h, x: 0, y: 0, w, h };
}

export function serviceFor(base: string, board: Board): Record<string, unknown> {
  switch (board.flavour) {
    case 'image3':
      return { id: `${base}/iiif/3/${board.slug}.png`, type: 'ImageService3', profile: 'level2' };
    case 'image2':
      return { '@id': `${base}/iiif/2/${board.slug}.png`, '@type': 'ImageService2', profile: 'http://iiif.io/api/image/2/level2.json' };
    case 'static0':
      return { id: `${base}/static/${board.slug}`, type: 'ImageService3', profile: 'level0' };
  }
}

const canvasId = (base: string, b: Board) => `${base}/canvas/${b.slug}`;

function shapeToCanvas(shape: Shape, k: number, dx: number, dy: number): Shape {
  if (shape.kind === 'rect') return { kind: 'rect', rect: { x: shape.rect.x * k + dx, y: shape.rect.y * k + dy, w: shape.rect.w * k, h: shape.rect.h * k } };
  return { kind: 'polygon', rings: shape.rings.map((r) => r.map((p) => ({ x: p.x * k + dx, y: p.y * k + dy }))) };
}

const n = (v: number) => +v.toFixed(3);

/**
 * The demo's IIIF documents, all invented: one Presentation 3 collection of three
 * cabinet manifests, and one W3C AnnotationPage per cabinet written by two
 * annotators who name the same materials differently.
 */
export function demoDocuments(base: string, boards: readonly Board[]): Map<string, unknown> {
  const docs = new Map<string, unknown>();
  const cabinets = [...new Set(boards.map((b) => b.cabinet))];
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
  return docs;
}
