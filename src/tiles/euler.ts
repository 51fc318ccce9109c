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
import type { CellWindow } from './mosaic.js';

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
export function windowEuler(W: number, H: number, own: CellWindow, hw: CellWindow, halo: GridValues, owns: CellWindow[], conn: Connectivity, nodataOutlet: boolean): WindowEuler {
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
  // P and G membership of the cells of rows row0 − 1 … row0 + h and columns col0 − 1 … col0 + w:
  // bit 0 in P (valid or outlet), bit 1 in G (outlet); off the mosaic = the padding of outlets
  const mw = own.width + 2, mh = own.height + 2;
  const M = new Uint8Array(mw * mh);
  const outletBits = nodataOutlet ? 3 : 0;
  for (let y = 0; y < mh; y++) {
    const r = own.row0 - 1 + y;
    for (let x = 0; x < mw; x++) {
      const c = own.col0 - 1 + x;
      if (c < 0 || c >= W || r < 0 || r >= H) { M[y * mw + x] = 3; continue; }
      const z = halo[(r - hw.row0) * hw.width + (c - hw.col0)];
      M[y * mw + x] = z === z ? 1 : outletBits;
    }
  }
  // the owned windows around this one (to tell gaps and padding from other windows' cells)
  const near = owns.filter((o) => o.col0 <= own.col0 + own.width && o.col0 + o.width >= own.col0 - 1 && o.row0 <= own.row0 + own.height && o.row0 + o.height >= own.row0 - 1);
  const owned = (c: number, r: number): number => {
    if (inside(own, c, r)) return 1;
    for (const o of near) if (inside(o, c, r)) return 2;
    return 0;
  };
  // P − G simplices anchored at a cell (vertex, edges right and down, the block's simplices), by
  // the memberships of its block: a table over the 8 bits (a, right, below, below-right)
  const tab = blockTable(conn);
  let V = 0, E = 0, F = 0, Tt = 0;
  const count = (x: number, y: number): void => {
    const i = y * mw + x;
    const k = 4 * (M[i] | (M[i + 1] << 2) | (M[i + mw] << 4) | (M[i + mw + 1] << 6));
    V += tab[k]; E += tab[k + 1]; F += tab[k + 2]; Tt += tab[k + 3];
  };
  for (let y = 0; y < mh - 1; y++) {
    const r = own.row0 - 1 + y;
    if (r < -1) continue;
    for (let x = 0; x < mw - 1; x++) {
      const c = own.col0 - 1 + x;
      if (c < -1) continue;
      if (y > 0 && x > 0) { // an owned cell
        const i = y * mw + x;
        const k = 4 * (M[i] | (M[i + 1] << 2) | (M[i + mw] << 4) | (M[i + mw + 1] << 6));
        V += tab[k]; E += tab[k + 1]; F += tab[k + 2]; Tt += tab[k + 3];
        continue;
      }
      const o = owned(c, r);
      if (o === 2) continue;
      if (o === 0) {
        // owned by no window: counted by the owner of the first owned cell of its block
        let first = 0;
        for (const [cc, rr] of [[c + 1, r], [c, r + 1], [c + 1, r + 1]]) {
          if (cc >= 0 && cc < W && rr >= 0 && rr < H && (first = owned(cc, rr)) !== 0) break;
        }
        if (first !== 1) continue;
      }
      count(x, y);
    }
  }
  const s = conn === 8 ? Float64Array.of(V, E, F, Tt) : Float64Array.of(V, E, F);
  return { pits, passes, peaks, simplices: s };
}

const tables: (Int8Array | undefined)[] = [];

/** For each membership byte of a block (2 bits per cell: in P, in G), the P − G vertex, edge, face and tetrahedron counts anchored at its first cell. */
function blockTable(conn: Connectivity): Int8Array {
  const hit = tables[conn];
  if (hit) return hit;
  const tab = new Int8Array(4 * 256);
  for (let key = 0; key < 256; key++) {
    const ma = key & 3, mb = (key >> 2) & 3, md = (key >> 4) & 3, mt = (key >> 6) & 3;
    for (let bit = 0, sign = 1; bit < 2; bit++, sign = -1) {
      const a = (ma >> bit) & 1, b = (mb >> bit) & 1, d = (md >> bit) & 1, t = (mt >> bit) & 1;
      let v = a, e = (a & b) + (a & d), f = 0, tt = 0;
      if (conn === 8) {
        e += (a & t) + (b & d);
        const n = a + b + d + t;
        if (n === 4) { f = 4; tt = 1; } else if (n === 3) f = 1;
      } else if (conn === 6) {
        const pt = a & t;
        e += pt;
        f = (pt & b) + (pt & d);
      } else f = a & b & d & t;
      tab[4 * key] += sign * v; tab[4 * key + 1] += sign * e; tab[4 * key + 2] += sign * f; tab[4 * key + 3] += sign * tt;
    }
  }
  tables[conn] = tab;
  return tab;
}
