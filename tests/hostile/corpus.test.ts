import { afterAll, afterEach, beforeAll, describe, expect, it } from 'vitest';
import nock from 'nock';
import { mkdir, mkdtemp, readdir, readFile, rm, writeFile } from 'node:fs/promises';
import { tmpdir } from 'node:os';
import { join, relative } from 'node:path';
import sharp from 'sharp';
import { main } from '../../src/cli/main.ts';
import { mockImageService } from '../coord-image.ts';
import { truthImage } from '../servers/ground-truth.ts';

const IMG = 'https://img.example.org';
const DOCS = 'https://docs.example.org';
const src = truthImage(200, 150);
let root: string;
beforeAll(async () => {
  root = await mkdtemp(join(tmpdir(), 'swatchbook-hostile-'));
  nock.disableNetConnect();
});
afterAll(async () => {
  nock.enableNetConnect();
  await rm(root, { recursive: true, force: true });
});
afterEach(() => nock.cleanAll());

type Json = any;
interface Ctx {
  dir: string;
  manifest: Json;
  recipe: Json;
  files: Record<string, string | Buffer>;
}

const SERVICE = `${IMG}/iiif/3/truth.png`;
function baseManifest(): Json {
  return {
    '@context': 'http://iiif.io/api/presentation/3/context.json',
    id: 'https://docs.example.org/board',
    type: 'Manifest',
    label: { en: ['board'] },
    rights: 'http://creativecommons.org/publicdomain/zero/1.0/',
    items: [{
      id: 'https://docs.example.org/canvas/1', type: 'Canvas', width: 200, height: 150,
      items: [{ id: 'https://docs.example.org/canvas/1/p', type: 'AnnotationPage', items: [{ id: 'https://docs.example.org/canvas/1/paint', type: 'Annotation', motivation: 'painting', target: 'https://docs.example.org/canvas/1', body: { id: `${SERVICE}/full/max/0/default.png`, type: 'Image', service: [{ id: SERVICE, type: 'ImageService3', profile: 'level2' }] } }] }],
      annotations: [{ id: 'https://docs.example.org/canvas/1/tags', type: 'AnnotationPage', items: [
        { id: 'https://docs.example.org/anno/1', type: 'Annotation', motivation: 'tagging', bodyValue: 'oak', target: 'https://docs.example.org/canvas/1#xywh=20,20,100,80' },
      ] }],
    }],
  };
}
function baseRecipe(): Json {
  return {
    name: 'hostile', seed: 's', sources: [{ manifest: 'board.json' }], labels: { oak: [] }, scale: { pixelsPerCanvasUnit: 1 },
    patch: { size: 16 }, negatives: { ratio: 1, margin: 2 }, request: { format: 'png' },
    network: { contact: 'mailto:t@example.org', retries: 0, perHostRate: 1000, timeoutMs: 5000 },
  };
}

const ANNO = (m: Json) => m.items[0].annotations[0].items;
const sel = (selector: unknown) => ({ type: 'SpecificResource', source: 'https://docs.example.org/canvas/1', selector });
const jsonReply = (doc: unknown) => [200, JSON.stringify(doc), { 'content-type': 'application/ld+json' }] as [number, string, Record<string, string>];
const collection = (id: string, items: Json[]) => ({ '@context': 'http://iiif.io/api/presentation/3/context.json', id, type: 'Collection', label: { en: ['c'] }, items });
/** The manifest as a remote server (docs.example.org) publishes it, with its own canvas ids; the recipe names it by URL. */
const REMOTE = `${DOCS}/remote/board`;
const REMOTE_CANVAS = 'https://docs.example.org/canvas/1';
function publishRemote(c: Ctx, doc: Json = c.manifest): void {
  if (!c.recipe.sources.some((s: Json) => s.manifest === REMOTE || s.collection)) c.recipe.sources = [{ manifest: REMOTE }];
  nock(DOCS).get('/remote/board').reply(...jsonReply({ ...doc, id: REMOTE }));
}
const serveGoodImage = () => mockImageService(IMG, '/iiif/3/truth.png', src, { version: 3, level: 2 });
/** Serves the image service's info.json, and answers every image request with `body`. */
function serveImageBodies(body: Buffer | string, type: string, extra: Record<string, string> = {}) {
  const info = { '@context': 'http://iiif.io/api/image/3/context.json', id: SERVICE, type: 'ImageService3', protocol: 'http://iiif.io/api/image', profile: 'level2', width: 200, height: 150 };
  nock(IMG).persist().get('/iiif/3/truth.png/info.json').reply(200, JSON.stringify(info), { 'content-type': 'application/ld+json' })
    .get(/\/iiif\/3\/truth\.png\/\d.*/).reply(200, body, { 'content-type': type, ...extra });
}

