import type { Point } from '../geometry/rect.ts';

/**
 * SVG 1.1 path data (§8.3) to polylines. All commands M L H V C S Q T A Z, absolute
 * (upper case) and relative (lower case); extra pairs after a moveto are implicit
 * linetos (§8.3.2). Curves are flattened so that no point of the true curve is
 * farther than `tolerance` from the polyline: Bézier segments by Wang's formula
 * (from memory: n = ceil(sqrt(d(d−1)/8 · M / tol)), M the largest second difference
 * of the control points), arcs by the sagitta bound.
 */
export function flattenPath(d: string, tolerance = 0.25): Point[][] {
  const tokens = tokenize(d);
  const subpaths: Point[][] = [];
  let current: Point[] = [];
  let x = 0, y = 0, startX = 0, startY = 0;
  let lastCtrl: Point | undefined;
  let lastCmd = '';
  let i = 0;
  const num = (): number => {
    const t = tokens[i];
    if (t === undefined || typeof t !== 'number') throw new SyntaxError(`path data: expected a number after "${lastCmd}" at token ${i}`);
    i++;
    return t;
  };
  const flag = (): boolean => {
    const n = num();
    if (n !== 0 && n !== 1) throw new SyntaxError('path data: arc flags must be 0 or 1');
    return n === 1;
  };
  const lineTo = (nx: number, ny: number) => {
    current.push({ x: nx, y: ny });
    x = nx;
    y = ny;
  };
  let cmd = '';
  while (i < tokens.length) {
    const t = tokens[i];
    if (typeof t === 'string') {
      if (lastCmd === '' && t !== 'M' && t !== 'm') throw new SyntaxError('path data must start with a moveto (M or m)');
      cmd = t;
      i++;
    } else if (cmd === '') {
      throw new SyntaxError('path data must start with a moveto (M or m)');
    } else if (cmd === 'M') cmd = 'L';
    else if (cmd === 'm') cmd = 'l';
    else if (cmd === 'Z' || cmd === 'z') throw new SyntaxError('path data: numbers after closepath');
    const rel = cmd === cmd.toLowerCase();
    const ox = rel ? x : 0, oy = rel ? y : 0;
    let ctrl: Point | undefined;
    switch (cmd.toUpperCase()) {
      case 'M': {
        if (current.length > 1) subpaths.push(current);
        const nx = ox + num(), ny = oy + num();
        current = [{ x: nx, y: ny }];
        x = startX = nx;
        y = startY = ny;
        break;
      }
      case 'L':
        lineTo(ox + num(), oy + num());
        break;
      case 'H':
        lineTo(ox + num(), y);
        break;
      case 'V':
        lineTo(x, oy + num());
        break;
      case 'C': {
        const p1 = { x: ox + num(), y: oy + num() }, p2 = { x: ox + num(), y: oy + num() }, p3 = { x: ox + num(), y: oy + num() };
        cubic({ x, y }, p1, p2, p3, tolerance, current);
        ctrl = p2;
        x = p3.x; y = p3.y;
        break;
      }
      case 'S': {
        const p1 = lastCtrl && 'CS'.includes(lastCmd.toUpperCase()) ? { x: 2 * x - lastCtrl.x, y: 2 * y - lastCtrl.y } : { x, y };
        const p2 = { x: ox + num(), y: oy + num() }, p3 = { x: ox + num(), y: oy + num() };
        cubic({ x, y }, p1, p2, p3, tolerance, current);
        ctrl = p2;
        x = p3.x; y = p3.y;
        break;
      }
      case 'Q': {
        const p1 = { x: ox + num(), y: oy + num() }, p2 = { x: ox + num(), y: oy + num() };
        quadratic({ x, y }, p1, p2, tolerance, current);
        ctrl = p1;
        x = p2.x; y = p2.y;
        break;
      }
      case 'T': {
        const p1 = lastCtrl && 'QT'.includes(lastCmd.toUpperCase()) ? { x: 2 * x - lastCtrl.x, y: 2 * y - lastCtrl.y } : { x, y };
        const p2 = { x: ox + num(), y: oy + num() };
        quadratic({ x, y }, p1, p2, tolerance, current);
        ctrl = p1;
        x = p2.x; y = p2.y;
        break;
      }
      case 'A': {
        const rx = Math.abs(num()), ry = Math.abs(num()), phi = num(), large = flag(), sweep = flag();
        const ex = ox + num(), ey = oy + num();
        arc(x, y, rx, ry, phi, large, sweep, ex, ey, tolerance, current);
        x = ex; y = ey;
        break;
      }
      case 'Z':
        if (current.length > 1) subpaths.push(current);
        current = [{ x: startX, y: startY }];
        x = startX; y = startY;
        break;
      default:
        throw new SyntaxError(`path data: unknown command "${cmd}"`);
    }
    lastCtrl = ctrl;
    lastCmd = cmd;
  }
  if (current.length > 1) subpaths.push(current);
  return subpaths;
}

