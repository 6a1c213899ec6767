import type { IndexRecord } from './records.ts';
import { byString } from '../util/hash.ts';

/**
 * The run in W3C PROV-O, as JSON-LD: patch ← crop ← image request ← image
 * service ← canvas ← manifest (prov:wasDerivedFrom); the build as a
 * prov:Activity; swatchbook as a prov:SoftwareAgent. No times (they would break
 * byte-identical rebuilds; run times live in the run log).
 */
export function provenanceDocument(name: string, tool: { name: string; version: string }, records: readonly IndexRecord[]) {
  const nodes = new Map<string, Record<string, unknown>>();
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
    add(`urn:swatchbook:patch:${r.id}`, {
      '@type': 'prov:Entity',
      'dcterms:type': 'patch',
      'rdfs:label': r.file,
      'swatchbook:sha256': r.sha256,
      'prov:wasDerivedFrom': [{ '@id': `urn:swatchbook:crop:${r.crop}` }, ...(r.annotation ? [{ '@id': r.annotation }] : [])],
      'prov:wasGeneratedBy': { '@id': run },
      ...(r.rights ? { 'dcterms:rights': r.rights } : {}),
    });
  }
  return {
    '@context': {
      prov: 'http://www.w3.org/ns/prov#',
      dcterms: 'http://purl.org/dc/terms/',
      rdfs: 'http://www.w3.org/2000/01/rdf-schema#',
      swatchbook: 'urn:swatchbook:vocab:',
    },
    '@graph': [...nodes.values()].sort((a, b) => byString(String(a['@id']), String(b['@id']))),
  };
}
