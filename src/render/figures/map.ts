/**
 * The map figure: display raster layers, contour lines, outlines, paths and feature markers in
 * plot coordinates (grid units, see raster.ts), inside a nested <svg> whose viewBox the report's
 * script changes to pan and zoom; axes in map coordinates; a legend below. The same SVG is
 * written standalone as map.svg.
 */
import type { Frame } from './raster.js';
import { northUp } from './raster.js';
import type { Ramp } from './colour.js';
import type { ContourSet } from './contours.js';
import { marker, shapePath, MARKER_FILL, MARKER_NAMES, type MarkerKind } from './markers.js';
import { esc, n, titleDesc } from './svg.js';
import { ticks, fmtNum } from './scale.js';
import { THEME } from './theme.js';

export const FONT = "system-ui, -apple-system, 'Segoe UI', Roboto, 'Noto Sans', 'DejaVu Sans', sans-serif";

export interface RasterLayer {
  id: string;
  label: string;
  /** A PNG data URI of the display raster (dw × dh pixels). */
  href: string;
  visible: boolean;
}

export interface MapMarker {
  key: string;
  kind: MarkerKind;
  /** Plot coordinates (grid units from the top-left corner). */
  u: number;
  v: number;
  angle?: number;
  label?: string;
  title: string;
}

export interface MapShape {
  key: string;
  /** SVG path data in plot coordinates. */
  d: string;
  title: string;
}

export interface LegendRamp {
  label: string;
  ramp: Ramp;
  lo: number;
  hi: number;
}

export interface MapSpec {
  id: string;
  title: string;
  desc: string;
  frame: Frame;
  layers: RasterLayer[];
  contours?: ContourSet | null;
  contourUnit?: string;
  outlines?: MapShape[];
  paths?: MapShape[];
  markers: MapMarker[];
  /** Marker kinds to explain in the legend, with counts. */
  kinds: { kind: MarkerKind; count: number; name?: string }[];
  ramps: LegendRamp[];
  notes: string[];
  axes: { xLabel: string; yLabel: string };
  /** Extra legend entries for line features. */
  lineKeys?: { label: string; kind: 'outline' | 'path' }[];
}

export interface MapGeometry {
  /** Figure size. */
  fw: number;
  fh: number;
  /** Plot area inside the figure. */
  ml: number;
  mt: number;
  pw: number;
  ph: number;
  /** Figure pixels per plot unit at the initial (whole-grid) view. */
  k: number;
}

export const MARKER_RADIUS = 6;

/** Plot area for a width × height grid: the largest box of that aspect inside maxW × maxH. */
export function mapGeometry(width: number, height: number, legendHeight: number, maxW = 860, maxH = 620): MapGeometry {
  const k = Math.min(maxW / width, maxH / height);
  const pw = width * k, ph = height * k;
  const ml = 92, mt = 10, mb = 46;
  return { fw: Math.ceil(ml + Math.max(pw, 560) + 16), fh: Math.ceil(mt + ph + mb + legendHeight), ml, mt, pw, ph, k };
}

/** Figure coordinates of a plot point at the initial view: the affine map used for every marker. */
export function plotToFigure(g: MapGeometry, u: number, v: number): [number, number] {
  return [g.ml + u * g.k, g.mt + v * g.k];
}

/** Axis ticks for the current view [u0, u1] × [v0, v1] of the plot: map coordinates on north-up grids, else columns/rows. */
export function axisTicks(frame: Frame, u0: number, u1: number, v0: number, v1: number): { x: [number, string][]; y: [number, string][] } {
  const t = frame.transform;
  if (northUp(t)) {
    const xa = t[0] + u0 * t[1], xb = t[0] + u1 * t[1];
    const ya = t[3] + v0 * t[5], yb = t[3] + v1 * t[5];
    const digits = 8;
    return {
      x: ticks(Math.min(xa, xb), Math.max(xa, xb), 6).map((X) => [(X - t[0]) / t[1], fmtNum(X, digits)]),
      y: ticks(Math.min(ya, yb), Math.max(ya, yb), 6).map((Y) => [(Y - t[3]) / t[5], fmtNum(Y, digits)]),
    };
  }
  return {
    x: ticks(u0, u1, 6).map((c) => [c, fmtNum(c)]),
    y: ticks(v0, v1, 6).map((r) => [r, fmtNum(r)]),
  };
}

