import { describe, expect, it } from 'vitest';
import nock from 'nock';
import { resolveSources } from '../../src/sources/resolve.ts';
import { fixture } from '../helpers.ts';
import { makeFetcher, nockSandbox } from '../net/harness.ts';

const H = 'https://iiif.example.org';
const box = nockSandbox();
const ld = (doc: unknown) => [200, JSON.stringify(doc), { 'content-type': 'application/ld+json' }] as [number, string, Record<string, string>];

describe('resolving sources from nock-served fixtures', () => {
  it('follows a collection (referenced manifest, embedded and referenced child collections), referenced annotation pages and info.json', async () => {
    const marble = { '@context': 'http://iiif.io/api/presentation/3/context.json', id: `${H}/manifests/marble-1`, type: 'Manifest', items: [{ id: `${H}/canvas/m1`, type: 'Canvas', width: 100, height: 100, items: [] }] };
    const gilding = { '@context': 'http://iiif.io/api/presentation/3/context.json', id: `${H}/collections/gilding`, type: 'Collection', label: { en: ['g'] }, items: [] };
    const scope = nock(H)
      .get('/collections/top').reply(...ld(fixture('manifests/collection-nested.json')))
      .get('/manifests/board-halves').reply(...ld(fixture('manifests/board-halves.json')))
      .get('/manifests/marble-1').reply(...ld(marble))
      .get('/collections/gilding').reply(...ld(gilding))
      .get('/annotations/halves-tags').reply(...ld(fixture('annotations/halves-tags.json')))
      .get('/iiif/3/board-a/info.json').reply(...ld({ ...(fixture('info/v3-spec-example.json') as object), id: `${H}/iiif/3/board-a` }))
      .get('/iiif/2/board-c/info.json').reply(...ld({ ...(fixture('info/v2-level2-plain.json') as object), '@id': `${H}/iiif/2/board-c`, width: 3536, height: 4999 }));
    nock('https://images.example.net').get('/fcgi-bin/iipsrv.fcgi').query({ IIIF: 'boards/board 07.tif/info.json' }).reply(...ld(fixture('info/v2-level1-query-id.json')));
    const { fetcher } = makeFetcher(box.dir, { perHostRate: 1000 });
    const r = await resolveSources([{ kind: 'collection', location: `${H}/collections/top` }], fetcher);
    expect(scope.isDone()).toBe(true);
    expect(r.failures).toEqual([]);
    expect(r.manifests.map((m) => [m.manifest.id, m.collections])).toEqual([
      [`${H}/manifests/board-halves`, [`${H}/collections/top`]],
      [`${H}/manifests/marble-1`, [`${H}/collections/top`, `${H}/collections/marble`]],
    ]);
    expect(r.annotations.map((a) => a.id.replace(/.*\//, ''))).toEqual(['1', '2', '3', '4']);
    expect([...r.services.keys()].sort()).toEqual([
      `${H}/iiif/2/board-c`,
      `${H}/iiif/3/board-a`,
      'https://images.example.net/fcgi-bin/iipsrv.fcgi?IIIF=boards/board%2007.tif',
    ]);
    expect(r.services.get('https://images.example.net/fcgi-bin/iipsrv.fcgi?IIIF=boards/board%2007.tif')!.maxWidth).toBe(512);
    expect(r.documents.filter((d) => d.kind === 'info')).toHaveLength(3);
  });

  it('records an unreachable manifest and carries on with the rest', async () => {
    nock(H).get('/manifests/gone').reply(404).get('/manifests/marble-1').reply(...ld({ '@context': 'http://iiif.io/api/presentation/3/context.json', id: `${H}/manifests/marble-1`, type: 'Manifest', items: [{ id: `${H}/c`, type: 'Canvas', width: 10, height: 10 }] }));
    const { fetcher } = makeFetcher(box.dir, { perHostRate: 1000 });
    const r = await resolveSources([{ kind: 'manifest', location: `${H}/manifests/gone` }, { kind: 'manifest', location: `${H}/manifests/marble-1` }], fetcher);
    expect(r.manifests).toHaveLength(1);
    expect(r.failures).toEqual([{ stage: 'source', key: `${H}/manifests/gone`, url: `${H}/manifests/gone`, status: 404, attempts: 1, reason: 'HTTP 404' }]);
  });
});