interface Case {
  name: string;
  prepare: (c: Ctx) => void | Promise<void>;
  code: 0 | 1 | 2;
  /** For code 2: the one message (names the file or URL and the JSON location). */
  message?: RegExp;
  /** For code 1: a failures.jsonl reason. */
  failure?: RegExp;
  /** For code 0/1: patches must still be made from what is fine. */
  patches?: boolean;
  /** Skipped-region reasons the card must count. */
  skipped?: Record<string, number>;
  /** Extra command-line flags. */
  args?: string[];
  /** Source notes the card must list. */
  notes?: unknown[];
  /** Distinct annotations the patches must come from. */
  annotations?: number;
}

const cases: Case[] = [
  // recipes
  { name: 'recipe: malformed JSON', prepare: (c) => { c.files['recipe.json'] = '{"name": "x",'; }, code: 2, message: /recipe\.json at \/: not valid JSON/ },
  { name: 'recipe: wrong type', prepare: (c) => { c.recipe.scale = '2x'; }, code: 2, message: /recipe\.json at \/scale: expected object, got "2x"/ },
  { name: 'recipe: negative patch size', prepare: (c) => { c.recipe.patch = { size: -16 }; }, code: 2, message: /recipe\.json at \/patch\/size: expected a number >= 1, got -16/ },
  { name: 'recipe: source with a data: URL', prepare: (c) => { c.recipe.sources = [{ manifest: 'data:application/json,{}' }]; }, code: 2, message: /recipe\.json at \/sources\/0\/manifest: only http\(s\) URLs and file paths/ },
  // manifests
  { name: 'manifest: malformed JSON', prepare: (c) => { c.files['board.json'] = '{"id": '; }, code: 2, message: /board\.json at \/: not valid JSON/ },
  { name: 'manifest: items is not an array', prepare: (c) => { c.manifest.items = { id: 'x' }; }, code: 2, message: /board\.json at \/items: expected an array, got an object/ },
  { name: 'manifest: empty items', prepare: (c) => { c.manifest.items = []; }, code: 2, message: /board\.json at \/items: expected a non-empty array/ },
  { name: 'manifest: missing canvas width', prepare: (c) => { delete c.manifest.items[0].width; }, code: 2, message: /board\.json at \/items\/0\/width: expected a positive integer, got nothing/ },
  { name: 'manifest: zero canvas height', prepare: (c) => { c.manifest.items[0].height = 0; }, code: 2, message: /board\.json at \/items\/0\/height: expected a positive integer, got 0/ },
  { name: 'manifest: negative canvas width', prepare: (c) => { c.manifest.items[0].width = -200; }, code: 2, message: /board\.json at \/items\/0\/width: expected a positive integer, got -200/ },
  { name: 'manifest: width as a string', prepare: (c) => { c.manifest.items[0].width = '200'; }, code: 2, message: /board\.json at \/items\/0\/width: expected a positive integer, got "200"/ },
  { name: 'manifest: painting target percent over 100', prepare: (c) => { c.manifest.items[0].items[0].items[0].target = 'https://docs.example.org/canvas/1#xywh=percent:50,0,60,100'; }, code: 2, message: /board\.json at \/items\/0\/items\/0\/items\/0\/target: .*past 100 percent/ },
  { name: 'manifest: painting target outside the canvas', prepare: (c) => { c.manifest.items[0].items[0].items[0].target = 'https://docs.example.org/canvas/1#xywh=150,0,100,100'; }, code: 2, message: /\/items\/0\/items\/0\/items\/0\/target: .*outside the 200×150 canvas/ },
  { name: 'manifest: a painting body that is not an image is passed over, and its regions counted as not painted', prepare: (c) => { c.manifest.items[0].items[0].items[0].body.type = 'Dataset'; }, code: 0, skipped: { 'not-painted': 1 } },
  { name: 'manifest: a Choice with no items', prepare: (c) => { c.manifest.items[0].items[0].items[0].body = { type: 'Choice', items: [] }; }, code: 2, message: /board\.json at \/items\/0\/items\/0\/items\/0\/body\/items: expected a non-empty array/ },
  { name: 'manifest: label of the wrong type', prepare: (c) => { c.manifest.label = 7; }, code: 2, message: /board\.json at \/label: expected a language map/ },
  // A local file is what the user wrote: a Presentation 2 context over a 3.0 body is read as 2.x and refused with its pointer.
  { name: 'manifest: Presentation 2 context over a 3.0 body (local file)', prepare: (c) => { c.manifest['@context'] = 'http://iiif.io/api/presentation/2/context.json'; }, code: 2, message: /board\.json at \/sequences: expected an array, got nothing/ },
  { name: 'manifest: not a manifest', prepare: (c) => { c.manifest.type = 'Collection'; }, code: 2, message: /board\.json at \/type: expected "Manifest", got "Collection"/ },
  // annotations
  { name: 'annotation: SVG not well-formed', prepare: (c) => { ANNO(c.manifest)[0].target = sel({ type: 'SvgSelector', value: '<svg><polygon points="1,1 50,1 1,50"></svg>' }); }, code: 2, message: /\/items\/0\/annotations\/0\/items\/0\/target\/selector\/value: the SVG is not well-formed XML/ },
  { name: 'annotation: SVG with no shapes', prepare: (c) => { ANNO(c.manifest)[0].target = sel({ type: 'SvgSelector', value: '<svg><text>oak</text></svg>' }); }, code: 2, message: /selector\/value: the SVG holds no polygon/ },
  { name: 'annotation: percent box over 100', prepare: (c) => { ANNO(c.manifest)[0].target = 'https://docs.example.org/canvas/1#xywh=percent:80,10,30,10'; }, code: 2, message: /\/items\/0\/annotations\/0\/items\/0\/target: .*past 100 percent/ },
  { name: 'annotation: no target', prepare: (c) => { delete ANNO(c.manifest)[0].target; }, code: 2, message: /\/items\/0\/annotations\/0\/items\/0\/target: expected at least one target/ },
  { name: 'annotation: unknown selector', prepare: (c) => { ANNO(c.manifest)[0].target = sel({ type: 'XPathSelector', value: '//p' }); }, code: 2, message: /selector\/type: selector type "XPathSelector" is not supported/ },
  { name: 'annotation: three-number xywh', prepare: (c) => { ANNO(c.manifest)[0].target = 'https://docs.example.org/canvas/1#xywh=1,2,3'; }, code: 2, message: /target: "xywh=1,2,3" is not four non-negative numbers/ },
  { name: 'annotation: zero-size box', prepare: (c) => { ANNO(c.manifest)[0].target = 'https://docs.example.org/canvas/1#xywh=10,10,0,5'; }, code: 2, message: /target: "xywh=10,10,0,5" has zero width or height/ },
  { name: 'annotation: a point selector is skipped with its reason, the rest proceeds', prepare: (c) => { ANNO(c.manifest).push({ id: 'https://docs.example.org/anno/p', type: 'Annotation', bodyValue: 'oak', target: sel({ type: 'PointSelector', x: 5, y: 5 }) }); }, code: 0, patches: true, skipped: { 'point-selector': 1 } },
  // sheets
  { name: 'sheet: unknown column', prepare: (c) => { c.recipe.sources = [{ sheet: 'regions.csv' }]; c.files['regions.csv'] = 'manifest,canvas,box,label\nboard.json,https://docs.example.org/canvas/1,1,oak\n'; }, code: 2, message: /regions\.csv at \/1: unknown column "box"/ },
  { name: 'sheet: bad xywh cell', prepare: (c) => { c.recipe.sources = [{ sheet: 'regions.csv' }]; c.files['regions.csv'] = 'manifest,canvas,xywh,svg,label,group\nboard.json,https://docs.example.org/canvas/1,"1,2,x,4",,oak,g\n'; }, code: 2, message: /regions\.csv at \/2\/xywh: .*not four non-negative numbers/ },
  // collections
  // Policy for documents from someone else's server: recorded, not fatal; --strict makes each fatal (exit 2).
  ...([[], ['--strict']] as string[][]).flatMap((args): Case[] => {
    const strict = args.length > 0;
    const tag = strict ? ' (--strict: exit 2)' : '';
    return [
      { name: `collection: includes itself${tag}`, args, prepare: (c) => {
        c.recipe.sources = [{ collection: `${DOCS}/c/a` }];
        publishRemote(c);
        nock(DOCS).get('/c/a').reply(...jsonReply(collection(`${DOCS}/c/a`, [{ id: `${DOCS}/c/a`, type: 'Collection', label: { en: ['a'] } }, { id: REMOTE, type: 'Manifest', label: { en: ['m'] } }])));
      }, ...(strict
        ? { code: 2, message: /c\/a at \/items\/0: collection "https:\/\/docs\.example\.org\/c\/a" includes itself .*\(--strict\)/ }
        : { code: 0, patches: true, notes: [{ kind: 'collection-cycle', collection: `${DOCS}/c/a`, member: `${DOCS}/c/a`, chain: [`${DOCS}/c/a`] }] }) },
      { name: `collection: includes itself through two hops${tag}`, args, prepare: (c) => {
        c.recipe.sources = [{ collection: `${DOCS}/c/a` }];
        publishRemote(c);
        nock(DOCS).get('/c/a').reply(...jsonReply(collection(`${DOCS}/c/a`, [{ id: `${DOCS}/c/b`, type: 'Collection', label: { en: ['b'] } }])))
          .get('/c/b').reply(...jsonReply(collection(`${DOCS}/c/b`, [{ id: `${DOCS}/c/c`, type: 'Collection', label: { en: ['c'] } }, { id: REMOTE, type: 'Manifest', label: { en: ['m'] } }])))
          .get('/c/c').reply(...jsonReply(collection(`${DOCS}/c/c`, [{ id: `${DOCS}/c/a`, type: 'Collection', label: { en: ['a'] } }])));
      }, ...(strict
        ? { code: 2, message: /c\/c at \/items\/0: collection "https:\/\/docs\.example\.org\/c\/a" includes itself \(through .*c\/a → .*c\/b → .*c\/c\)/ }
        : { code: 0, patches: true, notes: [{ kind: 'collection-cycle', collection: `${DOCS}/c/c`, member: `${DOCS}/c/a`, chain: [`${DOCS}/c/a`, `${DOCS}/c/b`, `${DOCS}/c/c`] }] }) },
      { name: `remote manifest: one bad annotation among good ones${tag}`, args, prepare: (c) => {
        ANNO(c.manifest).push(
          { id: `${DOCS}/anno/bad`, type: 'Annotation', motivation: 'tagging', bodyValue: 'oak', target: 42 },
          { id: `${DOCS}/anno/2`, type: 'Annotation', motivation: 'tagging', bodyValue: 'oak', target: `${REMOTE_CANVAS}#xywh=130,20,60,100` },
        );
        publishRemote(c);
      }, ...(strict
        ? { code: 2, message: /remote\/board at \/items\/0\/annotations\/0\/items\/1\/target: expected/ }
        : { code: 1, patches: true, failure: /"stage":"item".*"url":"https:\/\/docs\.example\.org\/remote\/board","pointer":"\/items\/0\/annotations\/0\/items\/1\/target"/, annotations: 2 }) },
      ...(['127.0.0.1:9', '169.254.169.254'].map((host): Case => ({
        name: `remote manifest: a public document pointing at ${host}${tag}`, args, prepare: (c) => {
          // the image service and an annotation page of a manifest from a public host point at a private address
          c.recipe.sources = [{ manifest: 'board.json' }, { manifest: REMOTE }];
          const m = structuredClone(c.manifest);
          c.manifest = JSON.parse(JSON.stringify(c.manifest).replaceAll(REMOTE_CANVAS, `${DOCS}/canvas/9`));
          m.items[0].items[0].items[0].body.service[0].id = `http://${host}/iiif/secret`;
          m.items[0].annotations.push({ id: `http://${host}/latest/meta-data/`, type: 'AnnotationPage' });
          publishRemote(c, m);
          serveGoodImage();
        },
        ...(strict
          ? { code: 2 as const, message: new RegExp(`refused ${host.split(':')[0].replace(/\./g, '\\.')}.*\\(--strict\\)`) }
          : { code: 1 as const, patches: true, failure: new RegExp(`"url":"http://${host.replace(/\./g, '\\.')}/(iiif/secret/info\\.json|latest/meta-data/)".*refused ${host.split(':')[0].replace(/\./g, '\\.')}[^"]*: a loopback, private or link-local address`) }),
      }))),
    ];
  }),
  ...(['file:///etc/passwd', 'data:application/json,{}', 'ftp://docs.example.org/m.json'].map((member): Case => ({
    name: `collection: member with ${member.split(':')[0]}: scheme`,
    prepare: (c) => {
      c.recipe.sources = [{ collection: `${DOCS}/c/s` }, { manifest: 'board.json' }];
      nock(DOCS).get('/c/s').reply(...jsonReply(collection(`${DOCS}/c/s`, [{ id: member, type: 'Manifest', label: { en: ['m'] } }])));
      serveGoodImage();
    },
    code: 1,
    failure: new RegExp(`refused scheme ${member.split(':')[0]}: \\(only http and https\\)`),
    patches: true,
  }))),
  // ids built to escape the output folder: output names come only from hashes
  ...([['../../escape', '../../../x'], ['/etc/passwd', '/tmp/owned'], ['https://docs.example.org/a\u0000b', 'https://docs.example.org/c\u0000/../../d']] as const).map(([manifestId, canvasId]): Case => ({
    name: `ids that try to escape: ${JSON.stringify(manifestId)}`,
    prepare: (c) => {
      c.manifest.id = manifestId;
      c.manifest.items[0].id = canvasId;
      c.manifest.items[0].items[0].items[0].target = canvasId;
      ANNO(c.manifest)[0].target = `${canvasId}#xywh=20,20,100,80`;
      serveGoodImage();
    },
    code: 0,
    patches: true,
  })),
  // network and server misbehaviour: a failure record, the rest proceeds
  { name: 'network: redirect loop on a manifest', prepare: (c) => { c.recipe.sources = [{ manifest: `${DOCS}/loop` }, { manifest: 'board.json' }]; nock(DOCS).persist().get('/loop').reply(302, '', { location: '/loop2' }).get('/loop2').reply(302, '', { location: '/loop' }); serveGoodImage(); }, code: 1, failure: /redirect loop/, patches: true },
  { name: 'network: manifest is an HTML page with status 200', prepare: (c) => { c.recipe.sources = [{ manifest: `${DOCS}/html` }, { manifest: 'board.json' }]; nock(DOCS).get('/html').reply(200, '<!DOCTYPE html><html><body>Maintenance</body></html>', { 'content-type': 'text/html' }); serveGoodImage(); }, code: 1, failure: /expected JSON, got an HTML page/, patches: true },
  { name: 'network: manifest 404', prepare: (c) => { c.recipe.sources = [{ manifest: `${DOCS}/gone` }, { manifest: 'board.json' }]; nock(DOCS).get('/gone').reply(404, 'no'); serveGoodImage(); }, code: 1, failure: /HTTP 404/, patches: true },
  { name: 'network: body larger than the cap', prepare: (c) => { c.recipe.sources = [{ manifest: `${DOCS}/huge` }, { manifest: 'board.json' }]; nock(DOCS).get('/huge').reply(200, '{}', { 'content-type': 'application/json', 'content-length': String(500 * 1024 * 1024) }); serveGoodImage(); }, code: 1, failure: /larger than the \d+-byte cap/, patches: true },
  { name: 'network: referenced annotation page 404', prepare: (c) => { c.manifest.items[0].annotations.push({ id: `${DOCS}/tags-gone`, type: 'AnnotationPage' }); nock(DOCS).get('/tags-gone').reply(404); serveGoodImage(); }, code: 1, failure: /HTTP 404/, patches: true },
  { name: 'info.json claims 10^9 × 10^9 pixels', prepare: () => { nock(IMG).get('/iiif/3/truth.png/info.json').reply(...jsonReply({ '@context': 'http://iiif.io/api/image/3/context.json', id: SERVICE, type: 'ImageService3', protocol: 'http://iiif.io/api/image', profile: 'level2', width: 1e9, height: 1e9 })); }, code: 1, failure: /info\.json at \/width: claims 1000000000×1000000000 pixels/ },
  { name: 'info.json is not JSON', prepare: () => { nock(IMG).get('/iiif/3/truth.png/info.json').reply(200, '{"id":', { 'content-type': 'application/json' }); }, code: 1, failure: /info\.json is not valid JSON/ },
  { name: 'info.json without height', prepare: () => { nock(IMG).get('/iiif/3/truth.png/info.json').reply(...jsonReply({ '@context': 'http://iiif.io/api/image/3/context.json', id: SERVICE, type: 'ImageService3', protocol: 'http://iiif.io/api/image', profile: 'level2', width: 200 })); }, code: 1, failure: /info\.json at \/height: expected a positive integer, got nothing/ },
  { name: 'image: HTML page served as an image with status 200', prepare: () => serveImageBodies('<html><body>error</body></html>', 'image/jpeg'), code: 1, failure: /expected an image, got an HTML page/ },
  { name: 'image: not an image at all', prepare: () => serveImageBodies(Buffer.alloc(300, 7), 'image/png'), code: 1, failure: /no known image format/ },
  { name: 'image: decompression bomb (decodes to far more pixels than asked)', prepare: async () => serveImageBodies(await sharp({ create: { width: 6000, height: 6000, channels: 3, background: '#777' } }).png({ compressionLevel: 9 }).toBuffer(), 'image/png'), code: 1, failure: /returned 6000×6000 for a \d+×\d+ request/ },
  { name: 'image: header claims more pixels than the decoder limit', prepare: async () => {
    const png = await sharp({ create: { width: 16, height: 16, channels: 3, background: '#777' } }).png().toBuffer();
    png.writeUInt32BE(200_000, 16); // IHDR width (PNG spec §11.2.2), CRC left stale
    png.writeUInt32BE(200_000, 20);
    serveImageBodies(png, 'image/png');
  }, code: 1, failure: /not a usable image/ },
  { name: 'image: truncated JPEG', prepare: async () => {
    const jpg = await sharp(src.data, { raw: { width: 200, height: 150, channels: 3 } }).extract({ left: 0, top: 0, width: 100, height: 80 }).jpeg().toBuffer();
    serveImageBodies(jpg.subarray(0, Math.floor(jpg.length / 2)), 'image/jpeg');
  }, code: 1, failure: /could not be stitched|not a usable image|returned/ },
];

