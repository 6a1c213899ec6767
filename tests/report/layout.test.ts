import { describe, expect, it } from 'vitest';
import { barRows, canvasToThumbnail, classStyle, occurrenceChart, PALETTE, sheetLayout } from '../../src/report/layout.ts';

describe('report layout (pure, exact values)', () => {
  it('contact sheet: at most N tiles, chosen by seeded hash, in id order, columns with gaps', () => {
    const ids = Array.from({ length: 30 }, (_, i) => `p${String(i).padStart(2, '0')}`);
    const a = sheetLayout(ids, 's', 'oak/train', 12, 48, 5, 2);
    expect(a.tiles).toHaveLength(12);
    expect(a.of).toBe(30);
    expect(a.tiles.map((t) => t.id)).toEqual([...a.tiles.map((t) => t.id)].sort());
    // 5 columns of 48 px with 2 px gaps: 5·50 − 2 = 248 wide; 12 tiles → 3 rows: 3·50 − 2 = 148 high
    expect([a.width, a.height, a.columns]).toEqual([248, 148, 5]);
    expect(a.tiles[0]).toMatchObject({ x: 0, y: 0 });
    expect(a.tiles[6]).toMatchObject({ x: 50, y: 50 });
    expect(a.tiles[11]).toMatchObject({ x: 50, y: 100 });
    // stable under added patches: every new choice hashes below a dropped one
    const b = sheetLayout([...ids, 'q1', 'q2', 'q3'], 's', 'oak/train', 12, 48, 5, 2);
    const kept = a.tiles.filter((t) => b.tiles.some((x) => x.id === t.id)).length;
    const added = b.tiles.filter((t) => t.id.startsWith('q')).length;
    expect(kept + added).toBe(12);
    // fewer patches than the cap: all of them, one short row
    expect(sheetLayout(['x', 'y'], 's', 'c', 12, 48, 5, 2)).toMatchObject({ width: 98, height: 48, columns: 2 });
    expect(sheetLayout([], 's', 'c', 12, 48, 5, 2)).toMatchObject({ width: 0, height: 0, tiles: [] });
  });

  it('maps canvas units onto the thumbnail: x·scale − box.x', () => {
    // A 2000×1500 painted area at 0.128 px/unit gives a 256×192 thumbnail whose output box starts at (0, 0);
    // a region at (500, 250, 100, 50) lands at (64, 32, 12.8, 6.4).
    const t = canvasToThumbnail(0.128, { x: 0, y: 0 });
    expect(t.rect({ x: 500, y: 250, w: 100, h: 50 })).toEqual({ x: 64, y: 32, w: 12.8, h: 6.4 });
    // an image painted at (1000, 400) on the canvas: its box starts at (128, 51) on the canvas-anchored grid
    const u = canvasToThumbnail(0.128, { x: 128, y: 51 });
    expect(u.point(1000, 400)).toEqual([0, 0.2]);
    expect(u.point(1500, 650)).toEqual([64, 32.2]);
  });

  it('occurrence chart: canvases by their place along x, rows per class, radius ∝ √count', () => {
    const c = occurrenceChart(
      [
        { label: 'oak', canvasIndex: 0, canvasLabel: 'board 1', count: 16 },
        { label: 'oak', canvasIndex: 4, canvasLabel: 'board 5', count: 4 },
        { label: 'gold', canvasIndex: 2, canvasLabel: 'board 3', count: 1 },
      ],
      ['oak', 'gold'],
      { left: 100, right: 20, top: 10, rowHeight: 20, width: 520, maxR: 10 },
    );
    expect(c.rows).toEqual([{ label: 'gold', y: 20 }, { label: 'oak', y: 40 }]);
    expect([c.first, c.last, c.width, c.height]).toEqual([0, 4, 520, 74]);
    // x from 100 to 500 across indices 0..4; r = 10·√(count/16), at least 1.5
    expect(c.marks.map((m) => [m.label, m.cx, m.cy, m.r])).toEqual([['gold', 300, 20, 2.5], ['oak', 100, 40, 10], ['oak', 500, 40, 5]]);
  });

  it('bars: segments end to end, scaled to the largest total, or normalised to shares', () => {
    const rows = [{ label: 'a', values: [{ key: 'train', value: 30 }, { key: 'val', value: 10 }] }, { label: 'b', values: [{ key: 'train', value: 10 }, { key: 'val', value: 10 }] }];
    const abs = barRows(rows, { left: 100, right: 0, width: 500, top: 5, rowHeight: 20 });
    expect(abs.span).toBe(400);
    expect(abs.bars[0]!.segments).toEqual([{ key: 'train', x: 100, w: 300, value: 30 }, { key: 'val', x: 400, w: 100, value: 10 }]);
    expect(abs.bars[1]!.segments).toEqual([{ key: 'train', x: 100, w: 100, value: 10 }, { key: 'val', x: 200, w: 100, value: 10 }]);
    expect(abs.bars.map((b) => b.y)).toEqual([5, 25]);
    const rel = barRows(rows, { left: 100, right: 0, width: 500, top: 5, rowHeight: 20, normalise: true });
    expect(rel.bars[1]!.segments.map((s) => s.w)).toEqual([200, 200]);
  });

  it('classes get a colour from a colour-blind-safe palette and a dash pattern, by sorted name', () => {
    // Okabe and Ito (2008): orange, sky blue, bluish green, …
    expect(PALETTE.slice(0, 3)).toEqual(['#E69F00', '#56B4E9', '#009E73']);
    expect(classStyle(['oak', 'gold', 'background'], 'gold')).toEqual({ colour: '#56B4E9', dash: '6 3', index: 1 });
    expect(classStyle(['oak', 'gold', 'background'], 'background')).toEqual({ colour: '#E69F00', dash: '', index: 0 });
  });
});
