/**
 * Figures of a 3-D energy landscape (our own design, the 2-D figures' colours):
 *
 *  - slices3Svg: one panel per state (minima, then transition states; at most MAX_PANELS), each the
 *    x–y plane of the lattice layer nearest to the state's z, shaded on the energy ramp (cells
 *    block-averaged to at most ~90 a side), with the states that lie within half a spacing of that
 *    plane marked and every minimum-energy path projected onto x–y as a thin line. The panel's
 *    title names its state and layer.
 *  - profiles3Svg: the energy along each minimum-energy path against arc length, the transition
 *    state's energy marked on each.
 */
import type { Barriers3Result } from '../chem/barriers3.js';
import type { Barriers3Report } from '../report/barriers3.js';
import { esc, px, label, ticks, rampColour, INK, FAINT, MINIMUM_FILL, SADDLE_FILL, FONT, unitLabel } from './svg.js';

/** At most this many state panels in the slice figure. */
export const MAX_PANELS = 12;
const MAX_SIDE = 90;

export interface SliceChoice {
  id: string;
  /** Lattice layer (z index) and its z. */
  layer: number;
  z: number;
}

/** The layers the slice figure shows: for each state (minima first, at most MAX_PANELS), the layer nearest its z. */
export function sliceChoices(result: Barriers3Result): SliceChoice[] {
  const g = result.surface;
  const states = [...result.minima, ...result.transitionStates].slice(0, MAX_PANELS);
  return states.map((s) => {
    let k = Math.round((s.bestZ - g.origin[2]) / g.spacing[2]);
    k = result.wrap[2] ? ((k % g.nz) + g.nz) % g.nz : Math.min(g.nz - 1, Math.max(0, k));
    return { id: s.id, layer: k, z: g.z(k) };
  });
}

