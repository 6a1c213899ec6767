import { describe, expect, it } from 'vitest';
import { execFileSync } from 'node:child_process';
import { readdir, readFile, stat } from 'node:fs/promises';
import { join } from 'node:path';
import { hashTree, runRecipe } from '../../src/pipeline.ts';
import { parseIndex } from '../../src/dataset/records.ts';
import { CROISSANT_CONTEXT } from '../../src/dataset/loader-files.ts';
import { sha256Hex } from '../../src/util/hash.ts';
import { scenarioBoards, scenarioRecipe, serveScenario } from './scenario.ts';
import { nockSandbox } from '../net/harness.ts';
import { torchvisionAvailable } from '../servers/availability.ts';

const box = nockSandbox();

async function built(overrides: Record<string, unknown> = {}) {
  serveScenario(scenarioBoards());
  const recipe = await scenarioRecipe(box.dir, overrides);
  await runRecipe(recipe, { cacheDir: join(box.dir, 'cache') });
  return { out: recipe.output, records: parseIndex(await readFile(join(recipe.output, 'index.jsonl'), 'utf8')) };
}

/** Every key and prefixed value of a JSON-LD document must resolve through its context (or its @vocab). */
function unresolvedTerms(doc: unknown, context: Record<string, unknown>): string[] {
  const bad = new Set<string>();
  const prefixed = (s: string) => /^[a-z][a-z0-9]*:[^/]/i.test(s) && !/^(https?|urn|mailto):/.test(s);
  const check = (term: string) => {
    if (prefixed(term) && !(term.split(':')[0] in context)) bad.add(term);
  };
  const walk = (v: unknown, key?: string) => {
    if (Array.isArray(v)) return v.forEach((x) => walk(x, key));
    if (v && typeof v === 'object') {
      for (const [k, x] of Object.entries(v)) {
        if (k === '@context') continue;
        if (!k.startsWith('@')) check(k);
        if (k === 'data') continue; // @json literal (Croissant context)
        walk(x, k);
      }
    } else if (typeof v === 'string' && (key === '@type' || key === 'dataType')) check(v);
  };
  walk(doc);
  return [...bad];
}