function tokenize(d: string): (string | number)[] {
  const out: (string | number)[] = [];
  const re = /\s*,?\s*([MmLlHhVvCcSsQqTtAaZz])|\s*,?\s*([+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)/gy;
  let m: RegExpExecArray | null;
  let pos = 0;
  while (pos < d.length) {
    re.lastIndex = pos;
    m = re.exec(d);
    if (!m) {
      if (/^[\s,]*$/.test(d.slice(pos))) break;
      throw new SyntaxError(`path data: unexpected "${d.slice(pos, pos + 10)}"`);
    }
    out.push(m[1] !== undefined ? m[1] : Number(m[2]));
    pos = re.lastIndex;
  }
  return out;
}

function segmentsFor(m: number, degree: number, tol: number): number {
  const n = Math.ceil(Math.sqrt(((degree * (degree - 1)) / 8) * (m / tol)));
  return Math.max(1, Math.min(n, 10000));
}

function cubic(p0: Point, p1: Point, p2: Point, p3: Point, tol: number, out: Point[]): void {
  const m = Math.max(
    Math.hypot(p0.x - 2 * p1.x + p2.x, p0.y - 2 * p1.y + p2.y),
    Math.hypot(p1.x - 2 * p2.x + p3.x, p1.y - 2 * p2.y + p3.y),
  );
  const n = segmentsFor(m, 3, tol);
  for (let k = 1; k <= n; k++) {
    const t = k / n, u = 1 - t;
    out.push({
      x: u * u * u * p0.x + 3 * u * u * t * p1.x + 3 * u * t * t * p2.x + t * t * t * p3.x,
      y: u * u * u * p0.y + 3 * u * u * t * p1.y + 3 * u * t * t * p2.y + t * t * t * p3.y,
    });
  }
}

function quadratic(p0: Point, p1: Point, p2: Point, tol: number, out: Point[]): void {
  const m = Math.hypot(p0.x - 2 * p1.x + p2.x, p0.y - 2 * p1.y + p2.y);
  const n = segmentsFor(m, 2, tol);
  for (let k = 1; k <= n; k++) {
    const t = k / n, u = 1 - t;
    out.push({ x: u * u * p0.x + 2 * u * t * p1.x + t * t * p2.x, y: u * u * p0.y + 2 * u * t * p1.y + t * t * p2.y });
  }
}

/** Elliptical arc, endpoint to centre parameterisation (SVG 1.1 implementation notes F.6.5, from memory). */
function arc(
  x1: number, y1: number, rx: number, ry: number, phiDeg: number, large: boolean, sweep: boolean,
  x2: number, y2: number, tol: number, out: Point[],
): void {
  if ((x1 === x2 && y1 === y2)) return;
  if (rx === 0 || ry === 0) {
    out.push({ x: x2, y: y2 });
    return;
  }
  const phi = (phiDeg * Math.PI) / 180, cos = Math.cos(phi), sin = Math.sin(phi);
  const dx = (x1 - x2) / 2, dy = (y1 - y2) / 2;
  const x1p = cos * dx + sin * dy, y1p = -sin * dx + cos * dy;
  const lambda = (x1p * x1p) / (rx * rx) + (y1p * y1p) / (ry * ry);
  if (lambda > 1) {
    rx *= Math.sqrt(lambda);
    ry *= Math.sqrt(lambda);
  }
  const num = rx * rx * ry * ry - rx * rx * y1p * y1p - ry * ry * x1p * x1p;
  const den = rx * rx * y1p * y1p + ry * ry * x1p * x1p;
  let coef = Math.sqrt(Math.max(0, num / den));
  if (large === sweep) coef = -coef;
  const cxp = (coef * rx * y1p) / ry, cyp = (-coef * ry * x1p) / rx;
  const cx = cos * cxp - sin * cyp + (x1 + x2) / 2, cy = sin * cxp + cos * cyp + (y1 + y2) / 2;
  const angle = (ux: number, uy: number, vx: number, vy: number) => {
    const a = Math.atan2(ux * vy - uy * vx, ux * vx + uy * vy);
    return a;
  };
  const theta1 = angle(1, 0, (x1p - cxp) / rx, (y1p - cyp) / ry);
  let dtheta = angle((x1p - cxp) / rx, (y1p - cyp) / ry, (-x1p - cxp) / rx, (-y1p - cyp) / ry);
  if (!sweep && dtheta > 0) dtheta -= 2 * Math.PI;
  if (sweep && dtheta < 0) dtheta += 2 * Math.PI;
  const r = Math.max(rx, ry);
  const step = r > tol ? 2 * Math.acos(1 - tol / r) : Math.PI / 2;
  const n = Math.max(1, Math.min(10000, Math.ceil(Math.abs(dtheta) / step)));
  for (let k = 1; k <= n; k++) {
    const t = theta1 + (dtheta * k) / n;
    const ex = rx * Math.cos(t), ey = ry * Math.sin(t);
    out.push(k === n ? { x: x2, y: y2 } : { x: cos * ex - sin * ey + cx, y: sin * ex + cos * ey + cy });
  }
}
