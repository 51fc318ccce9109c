/**
 * The Euler self-check of a mosaic, window by window from the one-cell halo (no seam is
 * counted twice):
 *  - critical points: each owned cell's lower-link contribution, from the complex of its halo
 *    window (a cell's ring lies in the halo or off the mosaic, and the halo's (value, index)
 *    order is the global one);
 *  - simplices of the open complex P/G (P: valid cells and outlets, G: outlets; the mosaic padded
 *    with one ring of outlet cells, as GridComplex.countSimplices counts it): every vertex, the
 *    edges to its right and below and every simplex of the 2 × 2 block below-right of it are
 *    anchored at that cell. A window counts the anchors it owns; an anchor no window owns (a gap,
 *    the padding) is counted by the owner of the first owned cell of its block, right, below,
 *    below-right — a block with no owned cell holds no valid cell, and its P and G simplices
 *    cancel.
 */
import { Grid, type GridValues } from '../surface/grid.js';
import { GridComplex, type Connectivity } from '../surface/complex.js';
import type { CellWindow, Mosaic } from './mosaic.js';

/** One window's part of the Euler check: critical points of its cells and P − G simplices of its anchors. */
export interface WindowEuler {
  pits: number;
  passes: number;
  peaks: number;
  /** P − G simplices by dimension (vertices, edges, faces, tetrahedra for connectivity 8). */
  simplices: Float64Array;
}

const inside = (w: CellWindow, c: number, r: number): boolean => c >= w.col0 && c < w.col0 + w.width && r >= w.row0 && r < w.row0 + w.height;

/**
 * @param halo  values of window `hw` (the own window grown by one cell, clipped to the mosaic)
 * @param owns  every owned window of the mosaic (to tell gaps from other windows' cells)
 */
export function windowEuler(mosaic: Mosaic, own: CellWindow, hw: CellWindow, halo: GridValues, owns: CellWindow[], conn: Connectivity, nodataOutlet: boolean): WindowEuler {
  const W = mosaic.width, H = mosaic.height;
  // critical points of the owned cells
  const grid = new Grid({ width: hw.width, height: hw.height, values: halo.slice() });
  const cx = new GridComplex(grid, conn, 'open', nodataOutlet);
  let pits = 0, passes = 0, peaks = 0;
  const dc = own.col0 - hw.col0, dr = own.row0 - hw.row0;
  cx.forEachCritical((i, c, lowerLinkEmpty) => {
    const r = Math.floor(i / hw.width) - dr, col = (i % hw.width) - dc;
    if (r < 0 || r >= own.height || col < 0 || col >= own.width) return;
    if (c < 0) passes -= c; else if (lowerLinkEmpty) pits += c; else peaks += c;
  });
  // P and G membership of mosaic cell (c, r): 1 = valid (P only), 3 = outlet (P and G), 0 = neither
  const near = owns.filter((o) => o.col0 <= own.col0 + own.width && o.col0 + o.width >= own.col0 - 1 && o.row0 <= own.row0 + own.height && o.row0 + o.height >= own.row0 - 1);
  const member = (c: number, r: number): number => {
    if (c < 0 || c >= W || r < 0 || r >= H) return 3;
    if (c < hw.col0 || c >= hw.col0 + hw.width || r < hw.row0 || r >= hw.row0 + hw.height) throw new Error('internal: Euler anchor beyond the halo');
    const z = halo[(r - hw.row0) * hw.width + (c - hw.col0)];
    return z === z ? 1 : nodataOutlet ? 3 : 0;
  };
  const owned = (c: number, r: number): number => {
    if (inside(own, c, r)) return 1;
    for (const o of near) if (inside(o, c, r)) return 2;
    return 0;
  };
  const s = new Float64Array(conn === 8 ? 4 : 3);
  const count = (c: number, r: number, sign: number, set: number): void => {
    // set 1: P (membership bit 0), set 2: G (bit 1)
    const a = (member(c, r) & set) !== 0 ? 1 : 0;
    const b = (member(c + 1, r) & set) !== 0 && c + 1 <= W ? 1 : 0;
    const d = (member(c, r + 1) & set) !== 0 && r + 1 <= H ? 1 : 0;
    const t = (member(c + 1, r + 1) & set) !== 0 && c + 1 <= W && r + 1 <= H ? 1 : 0;
    s[0] += sign * a;
    s[1] += sign * (a & b) + sign * (a & d);
    if (c + 1 > W || r + 1 > H) return; // no block beyond the padding
    if (conn === 8) {
      s[1] += sign * ((a & t) + (b & d));
      const n = a + b + d + t;
      if (n === 4) { s[2] += sign * 4; s[3] += sign; } else if (n === 3) s[2] += sign;
    } else if (conn === 6) {
      const pt = a & t;
      s[1] += sign * pt;
      s[2] += sign * ((pt & b) + (pt & d));
    } else if (a & b & d & t) s[2] += sign;
  };
  for (let r = own.row0 - 1; r < own.row0 + own.height; r++) {
    if (r < -1) continue;
    for (let c = own.col0 - 1; c < own.col0 + own.width; c++) {
      if (c < -1) continue;
      const o = owned(c, r);
      if (o === 2) continue;
      if (o === 0) {
        // not owned: counted by the owner of the first owned cell of its block
        const first = [[c + 1, r], [c, r + 1], [c + 1, r + 1]].find(([x, y]) => x >= 0 && x < W && y >= 0 && y < H && owned(x, y) !== 0);
        if (!first || owned(first[0], first[1]) !== 1) continue;
      }
      count(c, r, 1, 1);
      count(c, r, -1, 2);
    }
  }
  return { pits, passes, peaks, simplices: s };
}