function axesSvg(spec: MapSpec, g: MapGeometry): string {
  const { frame } = spec;
  const tk = axisTicks(frame, 0, frame.width, 0, frame.height);
  const parts: string[] = [];
  const yb = g.mt + g.ph;
  for (const [u, label] of tk.x) {
    const x = g.ml + u * g.k;
    if (x < g.ml - 0.5 || x > g.ml + g.pw + 0.5) continue;
    parts.push(`<line class="tick" x1="${n(x)}" y1="${n(yb)}" x2="${n(x)}" y2="${n(yb + 5)}"/><text class="tick" x="${n(x)}" y="${n(yb + 18)}" text-anchor="middle" stroke="none">${esc(label)}</text>`);
  }
  for (const [v, label] of tk.y) {
    const y = g.mt + v * g.k;
    if (y < g.mt - 0.5 || y > yb + 0.5) continue;
    parts.push(`<line class="tick" x1="${n(g.ml - 5)}" y1="${n(y)}" x2="${n(g.ml)}" y2="${n(y)}"/><text class="tick" x="${n(g.ml - 8)}" y="${n(y + 4)}" text-anchor="end" stroke="none">${esc(label)}</text>`);
  }
  parts.push(`<text x="${n(g.ml + g.pw / 2)}" y="${n(yb + 36)}" text-anchor="middle" stroke="none">${esc(spec.axes.xLabel)}</text>`);
  parts.push(`<text transform="translate(16 ${n(g.mt + g.ph / 2)}) rotate(-90)" text-anchor="middle" stroke="none">${esc(spec.axes.yLabel)}</text>`);
  return `<g class="axes" id="${spec.id}-axes" font-size="12" fill="${THEME.text}" stroke="${THEME.text}" stroke-width="1">${parts.join('')}</g>`;
}

/** A horizontal colour bar with ticks; returns its SVG and height. */
export function colourBar(r: LegendRamp, x: number, y: number, w = 220): string {
  const stops: string[] = [];
  for (let k = 0; k <= 10; k++) stops.push(`<stop offset="${k * 10}%" stop-color="${r.ramp.hex(k / 10)}"/>`);
  const gid = `grad-${r.ramp.name}-${Math.round(r.ramp.lo * 100)}-${Math.round(r.ramp.hi * 100)}-${Math.round(x)}-${Math.round(y)}`;
  const tk = ticks(r.lo, r.hi, 4).filter((v) => v >= r.lo && v <= r.hi);
  const span = r.hi - r.lo || 1;
  const tparts = tk.map((v) => {
    const tx = x + ((v - r.lo) / span) * w;
    return `<line x1="${n(tx)}" y1="${n(y + 12)}" x2="${n(tx)}" y2="${n(y + 16)}" stroke="${THEME.text}"/><text x="${n(tx)}" y="${n(y + 28)}" text-anchor="middle">${esc(fmtNum(v, 6))}</text>`;
  }).join('');
  return `<defs><linearGradient id="${gid}">${stops.join('')}</linearGradient></defs>`
    + `<text x="${n(x)}" y="${n(y - 4)}" font-weight="600">${esc(r.label)}</text>`
    + `<rect x="${n(x)}" y="${n(y)}" width="${w}" height="12" fill="url(#${gid})" stroke="${THEME.text}" stroke-width="0.5"/>${tparts}`;
}

function legendSvg(spec: MapSpec, g: MapGeometry): string {
  const x0 = g.ml, y0 = g.mt + g.ph + 62;
  const parts: string[] = [];
  spec.ramps.forEach((r, i) => parts.push(colourBar(r, x0 + i * 250, y0)));
  // marker key
  let kx = x0 + Math.max(1, spec.ramps.length) * 250;
  let ky = y0 - 4;
  for (const { kind, count, name } of spec.kinds) {
    parts.push(`<g transform="translate(${n(kind === 'pour' ? kx + 2 : kx + 7)} ${n(ky)})"><path d="${shapePath(kind, kind === 'pour' ? 6.5 : MARKER_RADIUS)}" fill="${MARKER_FILL[kind]}" stroke="${THEME.markerStroke}" stroke-width="1"/></g>`
      + `<text x="${n(kx + 18)}" y="${n(ky + 4)}">${esc(`${name ?? MARKER_NAMES[kind]} (${count})`)}</text>`);
    ky += 17;
    if (ky > y0 + 40) { ky = y0 - 4; kx += 150; }
  }
  for (const lk of spec.lineKeys ?? []) {
    const stroke = lk.kind === 'outline' ? `stroke="${THEME.outline}" stroke-width="2"` : `stroke="${THEME.pathCasing}" stroke-width="3"`;
    parts.push(`<line x1="${n(kx)}" y1="${n(ky)}" x2="${n(kx + 14)}" y2="${n(ky)}" ${stroke}/>`
      + (lk.kind === 'path' ? `<line x1="${n(kx)}" y1="${n(ky)}" x2="${n(kx + 14)}" y2="${n(ky)}" stroke="${THEME.path}" stroke-width="1.5"/>` : '')
      + `<text x="${n(kx + 18)}" y="${n(ky + 4)}">${esc(lk.label)}</text>`);
    ky += 17;
    if (ky > y0 + 40) { ky = y0 - 4; kx += 150; }
  }
  let ny = y0 + 46;
  for (const note of spec.notes) {
    parts.push(`<text x="${n(x0)}" y="${n(ny)}" fill="${THEME.muted}">${esc(note)}</text>`);
    ny += 16;
  }
  return `<g class="legend" font-size="13" fill="${THEME.text}">${parts.join('')}</g>`;
}

