/**
 * Culverts, pipes and breach lines: DEMs keep road and rail embankments as dams (the ground under a
 * bridge or over a culvert is not in the data). A culvert line connects the cells at its two ends so
 * water passes through the embankment at the invert level: every cell along the line is lowered to
 * the invert (a breach line) — never raised. The invert is the one given, or else the lower end's
 * elevation. The line is rasterised as a 4-connected chain of cells (a diagonal step also lowers the
 * cell beside it), so the breach is open in every connectivity.
 *
 * `culvertEffects` compares the depressions before and after: a depression that still fills from the
 * same pit to the same pass is the same one (unchanged, or holding less or more water); one whose pit
 * is dry afterwards vanished; one whose pit now lies in a depression with another lowest cell merged
 * into it; one whose pit is still the lowest cell of its depression but spills at another pass
 * shrank or grew.
 */
import { Grid, gridValues } from '../surface/grid.js';
import type { Hierarchy } from './hierarchy.js';
import { cellOf, type CulvertSpec } from '../io/culverts.js';

export interface Culvert {
  name: string;
  /** Cells of the breach line (row-major indices), in order from the first end to the last. */
  cells: Int32Array;
  /** Cells whose elevation was lowered. */
  lowered: number;
  invert: number;
  /** Where the invert came from. */
  invertFrom: 'given' | 'lower end';
}

/** The DEM with every culvert applied (a new grid; the input is left as it is) and what was done. */
export function applyCulverts(grid: Grid, specs: readonly CulvertSpec[]): { grid: Grid; culverts: Culvert[] } {
  const W = grid.width;
  // on shared memory, as the loaders allocate grids (the worker threads read them without a copy)
  const values = gridValues(grid.size, grid.values instanceof Float64Array);
  values.set(grid.values);
  const culverts: Culvert[] = [];
  for (const s of specs) {
    const cells: number[] = [];
    const push = (c: number, r: number) => { const i = r * W + c; if (cells[cells.length - 1] !== i) cells.push(i); };
    let [c0, r0] = cellOf(grid, s.xy[0], s.xy[1]);
    push(c0, r0);
    for (let k = 2; k < s.xy.length; k += 2) {
      const [c1, r1] = cellOf(grid, s.xy[k], s.xy[k + 1]);
      // Bresenham's line between cell centres, with the side cell added at each diagonal step
      const dc = Math.abs(c1 - c0), dr = Math.abs(r1 - r0), sc = c0 < c1 ? 1 : -1, sr = r0 < r1 ? 1 : -1;
      let err = dc - dr, c = c0, r = r0;
      while (c !== c1 || r !== r1) {
        const e2 = 2 * err;
        const stepC = e2 > -dr, stepR = e2 < dc;
        if (stepC && stepR) { push(c + sc, r); }
        if (stepC) { err -= dr; c += sc; }
        if (stepR) { err += dc; r += sr; }
        push(c, r);
      }
      c0 = c1; r0 = r1;
    }
    const first = cells[0], last = cells[cells.length - 1];
    const z1 = grid.values[first], z2 = grid.values[last];
    let invert = s.invert, invertFrom: Culvert['invertFrom'] = 'given';
    if (invert === null) {
      invert = Math.min(z1 === z1 ? z1 : Infinity, z2 === z2 ? z2 : Infinity);
      invertFrom = 'lower end';
      if (invert === Infinity) invert = NaN;
    }
    let lowered = 0;
    if (invert === invert) {
      const v = values instanceof Float32Array ? Math.fround(invert) : invert;
      for (const i of cells) if (values[i] > v) { values[i] = v; lowered++; }
    }
    culverts.push({ name: s.name, cells: Int32Array.from(cells), lowered, invert, invertFrom });
  }
  const out = new Grid({ width: W, height: grid.height, values, transform: grid.transform, crs: grid.crs, nodata: grid.nodata, normalised: true });
  return { grid: out, culverts };
}

export type EffectStatus = 'unchanged' | 'shrank' | 'grew' | 'merged' | 'vanished';
/** Status codes of `CulvertEffects.changed.status`. */
export const EFFECT_STATUS: readonly EffectStatus[] = ['unchanged', 'shrank', 'grew', 'merged', 'vanished'];

export interface CulvertEffects {
  counts: Record<EffectStatus, number> & { new: number };
  /** The depressions before the culverts that changed: id before, status, the depression after that holds its pit (0: none), volumes and spill levels. */
  changed: { before: Int32Array; /** codes into EFFECT_STATUS */ status: Uint8Array; after: Int32Array; volumeBefore: Float64Array; volumeAfter: Float64Array; spillBefore: Float64Array; spillAfter: Float64Array };
}

/**
 * Compare the depressions without (`a`) and with (`b`) the culverts; `labelsB` is the innermost
 * depression covering each cell with the culverts (the label raster).
 */
export function culvertEffects(a: Hierarchy, b: Hierarchy, labelsB: Int32Array): CulvertEffects {
  // (pit, pass) of every depression after, for matching: sorted keys
  const keyOf = (pit: number, pass: number) => pit * 4294967296 + pass;
  const keysB = new Float64Array(b.count);
  const idsB = new Int32Array(b.count);
  for (let d = 1; d <= b.count; d++) { keysB[d - 1] = keyOf(b.pit[d], b.spillCell[d]); idsB[d - 1] = d; }
  const order = Array.from(idsB).sort((x, y) => keysB[x - 1] - keysB[y - 1]);
  const sortedKeys = Float64Array.from(order, (d) => keysB[d - 1]);
  const find = (k: number): number => {
    let lo = 0, hi = sortedKeys.length - 1;
    while (lo <= hi) { const m = (lo + hi) >> 1; if (sortedKeys[m] === k) return order[m]; if (sortedKeys[m] < k) lo = m + 1; else hi = m - 1; }
    return 0;
  };
  const counts = { unchanged: 0, shrank: 0, grew: 0, merged: 0, vanished: 0, new: 0 };
  const matched = new Uint8Array(b.count + 1);
  const before: number[] = [], status: number[] = [], after: number[] = [];
  const vb: number[] = [], va: number[] = [], sb: number[] = [], sa: number[] = [];
  for (let d = 1; d <= a.count; d++) {
    const m = find(keyOf(a.pit[d], a.spillCell[d]));
    let st: EffectStatus, now = m;
    if (m > 0) {
      matched[m] = 1;
      const dv = b.volume[m] - a.volume[d];
      st = Math.abs(dv) <= 1e-9 * Math.max(a.volume[d], b.volume[m]) ? 'unchanged' : dv < 0 ? 'shrank' : 'grew';
    } else {
      now = labelsB[a.pit[d]];
      if (now <= 0) { st = 'vanished'; now = 0; } else if (b.pit[now] !== a.pit[d]) st = 'merged';
      else st = b.volume[now] < a.volume[d] ? 'shrank' : 'grew';
    }
    counts[st]++;
    if (st === 'unchanged') continue;
    before.push(d); status.push(EFFECT_STATUS.indexOf(st)); after.push(now);
    vb.push(a.volume[d]); va.push(now > 0 ? b.volume[now] : 0); sb.push(a.spillValue[d]); sa.push(now > 0 ? b.spillValue[now] : NaN);
  }
  for (let d = 1; d <= b.count; d++) if (!matched[d]) counts.new++;
  return {
    counts,
    changed: {
      before: Int32Array.from(before), status: Uint8Array.from(status), after: Int32Array.from(after),
      volumeBefore: Float64Array.from(vb), volumeAfter: Float64Array.from(va), spillBefore: Float64Array.from(sb), spillAfter: Float64Array.from(sa),
    },
  };
}
