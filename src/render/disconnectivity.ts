/**
 * The disconnectivity graph as an SVG figure (our own design): energy on the vertical axis, each
 * minimum a stem rising from its energy, stems joined by a bar at the energy of the transition
 * state where their basins merge, a short stem above the top join. Leaves carry the minimum's id;
 * joins a diamond and the transition state's id. When populations are known the leaf disc's area
 * is proportional to the basin population.
 */
import type { BarriersReport } from '../report/barriers.js';
import { esc, px, label, ticks, INK, FAINT, MINIMUM_FILL, SADDLE_FILL, FONT, unitLabel } from './svg.js';

/** What the figure reads of a report (2-D and 3-D reports alike). */
export type DisconnectivityInput = Pick<BarriersReport, 'disconnectivity' | 'units' | 'thermodynamics'> & {
  minima: readonly { id: string; basin: { population: number | null } }[];
};

export function disconnectivitySvg(report: DisconnectivityInput): string {
  const d = report.disconnectivity;
  const nodes = d.nodes;
  const leaves = nodes.filter((n) => n.children.length === 0);
  const energies = nodes.map((n) => n.energy).filter((e): e is number => e !== null);
  const pop = new Map(report.minima.map((m) => [m.id, m.basin.population]));
  const unit = report.units.output;

  const nLeaves = Math.max(1, leaves.length);
  const W = Math.min(2400, Math.max(520, 90 + 46 * nLeaves));
  const H = 480;
  const L = 78, R = 24, T = 34, B = 46;
  let lo = energies.reduce((a, e) => Math.min(a, e), Infinity), hi = energies.reduce((a, e) => Math.max(a, e), -Infinity);
  if (!(hi > lo)) { lo -= 1; hi += 1; }
  const span = hi - lo;
  const top = hi + 0.08 * span;
  const bottom = lo - 0.04 * span;
  const sy = (e: number) => T + ((top - e) / (top - bottom)) * (H - T - B);
  const maxX = Math.max(1, nLeaves - 1);
  const sx = (x: number) => (nLeaves === 1 ? (L + W - R) / 2 : L + 24 + (x / maxX) * (W - L - R - 48));

  const out: string[] = [];
  out.push(`<svg xmlns="http://www.w3.org/2000/svg" width="${W}" height="${H}" viewBox="0 0 ${W} ${H}" ${FONT} font-size="12">`);
  out.push(`<title>Disconnectivity graph${esc(unitLabel(unit))}</title>`);
  out.push(`<rect width="${W}" height="${H}" fill="#ffffff"/>`);
  // energy axis with light guide lines
  const tk = ticks(bottom, top, 7);
  out.push('<g>');
  for (const t of tk) {
    const y = px(sy(t));
    out.push(`<line x1="${L}" x2="${W - R}" y1="${y}" y2="${y}" stroke="${FAINT}" stroke-width="1"/>`);
    out.push(`<text x="${L - 8}" y="${y}" text-anchor="end" dominant-baseline="middle" fill="${INK}">${esc(label(t))}</text>`);
  }
  out.push(`<line x1="${L}" x2="${L}" y1="${T}" y2="${H - B}" stroke="${INK}" stroke-width="1"/>`);
  const ax = `energy${unitLabel(unit)}`;
  out.push(`<text transform="translate(18 ${px((T + H - B) / 2)}) rotate(-90)" text-anchor="middle" fill="${INK}">${esc(ax)}</text>`);
  out.push('</g>');

  // branches
  out.push(`<g stroke="${INK}" stroke-width="1.8" stroke-linecap="round" fill="none">`);
  for (const n of nodes) {
    if (n.energy === null) continue;
    const x = px(sx(n.x));
    const parent = n.parent === null ? null : nodes[n.parent];
    const upto = parent && parent.energy !== null ? parent.energy : top - 0.02 * span;
    out.push(`<path d="M${x} ${px(sy(n.energy))}V${px(sy(Math.max(upto, n.energy)))}"/>`);
    if (n.children.length > 0) {
      const xs = n.children.map((c) => sx(nodes[c].x));
      out.push(`<path d="M${px(Math.min(...xs))} ${px(sy(n.energy))}H${px(Math.max(...xs))}"/>`);
    }
  }
  out.push('</g>');

  // joins (transition states) and leaves (minima); ids only while they fit
  const labels = nLeaves <= 60;
  out.push('<g>');
  for (const n of nodes) {
    if (n.energy === null) continue;
    const x = sx(n.x), y = sy(n.energy);
    if (n.children.length > 0) {
      const s = 5;
      out.push(`<path d="M${px(x)} ${px(y - s)}L${px(x + s)} ${px(y)}L${px(x)} ${px(y + s)}L${px(x - s)} ${px(y)}Z" fill="${SADDLE_FILL}" stroke="#ffffff" stroke-width="1"/>`);
      if (labels) out.push(`<text x="${px(x + 8)}" y="${px(y - 7)}" font-size="11" fill="${SADDLE_FILL}">${esc(n.ref ?? '')}</text>`);
    } else {
      const p = n.ref ? pop.get(n.ref) : null;
      const r = p === null || p === undefined ? 5 : 3.5 + 9 * Math.sqrt(p);
      out.push(`<circle cx="${px(x)}" cy="${px(y)}" r="${px(r)}" fill="${MINIMUM_FILL}" stroke="${INK}" stroke-width="1.8"/>`);
      if (labels) out.push(`<text x="${px(x)}" y="${px(Math.min(H - B + 30, y + r + 15))}" text-anchor="middle" fill="${INK}">${esc(n.ref ?? 'outside')}</text>`);
    }
  }
  out.push('</g>');
  const caption = pop.size && report.thermodynamics ? `disc area ∝ basin population at ${report.units.temperature} K` : '';
  out.push(`<text x="${L}" y="20" fill="${INK}" font-size="13" font-weight="600">Basin hierarchy</text>`);
  if (caption) out.push(`<text x="${W - R}" y="20" text-anchor="end" fill="#5b6b78" font-size="11">${esc(caption)}</text>`);
  out.push('</svg>');
  return out.join('\n') + '\n';
}
