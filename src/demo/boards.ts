import type { RgbImage } from '../image/pixels.ts';
import type { Point } from '../geometry/rect.ts';
import { pointInShape, Shape } from '../geometry/shape.ts';
import { latticeHash } from './noise.ts';
import { Material, materialColour } from './textures.ts';

/** How a board is served in the demo: Image API 3 or 2 at level 2, a static level-0 pyramid, or Image API 1.1 at level 1. */
export type Flavour = 'image3' | 'image2' | 'static0' | 'image1';

export interface BoardRegion {
  material: Exclude<Material, 'ground'>;
  /** In image pixels. */
  shape: Shape;
  annotator: 'annotator-a' | 'annotator-b';
}

export interface Board {
  slug: string;
  title: string;
  width: number;
  height: number;
  /** Canvas units per image pixel (0.5: the canvas is half the image size). */
  canvasPerPixel: number;
  /** Millimetres per image pixel of the physical board. */
  mmPerPixel: number;
  seed: number;
  flavour: Flavour;
  regions: BoardRegion[];
  cabinet: string;
  /** Another board whose pixels this one repeats (a copy served by a second archive). */
  copyOf?: string;
}

/** The words each invented annotator uses; the recipe's label map joins them. */
export const ANNOTATOR_WORDS: Record<BoardRegion['annotator'], Record<BoardRegion['material'], string>> = {
  'annotator-a': { graining: 'faux oak', marbling: 'faux marble', gilding: 'gold leaf' },
  'annotator-b': { graining: 'wood graining', marbling: 'marbling', gilding: 'gilding' },
};

const MATERIALS: BoardRegion['material'][] = ['graining', 'marbling', 'gilding'];

/**
 * The invented sample boards of a fictional decorative-painting workshop:
 * 27 boards in three cabinets, of different sizes, each with two or three painted
 * samples (rectangles and polygons). One board of the third cabinet is a copy
 * of a board of the first, as if a second archive served the same picture.
 * Six more boards belong to a second archive that publishes the older IIIF forms.
 */
export function demoBoards(): Board[] {
  const boards: Board[] = [];
  const cabinets = ['east-cabinet', 'west-cabinet', 'loan-cabinet'];
  for (let i = 0; i < 27; i++) {
    const r = (k: number) => latticeHash(i, k, 424242);
    const cabinet = cabinets[Math.floor(i / 9)];
    const width = 720 + Math.floor(r(1) * 8) * 60;
    const height = 540 + Math.floor(r(2) * 6) * 60;
    const flavour: Flavour = i % 9 === 4 ? 'static0' : i % 9 === 7 ? 'image2' : 'image3';
    const regions: BoardRegion[] = [];
    const n = 2 + Math.floor(r(3) * 2);
    const cellW = Math.floor(width / 2), cellH = Math.floor(height / 2);
    for (let k = 0; k < n; k++) {
      const material = MATERIALS[(i + k) % 3];
      const shape = sampleShape(cellW, cellH, k, 30 + Math.floor(r(10 + k) * 20), r(20 + k) < 0.4 ? { lean: 0.15, drop: 0.1 } : undefined);
      regions.push({ material, shape, annotator: (i + k) % 2 === 0 ? 'annotator-a' : 'annotator-b' });
    }
    boards.push(numberedBoard(i, { width, height, canvasPerPixel: i % 3 === 0 ? 0.5 : 1, flavour, regions, cabinet }));
  }
  // The loan cabinet's last board repeats board-02 pixel for pixel, served as Image API 2.
  const original = boards[1];
  const copy = boards[26];
  boards[26] = { ...original, slug: copy.slug, title: `${original.title} (loan copy)`, cabinet: copy.cabinet, flavour: 'image2', copyOf: original.slug };
  boards.push(...secondArchiveBoards());
  return boards;
}