async function walk(dir: string): Promise<string[]> {
  const out: string[] = [];
  for (const e of await readdir(dir, { withFileTypes: true })) {
    const p = join(dir, e.name);
    if (e.isDirectory()) out.push(...(await walk(p)));
    else out.push(p);
  }
  return out;
}

describe('hostile input corpus', () => {
  it('has at least 40 cases', () => expect(cases.length).toBeGreaterThanOrEqual(40));

  it.each(cases.map((c) => [c.name, c] as const))('%s', async (_name, c) => {
    const dir = await mkdtemp(join(root, 'case-'));
    const sandbox = join(dir, 'project');
    await mkdir(sandbox);
    const ctx: Ctx = { dir: sandbox, manifest: baseManifest(), recipe: baseRecipe(), files: {} };
    await c.prepare(ctx);
    if (!nock.pendingMocks().some((m) => m.includes('img.example.org')) && c.code !== 2) serveGoodImage();
    const files: Record<string, string | Buffer> = { 'board.json': JSON.stringify(ctx.manifest), 'recipe.json': JSON.stringify(ctx.recipe), ...ctx.files };
    for (const [name, body] of Object.entries(files)) await writeFile(join(sandbox, name), body);
    const before = new Set(await walk(dir));
    let out = '', err = '';
    const stdout = { write: (s: string) => ((out += s), true) } as unknown as NodeJS.WriteStream;
    const stderr = { write: (s: string) => ((err += s), true) } as unknown as NodeJS.WriteStream;
    const code = await main(['run', join(sandbox, 'recipe.json'), '--quiet', ...(c.args ?? [])], { stdout, stderr });
    expect(code, err).toBe(c.code);
    expect(err).not.toMatch(/\n\s+at /); // no stack trace without --debug
    if (c.code === 2) {
      expect(err.trim().split('\n')).toHaveLength(1);
      expect(err).toMatch(c.message!);
      expect(await readdir(sandbox).then((names) => names.some((n) => n.startsWith('hostile-dataset')))).toBe(false); // nothing half-written
    } else {
      const failures = await readFile(join(sandbox, 'hostile-dataset', 'failures.jsonl'), 'utf8');
      if (c.failure) expect(failures).toMatch(c.failure);
      else expect(failures).toBe('');
      if (c.patches) expect((await readFile(join(sandbox, 'hostile-dataset', 'index.jsonl'), 'utf8')).length).toBeGreaterThan(0);
      const card = JSON.parse(await readFile(join(sandbox, 'hostile-dataset', 'card.json'), 'utf8'));
      if (c.skipped) expect(card.composition.regions.skipped).toEqual(c.skipped);
      if (c.notes) expect(card.composition.sourceNotes).toEqual(c.notes);
      if (c.annotations !== undefined) {
        const index = (await readFile(join(sandbox, 'hostile-dataset', 'index.jsonl'), 'utf8')).trim().split('\n').map((l) => JSON.parse(l));
        expect(new Set(index.filter((r) => r.annotation).map((r) => r.annotation)).size).toBe(c.annotations);
      }
    }
    // Nothing is written outside the output folder, its probe and report beside it, the cache and the lock beside the recipe.
    for (const f of await walk(dir)) {
      if (before.has(f)) continue;
      const rel = relative(sandbox, f);
      expect(rel.startsWith('..'), f).toBe(false);
      expect(/^(hostile-dataset\/|hostile-dataset-probe\/probe\.json$|hostile-dataset-report\/(index\.html|img\/[a-z0-9-]+\.(png|jpg))$|\.swatchbook-cache\/|hostile\.lock\.json$)/.test(rel), rel).toBe(true);
    }
  }, 30_000);
});
