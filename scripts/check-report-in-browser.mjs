#!/usr/bin/env node
// Opens a swatchbook report in Debian's headless Chromium through playwright-core (which never downloads a
// browser) and prints one JSON object: console errors, every <img> decoded or not, the counts of contact-sheet
// tiles, patch outlines and occurrence marks, requests that tried to leave the machine, and the screenshot's path.
// Run it inside a network namespace that has only loopback, so nothing can leave:
//   unshare --net sh -c 'ip link set lo up && node scripts/check-report-in-browser.mjs <report/index.html> <shot.png> [anchor id]'
// CHROMIUM_PATH overrides the browser binary.
import { chromium } from 'playwright-core';
import { existsSync } from 'node:fs';
import { resolve } from 'node:path';
import { pathToFileURL } from 'node:url';

const [html, shot, anchor] = process.argv.slice(2);
if (!html || !shot) {
  console.error('usage: check-report-in-browser.mjs <index.html> <screenshot.png>');
  process.exit(2);
}
const executablePath = process.env.CHROMIUM_PATH ?? ['/usr/lib/chromium/chromium-headless-shell', '/usr/lib/chromium/chromium'].find((p) => existsSync(p));
if (!executablePath) {
  console.error('no Chromium: apt-get install -y chromium-headless-shell');
  process.exit(2);
}
const browser = await chromium.launch({ executablePath, headless: true, args: ['--no-sandbox', '--disable-gpu', '--disable-dev-shm-usage'], timeout: 60_000 });
try {
  const context = await browser.newContext({ viewport: { width: 1200, height: 900 }, deviceScaleFactor: 1 });
  const blocked = [];
  await context.route(/^(https?|wss?):\/\//, (route) => {
    blocked.push(route.request().url());
    return route.abort('blockedbyclient');
  });
  const page = await context.newPage();
  const consoleErrors = [];
  page.on('console', (m) => { if (m.type() === 'error') consoleErrors.push(m.text()); });
  page.on('pageerror', (e) => consoleErrors.push(String(e)));
  await page.goto(pathToFileURL(resolve(html)).href, { waitUntil: 'load', timeout: 60_000 });
  // Lazy images load when scrolled near; make them load now so every one can be checked.
  const images = await page.$$eval('img', (els) => Promise.all(els.map(async (img) => {
    img.loading = 'eager';
    let error = null;
    try { await img.decode(); } catch (e) { error = String(e?.name ?? e); }
    return { src: img.getAttribute('src'), naturalWidth: img.naturalWidth, naturalHeight: img.naturalHeight, error };
  })));
  const counts = await page.evaluate(() => ({
    tiles: document.querySelectorAll('map area.tile').length,
    footprints: document.querySelectorAll('svg rect.fp').length,
    negatives: document.querySelectorAll('svg rect.fp.neg').length,
    regions: document.querySelectorAll('svg .region').length,
    maps: document.querySelectorAll('.map').length,
    occurrence: document.querySelectorAll('circle.occ').length,
    traces: document.querySelectorAll('.trace').length,
    tileTargetsFound: [...document.querySelectorAll('map area.tile')].every((a) => document.getElementById(decodeURIComponent(a.getAttribute('href').slice(1)))),
    title: document.title,
  }));
  if (anchor) await page.evaluate((id) => document.getElementById(id)?.scrollIntoView(), anchor);
  await page.screenshot({ path: resolve(shot), fullPage: false, type: 'png' });
  console.log(JSON.stringify({ browser: browser.version(), consoleErrors, blocked, images, counts }));
} finally {
  await browser.close();
}