export function slices3Svg(result: Barriers3Result, report: Barriers3Report): string {
  const g = result.surface, f = report.units.factor, unit = report.units.output;
  const choices = sliceChoices(result);
  const b = Math.max(1, Math.ceil(Math.max(g.nx, g.ny) / MAX_SIDE));
  const w = Math.ceil(g.nx / b), h = Math.ceil(g.ny / b);
  // colour range: the lowest value to a little above the highest transition state (as the 2-D figure)
  let lo = Infinity, hi = -Infinity;
  for (const v of g.values) if (v === v) { lo = Math.min(lo, v * f); hi = Math.max(hi, v * f); }
  const tsTop = report.transitionStates.reduce((a, s) => Math.max(a, s.refined?.energy ?? s.energy), -Infinity);
  let cap = hi;
  if (report.transitionStates.length) cap = Math.min(hi, tsTop + 0.5 * (tsTop - lo));
  if (!(cap > lo)) cap = lo + 1;

  const xmin = g.origin[0], xmax = g.x(g.nx - 1), ymin = g.origin[1], ymax = g.y(g.ny - 1);
  const spanX = xmax - xmin || 1, spanY = ymax - ymin || 1;
  const P = 220;
  const aspect = Math.min(3, Math.max(1 / 3, spanY / spanX));
  const PW = aspect <= 1 ? P : P / aspect, PH = aspect <= 1 ? P * aspect : P;
  const cols = Math.min(4, Math.max(1, choices.length));
  const rows = Math.max(1, Math.ceil(choices.length / cols));
  const CW = PW + 70, CH = PH + 62, L = 24, T = 40, BAR = 90;
  const W = Math.round(L + cols * CW + BAR), H = Math.round(T + rows * CH + 10);
  const out: string[] = [];
  out.push(`<svg xmlns="http://www.w3.org/2000/svg" width="${W}" height="${H}" viewBox="0 0 ${W} ${H}" ${FONT} font-size="11">`);
  out.push(`<title>Energy landscape: x–y slices through each state${esc(unitLabel(unit))}</title>`);
  out.push(`<rect width="${W}" height="${H}" fill="#ffffff"/>`);
  out.push(`<text x="${L}" y="22" fill="${INK}" font-size="13" font-weight="600">x–y slices through each state (the lattice layer nearest its z)</text>`);
  const halo = 'paint-order="stroke" stroke="#ffffff" stroke-width="3" stroke-linejoin="round"';
  const dz = g.spacing[2];
  choices.forEach((c, q) => {
    const ox = L + 40 + (q % cols) * CW, oy = T + 18 + Math.floor(q / cols) * CH;
    const sx = (x: number) => ox + ((x - xmin) / spanX) * PW;
    const sy = (y: number) => oy + ((ymax - y) / spanY) * PH;
    out.push(`<g>`);
    out.push(`<rect x="${px(ox)}" y="${px(oy)}" width="${px(PW)}" height="${px(PH)}" fill="${FAINT}"/>`);
    const cw = PW / w, ch = PH / h;
    for (let r = 0; r < h; r++) {
      for (let cc = 0; cc < w; cc++) {
        let s = 0, n = 0;
        for (let j = r * b; j < Math.min(g.ny, (r + 1) * b); j++) {
          for (let i = cc * b; i < Math.min(g.nx, (cc + 1) * b); i++) {
            const v = g.values[g.index(i, j, c.layer)];
            if (v === v) { s += v; n++; }
          }
        }
        if (!n) continue;
        const t = ((s / n) * f - lo) / (cap - lo);
        // rows drawn top (largest y) down
        out.push(`<rect x="${px(ox + cc * cw)}" y="${px(oy + PH - (r + 1) * ch)}" width="${px(cw + 0.4)}" height="${px(ch + 0.4)}" fill="${rampColour(t)}"/>`);
      }
    }
    // paths projected onto x–y
    for (const t of result.transitionStates) {
      const p = t.path;
      if (!p || p.x.length < 2) continue;
      let d = '', prev: [number, number] | null = null;
      for (let k = 0; k < p.x.length; k++) {
        const [wx, wy] = result.field.wrapPoint(p.x[k], p.y[k], p.z[k]);
        const jump = prev !== null && (Math.abs(wx - prev[0]) > spanX / 2 || Math.abs(wy - prev[1]) > spanY / 2);
        d += `${prev === null || jump ? 'M' : 'L'}${px(sx(wx))} ${px(sy(wy))}`;
        prev = [wx, wy];
      }
      out.push(`<path d="${d}" fill="none" stroke="${INK}" stroke-width="1" stroke-opacity="0.6"/>`);
    }
    // states within half a spacing of this layer's plane
    for (const m of report.minima) {
      const p = m.refined ?? m;
      if (Math.abs(result.field.delta(0, 0, c.z, 0, 0, p.z)[2]) > dz / 2 && m.id !== c.id) continue;
      out.push(`<circle cx="${px(sx(p.x))}" cy="${px(sy(p.y))}" r="${m.id === c.id ? 5 : 3.5}" fill="${MINIMUM_FILL}" stroke="${INK}" stroke-width="${m.id === c.id ? 2 : 1.2}"/>`);
      out.push(`<text x="${px(sx(p.x) + 7)}" y="${px(sy(p.y) + 4)}" fill="${INK}" ${halo}>${esc(m.id)}</text>`);
    }
    for (const s of report.transitionStates) {
      const p = s.refined ?? s;
      if (Math.abs(result.field.delta(0, 0, c.z, 0, 0, p.z)[2]) > dz / 2 && s.id !== c.id) continue;
      const x = sx(p.x), y = sy(p.y), r = s.id === c.id ? 6 : 4.5;
      out.push(`<path d="M${px(x)} ${px(y - r)}L${px(x + r)} ${px(y)}L${px(x)} ${px(y + r)}L${px(x - r)} ${px(y)}Z" fill="${SADDLE_FILL}" stroke="#ffffff" stroke-width="1.2"/>`);
      out.push(`<text x="${px(x + 7)}" y="${px(y - 5)}" fill="${SADDLE_FILL}" ${halo}>${esc(s.id)}</text>`);
    }
    out.push(`<rect x="${px(ox)}" y="${px(oy)}" width="${px(PW)}" height="${px(PH)}" fill="none" stroke="${INK}" stroke-width="0.8"/>`);
    out.push(`<text x="${px(ox)}" y="${px(oy - 6)}" fill="${INK}" font-weight="600">${esc(c.id)}<tspan font-weight="400"> · z = ${esc(label(c.z))} (layer ${c.layer})</tspan></text>`);
    for (const v of ticks(xmin, xmax, 3)) out.push(`<text x="${px(sx(v))}" y="${px(oy + PH + 13)}" text-anchor="middle" fill="${INK}" font-size="9">${esc(label(v))}</text>`);
    for (const v of ticks(ymin, ymax, 3)) out.push(`<text x="${px(ox - 4)}" y="${px(sy(v))}" text-anchor="end" dominant-baseline="middle" fill="${INK}" font-size="9">${esc(label(v))}</text>`);
    out.push(`<text x="${px(ox + PW / 2)}" y="${px(oy + PH + 26)}" text-anchor="middle" fill="${INK}" font-size="10">x</text>`);
    out.push(`<text x="${px(ox - 30)}" y="${px(oy + PH / 2)}" text-anchor="middle" fill="${INK}" font-size="10">y</text>`);
    out.push('</g>');
  });
  // colour bar
  const bx = W - BAR + 20, bt = T + 18, bh = Math.min(rows * CH - 40, 300), n = 40;
  for (let k = 0; k < n; k++) out.push(`<rect x="${px(bx)}" y="${px(bt + bh - ((k + 1) / n) * bh)}" width="14" height="${px(bh / n + 0.5)}" fill="${rampColour(k / (n - 1))}"/>`);
  out.push(`<rect x="${px(bx)}" y="${px(bt)}" width="14" height="${px(bh)}" fill="none" stroke="${INK}" stroke-width="0.8"/>`);
  for (const v of ticks(lo, cap, 5)) out.push(`<text x="${px(bx + 19)}" y="${px(bt + bh - ((v - lo) / (cap - lo)) * bh)}" dominant-baseline="middle" font-size="9" fill="${INK}">${esc(label(v))}</text>`);
  out.push(`<text x="${px(bx)}" y="${px(bt - 6)}" font-size="10" fill="${INK}">${esc(`energy${unitLabel(unit)}`)}</text>`);
  out.push('</svg>');
  return out.join('\n') + '\n';
}

