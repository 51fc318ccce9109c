/**
 * Persistence diagram: birth level across, death level up, the diagonal, and the band below
 * death = birth + threshold shaded and labelled — pairs inside it were dropped by
 * --min-persistence, pairs above it kept. Pit-born pairs (dimension 0) are ▽, peak pairs
 * (dimension 1, pass → peak) △; kept ones filled, dropped ones hollow. Classes that never die are
 * drawn in a strip marked ∞ along the top. When there are too many pairs, the most persistent
 * are drawn one by one and the rest are counted in a grid of cells.
 */
import { marker, MARKER_FILL } from './markers.js';
import { esc, n, titleDesc, wrapText } from './svg.js';
import { Linear, ticks, fmtNum, padded } from './scale.js';
import { THEME } from './theme.js';
import { FONT } from './map.js';

export interface DiagramPoint {
  key?: string;
  dim: 0 | 1;
  birth: number;
  death: number;
  kept: boolean;
  /** Tooltip text (or give PersistenceSpec.titleOf, called only for the points drawn). */
  title?: string;
}

export interface DiagramEssential {
  key?: string;
  dim: 0 | 1;
  birth: number;
  title: string;
}

export interface PersistenceSpec {
  id: string;
  title: string;
  desc: string;
  points: DiagramPoint[];
  essential: DiagramEssential[];
  threshold: number;
  valueLabel: string;
  titleOf?: (p: DiagramPoint) => string;
  /** More pairs, counted in grey cells rather than drawn (birth and death levels). */
  rest?: { birth: ArrayLike<number>; death: ArrayLike<number> };
  /** Kept and dropped counts for the legend when `rest` holds some of them. */
  counts?: { kept: number; dropped: number };
  /** Legend lines under the plot (default: what filled/hollow and the two shapes mean). */
  legend?: string[];
  /** Largest number of pairs drawn one by one. */
  maxPoints?: number;
  notes: string[];
}

export interface DiagramGeometry { fw: number; fh: number; ml: number; mt: number; side: number; lo: number; hi: number }

/** Figure coordinates of (birth, death) in a diagram of the given geometry. */
export function diagramXY(g: DiagramGeometry, birth: number, death: number): [number, number] {
  const x = new Linear(g.lo, g.hi, g.ml, g.ml + g.side), y = new Linear(g.lo, g.hi, g.mt + g.side, g.mt);
  return [x.map(birth), y.map(death)];
}