describe('datasets every loader reads', () => {
  it('metadata.jsonl per split names every image once, with its label and provenance', async () => {
    const { out, records } = await built();
    for (const split of ['train', 'val', 'test'] as const) {
      const inSplit = records.filter((r) => r.split === split);
      const lines = (await readFile(join(out, 'patches', split, 'metadata.jsonl'), 'utf8')).trim().split('\n').map((l) => JSON.parse(l));
      expect(lines.map((l) => l.file_name).sort()).toEqual(inSplit.map((r) => `${r.label}/${r.id}.png`).sort());
      for (const l of lines) {
        // Hugging Face ImageFolder: file_name relative to the metadata file's folder, no '..', no scheme (facts E1)
        expect(l.file_name).not.toMatch(/^\/|\.\.|:\/\//);
        const r = inSplit.find((x) => x.id === l.patch_id)!;
        expect([l.label, l.sha256, l.rights, l.source_urls]).toEqual([r.label, r.sha256, r.rights, r.requests]);
        expect(sha256Hex(await readFile(join(out, 'patches', split, l.file_name)))).toBe(l.sha256);
      }
    }
  }, 60_000);

  it('croissant.json: Croissant 1.0 with RAI, every term resolves, every listed file exists with its sha256', async () => {
    const { out, records } = await built();
    const doc = JSON.parse(await readFile(join(out, 'croissant.json'), 'utf8'));
    // Croissant 1.0 §"Required": @context, @type sc:Dataset, conformsTo, name, description, license, url, creator
    expect(doc['@type']).toBe('sc:Dataset');
    expect(doc.conformsTo).toEqual(['http://mlcommons.org/croissant/1.0', 'http://mlcommons.org/croissant/RAI/1.0']);
    for (const k of ['name', 'description', 'license', 'url', 'creator']) expect(doc[k], k).toBeTruthy();
    expect(doc['@context']).toEqual(CROISSANT_CONTEXT);
    expect(unresolvedTerms(doc, doc['@context'])).toEqual([]);
    const ids = new Set<string>();
    for (const d of doc.distribution) {
      expect(ids.has(d['@id'])).toBe(false);
      ids.add(d['@id']);
      if (d['@type'] === 'cr:FileObject') {
        const body = await readFile(join(out, d.contentUrl));
        expect(sha256Hex(body), d.contentUrl).toBe(d.sha256);
        expect(d.contentSize).toBe(`${(await stat(join(out, d.contentUrl))).size} B`);
      }
    }
    expect(ids.has('index.jsonl')).toBe(true);
    const fileSet = doc.distribution.find((d: { '@type': string }) => d['@type'] === 'cr:FileSet');
    expect(fileSet.includes).toBe('patches/*/*/*.png');
    let pngs = 0;
    for (const split of await readdir(join(out, 'patches'))) for (const cls of await readdir(join(out, 'patches', split), { withFileTypes: true })) if (cls.isDirectory()) pngs += (await readdir(join(out, 'patches', split, cls.name))).filter((f) => f.endsWith('.png')).length;
    expect(pngs).toBe(records.length);
    // every field source points at a distribution entry; split references the split record set
    const patches = doc.recordSet.find((r: { '@id': string }) => r['@id'] === 'patches');
    for (const f of patches.field) expect(ids.has(f.source.fileObject?.['@id'] ?? f.source.fileSet?.['@id']), f['@id']).toBe(true);
    expect(doc.recordSet.find((r: { '@id': string }) => r['@id'] === 'splits').data.map((d: Record<string, string>) => d['splits/url'])).toEqual(['cr:TrainingSplit', 'cr:ValidationSplit', 'cr:TestSplit']);
    for (const k of ['rai:dataCollection', 'rai:dataAnnotationProtocol', 'rai:dataLimitations', 'rai:personalSensitiveInformation']) expect(typeof doc[k], k).toBe('string');
  }, 60_000);

  it.runIf(torchvisionAvailable())('torchvision ImageFolder loads each split: counts and class names equal the index', async () => {
    const { out, records } = await built();
    // torchvision.datasets.ImageFolder: classes are the sorted folder names, samples (path, class index) (from memory)
    const script = [
      'import json, sys',
      'from torchvision.datasets import ImageFolder',
      'out = {}',
      "for split in ['train', 'val', 'test']:",
      "    ds = ImageFolder(sys.argv[1] + '/patches/' + split)",
      '    img, target = ds[0]',
      "    out[split] = {'classes': ds.classes, 'counts': {c: sum(1 for _, t in ds.samples if ds.classes[t] == c) for c in ds.classes}, 'size': list(img.size)}",
      'print(json.dumps(out))',
    ].join('\n');
    const got = JSON.parse(execFileSync('/usr/bin/python3', ['-c', script, out], { encoding: 'utf8' }));
    for (const split of ['train', 'val', 'test'] as const) {
      const inSplit = records.filter((r) => r.split === split);
      const classes = [...new Set(inSplit.map((r) => r.label))].sort();
      expect(got[split].classes).toEqual(classes);
      expect(got[split].counts).toEqual(Object.fromEntries(classes.map((c) => [c, inSplit.filter((r) => r.label === c).length])));
      expect(got[split].size).toEqual([32, 32]);
    }
  }, 120_000);

  it('tar shards: WebDataset-style, read back by Python\'s tarfile, equal to the index, byte-identical on a rebuild', async () => {
    const { out, records } = await built({ shards: { patchesPerShard: 10 } });
    // Python's tarfile is the independent reader; WebDataset groups consecutive members by the key before the first dot (facts E2)
    const script = [
      'import hashlib, json, sys, tarfile, glob, os',
      'res = {}',
      "for path in sorted(glob.glob(os.path.join(sys.argv[1], 'shards', '*', '*.tar'))):",
      '    with tarfile.open(path) as t:',
      '        members = t.getmembers()',
      "        res[os.path.relpath(path, sys.argv[1])] = [[m.name, m.size, m.mtime, m.uid, m.gid, m.mode, m.isfile(), hashlib.sha256(t.extractfile(m).read()).hexdigest(), json.loads(t.extractfile(m).read()) if m.name.endswith('.json') else None] for m in members]",
      'print(json.dumps(res))',
    ].join('\n');
    const shards: Record<string, [string, number, number, number, number, number, boolean, string, unknown][]> = JSON.parse(execFileSync('/usr/bin/python3', ['-c', script, out], { encoding: 'utf8' }));
    const seen: string[] = [];
    for (const [path, members] of Object.entries(shards)) {
      const split = path.split('/')[1];
      expect(members.length).toBeLessThanOrEqual(20); // 10 patches, two members each
      for (let i = 0; i < members.length; i += 2) {
        const [png, json] = [members[i], members[i + 1]];
        const key = png[0].replace(/\.png$/, '');
        expect(json[0]).toBe(`${key}.json`); // one sample = consecutive members with one key
        for (const m of [png, json]) expect(m.slice(2, 7)).toEqual([0, 0, 0, 0o644, true]);
        const r = records.find((x) => x.id === key)!;
        expect(r.split).toBe(split);
        expect(png[7]).toBe(r.sha256);
        expect(json[8]).toEqual(JSON.parse(JSON.stringify(r)));
        seen.push(key);
      }
    }
    expect(seen.sort()).toEqual(records.map((r) => r.id).sort());
    // the shards are listed in croissant.json with their sha256
    const doc = JSON.parse(await readFile(join(out, 'croissant.json'), 'utf8'));
    for (const path of Object.keys(shards)) {
      const entry = doc.distribution.find((d: { '@id': string }) => d['@id'] === path);
      expect(entry.encodingFormat).toBe('application/x-tar');
      expect(entry.sha256).toBe(sha256Hex(await readFile(join(out, path))));
    }
    // a rebuild from the cache writes the same bytes
    const before = await hashTree(out);
    serveScenario(scenarioBoards());
    const again = await scenarioRecipe(box.dir, { shards: { patchesPerShard: 10 }, output: 'out-again' });
    await runRecipe(again, { cacheDir: join(box.dir, 'cache'), mode: 'offline' });
    expect([...(await hashTree(again.output)).entries()]).toEqual([...before.entries()]);
  }, 120_000);
});
