/**
 * Feature markers, told apart by shape first (colour only helps): pit ▽ (points down, into the
 * hollow), peak △, pass ◇, pour point ➤ (an arrow from the pour cell toward the cell the water spills into).
 * Shapes are drawn in figure pixels around (0, 0); a halo keeps them readable on any background.
 */
import { esc, n } from './svg.js';
import { THEME } from './theme.js';

export type MarkerKind = 'pit' | 'pass' | 'peak' | 'pour' | 'outside';

/** Unit shapes (radius 1) as SVG path data. */
export const SHAPES: Record<MarkerKind, string> = {
  pit: 'M-1 -0.78L1 -0.78L0 0.95Z',
  peak: 'M-1 0.78L1 0.78L0 -0.95Z',
  pass: 'M0 -1L1 0L0 1L-1 0Z',
  // tail at the pour cell, tip toward where the water goes (two depressions meeting at one pass point apart)
  pour: 'M0.1 -0.85L2 0L0.1 0.85L0.65 0Z',
  outside: 'M-1 -1L1 -1L1 1L-1 1Z',
};

export const MARKER_FILL: Record<MarkerKind, string> = {
  pit: THEME.pit, pass: THEME.pass, peak: THEME.peak, pour: THEME.pour, outside: THEME.outside,
};

export const MARKER_NAMES: Record<MarkerKind, string> = {
  pit: 'pit', pass: 'pass', peak: 'peak', pour: 'pour point', outside: 'outside (−∞)',
};

/** Path data of a shape scaled to radius r (figure pixels), rotated by `angle` degrees. */
export function shapePath(kind: MarkerKind, r: number, angle = 0): string {
  const a = (angle * Math.PI) / 180, ca = Math.cos(a), sa = Math.sin(a);
  return SHAPES[kind].replace(/(-?[\d.]+) (-?[\d.]+)/g, (_m, xs: string, ys: string) => {
    const x = Number(xs) * r, y = Number(ys) * r;
    return `${n(x * ca - y * sa, 2)} ${n(x * sa + y * ca, 2)}`;
  });
}

export interface MarkerOptions {
  key: string;
  kind: MarkerKind;
  /** Position in the coordinates of the group the marker goes into. */
  x: number;
  y: number;
  /** Figure pixels per unit of those coordinates is 1/scale: markers keep their pixel size. */
  scale: number;
  radius?: number;
  angle?: number;
  title?: string;
  label?: string;
  extraClass?: string;
  fill?: string;
}

/** One marker: a halo path and a filled path under a group positioned at (x, y). */
export function marker(o: MarkerOptions): string {
  const r = o.radius ?? 6;
  const d = shapePath(o.kind, r, o.angle ?? 0);
  const fill = o.fill ?? MARKER_FILL[o.kind];
  const label = o.label
    ? `<text class="mk-label" x="${n(r + 3)}" y="${n(-r + 2)}" font-size="12" font-weight="600" fill="${THEME.text}" stroke="${THEME.halo}" stroke-width="3" paint-order="stroke" stroke-linejoin="round">${esc(o.label)}</text>`
    : '';
  return `<g class="mk mk-${o.kind}${o.extraClass ? ' ' + o.extraClass : ''}" data-k="${esc(o.key)}" transform="translate(${n(o.x, 3)} ${n(o.y, 3)}) scale(${n(o.scale, 5)})">`
    + (o.title ? `<title>${esc(o.title)}</title>` : '')
    + `<path class="mk-halo" d="${d}" fill="none" stroke="${THEME.halo}" stroke-width="3" stroke-linejoin="round"/>`
    + `<path class="mk-body" d="${d}" fill="${fill}" stroke="${THEME.markerStroke}" stroke-width="1" stroke-linejoin="round"/>`
    + label + '</g>';
}
