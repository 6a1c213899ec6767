import { mkdir, readFile, rm, writeFile } from 'node:fs/promises';
import { join } from 'node:path';
import sharp from 'sharp';
import { encodePng } from '../image/pixels.ts';
import { sha256Hex } from '../util/hash.ts';
import { Board, demoBoards, renderBoard } from './boards.ts';

/**
 * Writes the demo's images: one lossless PNG per board, and a level-0 tile
 * pyramid (sharp `tile`, IIIF 3 layout, 256-px tiles) for the static boards.
 * Boards already written with the same content are kept (a stamp file holds their hashes).
 */
export async function writeDemoSite(site: string, onBoard?: (done: number, total: number) => void): Promise<Board[]> {
  const boards = demoBoards();
  await mkdir(join(site, 'images'), { recursive: true });
  await mkdir(join(site, 'static'), { recursive: true });
  let done = 0;
  for (const board of boards) {
    const stampFile = join(site, 'images', `${board.slug}.stamp`);
    const want = sha256Hex(JSON.stringify(board));
    const have = await readFile(stampFile, 'utf8').catch(() => '');
    if (have !== want) {
      const png = await encodePng(renderBoard(board));
      await writeFile(join(site, 'images', `${board.slug}.png`), png);
      if (board.flavour === 'static0') {
        await rm(join(site, 'static', board.slug), { recursive: true, force: true });
        // The `.dz` suffix selects tile output; libvips names the folder after the base name.
        await sharp(png).jpeg({ quality: 92 }).tile({ layout: 'iiif3', size: 256, overlap: 0, id: 'https://example.com/static' }).toFile(join(site, 'static', `${board.slug}.dz`));
      }
      await writeFile(stampFile, want);
    }
    onBoard?.(++done, boards.length);
  }
  return boards;
}
