/**
 * The report page (pure: a model in, one HTML string out). Self-contained:
 * inline CSS and SVG, images from its own folder, no script, no fonts, no
 * network. Every colour comes with a text label or a dash pattern.
 */
import type { Rect } from '../geometry/rect.ts';
import type { Shape } from '../geometry/shape.ts';
import { barRows, canvasToThumbnail, classStyle, OccurrenceChart, SheetLayout } from './layout.ts';

export interface TraceRow {
  id: string;
  split: string;
  label: string;
  kind: string;
  canvas: string;
  canvasLabel: string;
  annotation: string | null;
  requests: string[];
  rights: string | null;
  requiredStatement: string | null;
}

export interface ReportModel {
  name: string;
  generatedBy: string;
  classes: string[];
  splits: string[];
  targets: Record<string, number>;
  counts: { patches: number; perClassSplit: Record<string, Record<string, number>> };
  sheets: { cls: string; split: string; file: string; layout: SheetLayout }[];
  traces: TraceRow[];
  maps: {
    key: string;
    manifest: string;
    canvas: string;
    label: string;
    index: number;
    file: string | null;
    width: number;
    height: number;
    scale: number;
    box: { x: number; y: number };
    regions: { label: string; annotation: string; shape: Shape }[];
    footprints: { id: string; label: string; kind: string; rect: Rect }[];
  }[];
  mapsOmitted: number;
  occurrence: { manifest: string; chart: OccurrenceChart }[];
  bars: { title: string; rows: { label: string; values: { key: string; value: number }[] }[]; normalise?: boolean; marks?: number[] }[];
  duplicates: { a: string; b: string; distance: number; groups: [string, string]; file: string; width: number; height: number }[];
  duplicatesTotal: number;
  mergedGroups: number;
  problems: { kind: 'skipped' | 'failure'; reason: string; rows: { key: string; url?: string; pointer?: string; detail: string }[] }[];
  probe: { separable: boolean; p1: number | null; random: number; flagged: { test: string; train: string; distance: number; hamming: number; reason: string }[] } | null;
}

