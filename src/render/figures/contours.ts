/**
 * Contour lines of a display raster (marching squares with linear interpolation, isolines.ts) as
 * SVG path data in plot coordinates. Value k of a row sits at x = k + 0.5, the centre of display
 * cell k, so display coordinates times the block factor are plot coordinates. Lines stop at the
 * raster edge and at nodata; closed loops end in Z.
 *
 * The vertices are counted before anything is traced (one pass over the raster edges per level
 * set tried): when the lines would carry more than `maxPoints` vertices the level count is halved,
 * and when even the coarsest set is over the cap no line is drawn and `omitted` says how many
 * vertices it would have needed. A rough surface (noise at display resolution) thus costs one
 * counting pass per level set, never a trace of millions of tiny loops.
 */
import { contourLevels, isIndexLevel, type ContourLevels } from './scale.js';
import { finiteRange } from './raster.js';
import { IsolineTracer } from './isolines.js';

export interface ContourLine {
  level: number;
  index: boolean;
  /** SVG path data in plot coordinates. */
  d: string;
  points: number;
}

export interface ContourSet {
  levels: ContourLevels;
  lines: ContourLine[];
  points: number;
  /** Set when no line is drawn because even the coarsest levels would need more than the cap: the vertices they would need, and the cap. */
  omitted?: { points: number; cap: number };
}

function fmt(v: number, decimals: number): string {
  return decimals === 0 ? String(Math.round(v)) : String(Math.round(v * 10) / 10);
}

/** The level sets tried, finest first: about target, target/2, … 2 levels (or only `fixed`). */
function candidates(lo: number, hi: number, target: number, fixed?: ContourLevels): ContourLevels[] {
  if (fixed) return [fixed];
  const out: ContourLevels[] = [];
  for (let t = target; ; t = Math.max(2, Math.floor(t / 2))) {
    const lv = contourLevels(lo, hi, t);
    if (!out.length || lv.step !== out[out.length - 1].step) out.push(lv);
    if (t <= 2) return out;
  }
}

/**
 * Isolines of `values` (a w × h display raster, NaN = nodata) at nice levels, about `target` of them.
 * Coordinates are scaled by `factor` into plot coordinates. At most `maxPoints` vertices are drawn
 * (the level count is halved until they fit; none are drawn when 2 levels do not fit).
 */
export function contourLines(values: Float32Array, w: number, h: number, factor: number, target = 12, maxPoints = 400_000, fixed?: ContourLevels): ContourSet {
  const [lo, hi] = finiteRange(values);
  if (!(hi > lo) || w < 2 || h < 2) return { levels: contourLevels(0, 0), lines: [], points: 0 };
  const decimals = factor >= 10 ? 0 : 1;
  let chosen: ContourLevels | null = null, need = 0;
  const tried = candidates(lo, hi, target, fixed);
  for (const lv of tried) {
    need = IsolineTracer.crossings(values, w, h, lv.levels);
    if (need <= maxPoints) { chosen = lv; break; }
  }
  if (!chosen) return { levels: tried[tried.length - 1], lines: [], points: 0, omitted: { points: need, cap: maxPoints } };
  const tracer = new IsolineTracer(w, h);
  const lines: ContourLine[] = [];
  let total = 0;
  for (const level of chosen.levels) {
    const iso = tracer.trace(values, level);
    if (iso.points === 0) continue;
    const parts: string[] = [];
    const xy = iso.xy;
    for (let k = 0; k < iso.lines; k++) {
      const a = iso.start[k], b = iso.start[k + 1];
      if (b - a < 2) continue;
      let s = `M${fmt(xy[2 * a] * factor, decimals)} ${fmt(xy[2 * a + 1] * factor, decimals)}`;
      for (let p = a + 1; p < b; p++) s += `L${fmt(xy[2 * p] * factor, decimals)} ${fmt(xy[2 * p + 1] * factor, decimals)}`;
      parts.push(iso.closed[k] ? s + 'Z' : s);
    }
    lines.push({ level, index: isIndexLevel(level, chosen), d: parts.join(''), points: iso.points });
    total += iso.points;
  }
  return { levels: chosen, lines, points: total };
}
