/**
 * One owned window of a mosaic as the tile passes see it: its values (read with a one-cell halo
 * clipped to the mosaic), which of its cells touch an outlet of the whole mosaic, and which lie
 * on its perimeter (a valid neighbour in another window). Cells are numbered row-major inside
 * the window; within a window that order agrees with the mosaic's global index order, so a
 * sweep of the window in local (value, index) order follows the global order.
 */
import { Grid, type GridValues } from '../surface/grid.js';
import { GridComplex, type Connectivity } from '../surface/complex.js';
import { sublevelOffsets } from '../hydro/sweep.js';
import type { CellWindow, Mosaic } from './mosaic.js';
import { windowEuler, type WindowEuler } from './euler.js';

export interface WindowCells {
  own: CellWindow;
  /** The own window's values (row-major, NaN = nodata or gap). */
  values: GridValues;
  /** Cell → 1 when a sublevel neighbour is an outlet of the mosaic (off the mosaic; nodata or gap when they drain). */
  outlet: Uint8Array;
  /** Cell → 1 when a sublevel neighbour is a valid cell outside the window (a seam edge). */
  perimeter: Uint8Array;
  perimeterCells: number;
  hasNodata: boolean;
  /** Mosaic width (global index = row · mosaicWidth + col). */
  mosaicWidth: number;
  /**
   * The one-cell ring around the window: row above and row below (width + 2 each, corners
   * included), then the column left and the column right (height each); NaN off the mosaic.
   */
  halo: Float64Array;
  /** The window's part of the Euler check, when asked for. */
  euler?: WindowEuler;
}

/** Value of mosaic cell (col, row) in the window's halo ring: undefined when nodata, a gap or off the mosaic. */
export function haloValue(cells: WindowCells, col: number, row: number): number | undefined {
  const { col0, row0, width: w, height: h } = cells.own;
  let z: number;
  if (row === row0 - 1) z = cells.halo[col - col0 + 1];
  else if (row === row0 + h) z = cells.halo[w + 2 + col - col0 + 1];
  else if (col === col0 - 1) z = cells.halo[2 * (w + 2) + row - row0];
  else if (col === col0 + w) z = cells.halo[2 * (w + 2) + h + row - row0];
  else throw new Error('internal: haloValue of a cell not in the halo');
  return z === z ? z : undefined;
}

/** A window read with its one-cell halo (clipped to the mosaic): what a worker needs to classify and sweep it. */
export interface HaloRead {
  own: CellWindow;
  /** The halo window (own grown by one cell, clipped to the mosaic) and its values. */
  hw: CellWindow;
  values: GridValues;
  mosaicWidth: number;
  mosaicHeight: number;
}

/** Read window `own` of the mosaic with its halo. */
export async function readHalo(mosaic: Mosaic, own: CellWindow): Promise<HaloRead> {
  const W = mosaic.width, H = mosaic.height;
  const hc0 = Math.max(0, own.col0 - 1), hr0 = Math.max(0, own.row0 - 1);
  const hc1 = Math.min(W, own.col0 + own.width + 1), hr1 = Math.min(H, own.row0 + own.height + 1);
  const hw: CellWindow = { col0: hc0, row0: hr0, width: hc1 - hc0, height: hr1 - hr0 };
  const values = await mosaic.readWindow(hw);
  if (values.length !== hw.width * hw.height) throw new Error(`internal: readWindow returned ${values.length} values for a ${hw.width}×${hw.height} window`);
  return { own, hw, values, mosaicWidth: W, mosaicHeight: H };
}

/** The owned window's values of a halo read (a copy, row-major). */
export function ownValues(read: HaloRead): GridValues {
  const { own, hw } = read, w = own.width, h = own.height;
  const out: GridValues = read.values instanceof Float64Array ? new Float64Array(w * h) : new Float32Array(w * h);
  const dc0 = own.col0 - hw.col0, dr0 = own.row0 - hw.row0;
  for (let r = 0; r < h; r++) out.set(read.values.subarray((r + dr0) * hw.width + dc0, (r + dr0) * hw.width + dc0 + w), r * w);
  return out;
}

/** Read window `own` of the mosaic with its halo and classify its cells (see classifyWindow). */
export async function readWindowCells(mosaic: Mosaic, own: CellWindow, conn: Connectivity, nodataOutlet: boolean, owns?: CellWindow[]): Promise<WindowCells> {
  return classifyWindow(await readHalo(mosaic, own), conn, nodataOutlet, owns);
}

