/**
 * Preparing an energy surface for `barriers`: the energy cap (values above it count as unsampled)
 * and the checks of periodic axes (dihedral scans over 360° or 2π).
 *
 * A periodic axis closes when the samples along it, times the spacing, span exactly one period:
 * 72 samples 5° apart over [−180°, 180°). A scan that lists both ends (−180° and 180°, equal
 * values) spans the period with one sample too many; that repeated last line of samples is dropped
 * and the report says so. Any other span is refused on a periodic axis. On a closed axis that
 * spans a full 360° or 2π, a note suggests the periodic boundary.
 */
import { InputError } from '../errors.js';
import { Grid } from '../surface/grid.js';
import { Mesh } from '../surface/mesh.js';
import type { Boundary } from '../surface/complex.js';

/** Periods recognised on their own: degrees and radians. */
export const ANGLE_PERIODS: readonly { value: number; name: string }[] = [
  { value: 360, name: '360°' },
  { value: 2 * Math.PI, name: '2π' },
];

export interface Prepared {
  surface: Grid | Mesh;
  notes: string[];
  /** Samples set aside by the cap. */
  capped: number;
  /** Periods of the wrapped axes (null when the axis does not wrap). */
  period: [number | null, number | null];
}

/** Values above `cap` become unsampled (NaN on a grid; dropped from scattered samples). */
export function applyCap(surface: Grid | Mesh, cap: number): { surface: Grid | Mesh; capped: number } {
  if (surface.kind === 'grid') {
    const values = surface.values.slice();
    let capped = 0;
    for (let i = 0; i < values.length; i++) if (values[i] > cap) { values[i] = NaN; capped++; }
    if (capped === 0) return { surface, capped };
    return { surface: new Grid({ width: surface.width, height: surface.height, values, transform: surface.transform, crs: surface.crs, nodata: surface.nodata }), capped };
  }
  const keep: number[] = [];
  for (let i = 0; i < surface.size; i++) if (!(surface.values[i] > cap)) keep.push(i);
  if (keep.length === surface.size) return { surface, capped: 0 };
  const pick = (a: Float64Array) => Float64Array.from(keep, (i) => a[i]);
  return { surface: new Mesh(pick(surface.x), pick(surface.y), pick(surface.values), surface.crs), capped: surface.size - keep.length };
}

function closeTo(a: number, b: number, step: number): boolean {
  return Math.abs(a - b) <= 1e-3 * step;
}

function periodName(p: number): string {
  return ANGLE_PERIODS.find((q) => q.value === p)?.name ?? String(p);
}

/** Largest difference between the first and the last column (axis 0) or row (axis 1), relative to the value range. */
function endsRepeat(g: Grid, axis: 0 | 1): boolean {
  const v = g.values, w = g.width, h = g.height;
  let lo = Infinity, hi = -Infinity;
  for (let i = 0; i < v.length; i++) if (v[i] === v[i]) { lo = Math.min(lo, v[i]); hi = Math.max(hi, v[i]); }
  const tol = 1e-6 * Math.max(hi - lo, Math.abs(hi), Math.abs(lo), 1e-300);
  const n = axis === 0 ? h : w;
  for (let k = 0; k < n; k++) {
    const a = axis === 0 ? v[k * w] : v[k];
    const b = axis === 0 ? v[k * w + w - 1] : v[(h - 1) * w + k];
    if (a !== a && b !== b) continue;
    if (!(Math.abs(a - b) <= tol)) return false;
  }
  return true;
}

function dropLast(g: Grid, axis: 0 | 1): Grid {
  const w = g.width, h = g.height;
  const nw = axis === 0 ? w - 1 : w, nh = axis === 1 ? h - 1 : h;
  const values = g.values instanceof Float32Array ? new Float32Array(nw * nh) : new Float64Array(nw * nh);
  for (let r = 0; r < nh; r++) values.set(g.values.subarray(r * w, r * w + nw), r * nw);
  return new Grid({ width: nw, height: nh, values, transform: g.transform, crs: g.crs, nodata: g.nodata });
}

const AXIS_NAMES = ['x (columns)', 'y (rows)'];
const AXIS_FLAGS: Boundary[] = ['periodic-x', 'periodic-y'];

/**
 * Check (and where a repeated end line makes it necessary, trim) the periodic axes of a grid.
 * `periods`: the period each wrapped axis must span; default: 360 or 2π.
 */
export function preparePeriodic(surface: Grid | Mesh, boundary: Boundary, periods?: [number | null, number | null]): Prepared {
  const notes: string[] = [];
  if (surface.kind !== 'grid') return { surface, notes, capped: 0, period: [null, null] };
  let g = surface;
  const wraps = [boundary === 'periodic' || boundary === 'periodic-x', boundary === 'periodic' || boundary === 'periodic-y'];
  const period: [number | null, number | null] = [null, null];
  for (const axis of [0, 1] as const) {
    const step = g.cellSize()[axis];
    const count = axis === 0 ? g.width : g.height;
    const span = count * step;
    const candidates = periods?.[axis] ? [periods[axis]!] : ANGLE_PERIODS.map((p) => p.value);
    if (wraps[axis]) {
      const exact = candidates.find((p) => closeTo(span, p, step));
      if (exact !== undefined) { period[axis] = exact; continue; }
      const repeated = candidates.find((p) => closeTo(span - step, p, step));
      if (repeated !== undefined && count > 4 && endsRepeat(g, axis)) {
        g = dropLast(g, axis);
        period[axis] = repeated;
        notes.push(`the ${AXIS_NAMES[axis]} axis lists both ends of the period (${periodName(repeated)}): the last ${axis === 0 ? 'column' : 'row'}, which repeats the first, was dropped`);
        continue;
      }
      const want = candidates.map(periodName).join(' or ');
      throw new InputError(
        `boundary ${boundary}: the ${AXIS_NAMES[axis]} axis does not close — ${count} samples ${fmt(step)} apart span ${fmt(span)}, ` +
          `not one period (${want}); give a scan covering exactly one period, set the period with --period, or use --boundary closed`,
      );
    }
    const full = ANGLE_PERIODS.find((p) => closeTo(span, p.value, step) || (closeTo(span - step, p.value, step) && endsRepeat(g, axis)));
    if (full) {
      notes.push(`the ${AXIS_NAMES[axis]} axis spans a full ${full.name}: if it is an angle, the surface is periodic — use --boundary ${wraps[1 - axis] ? 'periodic' : AXIS_FLAGS[axis]}${axis === 0 ? '' : ''} (or --periodic for both axes)`);
    }
  }
  return { surface: g, notes, capped: 0, period };
}

function fmt(x: number): string {
  return Number(x.toPrecision(6)).toString();
}
