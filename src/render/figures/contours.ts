/**
 * Contour lines from d3-contour (marching squares with linear interpolation) on a display raster,
 * as SVG path data in plot coordinates. d3-contour places value k of a row at x = k + 0.5, the
 * centre of display cell k, so display coordinates times the block factor are plot coordinates.
 * d3-contour returns closed rings that run along the raster edge and around nodata; those pieces
 * are not isolines and are dropped, leaving open polylines.
 */
import { contours } from 'd3-contour';
import { contourLevels, isIndexLevel, type ContourLevels } from './scale.js';
import { finiteRange } from './raster.js';

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
}

/** Fill nodata so marching squares sees a continuous surface (the mask hides the filled part). */
export function fillForContouring(values: Float32Array, w: number, h: number): { filled: Float32Array; mask: Uint8Array } {
  const filled = Float32Array.from(values);
  const mask = new Uint8Array(w * h);
  let missing = 0;
  for (let i = 0; i < filled.length; i++) if (filled[i] !== filled[i]) { mask[i] = 1; missing++; }
  for (let pass = 0; pass < 4 && missing > 0; pass++) {
    const next = Float32Array.from(filled);
    missing = 0;
    for (let r = 0; r < h; r++) {
      for (let c = 0; c < w; c++) {
        const i = r * w + c;
        if (filled[i] === filled[i]) continue;
        let s = 0, n = 0;
        for (let dr = -1; dr <= 1; dr++) for (let dc = -1; dc <= 1; dc++) {
          const rr = r + dr, cc = c + dc;
          if (rr < 0 || cc < 0 || rr >= h || cc >= w) continue;
          const v = filled[rr * w + cc];
          if (v === v) { s += v; n++; }
        }
        if (n > 0) next[i] = s / n; else missing++;
      }
    }
    filled.set(next);
  }
  if (missing > 0) {
    const [lo] = finiteRange(filled);
    for (let i = 0; i < filled.length; i++) if (filled[i] !== filled[i]) filled[i] = Number.isFinite(lo) ? lo : 0;
  }
  return { filled, mask };
}

function fmt(v: number, decimals: number): string {
  return decimals === 0 ? String(Math.round(v)) : String(Math.round(v * 10) / 10);
}

/**
 * Isolines of `values` (a w × h display raster, NaN = nodata) at nice levels, about `target` of them.
 * Coordinates are scaled by `factor` into plot coordinates. When the lines would carry more than
 * `maxPoints` vertices the level count is halved (the legend states the interval used).
 */
export function contourLines(values: Float32Array, w: number, h: number, factor: number, target = 12, maxPoints = 400_000, fixed?: ContourLevels): ContourSet {
  const [lo, hi] = finiteRange(values);
  if (!(hi > lo) || w < 2 || h < 2) return { levels: contourLevels(0, 0), lines: [], points: 0 };
  const { filled, mask } = fillForContouring(values, w, h);
  const decimals = factor >= 10 ? 0 : 1;
  for (let t = target; ; t = Math.max(2, Math.floor(t / 2))) {
    const lv = fixed ?? contourLevels(lo, hi, t);
    const gen = contours().size([w, h]).thresholds(lv.levels);
    const polys = gen(filled as unknown as number[]);
    const lines: ContourLine[] = [];
    let total = 0;
    const edge = (x: number, y: number, x2: number, y2: number) =>
      (x <= 0.5 && x2 <= 0.5) || (x >= w - 0.5 && x2 >= w - 0.5) || (y <= 0.5 && y2 <= 0.5) || (y >= h - 0.5 && y2 >= h - 0.5);
    const masked = (x: number, y: number) => {
      const c = Math.min(w - 1, Math.max(0, Math.floor(x))), r = Math.min(h - 1, Math.max(0, Math.floor(y)));
      return mask[r * w + c] === 1;
    };
    for (const mp of polys) {
      const parts: string[] = [];
      let pts = 0;
      for (const poly of mp.coordinates) {
        for (const ring of poly) {
          let open = false;
          for (let k = 1; k < ring.length; k++) {
            const [x0, y0] = ring[k - 1], [x1, y1] = ring[k];
            if (edge(x0, y0, x1, y1) || masked(x0, y0) || masked(x1, y1)) { open = false; continue; }
            if (!open) { parts.push(`M${fmt(x0 * factor, decimals)} ${fmt(y0 * factor, decimals)}`); open = true; pts++; }
            parts.push(`L${fmt(x1 * factor, decimals)} ${fmt(y1 * factor, decimals)}`);
            pts++;
          }
        }
      }
      if (pts > 0) lines.push({ level: mp.value, index: isIndexLevel(mp.value, lv), d: parts.join(''), points: pts });
      total += pts;
    }
    if (total <= maxPoints || t <= 2 || fixed) return { levels: lv, lines, points: total };
  }
}