export function legendHeight(spec: Pick<MapSpec, 'notes'>): number {
  return 62 + 46 + spec.notes.length * 16;
}

/** The map as an SVG document fragment (an <svg> element, usable inline and standalone). */
export function mapSvg(spec: MapSpec): { svg: string; geometry: MapGeometry } {
  const { frame } = spec;
  const g = mapGeometry(frame.width, frame.height, legendHeight(spec));
  const s = 1 / g.k; // plot units per figure pixel
  const W = frame.width, H = frame.height;
  const iw = frame.dw * frame.factor, ih = frame.dh * frame.factor;
  const parts: string[] = [];
  parts.push(`<svg xmlns="http://www.w3.org/2000/svg" class="fig fig-map" id="${spec.id}" viewBox="0 0 ${g.fw} ${g.fh}" width="${g.fw}" height="${g.fh}" role="img" aria-labelledby="${spec.id}-title ${spec.id}-desc" font-family="${esc(FONT)}">`);
  parts.push(titleDesc(spec.id, spec.title, spec.desc));
  parts.push(`<rect width="${g.fw}" height="${g.fh}" fill="${THEME.panel}"/>`);
  parts.push(`<svg class="plot" id="${spec.id}-plot" x="${n(g.ml)}" y="${n(g.mt)}" width="${n(g.pw)}" height="${n(g.ph)}" viewBox="0 0 ${W} ${H}" preserveAspectRatio="none" overflow="hidden">`);
  parts.push(`<rect width="${W}" height="${H}" fill="${THEME.nodata}"/>`);
  for (const L of spec.layers) {
    parts.push(`<g class="layer" data-layer="${esc(L.id)}"${L.visible ? '' : ' display="none"'}><image href="${L.href}" x="0" y="0" width="${iw}" height="${ih}" preserveAspectRatio="none"/></g>`);
  }
  if (spec.contours && spec.contours.lines.length) {
    const c = spec.contours;
    const lines = c.lines.map((l) => `<path class="ct${l.index ? ' ct-index' : ''}" data-level="${l.level}" d="${l.d}"${l.index ? ` stroke-width="${n(1.1 * s, 5)}" stroke-opacity="0.75"` : ''}><title>${esc(`contour ${fmtNum(l.level, 8)}${spec.contourUnit ? ' ' + spec.contourUnit : ''}`)}</title></path>`);
    parts.push(`<g class="layer contours" data-layer="contours" fill="none" stroke="${THEME.contour}" stroke-opacity="0.45" stroke-width="${n(0.6 * s, 5)}" stroke-linejoin="round">${lines.join('')}</g>`);
  }
  if (spec.outlines && spec.outlines.length) {
    const o = spec.outlines.map((x) => `<path class="ol" data-k="${esc(x.key)}" d="${x.d}"><title>${esc(x.title)}</title></path>`);
    parts.push(`<g class="layer outlines" data-layer="outlines" fill="none" stroke="${THEME.outline}" stroke-width="${n(1.6 * s, 5)}" stroke-linejoin="round">${o.join('')}</g>`);
  }
  if (spec.paths && spec.paths.length) {
    const p = spec.paths.map((x) => `<g class="pth" data-k="${esc(x.key)}"><title>${esc(x.title)}</title><path class="pth-casing" d="${x.d}" stroke="${THEME.pathCasing}" stroke-width="${n(4 * s, 5)}"/><path class="pth-line" d="${x.d}" stroke="${THEME.path}" stroke-width="${n(2 * s, 5)}"/></g>`);
    parts.push(`<g class="layer paths" data-layer="paths" fill="none" stroke-linejoin="round" stroke-linecap="round">${p.join('')}</g>`);
  }
  const mk = spec.markers.map((m) => marker({ key: m.key, kind: m.kind, x: m.u, y: m.v, scale: s, radius: MARKER_RADIUS, angle: m.angle, title: m.title, label: m.label }));
  parts.push(`<g class="layer markers" data-layer="markers">${mk.join('')}</g>`);
  parts.push('</svg>');
  parts.push(`<rect class="plot-frame" x="${n(g.ml)}" y="${n(g.mt)}" width="${n(g.pw)}" height="${n(g.ph)}" fill="none" stroke="${THEME.text}" stroke-width="1"/>`);
  parts.push(axesSvg(spec, g));
  parts.push(legendSvg(spec, g));
  parts.push('</svg>');
  return { svg: parts.join(''), geometry: g };
}