const esc = (s: string | number) =>
  String(s).replace(/&/g, '&amp;').replace(/</g, '&lt;').replace(/>/g, '&gt;').replace(/"/g, '&quot;').replace(/'/g, '&#39;');
const round2 = (v: number) => Math.round(v * 100) / 100;
const slug = (s: string) => s.replace(/[^A-Za-z0-9_-]/g, '_');

/** Split fills: grey levels with a hatch for val and dots for test, each labelled in the legend. */
const SPLIT_FILL: Record<string, string> = { train: '#4d4d4d', val: 'url(#hatch)', test: 'url(#dots)' };

function svgDefs(): string {
  return `<defs><pattern id="hatch" width="6" height="6" patternUnits="userSpaceOnUse" patternTransform="rotate(45)"><rect width="6" height="6" fill="#ffffff"/><line x1="0" y1="0" x2="0" y2="6" stroke="#4d4d4d" stroke-width="3"/></pattern>` +
    `<pattern id="dots" width="5" height="5" patternUnits="userSpaceOnUse"><rect width="5" height="5" fill="#ffffff"/><circle cx="2.5" cy="2.5" r="1.4" fill="#4d4d4d"/></pattern></defs>`;
}

function shapeSvg(shape: Shape, t: ReturnType<typeof canvasToThumbnail>, attrs: string): string {
  if (shape.kind === 'rect') {
    const r = t.rect(shape.rect);
    return `<rect class="region" x="${r.x}" y="${r.y}" width="${r.w}" height="${r.h}" ${attrs}/>`;
  }
  return shape.rings.map((ring) => `<polygon class="region" points="${ring.map((p) => t.point(p.x, p.y).join(',')).join(' ')}" ${attrs}/>`).join('');
}

function barsSvg(b: ReportModel['bars'][number], splits: readonly string[]): string {
  const { bars, height, span } = barRows(b.rows, { left: 230, right: 60, width: 760, top: 8, rowHeight: 22, ...(b.normalise ? { normalise: true } : {}) });
  const body = bars.map((bar) => {
    const total = bar.segments.reduce((a, s) => a + s.value, 0);
    const segs = bar.segments.map((s) => `<rect x="${s.x}" y="${bar.y + 3}" width="${s.w}" height="14" fill="${SPLIT_FILL[s.key] ?? '#4d4d4d'}" stroke="#222" stroke-width="0.5"><title>${esc(bar.label)} · ${esc(s.key)}: ${s.value}</title></rect>`).join('');
    return `<text x="224" y="${bar.y + 14}" text-anchor="end">${esc(bar.label.length > 40 ? `…${bar.label.slice(-39)}` : bar.label)}</text>${segs}<text x="${round2((bar.segments.at(-1)?.x ?? 230) + (bar.segments.at(-1)?.w ?? 0) + 6)}" y="${bar.y + 14}">${total}</text>`;
  }).join('');
  const marks = (b.marks ?? []).map((m) => `<line class="target" x1="${230 + m * span}" x2="${230 + m * span}" y1="4" y2="${height - 4}" stroke="#D55E00" stroke-width="2" stroke-dasharray="4 2"/>`).join('');
  const legend = b.rows.some((r) => r.values.length > 1)
    ? `<p class="legend">${splits.map((s) => `<span><svg width="14" height="14">${svgDefs()}<rect width="14" height="14" fill="${SPLIT_FILL[s]}" stroke="#222"/></svg> ${esc(s)}</span>`).join(' ')}${b.marks?.length ? ' <span><svg width="14" height="14"><line x1="7" x2="7" y1="0" y2="14" stroke="#D55E00" stroke-width="2" stroke-dasharray="4 2"/></svg> target cut between splits</span>' : ''}</p>`
    : '';
  return `<figure class="chart"><figcaption>${esc(b.title)}</figcaption><svg class="bars" width="760" height="${height}" role="img" aria-label="${esc(b.title)}">${svgDefs()}${body}${marks}</svg>${legend}</figure>`;
}

export function renderReportHtml(m: ReportModel): string {
  const css = `body{font:14px/1.45 "DejaVu Sans",Verdana,sans-serif;margin:0;color:#1a1a1a;background:#fbfaf7}
header{background:#2b2a27;color:#fbfaf7;padding:18px 28px}header h1{margin:0;font-size:22px;letter-spacing:.02em}header p{margin:4px 0 0;color:#d8d4cc}
nav{padding:8px 28px;background:#ece8df;border-bottom:1px solid #d5cfc2}nav a{margin-right:16px;color:#1f3d73}
main{padding:8px 28px 40px;max-width:1180px}h2{border-bottom:2px solid #2b2a27;padding-bottom:2px;margin-top:34px}h3{margin:18px 0 6px;font-size:15px}
.sheet{display:inline-block;margin:0 18px 18px 0;vertical-align:top}.sheet img{display:block;border:1px solid #8c8577;image-rendering:pixelated}
.sheet p{margin:2px 0;font-size:12px;color:#4d4a44}.key{display:inline-block;width:12px;height:12px;border:1px solid #222;vertical-align:-1px;margin-right:4px}
.map{display:inline-block;margin:0 16px 18px 0;vertical-align:top;font-size:12px}.map .frame{position:relative;border:1px solid #8c8577;background:#d9d5cc}
.map .frame img{display:block}.map .frame svg{position:absolute;left:0;top:0}.nothumb{color:#4d4a44;font-style:italic}
.legend span{margin-right:14px;white-space:nowrap}.chart{margin:10px 0 18px}.chart figcaption{font-weight:bold;margin-bottom:4px}
svg text{font:12px "DejaVu Sans",Verdana,sans-serif;fill:#1a1a1a}
table{border-collapse:collapse;margin:6px 0 12px;font-size:12px}td,th{border:1px solid #c9c2b4;padding:3px 6px;text-align:left;vertical-align:top}th{background:#ece8df}
.trace{border-left:4px solid #c9c2b4;padding:2px 8px;margin:4px 0;font-size:12px;word-break:break-all}.trace:target{border-left-color:#D55E00;background:#fff3e0}
.pair{display:inline-block;margin:0 14px 12px 0;font-size:12px}.pair img{display:block;border:1px solid #8c8577}
details{margin:6px 0}summary{cursor:pointer;font-weight:bold}.note{color:#4d4a44;font-size:12px}`;
  const legendClasses = `<p class="legend">${m.classes.map((c) => {
    const st = classStyle(m.classes, c);
    return `<span><svg width="26" height="12"><line x1="1" x2="25" y1="6" y2="6" stroke="${st.colour}" stroke-width="3" stroke-dasharray="${st.dash}"/></svg> ${esc(c)}</span>`;
  }).join('')}<span><svg width="26" height="12"><rect x="2" y="2" width="22" height="8" fill="none" stroke="#000" stroke-width="1.5"/></svg> positive patch (solid)</span><span><svg width="26" height="12"><rect x="2" y="2" width="22" height="8" fill="none" stroke="#000" stroke-width="1.5" stroke-dasharray="2 2"/></svg> negative patch (dotted)</span></p>`;

  const sheets = m.classes.map((cls) => {
    const st = classStyle(m.classes, cls);
    const cells = m.sheets.filter((s) => s.cls === cls).map((s) => {
      const name = `sheet-${slug(cls)}-${slug(s.split)}`;
      const areas = s.layout.tiles.map((t) => `<area class="tile" shape="rect" coords="${t.x},${t.y},${t.x + s.layout.tile},${t.y + s.layout.tile}" href="#p-${t.id}" title="${esc(t.id)}" alt="patch ${esc(t.id)}">`).join('');
      const img = s.layout.tiles.length
        ? `<img src="${esc(s.file)}" width="${s.layout.width}" height="${s.layout.height}" usemap="#${name}" alt="${esc(cls)} patches in ${esc(s.split)}" loading="lazy"><map name="${name}">${areas}</map>`
        : '<p class="note">no patches</p>';
      return `<div class="sheet"><p><b>${esc(s.split)}</b>: ${s.layout.tiles.length} shown of ${s.layout.of}</p>${img}</div>`;
    }).join('');
    return `<h3><span class="key" style="background:${st.colour}"></span>${esc(cls)}</h3>${cells}`;
  }).join('');

  const traces = m.traces.map((t) => `<div class="trace" id="p-${esc(t.id)}"><b>${esc(t.id)}</b> · ${esc(t.label)} (${esc(t.kind)}) · ${esc(t.split)} · canvas <a href="${esc(t.canvas)}">${esc(t.canvasLabel || t.canvas)}</a>${t.annotation ? ` · annotation ${esc(t.annotation)}` : ''}<br>request${t.requests.length > 1 ? 's' : ''}: ${t.requests.map(esc).join(' ')}<br>rights: ${esc(t.rights ?? '(none stated)')}${t.requiredStatement ? ` · ${esc(t.requiredStatement)}` : ''}</div>`).join('');

  const maps = m.maps.map((mp) => {
    const t = canvasToThumbnail(mp.scale, mp.box);
    const regions = mp.regions.map((r) => {
      const st = classStyle(m.classes, r.label);
      return `<g><title>${esc(r.label)} · ${esc(r.annotation)}</title>${shapeSvg(r.shape, t, `fill="none" stroke="${st.colour}" stroke-width="2.5" stroke-dasharray="${st.dash}"`)}</g>`;
    }).join('');
    const fps = mp.footprints.map((f) => {
      const r = t.rect(f.rect);
      const st = classStyle(m.classes, f.label);
      return `<rect class="fp ${f.kind === 'negative' ? 'neg' : 'pos'}" x="${r.x}" y="${r.y}" width="${r.w}" height="${r.h}" fill="none" stroke="${f.kind === 'negative' ? '#000000' : st.colour}" stroke-width="1"${f.kind === 'negative' ? ' stroke-dasharray="2 2"' : ''}><title>${esc(f.id)} · ${esc(f.label)}</title></rect>`;
    }).join('');
    const picture = mp.file ? `<img src="${esc(mp.file)}" width="${mp.width}" height="${mp.height}" alt="thumbnail of ${esc(mp.label)}" loading="lazy">` : `<div style="width:${mp.width}px;height:${mp.height}px"></div>`;
    return `<div class="map" id="c-${esc(mp.key)}"><div class="frame" style="width:${mp.width}px;height:${mp.height}px">${picture}<svg width="${mp.width}" height="${mp.height}" viewBox="0 0 ${mp.width} ${mp.height}" role="img" aria-label="regions and patches on ${esc(mp.label)}">${regions}${fps}</svg></div><p><b>${esc(mp.label)}</b> (#${mp.index + 1}) · ${mp.footprints.length} patches${mp.file ? '' : ' · <span class="nothumb">no thumbnail in the cache</span>'}</p></div>`;
  }).join('');

  const occurrence = m.occurrence.map(({ manifest, chart }) => {
    const rows = chart.rows.map((r) => `<text x="104" y="${r.y + 4}" text-anchor="end">${esc(r.label)}</text><line x1="110" x2="${chart.width - 20}" y1="${r.y}" y2="${r.y}" stroke="#c9c2b4"/>`).join('');
    const marks = chart.marks.map((k) => {
      const st = classStyle(m.classes, k.label);
      return `<circle class="occ" cx="${k.cx}" cy="${k.cy}" r="${k.r}" fill="${st.colour}" stroke="#222" stroke-width="0.7"><title>${esc(k.label)} · ${esc(k.canvasLabel)} (#${k.canvasIndex + 1}): ${k.count} patches</title></circle>`;
    }).join('');
    const axis = `<text x="110" y="${chart.height - 4}">#${chart.first + 1}</text><text x="${chart.width - 20}" y="${chart.height - 4}" text-anchor="end">#${chart.last + 1}</text>`;
    return `<figure class="chart"><figcaption>${esc(manifest)}</figcaption><svg width="${chart.width}" height="${chart.height}" role="img" aria-label="where each class occurs in ${esc(manifest)}">${rows}${marks}${axis}</svg></figure>`;
  }).join('');

  const bars = m.bars.map((b) => barsSvg(b, m.splits)).join('');
  const dups = m.duplicates.map((d) => `<div class="pair"><img src="${esc(d.file)}" width="${d.width}" height="${d.height}" alt="near-duplicates ${esc(d.a)} and ${esc(d.b)}" loading="lazy">${esc(d.a)} ~ ${esc(d.b)}<br>Hamming distance ${d.distance}; groups ${esc(d.groups[0])} and ${esc(d.groups[1])} merged</div>`).join('');
  const problems = m.problems.length
    ? m.problems.map((p) => `<details><summary>${p.kind === 'failure' ? 'failure' : 'skipped'}: ${esc(p.reason)} (${p.rows.length})</summary><table><tr><th>key</th><th>URL</th><th>JSON pointer</th><th>detail</th></tr>${p.rows.map((r) => `<tr><td>${esc(r.key)}</td><td>${esc(r.url ?? '')}</td><td>${esc(r.pointer ?? '')}</td><td>${esc(r.detail)}</td></tr>`).join('')}</table></details>`).join('')
    : '<p>No region was skipped and nothing failed.</p>';
  const probe = m.probe
    ? `<p>Concatenated descriptors, test querying training: P@1 ${m.probe.p1 === null ? 'n/a' : m.probe.p1.toFixed(3)} against ${m.probe.random.toFixed(3)} for a random ranking: the classes ${m.probe.separable ? 'separate' : 'do not separate'} above chance.</p>` +
      (m.probe.flagged.length
        ? `<table><tr><th>test patch</th><th>nearest training patch</th><th>distance</th><th>Hamming</th><th>why</th></tr>${m.probe.flagged.map((f) => `<tr><td>${esc(f.test)}</td><td>${esc(f.train)}</td><td>${f.distance}</td><td>${f.hamming}</td><td>${esc(f.reason)}</td></tr>`).join('')}</table>`
        : '<p>Leakage alarm: no test patch flagged.</p>')
    : '<p class="note">No probe.json beside the dataset (swatchbook probe writes one).</p>';

  return `<!doctype html>
<html lang="en"><head><meta charset="utf-8"><meta name="viewport" content="width=device-width,initial-scale=1"><title>swatchbook report: ${esc(m.name)}</title><style>${css}</style></head>
<body><header><h1>${esc(m.name)}: what the dataset holds</h1><p>${m.counts.patches} patches · ${m.classes.length} classes · ${esc(m.generatedBy)}</p></header>
<nav><a href="#sheets">Contact sheets</a><a href="#maps">Canvas maps</a><a href="#occurrence">Where each class occurs</a><a href="#balance">Balance</a><a href="#duplicates">Near-duplicates</a><a href="#leakage">Leakage</a><a href="#problems">Skips and failures</a><a href="#traces">Traces</a></nav>
<main>
<h2 id="sheets">Contact sheets</h2><p class="note">A seeded sample per class and split; each tile links to its trace (hover for the id).</p>${sheets}
<h2 id="maps">Canvas maps</h2><p class="note">Annotated regions outlined per class; every patch footprint drawn.${m.mapsOmitted ? ` ${m.mapsOmitted} more canvases are not drawn (the page keeps to ${m.maps.length}).` : ''}</p>${legendClasses}${maps}
<h2 id="occurrence">Where each class occurs</h2><p class="note">Canvases in manifest order along the axis, a row per class; a circle's area grows with the patch count.</p>${occurrence}
<h2 id="balance">Balance</h2>${bars}
<h2 id="duplicates">Near-duplicates</h2><p>${m.duplicatesTotal} pairs across groups; ${m.mergedGroups} groups merged before splitting.${m.duplicatesTotal > m.duplicates.length ? ` The first ${m.duplicates.length} are shown.` : ''}</p>${dups}
<h2 id="leakage">Leakage</h2>${probe}
<h2 id="problems">Skips and failures</h2>${problems}
<h2 id="traces">Traces of the patches shown</h2>${traces}
</main></body></html>
`;
}