/** The cabinet of the second invented archive, which still publishes Presentation 2.1 and Image API 1.1. */
export const SECOND_ARCHIVE_CABINET = 'north-cabinet';

/**
 * Six boards of a second invented archive (boards 28–33): served by an Image
 * API 1.1 level-1 server, described by a Presentation 2.1 manifest with Open
 * Annotation lists. Same painting rules as the first archive's boards.
 */
function secondArchiveBoards(): Board[] {
  const out: Board[] = [];
  for (let j = 0; j < 6; j++) {
    const i = 27 + j;
    const r = (k: number) => latticeHash(i, k, 424242);
    const width = 720 + Math.floor(r(1) * 6) * 60;
    const height = 540 + Math.floor(r(2) * 4) * 60;
    const cellW = Math.floor(width / 2), cellH = Math.floor(height / 2);
    const regions: BoardRegion[] = [];
    for (let k = 0; k < 3; k++) {
      const shape = sampleShape(cellW, cellH, k, 30 + Math.floor(r(10 + k) * 20), k === 1 ? { lean: 0.2, drop: 0 } : undefined);
      regions.push({ material: MATERIALS[(j + k) % 3], shape, annotator: (j + k) % 2 === 0 ? 'annotator-a' : 'annotator-b' });
    }
    out.push(numberedBoard(i, { width, height, canvasPerPixel: j % 2 === 0 ? 0.5 : 1, flavour: 'image1', regions, cabinet: SECOND_ARCHIVE_CABINET }));
  }
  return out;
}

/**
 * The k-th painted sample of a board: the k-th cell of a 2-column grid of
 * `cellW`×`cellH` cells, inset by `pad`; a rectangle, or a slanted quadrilateral
 * whose top-left corner leans in by `lean` and whose top-right drops by `drop` (shares of the cell).
 */
function sampleShape(cellW: number, cellH: number, k: number, pad: number, polygon?: { lean: number; drop: number }): Shape {
  const cx = (k % 2) * cellW, cy = Math.floor(k / 2) * cellH;
  const x0 = cx + pad, y0 = cy + pad, x1 = cx + cellW - pad, y1 = cy + cellH - pad;
  if (!polygon) return { kind: 'rect', rect: { x: x0, y: y0, w: x1 - x0, h: y1 - y0 } };
  const ring: Point[] = [{ x: x0, y: y1 }, { x: x0 + (x1 - x0) * polygon.lean, y: y0 }, { x: x1, y: y0 + (y1 - y0) * polygon.drop }, { x: x1 - (x1 - x0) * 0.1, y: y1 }];
  return { kind: 'polygon', rings: [ring] };
}

/** Board number i + 1: its slug, title, seed and physical scale follow from the number. */
function numberedBoard(i: number, b: Pick<Board, 'width' | 'height' | 'canvasPerPixel' | 'flavour' | 'regions' | 'cabinet'>): Board {
  return { slug: `board-${String(i + 1).padStart(2, '0')}`, title: `Sample board ${i + 1}`, width: b.width, height: b.height, canvasPerPixel: b.canvasPerPixel, mmPerPixel: 0.25, seed: 1000 + i, flavour: b.flavour, regions: b.regions, cabinet: b.cabinet };
}

/** Paints a board: ground, then each region's material inside its shape. */
export function renderBoard(board: Board): RgbImage {
  const data = Buffer.alloc(board.width * board.height * 3);
  for (let y = 0; y < board.height; y++) {
    for (let x = 0; x < board.width; x++) {
      let m: Material = 'ground';
      for (const region of board.regions) {
        if (pointInShape(region.shape, x + 0.5, y + 0.5)) {
          m = region.material;
          break;
        }
      }
      const c = materialColour(m, x, y, board.seed);
      const i = (y * board.width + x) * 3;
      data[i] = c[0];
      data[i + 1] = c[1];
      data[i + 2] = c[2];
    }
  }
  return { width: board.width, height: board.height, data };
}