/**
 * The window's cells from its halo read: which touch an outlet of the mosaic, which lie on its perimeter.
 * @param owns every owned window of the mosaic: when given, the window's part of the Euler check is taken too
 */
export function classifyWindow(read: HaloRead, conn: Connectivity, nodataOutlet: boolean, owns?: CellWindow[]): WindowCells {
  const { own, mosaicWidth: W, mosaicHeight: H } = read;
  const halo = read.values;
  const hc0 = read.hw.col0, hr0 = read.hw.row0, hw = read.hw.width, hh = read.hw.height;
  const hc1 = hc0 + hw, hr1 = hr0 + hh;
  const w = own.width, h = own.height, n = w * h;
  const values: GridValues = halo instanceof Float64Array ? new Float64Array(n) : new Float32Array(n);
  const dc0 = own.col0 - hc0, dr0 = own.row0 - hr0;
  for (let r = 0; r < h; r++) values.set(halo.subarray((r + dr0) * hw + dc0, (r + dr0) * hw + dc0 + w), r * w);
  const outlet = new Uint8Array(n), perimeter = new Uint8Array(n);
  const ring = sublevelOffsets(conn), rs = ring.length;
  const dc = Int32Array.from(ring, (o) => o[0]), dr = Int32Array.from(ring, (o) => o[1]);
  let perimeterCells = 0, hasNodata = false;
  for (let i = 0; i < halo.length; i++) if (halo[i] !== halo[i]) { hasNodata = true; break; }
  for (let r = 0, i = 0; r < h; r++) {
    const gr = own.row0 + r;
    for (let c = 0; c < w; c++, i++) {
      if (values[i] !== values[i]) continue;
      // a cell inside the window touches an outlet only through nodata, and no seam at all
      const inner = c > 0 && c < w - 1 && r > 0 && r < h - 1;
      if (inner && !hasNodata) continue;
      const gc = own.col0 + c;
      let o = 0, p = 0;
      for (let q = 0; q < rs; q++) {
        const nc = gc + dc[q], nr = gr + dr[q];
        if (nc < 0 || nc >= W || nr < 0 || nr >= H) { o = 1; continue; }
        const z = halo[(nr - hr0) * hw + (nc - hc0)];
        if (z !== z) { if (nodataOutlet) o = 1; continue; }
        if (!inner && (nc < own.col0 || nc >= own.col0 + w || nr < own.row0 || nr >= own.row0 + h)) p = 1;
      }
      outlet[i] = o;
      if (p) { perimeter[i] = 1; perimeterCells++; }
    }
  }
  const ringV = new Float64Array(2 * (w + 2) + 2 * h).fill(NaN);
  const at = (col: number, row: number): number =>
    col < hc0 || col >= hc1 || row < hr0 || row >= hr1 ? NaN : halo[(row - hr0) * hw + (col - hc0)];
  for (let c = -1; c <= w; c++) {
    ringV[c + 1] = at(own.col0 + c, own.row0 - 1);
    ringV[w + 2 + c + 1] = at(own.col0 + c, own.row0 + h);
  }
  for (let r = 0; r < h; r++) {
    ringV[2 * (w + 2) + r] = at(own.col0 - 1, own.row0 + r);
    ringV[2 * (w + 2) + h + r] = at(own.col0 + w, own.row0 + r);
  }
  const euler = owns ? windowEuler(W, H, own, read.hw, halo, owns, conn, nodataOutlet) : undefined;
  return { own, values, outlet, perimeter, perimeterCells, hasNodata, mosaicWidth: W, halo: ringV, euler };
}

/**
 * The open-boundary complex of the window on its own: ω is attached only at the mosaic's true
 * outlets; neighbours outside the window are simply absent (they are joined at the seams).
 */
export function windowComplex(cells: WindowCells, conn: Connectivity, nodataOutlet: boolean): GridComplex {
  const grid = new Grid({ width: cells.own.width, height: cells.own.height, values: cells.values });
  return new GridComplex(grid, conn, 'open', nodataOutlet, { omegaAdj: cells.outlet, topAdj: null, hasNodata: cells.hasNodata });
}
