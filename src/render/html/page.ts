/** One self-contained HTML page from a ReportDoc: inline CSS, inline SVG figures, inline data and script. */
import type { ReportDoc } from './model.js';
import { reportCss } from './style.js';
import { reportClient } from './client.js';
import { esc } from '../figures/svg.js';
import { northUp } from '../figures/raster.js';

/** JSON that is safe inside a <script> element. */
export function scriptJson(v: unknown): string {
  return JSON.stringify(v).replace(/</g, '\\u003c').replace(/\u2028/g, '\\u2028').replace(/\u2029/g, '\\u2029');
}

/** The browser script: the compiled reportClient function, called once. */
export function clientScript(): string {
  return `(${reportClient.toString()})();`;
}

export function renderHtml(doc: ReportDoc): string {
  const m = doc.map;
  const data = {
    frame: m.frame, geometry: m.geometry, northUp: northUp(m.frame.transform), geographic: m.geographic, xyUnit: m.xyUnit, interpolated: !!m.interpolated,
    hover: m.hover, tips: doc.tips, tables: doc.tables,
  };
  const header = doc.header.map((h) => {
    const chip = h.status === 'ok' ? ' <span class="status-ok">✓ holds</span>' : h.status === 'fail' ? ' <span class="status-fail">✗ FAILS</span>' : '';
    return `<dt>${esc(h.label)}</dt><dd${h.mono ? ' class="mono"' : ''}>${esc(h.value)}${chip}</dd>`;
  }).join('');
  const caution = doc.cautions.length
    ? `<aside class="caution" role="note" aria-label="caution">${doc.cautions.map((c, i) => `<p>${i === 0 ? '<strong>Caution. </strong>' : ''}${esc(c)}</p>`).join('')}</aside>`
    : '';
  // a switch only for the layers the map holds (no contours on a surface too rough for them, no outlines when none were traced)
  const toggles = m.toggles.filter((t) => m.svg.includes(`data-layer="${t.id}"`)).map((t) => `<label class="tog"><input type="checkbox" data-toggle="${esc(t.id)}"${t.on ? ' checked' : ''}> ${esc(t.label)}</label>`).join('');
  const fig = (id: string, title: string, b: { svg: string; caption: string } | null, extra = '') => b
    ? `<section class="card" id="sec-${id}" aria-labelledby="h-${id}"><h2 id="h-${id}">${esc(title)}</h2>${extra}<figure>${b.svg}<figcaption>${esc(b.caption)}</figcaption></figure></section>`
    : '';
  const mapSection = `<section class="card" id="sec-map" aria-labelledby="h-map"><h2 id="h-map">Map</h2>`
    + `<div class="toolbar"><span class="grp" role="group" aria-label="zoom"><button type="button" data-zoom="in" aria-label="zoom in">+</button><button type="button" data-zoom="out" aria-label="zoom out">−</button><button type="button" data-zoom="reset">whole grid</button></span>`
    + `<span class="grp" role="group" aria-label="layers">${toggles}</span></div>`
    + `<figure>${m.svg}<figcaption>${esc(m.caption)}</figcaption></figure>`
    + `<div class="readout" id="map-readout" aria-live="off"></div><div class="selinfo" id="selinfo" aria-live="polite"></div></section>`;
  const tables = doc.tables.map((t) => `<section class="card" id="sec-${esc(t.id)}" aria-labelledby="h-${esc(t.id)}"><h2 id="h-${esc(t.id)}">${esc(t.title)}</h2>`
    + `<div class="tablebar"><span>${esc(t.caption)}</span>${t.rows.length < t.total ? `<span>${t.rows.length} of ${t.total} rows in this page.</span>` : ''}${t.csv ? `<a class="btn" href="${esc(t.csv)}" download>${esc(t.csv)}${t.rows.length < t.total ? ' (all rows)' : ''}</a>` : ''}</div>`
    + `<div id="tbl-${esc(t.id)}"></div></section>`).join('');
  const facts = doc.facts.length ? `<ul class="facts">${doc.facts.map((f) => `<li>${esc(f)}</li>`).join('')}</ul>` : '';
  const notes = doc.notes.length ? `<ul class="notes">${doc.notes.map((x) => `<li>${esc(x)}</li>`).join('')}</ul>` : '';
  const files = doc.files.length ? `<p>Files of this run, beside this report: ${doc.files.map((f) => `<a href="${esc(f)}">${esc(f)}</a>`).join(', ')}.</p>` : '';
  return `<!doctype html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta name="viewport" content="width=device-width, initial-scale=1">
<meta name="generator" content="sill ${esc(doc.version)}">
<meta http-equiv="Content-Security-Policy" content="default-src 'none'; img-src data: blob:; style-src 'unsafe-inline'; script-src 'unsafe-inline'; connect-src data: blob:">
<title>${esc(doc.title)}</title>
<style>${reportCss()}</style>
</head>
<body>
<header class="top"><h1><span class="cmd">sill ${esc(doc.command)}</span>${esc(doc.subtitle)}</h1>
<p class="sub">${esc(doc.title)}</p>${facts}</header>
<main>
${caution}
<section class="card" id="sec-run" aria-labelledby="h-run"><h2 id="h-run">Run</h2><dl class="run">${header}</dl></section>
<div class="figs"><div>${mapSection}</div><div class="side">${fig('tree', doc.treeTitle ?? 'Merge tree', doc.tree)}${fig('persistence', 'Persistence diagram', doc.persistence)}</div></div>
${tables}
<section class="card" id="sec-notes" aria-labelledby="h-notes"><h2 id="h-notes">How this page was made</h2>${notes}${files}</section>
</main>
<footer>Made by sill ${esc(doc.version)} on ${esc(doc.generated)}. This page is self-contained: it loads nothing from the network.</footer>
<script type="application/json" id="sill-data">${scriptJson(data)}</script>
<script>${clientScript()}</script>
</body>
</html>
`;
}
