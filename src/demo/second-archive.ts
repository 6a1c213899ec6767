import { boundsOf } from '../geometry/rect.ts';
import { ANNOTATOR_WORDS, Board, SECOND_ARCHIVE_CABINET } from './boards.ts';
import { canvasIdOf, round3, shapeToCanvas } from './canvas-geometry.ts';

const P2_CONTEXT = 'http://iiif.io/api/presentation/2/context.json';
const IMAGE11_CONTEXT = 'http://library.stanford.edu/iiif/image-api/1.1/context.json';
const IMAGE11_LEVEL1 = 'http://library.stanford.edu/iiif/image-api/1.1/compliance.html#level1';

/** Brush directions the second archive's cataloguers note beside the material (an attribute, not a class). */
const DIRECTIONS = ['along the board', 'across the board', 'diagonal'];

/**
 * The second invented archive publishes the older IIIF forms: a Presentation 2.1
 * `sc:Collection` listing an `sc:Manifest` whose canvases paint Image API 1.1
 * level-1 images, with one `sc:AnnotationList` per canvas (referenced through
 * `otherContent`, never embedded: P2.1 §5.5) of Open Annotation annotations in
 * the shapes published data uses: `on` as a string with `#xywh=`, and as an
 * `oa:SpecificResource` with the dual `oa:Choice` selector (a box as `default`,
 * the SVG outline as `item`); bodies as an `oa:Tag` with an HTML comment beside
 * it, or a single `dctypes:Text`. Paths are relative to the server base.
 */
export function secondArchiveDocuments(base: string, boards: readonly Board[]): Map<string, unknown> {
  const docs = new Map<string, unknown>();
  const mine = boards.filter((b) => b.cabinet === SECOND_ARCHIVE_CABINET);
  if (mine.length === 0) return docs;
  const manifestId = `${base}/p2/manifests/${SECOND_ARCHIVE_CABINET}.json`;
  const collectionId = `${base}/p2/collection.json`;
  docs.set('p2/collection.json', {
    '@context': P2_CONTEXT,
    '@id': collectionId,
    '@type': 'sc:Collection',
    label: 'Sample boards of a second invented archive',
    manifests: [{ '@id': manifestId, '@type': 'sc:Manifest', label: 'Sample boards, north cabinet' }],
  });
  docs.set(`p2/manifests/${SECOND_ARCHIVE_CABINET}.json`, {
    '@context': P2_CONTEXT,
    '@id': manifestId,
    '@type': 'sc:Manifest',
    label: [{ '@value': 'Sample boards, north cabinet', '@language': 'en' }],
    description: 'Faux graining, marbling and gilding samples on a plain ground (invented demo data).',
    // Written with https, as many P2 manifests do; swatchbook records the http form (Presentation 3.0 §3.1 rights).
    license: 'https://creativecommons.org/licenses/by/4.0/',
    attribution: 'Second Example Archive, north cabinet (invented)',
    logo: { '@id': `${base}/p2/logo.png` },
    within: collectionId,
    sequences: [{
      '@type': 'sc:Sequence',
      canvases: mine.map((b) => {
        const c = canvasIdOf(base, b);
        const service = `${base}/iiif/1/${b.slug}.png`;
        return {
          '@id': c,
          '@type': 'sc:Canvas',
          label: b.title,
          width: b.width * b.canvasPerPixel,
          height: b.height * b.canvasPerPixel,
          service: { '@context': 'http://iiif.io/api/annex/services/physdim/1/context.json', profile: 'http://iiif.io/api/annex/services/physdim', physicalScale: b.mmPerPixel / b.canvasPerPixel, physicalUnits: 'mm' },
          images: [{
            '@id': `${c}/paint`,
            '@type': 'oa:Annotation',
            motivation: 'sc:painting',
            on: c,
            resource: {
              '@id': `${service}/full/full/0/native.jpg`,
              '@type': 'dctypes:Image',
              format: 'image/jpeg',
              width: b.width,
              height: b.height,
              // Image API 1.1 §5 context, §8 compliance URI; the trailing slash as some published manifests write it.
              service: { '@context': IMAGE11_CONTEXT, '@id': `${service}/`, profile: IMAGE11_LEVEL1 },
            },
          }],
          otherContent: [{ '@id': `${base}/p2/lists/${b.slug}.json`, '@type': 'sc:AnnotationList' }],
        };
      }),
    }],
  });
  for (const [j, b] of mine.entries()) {
    const c = canvasIdOf(base, b);
    const resources = b.regions.map((region, k) => {
      const shape = shapeToCanvas(region.shape, b.canvasPerPixel, 0, 0);
      const word = ANNOTATOR_WORDS[region.annotator][region.material];
      const common = { '@id': `${base}/p2/annotations/${b.slug}-${k + 1}`, '@type': 'oa:Annotation', annotatedBy: { '@type': 'foaf:Person', name: region.annotator } };
      if (shape.kind === 'rect') {
        const r = shape.rect;
        return {
          ...common,
          motivation: ['oa:tagging', 'oa:commenting'],
          on: `${c}#xywh=${round3(r.x)},${round3(r.y)},${round3(r.w)},${round3(r.h)}`,
          resource: [
            { '@type': 'oa:Tag', chars: word },
            { '@type': 'dctypes:Text', format: 'text/html', chars: `<p>brush direction: ${DIRECTIONS[(j + k) % DIRECTIONS.length]}</p>` },
          ],
        };
      }
      const ring = shape.rings[0];
      const box = boundsOf(ring);
      const d = `M${ring.map((q) => `${round3(q.x)},${round3(q.y)}`).join('L')}z`;
      return {
        ...common,
        motivation: 'oa:commenting',
        on: [{
          '@type': 'oa:SpecificResource',
          full: c,
          selector: {
            '@type': 'oa:Choice',
            default: { '@type': 'oa:FragmentSelector', value: `xywh=${Math.round(box.x)},${Math.round(box.y)},${Math.round(box.w)},${Math.round(box.h)}` },
            item: { '@type': 'oa:SvgSelector', value: `<svg xmlns='http://www.w3.org/2000/svg'><path d='${d}'/></svg>` },
          },
          within: { '@id': `${base}/p2/manifests/${SECOND_ARCHIVE_CABINET}.json`, '@type': 'sc:Manifest' },
        }],
        resource: { '@type': 'dctypes:Text', format: 'text/plain', chars: word },
      };
    });
    docs.set(`p2/lists/${b.slug}.json`, { '@context': P2_CONTEXT, '@id': `${base}/p2/lists/${b.slug}.json`, '@type': 'sc:AnnotationList', resources });
  }
  return docs;
}