export function persistenceSvg(spec: PersistenceSpec): { svg: string; drawn: number; binned: number; geometry: DiagramGeometry } {
  const maxPoints = spec.maxPoints ?? 2500;
  const all = spec.points;
  let lo = Infinity, hi = -Infinity;
  for (const p of all) { lo = Math.min(lo, p.birth); hi = Math.max(hi, p.death); }
  for (const e of spec.essential) { lo = Math.min(lo, e.birth); hi = Math.max(hi, e.birth); }
  const restB = spec.rest?.birth ?? [], restD = spec.rest?.death ?? [];
  for (let i = 0; i < restB.length; i++) { if (restB[i] < lo) lo = restB[i]; if (restD[i] > hi) hi = restD[i]; }
  if (!(lo <= hi)) { lo = 0; hi = 1; }
  [lo, hi] = padded(lo, hi, 0.04);
  const strip = spec.essential.length ? 34 : 0;
  const ml = 64, mt = 14 + strip, side = 330, mb = 44;
  const t = spec.threshold;
  const nKept = spec.counts?.kept ?? all.filter((p) => p.kept).length;
  const nDropped = spec.counts?.dropped ?? all.length - nKept;
  const nRest = Math.max(0, all.length - maxPoints) + restB.length;
  const fw = ml + side + 16;
  const noteLines = [
    ...(spec.legend ?? [
      `filled: kept (${nKept}); hollow: dropped (${nDropped})${t > 0 ? `; shaded band: persistence < ${fmtNum(t)}` : ''}`,
      '▽ pit → pass (dimension 0); △ pass → peak (dimension 1)',
    ]),
    ...spec.notes,
    ...(nRest ? [`${Math.min(all.length, maxPoints)} most persistent pairs drawn; ${nRest} more counted in grey cells`] : []),
  ].flatMap((s) => wrapText(s, Math.floor((fw - 24) / 6.6)));
  const fh = mt + side + mb + noteLines.length * 16 + 6;
  const g: DiagramGeometry = { fw, fh, ml, mt, side, lo, hi };
  const X = new Linear(lo, hi, ml, ml + side), Y = new Linear(lo, hi, mt + side, mt);
  const parts: string[] = [];
  parts.push(`<svg xmlns="http://www.w3.org/2000/svg" class="fig fig-persistence" id="${spec.id}" viewBox="0 0 ${fw} ${fh}" width="${fw}" height="${fh}" role="img" aria-labelledby="${spec.id}-title ${spec.id}-desc" font-family="${esc(FONT)}">`);
  parts.push(titleDesc(spec.id, spec.title, spec.desc));
  parts.push(`<rect width="${fw}" height="${fh}" fill="${THEME.panel}"/>`);
  parts.push(`<clipPath id="${spec.id}-clip"><rect x="${ml}" y="${mt}" width="${side}" height="${side}"/></clipPath>`);
  // dropped band: between the diagonal and death = birth + threshold
  if (t > 0) {
    const pts = [[lo, lo], [hi, hi], [hi, hi + t], [lo, lo + t]].map(([b, d]) => `${n(X.map(b))},${n(Y.map(d))}`).join(' ');
    parts.push(`<g clip-path="url(#${spec.id}-clip)"><polygon class="dropped-band" points="${pts}" fill="${THEME.select}" fill-opacity="0.10"/>`
      + `<line class="threshold" x1="${n(X.map(lo))}" y1="${n(Y.map(lo + t))}" x2="${n(X.map(hi))}" y2="${n(Y.map(hi + t))}" stroke="${THEME.select}" stroke-width="1.5" stroke-dasharray="6 4"/></g>`);
  }
  // axes
  const ax: string[] = [];
  for (const v of ticks(lo, hi, 5)) {
    const xx = X.map(v), yy = Y.map(v);
    ax.push(`<line x1="${n(xx)}" y1="${mt + side}" x2="${n(xx)}" y2="${mt + side + 5}"/><text x="${n(xx)}" y="${mt + side + 18}" text-anchor="middle" stroke="none">${esc(fmtNum(v, 6))}</text>`);
    ax.push(`<line x1="${ml - 5}" y1="${n(yy)}" x2="${ml}" y2="${n(yy)}"/><text x="${ml - 8}" y="${n(yy + 4)}" text-anchor="end" stroke="none">${esc(fmtNum(v, 6))}</text>`);
  }
  ax.push(`<rect x="${ml}" y="${mt}" width="${side}" height="${side}" fill="none"/>`);
  ax.push(`<line x1="${ml}" y1="${mt + side}" x2="${ml + side}" y2="${mt}" stroke="${THEME.muted}"/>`);
  ax.push(`<text x="${ml + side / 2}" y="${mt + side + 36}" text-anchor="middle" stroke="none">${esc(`birth: ${spec.valueLabel}`)}</text>`);
  ax.push(`<text transform="translate(14 ${mt + side / 2}) rotate(-90)" text-anchor="middle" stroke="none">${esc(`death: ${spec.valueLabel}`)}</text>`);
  if (strip) {
    ax.push(`<line x1="${ml}" y1="${mt - strip / 2}" x2="${ml + side}" y2="${mt - strip / 2}" stroke="${THEME.border}" stroke-dasharray="3 3"/><text x="${ml - 8}" y="${n(mt - strip / 2 + 4)}" text-anchor="end" stroke="none">∞</text>`);
  }
  parts.push(`<g class="axes" font-size="12" fill="${THEME.text}" stroke="${THEME.text}">${ax.join('')}</g>`);
  // points: the most persistent one by one, the rest binned
  const order = all.map((_, i) => i).sort((a, b) => (all[b].death - all[b].birth) - (all[a].death - all[a].birth));
  const drawn = order.slice(0, maxPoints), rest = order.slice(maxPoints);
  if (rest.length || restB.length) {
    const B = 48, cnt = new Uint32Array(B * B);
    const bin = (b: number, d: number) => {
      const bx = Math.min(B - 1, Math.max(0, Math.floor(((b - lo) / (hi - lo)) * B)));
      const by = Math.min(B - 1, Math.max(0, Math.floor(((d - lo) / (hi - lo)) * B)));
      cnt[by * B + bx]++;
    };
    for (const i of rest) bin(all[i].birth, all[i].death);
    for (let i = 0; i < restB.length; i++) bin(restB[i], restD[i]);
    let cmax = 0;
    for (const c of cnt) if (c > cmax) cmax = c;
    const cells: string[] = [];
    const cw = side / B;
    for (let by = 0; by < B; by++) for (let bx = 0; bx < B; bx++) {
      const c = cnt[by * B + bx];
      if (!c) continue;
      cells.push(`<rect x="${n(ml + bx * cw)}" y="${n(mt + side - (by + 1) * cw)}" width="${n(cw)}" height="${n(cw)}" fill-opacity="${n(0.15 + 0.75 * Math.log1p(c) / Math.log1p(cmax), 3)}"><title>${c} pairs</title></rect>`);
    }
    parts.push(`<g class="binned" fill="${THEME.muted}">${cells.join('')}</g>`);
  }
  const mk: string[] = [];
  // draw dropped first so kept ones sit on top
  const seq = [...drawn].sort((a, b) => Number(all[a].kept) - Number(all[b].kept));
  for (const i of seq) {
    const p = all[i];
    const kind = p.dim === 0 ? 'pit' : 'peak';
    mk.push(marker({
      key: p.key ?? `pair-${i}`, kind, x: X.map(p.birth), y: Y.map(p.death), scale: 1, radius: 4.5, title: p.title ?? spec.titleOf?.(p) ?? '',
      fill: p.kept ? MARKER_FILL[kind] : THEME.panel, extraClass: p.kept ? 'kept' : 'dropped',
    }));
  }
  for (const e of spec.essential) {
    const kind = e.dim === 0 ? 'pit' : 'peak';
    mk.push(marker({ key: e.key ?? 'essential', kind, x: X.map(e.birth), y: mt - strip / 2, scale: 1, radius: 4.5, title: e.title, extraClass: 'kept essential' }));
  }
  parts.push(`<g class="markers">${mk.join('')}</g>`);
  let ny = mt + side + mb + 6;
  parts.push(`<g class="notes" font-size="12">${noteLines.map((s) => { const r = `<text x="16" y="${n(ny)}" fill="${THEME.muted}">${esc(s)}</text>`; ny += 16; return r; }).join('')}</g>`);
  parts.push('</svg>');
  return { svg: parts.join(''), drawn: drawn.length + spec.essential.length, binned: rest.length + restB.length, geometry: g };
}
