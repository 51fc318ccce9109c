/**
 * The energy landscape as an SVG figure (our own design): filled contour bands (marching squares) on a
 * ramp from deep blue (low) to brick red (high), minima as open discs, transition states as red
 * diamonds, minimum-energy paths as dark lines with a white halo, a colour bar with the energy
 * levels, axes in the input's coordinates. Large grids are block-averaged to at most ~400 cells a
 * side for drawing; scattered samples are drawn from their triangulation (linear on each triangle)
 * resampled on a raster.
 */
import { fillRings, paddedRaster } from './figures/isolines.js';
import type { BarriersResult } from '../chem/barriers.js';
import type { BarriersReport } from '../report/barriers.js';
import type { Grid } from '../surface/grid.js';
import type { Mesh } from '../surface/mesh.js';
import { esc, px, label, ticks, rampColour, INK, MINIMUM_FILL, SADDLE_FILL, FONT, unitLabel } from './svg.js';

interface Raster {
  w: number;
  h: number;
  values: Float64Array;
  /** affine map of raster corner coordinates (u, v) to map coordinates */
  t: [number, number, number, number, number, number];
}

const MAX_SIDE = 400;

function gridRaster(g: Grid, factor: number): Raster {
  const b = Math.max(1, Math.ceil(Math.max(g.width, g.height) / MAX_SIDE));
  const w = Math.ceil(g.width / b), h = Math.ceil(g.height / b);
  const values = new Float64Array(w * h);
  for (let r = 0; r < h; r++) {
    for (let c = 0; c < w; c++) {
      let s = 0, n = 0;
      for (let rr = r * b; rr < Math.min(g.height, (r + 1) * b); rr++) {
        for (let cc = c * b; cc < Math.min(g.width, (c + 1) * b); cc++) {
          const v = g.values[rr * g.width + cc];
          if (v === v) { s += v; n++; }
        }
      }
      values[r * w + c] = n ? (s / n) * factor : NaN;
    }
  }
  const t = g.transform;
  // a raster cell spans b source cells (the last one may be partial; drawing tolerates that)
  return { w, h, values, t: [t[0], t[1] * b, t[2] * b, t[3], t[4] * b, t[5] * b] };
}

function meshRaster(m: Mesh, factor: number): Raster {
  let x0 = Infinity, x1 = -Infinity, y0 = Infinity, y1 = -Infinity;
  for (let i = 0; i < m.size; i++) {
    x0 = Math.min(x0, m.x[i]); x1 = Math.max(x1, m.x[i]);
    y0 = Math.min(y0, m.y[i]); y1 = Math.max(y1, m.y[i]);
  }
  const side = 300;
  const cell = Math.max(x1 - x0, y1 - y0) / side;
  const w = Math.max(2, Math.ceil((x1 - x0) / cell)), h = Math.max(2, Math.ceil((y1 - y0) / cell));
  const values = new Float64Array(w * h).fill(NaN);
  const tri = m.triangles;
  for (let k = 0; k < tri.length; k += 3) {
    const a = tri[k], b = tri[k + 1], c = tri[k + 2];
    const ax = m.x[a], ay = m.y[a], bx = m.x[b], by = m.y[b], cx = m.x[c], cy = m.y[c];
    const det = (by - cy) * (ax - cx) + (cx - bx) * (ay - cy);
    if (det === 0) continue;
    const c0 = Math.max(0, Math.floor((Math.min(ax, bx, cx) - x0) / cell - 0.5));
    const c1 = Math.min(w - 1, Math.ceil((Math.max(ax, bx, cx) - x0) / cell - 0.5));
    const r0 = Math.max(0, Math.floor((y1 - Math.max(ay, by, cy)) / cell - 0.5));
    const r1 = Math.min(h - 1, Math.ceil((y1 - Math.min(ay, by, cy)) / cell - 0.5));
    for (let r = r0; r <= r1; r++) {
      const py = y1 - (r + 0.5) * cell;
      for (let cc = c0; cc <= c1; cc++) {
        const pxv = x0 + (cc + 0.5) * cell;
        const l1 = ((by - cy) * (pxv - cx) + (cx - bx) * (py - cy)) / det;
        const l2 = ((cy - ay) * (pxv - cx) + (ax - cx) * (py - cy)) / det;
        const l3 = 1 - l1 - l2;
        if (l1 < -1e-12 || l2 < -1e-12 || l3 < -1e-12) continue;
        values[r * w + cc] = (l1 * m.values[a] + l2 * m.values[b] + l3 * m.values[c]) * factor;
      }
    }
  }
  return { w, h, values, t: [x0, cell, 0, y1, 0, -cell] };
}