export function profiles3Svg(result: Barriers3Result, report: Barriers3Report): string {
  const f = report.units.factor, unit = report.units.output;
  const paths = result.transitionStates.filter((t) => t.path && t.path.x.length > 1);
  const W = 640, H = 380, L = 70, R = 110, T = 36, B = 48;
  let smax = 0, lo = Infinity, hi = -Infinity;
  for (const t of paths) {
    const p = t.path!;
    smax = Math.max(smax, p.length);
    for (const e of p.energy) if (e === e) { lo = Math.min(lo, e * f); hi = Math.max(hi, e * f); }
  }
  if (!(hi > lo)) { lo = Number.isFinite(lo) ? lo - 1 : 0; hi = lo + 2; }
  if (!(smax > 0)) smax = 1;
  const sx = (s: number) => L + (s / smax) * (W - L - R);
  const sy = (e: number) => T + ((hi - e) / (hi - lo)) * (H - T - B);
  const out: string[] = [];
  out.push(`<svg xmlns="http://www.w3.org/2000/svg" width="${W}" height="${H}" viewBox="0 0 ${W} ${H}" ${FONT} font-size="11">`);
  out.push(`<title>Energy along the minimum-energy paths${esc(unitLabel(unit))}</title>`);
  out.push(`<rect width="${W}" height="${H}" fill="#ffffff"/>`);
  out.push(`<text x="${L}" y="22" fill="${INK}" font-size="13" font-weight="600">Energy along the minimum-energy paths</text>`);
  for (const v of ticks(lo, hi, 6)) {
    out.push(`<line x1="${L}" x2="${W - R}" y1="${px(sy(v))}" y2="${px(sy(v))}" stroke="${FAINT}"/>`);
    out.push(`<text x="${L - 6}" y="${px(sy(v))}" text-anchor="end" dominant-baseline="middle" fill="${INK}">${esc(label(v))}</text>`);
  }
  for (const v of ticks(0, smax, 6)) out.push(`<text x="${px(sx(v))}" y="${H - B + 16}" text-anchor="middle" fill="${INK}">${esc(label(v))}</text>`);
  paths.forEach((t, q) => {
    const p = t.path!;
    const colour = rampColour(paths.length === 1 ? 0.15 : (q / (paths.length - 1)) * 0.9);
    let d = '';
    for (let k = 0; k < p.x.length; k++) if (p.energy[k] === p.energy[k]) d += `${d ? 'L' : 'M'}${px(sx(p.s[k]))} ${px(sy(p.energy[k] * f))}`;
    out.push(`<path d="${d}" fill="none" stroke="${colour}" stroke-width="1.8"/>`);
    const mx = sx(p.maximum.s), my = sy(p.maximum.energy * f);
    out.push(`<path d="M${px(mx)} ${px(my - 5)}L${px(mx + 5)} ${px(my)}L${px(mx)} ${px(my + 5)}L${px(mx - 5)} ${px(my)}Z" fill="${SADDLE_FILL}"/>`);
    out.push(`<text x="${W - R + 10}" y="${T + 14 * q + 4}" fill="${colour}" font-weight="600">${esc(`${t.id}: ${p.ends.map((e) => e ?? '?').join('–')}`)}</text>`);
  });
  out.push(`<rect x="${L}" y="${T}" width="${W - L - R}" height="${H - T - B}" fill="none" stroke="${INK}" stroke-width="0.8"/>`);
  out.push(`<text x="${px((L + W - R) / 2)}" y="${H - 12}" text-anchor="middle" fill="${INK}">arc length along the path (x, y, z units)</text>`);
  out.push(`<text transform="translate(16 ${px((T + H - B) / 2)}) rotate(-90)" text-anchor="middle" fill="${INK}">${esc(`energy${unitLabel(unit)}`)}</text>`);
  if (!paths.length) out.push(`<text x="${px((L + W - R) / 2)}" y="${px((T + H - B) / 2)}" text-anchor="middle" fill="${INK}">no minimum-energy path was traced</text>`);
  out.push('</svg>');
  return out.join('\n') + '\n';
}
