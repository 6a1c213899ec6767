import { afterAll, beforeAll, describe, expect, it } from 'vitest';
import { mkdtemp, readFile, rm } from 'node:fs/promises';
import { spawnSync } from 'node:child_process';
import { tmpdir } from 'node:os';
import { join, resolve } from 'node:path';
import sharp from 'sharp';
import { runDemo } from '../../src/demo/run-demo.ts';
import { hashTree } from '../../src/pipeline.ts';
import { parseIndex } from '../../src/dataset/records.ts';
import { writeReport } from '../../src/report/write-report.ts';
import { chromiumAvailable } from '../servers/availability.ts';
import { freePort } from '../servers/net-util.ts';

let dir: string;
beforeAll(async () => {
  dir = await mkdtemp(join(tmpdir(), 'swatchbook-report-'));
});
afterAll(async () => {
  await rm(dir, { recursive: true, force: true });
});


const SCRIPT = resolve(import.meta.dirname, '../../scripts/check-report-in-browser.mjs');

describe.runIf(chromiumAvailable())('the demo report in a real browser (Debian Chromium, no network)', () => {
  it('shows every sampled tile and every patch outline the index names, every image decodes, no console error; byte-identical when written again', async () => {
    const demo = await runDemo(join(dir, 'demo'), await freePort(), {});
    const first = join(dir, 'report-a'), second = join(dir, 'report-b');
    const cacheDir = join(dir, 'demo', '.swatchbook-cache');
    const summary = await writeReport(demo.dataset, { outDir: first, cacheDir });
    await writeReport(demo.dataset, { outDir: second, cacheDir });
    const a = await hashTree(first), b = await hashTree(second);
    expect([...b.entries()]).toEqual([...a.entries()]);

    const records = parseIndex(await readFile(join(demo.dataset, 'index.jsonl'), 'utf8'));
    const canvases = JSON.parse(await readFile(join(demo.dataset, 'canvases.json'), 'utf8'));
    const cells = new Map<string, number>();
    for (const r of records) cells.set(`${r.label}/${r.split}`, (cells.get(`${r.label}/${r.split}`) ?? 0) + 1);
    const expectedTiles = [...cells.values()].reduce((s, n) => s + Math.min(40, n), 0);
    expect(summary.thumbnails).toBe(canvases.length); // every canvas map has its picture, from the cache

    const shot = join(dir, 'shot.png');
    const run = spawnSync('unshare', ['--net', 'sh', '-c', `ip link set lo up && exec node ${JSON.stringify(SCRIPT)} ${JSON.stringify(join(first, 'index.html'))} ${JSON.stringify(shot)}`], { encoding: 'utf8', timeout: 120_000 });
    expect(run.status, run.stderr).toBe(0);
    const seen = JSON.parse(run.stdout);
    expect(seen.consoleErrors).toEqual([]);
    expect(seen.blocked).toEqual([]);
    expect(seen.images.length).toBeGreaterThan(canvases.length);
    for (const img of seen.images) expect(img.naturalWidth > 0 && img.error === null, `${img.src}`).toBe(true);
    expect(seen.counts.tiles).toBe(expectedTiles);
    expect(seen.counts.traces).toBe(expectedTiles);
    expect(seen.counts.tileTargetsFound).toBe(true);
    expect(seen.counts.footprints).toBe(records.length);
    expect(seen.counts.negatives).toBe(records.filter((r) => r.kind === 'negative').length);
    expect(seen.counts.maps).toBe(canvases.length);
    expect(seen.counts.regions).toBeGreaterThanOrEqual(canvases.reduce((s: number, c: { regions: unknown[] }) => s + c.regions.length, 0));
    // the screenshot is not blank: many distinct colours and real contrast
    const { data, info } = await sharp(shot).raw().toBuffer({ resolveWithObject: true });
    expect([info.width, info.height]).toEqual([1200, 900]);
    const colours = new Set<number>();
    for (let i = 0; i < data.length; i += info.channels) colours.add((data[i]! << 16) | (data[i + 1]! << 8) | data[i + 2]!);
    expect(colours.size).toBeGreaterThan(200);
    const stats = await sharp(shot).stats();
    expect(Math.min(...stats.channels.slice(0, 3).map((c) => c.stdev))).toBeGreaterThan(20);
  }, 240_000);
});
