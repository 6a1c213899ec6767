import type { Rect } from '../geometry/rect.ts';

export interface SizeLimits {
  maxWidth?: number;
  maxHeight?: number;
  maxArea?: number;
}

/**
 * Splits a w×h box into a grid of cells that each satisfy the limits
 * (Image API 3.0 §5.2: maxWidth, maxHeight and maxArea are independent). Cells are
 * as equal as possible; the grid is the smallest number of columns, then rows, that fits.
 * Returned cells are relative to the box's top-left and ordered row by row.
 */
export function splitWithinLimits(width: number, height: number, limits: SizeLimits): Rect[] {
  const maxW = limits.maxWidth ?? Infinity;
  const maxH = limits.maxHeight ?? Infinity;
  const maxA = limits.maxArea ?? Infinity;
  if (maxW < 1 || maxH < 1 || maxA < 1) throw new RangeError('size limits must be at least 1 pixel');
  let best: { cols: number; rows: number } | undefined;
  const minCols = Math.ceil(width / maxW);
  const minRows = Math.ceil(height / maxH);
  // Search the smallest total cell count; bounded because cols ≤ width and rows ≤ height.
  for (let total = minCols * minRows; total <= width * height && !best; total++) {
    for (let cols = minCols; cols <= Math.min(total, width); cols++) {
      if (total % cols !== 0) continue;
      const rows = total / cols;
      if (rows < minRows || rows > height) continue;
      const cw = Math.ceil(width / cols), ch = Math.ceil(height / rows);
      if (cw <= maxW && ch <= maxH && cw * ch <= maxA) {
        best = { cols, rows };
        break;
      }
    }
  }
  if (!best) throw new RangeError(`cannot split ${width}×${height} within the limits`);
  const cells: Rect[] = [];
  const xs = cuts(width, best.cols), ys = cuts(height, best.rows);
  for (let r = 0; r < best.rows; r++) {
    for (let c = 0; c < best.cols; c++) cells.push({ x: xs[c], y: ys[r], w: xs[c + 1] - xs[c], h: ys[r + 1] - ys[r] });
  }
  return cells;
}

function cuts(length: number, parts: number): number[] {
  const out: number[] = [];
  for (let i = 0; i <= parts; i++) out.push(Math.round((i * length) / parts));
  return out;
}