export function landscapeSvg(result: BarriersResult, report: BarriersReport): string {
  const f = report.units.factor;
  const unit = report.units.output;
  const ras = result.surface.kind === 'grid' ? gridRaster(result.surface, f) : meshRaster(result.surface, f);
  const t = ras.t;
  const toMap = (u: number, v: number): [number, number] => [t[0] + u * t[1] + v * t[2], t[3] + u * t[4] + v * t[5]];
  const corners = [toMap(0, 0), toMap(ras.w, 0), toMap(0, ras.h), toMap(ras.w, ras.h)];
  const xmin = Math.min(...corners.map((c) => c[0])), xmax = Math.max(...corners.map((c) => c[0]));
  const ymin = Math.min(...corners.map((c) => c[1])), ymax = Math.max(...corners.map((c) => c[1]));

  // plot box with equal scales unless the aspect is extreme
  const long = 620;
  let aspect = (ymax - ymin) / (xmax - xmin);
  if (!(aspect > 0) || !Number.isFinite(aspect)) aspect = 1;
  aspect = Math.min(3, Math.max(1 / 3, aspect));
  const PW = aspect <= 1 ? long : long / aspect, PH = aspect <= 1 ? long * aspect : long;
  const L = 64, T = 36, Rm = 110, B = 52;
  const W = Math.round(L + PW + Rm), H = Math.round(T + PH + B);
  const sx = (x: number) => L + ((x - xmin) / (xmax - xmin)) * PW;
  const sy = (y: number) => T + ((ymax - y) / (ymax - ymin)) * PH;

  // contour levels from the lowest value to a little above the highest transition state; the top
  // band holds everything above that
  let lo = Infinity, hi = -Infinity;
  for (const v of ras.values) if (v === v) { lo = Math.min(lo, v); hi = Math.max(hi, v); }
  const tsTop = report.transitionStates.reduce((a, s) => Math.max(a, s.refined?.energy ?? s.energy), -Infinity);
  const minE = report.minima.reduce((a, m) => Math.min(a, m.refined?.energy ?? m.energy), lo);
  let cap = hi;
  if (report.transitionStates.length) cap = Math.min(hi, tsTop + 0.5 * (tsTop - minE));
  if (!(cap > lo)) cap = hi > lo ? hi : lo + 1;
  // round levels (1, 2 or 5 × 10^k apart), the first at the lowest value so every sample is painted
  const levels = [lo, ...ticks(lo, cap, 20).filter((v) => v > lo)];
  const nLevels = levels.length;
  const colourOf = (k: number) => rampColour(nLevels === 1 ? 0 : k / (nLevels - 1));

  const out: string[] = [];
  out.push(`<svg xmlns="http://www.w3.org/2000/svg" width="${W}" height="${H}" viewBox="0 0 ${W} ${H}" ${FONT} font-size="12">`);
  out.push(`<title>Energy landscape${esc(unitLabel(unit))}</title>`);
  out.push(`<rect width="${W}" height="${H}" fill="#ffffff"/>`);
  out.push(`<defs><clipPath id="plot"><rect x="${px(L)}" y="${px(T)}" width="${px(PW)}" height="${px(PH)}"/></clipPath></defs>`);
  out.push(`<rect x="${px(L)}" y="${px(T)}" width="${px(PW)}" height="${px(PH)}" fill="#f3f4f6"/>`);

  // filled bands: each level's region {E ≥ level} painted over the previous one
  // (rings traced on typed arrays, isolines.ts: with the even-odd rule holes need no sorting into their polygons)
  const padded = paddedRaster(ras.values, ras.w, ras.h);
  levels.forEach((level, k) => {
    const iso = fillRings(padded, level);
    const parts: string[] = [];
    for (let q = 0; q < iso.lines; q++) {
      let d = '';
      for (let i = iso.start[q]; i < iso.start[q + 1]; i++) {
        const [x, y] = toMap(iso.xy[2 * i], iso.xy[2 * i + 1]);
        d += `${d ? 'L' : 'M'}${px(sx(x))} ${px(sy(y))}`;
      }
      parts.push(d + 'Z');
    }
    if (parts.length) out.push(`<path d="${parts.join('')}" fill="${colourOf(k)}" fill-rule="evenodd"/>`);
  });
  out.push('</g>');

  // minimum-energy paths, split where they cross a periodic seam
  out.push(`<g clip-path="url(#plot)" fill="none" stroke-linejoin="round" stroke-linecap="round">`);
  for (const ts of result.transitionStates) {
    const p = ts.path;
    if (!p || p.images.length < 2) continue;
    let d = '';
    let prev: [number, number] | null = null;
    for (const q of p.images) {
      const [wx, wy] = result.field.wrap(q.x, q.y);
      const jump = prev !== null && (Math.abs(wx - prev[0]) > (xmax - xmin) / 2 || Math.abs(wy - prev[1]) > (ymax - ymin) / 2);
      d += `${prev === null || jump ? 'M' : 'L'}${px(sx(wx))} ${px(sy(wy))}`;
      prev = [wx, wy];
    }
    out.push(`<path d="${d}" stroke="#ffffff" stroke-width="4" stroke-opacity="0.9"/>`);
    out.push(`<path d="${d}" stroke="${INK}" stroke-width="1.6"/>`);
  }
  out.push('</g>');

  // critical points
  const halo = 'paint-order="stroke" stroke="#ffffff" stroke-width="3" stroke-linejoin="round"';
  out.push('<g>');
  for (const m of report.minima) {
    const x = sx(m.refined?.x ?? m.x), y = sy(m.refined?.y ?? m.y);
    out.push(`<circle cx="${px(x)}" cy="${px(y)}" r="5" fill="${MINIMUM_FILL}" stroke="${INK}" stroke-width="2"/>`);
    out.push(`<text x="${px(x + 8)}" y="${px(y + 4)}" fill="${INK}" ${halo}>${esc(m.id)}</text>`);
  }
  for (const s of report.transitionStates) {
    const x = sx(s.refined?.x ?? s.x), y = sy(s.refined?.y ?? s.y), r = 6;
    out.push(`<path d="M${px(x)} ${px(y - r)}L${px(x + r)} ${px(y)}L${px(x)} ${px(y + r)}L${px(x - r)} ${px(y)}Z" fill="${SADDLE_FILL}" stroke="#ffffff" stroke-width="1.2"/>`);
    out.push(`<text x="${px(x + 8)}" y="${px(y - 6)}" fill="${SADDLE_FILL}" font-size="11" ${halo}>${esc(s.id)}</text>`);
  }
  out.push('</g>');

  // frame and axes
  out.push(`<rect x="${px(L)}" y="${px(T)}" width="${px(PW)}" height="${px(PH)}" fill="none" stroke="${INK}" stroke-width="1"/>`);
  out.push(`<g fill="${INK}" font-size="11">`);
  for (const v of ticks(xmin, xmax, 6)) {
    const x = px(sx(v));
    out.push(`<line x1="${x}" x2="${x}" y1="${px(T + PH)}" y2="${px(T + PH + 5)}" stroke="${INK}"/><text x="${x}" y="${px(T + PH + 18)}" text-anchor="middle">${esc(label(v))}</text>`);
  }
  for (const v of ticks(ymin, ymax, 6)) {
    const y = px(sy(v));
    out.push(`<line x1="${px(L - 5)}" x2="${px(L)}" y1="${y}" y2="${y}" stroke="${INK}"/><text x="${px(L - 8)}" y="${y}" text-anchor="end" dominant-baseline="middle">${esc(label(v))}</text>`);
  }
  out.push(`<text x="${px(L + PW / 2)}" y="${px(H - 14)}" text-anchor="middle" font-size="12">x</text>`);
  out.push(`<text transform="translate(16 ${px(T + PH / 2)}) rotate(-90)" text-anchor="middle" font-size="12">y</text>`);
  out.push('</g>');

  // colour bar
  const bx = L + PW + 28, bw = 16, bh = PH;
  out.push('<g>');
  for (let k = 0; k < nLevels; k++) {
    const y0 = T + bh - ((k + 1) / nLevels) * bh;
    out.push(`<rect x="${px(bx)}" y="${px(y0)}" width="${bw}" height="${px(bh / nLevels + 0.5)}" fill="${colourOf(k)}"/>`);
  }
  out.push(`<rect x="${px(bx)}" y="${px(T)}" width="${bw}" height="${px(bh)}" fill="none" stroke="${INK}" stroke-width="0.8"/>`);
  const step = Math.max(1, Math.ceil(nLevels / 8));
  for (let k = step === 1 ? 0 : 1; k < nLevels; k += step) {
    const y = px(T + bh - (k / nLevels) * bh);
    out.push(`<text x="${px(bx + bw + 5)}" y="${y}" dominant-baseline="middle" font-size="10" fill="${INK}">${esc(label(levels[k]))}</text>`);
  }
  out.push(`<text transform="translate(${px(bx + bw + 62)} ${px(T + bh / 2)}) rotate(-90)" text-anchor="middle" font-size="11" fill="${INK}">${esc(`energy${unitLabel(unit)}`)}</text>`);
  out.push('</g>');
  out.push(`<text x="${L}" y="22" fill="${INK}" font-size="13" font-weight="600">Energy landscape</text>`);
  out.push(`<text x="${px(L + PW)}" y="22" text-anchor="end" fill="#5b6b78" font-size="11">○ minimum   ◆ transition state   — minimum-energy path</text>`);
  out.push('</svg>');
  return out.join('\n') + '\n';
}
