import type { IndexRecord } from './records.ts';
import { byString } from '../util/hash.ts';

type Node = Record<string, unknown> & { '@id': string };

const PATCH = 'urn:swatchbook:patch:';

/**
 * The run in W3C PROV-O, as JSON-LD: patch ← crop ← image request ← image
 * service ← canvas ← manifest (prov:wasDerivedFrom); the build as a
 * prov:Activity; swatchbook as a prov:SoftwareAgent. No times (they would break
 * byte-identical rebuilds; run times live in the run log).
 *
 * The graph is sorted by `@id`. Its `@graph` is a lazy sequence: the few nodes
 * above the patches (manifests, canvases, services, requests, crops) are made
 * at once, the patch nodes one at a time as they are written, in the records'
 * order (sorted by id, as the index is), merged into the sorted graph.
 */
export function provenanceDocument(name: string, tool: { name: string; version: string }, records: readonly IndexRecord[]) {
  const nodes = new Map<string, Node>();
  const add = (id: string, node: Record<string, unknown>) => {
    if (!nodes.has(id)) nodes.set(id, { '@id': id, ...node });
  };
  const run = `urn:swatchbook:run:${name}`;
  const agent = `urn:swatchbook:tool:${tool.name}@${tool.version}`;
  add(agent, { '@type': 'prov:SoftwareAgent', 'rdfs:label': `${tool.name} ${tool.version}` });
  add(run, { '@type': 'prov:Activity', 'prov:wasAssociatedWith': { '@id': agent } });
  for (const r of records) {
    add(r.manifest, { '@type': 'prov:Entity', 'dcterms:type': 'IIIF Manifest' });
    add(r.canvas, { '@type': 'prov:Entity', 'dcterms:type': 'IIIF Canvas', 'dcterms:isPartOf': { '@id': r.manifest } });
    add(r.service.id, { '@type': 'prov:Entity', 'dcterms:type': `IIIF Image API ${r.service.version} level ${r.service.level}`, 'prov:wasDerivedFrom': { '@id': r.canvas } });
    for (const resp of r.responses) {
      add(resp.url, { '@type': 'prov:Entity', 'dcterms:type': 'image request', 'swatchbook:sha256': resp.sha256, 'prov:wasDerivedFrom': { '@id': r.service.id } });
    }
    add(`urn:swatchbook:crop:${r.crop}`, { '@type': 'prov:Entity', 'dcterms:type': 'crop', 'prov:wasDerivedFrom': r.responses.map((x) => ({ '@id': x.url })), 'prov:wasGeneratedBy': { '@id': run } });
  }
  const above = [...nodes.values()].sort((a, b) => byString(a['@id'], b['@id']));
  const patchNode = (r: IndexRecord): Node => ({
    '@id': `${PATCH}${r.id}`,
    '@type': 'prov:Entity',
    'dcterms:type': 'patch',
    'rdfs:label': r.file,
    'swatchbook:sha256': r.sha256,
    'prov:wasDerivedFrom': [{ '@id': `urn:swatchbook:crop:${r.crop}` }, ...(r.annotation ? [{ '@id': r.annotation }] : [])],
    'prov:wasGeneratedBy': { '@id': run },
    ...(r.rights ? { 'dcterms:rights': r.rights } : {}),
  });
  return {
    '@context': {
      prov: 'http://www.w3.org/ns/prov#',
      dcterms: 'http://purl.org/dc/terms/',
      rdfs: 'http://www.w3.org/2000/01/rdf-schema#',
      swatchbook: 'urn:swatchbook:vocab:',
    },
    '@graph': mergeById(above, records, patchNode),
  };
}

/** The nodes above the patches and the patch nodes, merged in `@id` order (the records come sorted by id). */
function* mergeById(above: readonly Node[], records: readonly IndexRecord[], patchNode: (r: IndexRecord) => Node): Generator<Node> {
  const taken = new Set(above.map((n) => n['@id']));
  let a = 0;
  let last: string | undefined;
  for (const r of records) {
    if (last !== undefined && byString(last, r.id) > 0) throw new Error('provenance: records must come sorted by id');
    last = r.id;
    const id = `${PATCH}${r.id}`;
    while (a < above.length && byString(above[a]['@id'], id) < 0) yield above[a++];
    // An id already taken by a node above (a source that names itself so) keeps that node, as a map of ids would.
    if (!taken.has(id)) yield patchNode(r);
  }
  while (a < above.length) yield above[a++];
}
