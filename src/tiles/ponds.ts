/**
 * `ponds` on a mosaic, tile by tile (docs/tiles.md, "Method"): pass 1 sweeps each owned window
 * on its own and keeps what its perimeter needs; the seam merge builds the global sweep tree;
 * pass 2 sweeps each window again for its cells' global labels and its share of the node sums;
 * the reduce adds the shares; buildHierarchy (unchanged) makes the depressions; the rasters are
 * made window by window. The result equals `ponds()` on the same cells as one grid: the same
 * tree, node numbers, depressions and rasters; the sums are added in another order, so volumes
 * may differ from the single grid's in the last bits (relative difference ≤ 1e-12).
 *
 * Memory: one window's cells at a time per worker, plus the summaries (they grow with the
 * windows' perimeters and with the number of nodes) and the labels of the windows between
 * pass 2 and the rasters (in a LabelStore: memory, or files in a run folder).
 */
import { InputError } from '../errors.js';
import { cellAreas, type CellAreas, type UnitOptions } from '../hydro/areas.js';
import { SUM_STRIDE, CELLS, SUMA, SUMAZ, TIEN, TIEA, SPILLZ, PITZ, type DepressionSweep, type NodeSums } from '../hydro/sweep.js';
import { buildHierarchy, type Hierarchy, type HierarchyFilters } from '../hydro/hierarchy.js';
import { pondRasters, type PondRasters } from '../hydro/rasters.js';
import { pondsFilters } from '../hydro/ponds.js';
import type { PondsEuler } from '../hydro/common.js';
import type { Connectivity } from '../surface/complex.js';
import type { CellWindow, Mosaic, MosaicTile } from './mosaic.js';
import { readHalo, classifyWindow, ownValues, type HaloRead } from './windows.js';
import type { GridValues } from '../surface/grid.js';
import type { WindowEuler } from './euler.js';
import { pass1, type WindowSummary } from './pass1.js';
import { seamMerge, type GlobalTree } from './merge.js';
import { pass2, SHARE_STRIDE, type WindowShare, type Pass2Result } from './pass2.js';
import { TilePool, transferList } from './pool.js';
import { writeRunFile, readRunFile } from './runfile.js';
import { availableParallelism } from 'node:os';
import { readFile, writeFile, rm } from 'node:fs/promises';
import { join } from 'node:path';

/** Where the windows' global labels wait between pass 2 and the rasters. */
export interface LabelStore {
  put(window: number, label: Int32Array): Promise<void>;
  /** The labels put for `window`; the store may forget them afterwards. */
  take(window: number): Promise<Int32Array>;
}

/** Labels kept in memory (tests, small mosaics). */
export function memoryLabelStore(): LabelStore {
  const m = new Map<number, Int32Array>();
  return {
    put: async (t, l) => { m.set(t, l); },
    take: async (t) => {
      const l = m.get(t);
      if (l === undefined) throw new Error(`internal: no labels stored for window ${t}`);
      m.delete(t);
      return l;
    },
  };
}

/**
 * Labels in files of folder `dir` (one raw Int32 file per window, removed when taken): memory
 * stays at the windows in flight however large the mosaic.
 */
export function folderLabelStore(dir: string): LabelStore {
  const file = (t: number): string => join(dir, `labels-${t}.i32`);
  return {
    put: async (t, l) => { await writeFile(file(t), new Uint8Array(l.buffer, l.byteOffset, l.byteLength)); },
    take: async (t) => {
      const b = await readFile(file(t));
      await rm(file(t));
      const out = new Int32Array(b.byteLength / 4);
      new Uint8Array(out.buffer).set(b);
      return out;
    },
  };
}

export interface TiledPondsOptions extends UnitOptions, HierarchyFilters {
  connectivity?: Connectivity;
  nodataOutlet?: boolean;
  minPersistence?: number;
  fillOnlyBelow?: number;
  /** Called at the start of each stage, and after each window (`done` of `total`). */
  onStage?: (stage: string, done?: number, total?: number) => void;
  /**
   * Receives each tile's filled, depth and label rasters (its owned window) as they are made, in
   * window order; `window` gives the window's cells as read (with their one-cell halo, clipped to
   * the mosaic; the owned values with −0 made 0) and the depressions (the hierarchy is final).
   */
  onRasters?: (tile: MosaicTile, own: CellWindow, rasters: PondRasters, window: RasterWindow) => void | Promise<void>;
  labels?: LabelStore;
  /**
   * A run folder: each window's pass-1 summary is written there as a stage file (pass1-<window>.run)
   * and read back by the seam merge, and the labels wait there between pass 2 and the rasters
   * (unless `labels` is given). The folder must exist; the summaries are left in it.
   */
  runDir?: string;
  /** Run the Euler self-check (critical points vs. simplex count). Default true. */
  euler?: boolean;
  /** Worker threads for the windows' passes (default: the number of cores); 1 runs them on this thread. Results are the same for every number. */
  workers?: number;
}

/** What onRasters gets beside the rasters. */
export interface RasterWindow {
  /** The window read with its halo (the cells around it, for lookups across its edges). */
  read: HaloRead;
  /** The owned window's values (row-major; NaN = nodata or gap). */
  values: GridValues;
  hierarchy: Hierarchy;
}

export interface TiledPondsResult {
  tree: GlobalTree;
  sums: NodeSums;
  hierarchy: Hierarchy;
  areas: CellAreas;
  /** The Euler self-check, as `ponds()` reports it for one grid (null when not asked for). */
  euler: PondsEuler | null;
  /** Pits found by the sweep (nodes created at a cell with no lower neighbour). */
  sweepPits: number;
  /** Σ (filled − z)·a, raised cells and their area, over the whole mosaic (as PondRasters has them for one grid). */
  filledVolume: number;
  filledCells: number;
  filledArea: number;
  /** Perimeter cells of all windows, the bytes of all pass-1 summaries and of their events, the events the merge replayed. */
  seams: { perimeterCells: number; summaryBytes: number; eventBytes: number; events: number };
  options: { connectivity: Connectivity; nodataOutlet: boolean; minDepth: number; minArea: number; minVolume: number; minPersistence: number; fillOnlyBelow: number | null };
}

/** Run `fn` for windows 0..count−1, at most `lanes` at a time; the results by window index. */
async function eachWindow<T>(count: number, lanes: number, fn: (t: number) => Promise<T> | T, done: (n: number) => void): Promise<T[]> {
  const out = new Array<T>(count);
  let next = 0, finished = 0;
  const lane = async (): Promise<void> => {
    while (next < count) {
      const t = next++;
      out[t] = await fn(t);
      done(++finished);
    }
  };
  await Promise.all(Array.from({ length: Math.min(lanes, count) }, lane));
  return out;
}

/** The Euler block of the mosaic from the windows' parts (in window order). */
export function eulerOf(parts: WindowEuler[], conn: Connectivity): PondsEuler {
  let pits = 1, passes = 0, peaks = 0; // the outside vertex ω is a pit
  const dims = new Array<number>(conn === 8 ? 4 : 3).fill(0);
  for (const e of parts) {
    pits += e.pits; passes += e.passes; peaks += e.peaks;
    for (let d = 0; d < dims.length; d++) dims[d] += e.simplices[d];
  }
  dims[0] += 1; // ω
  let chi = 0;
  dims.forEach((c, d) => { chi += d % 2 === 0 ? c : -c; });
  return { characteristic: chi, pits, passes, peaks, holds: pits - passes + peaks === chi, outsidePit: true, simplices: dims };
}

/** Largest mosaic the tiled path takes: global cell indices are Int32 (as in the hierarchy's columns). */
export const MAX_MOSAIC_CELLS = 2 ** 31 - 1;

/** The tree of a GlobalTree as the single sweep's DepressionSweep (no per-cell labels). */
export function treeAsSweep(tree: GlobalTree): DepressionSweep {
  return {
    count: tree.count, vertex: tree.vertex, birth: tree.birth, parent: tree.parent, spill: tree.spill, entry: tree.entry, to: tree.to,
    label: new Int32Array(0), spare: { buffer: new ArrayBuffer(0), byteOffset: 0, byteLength: 0 },
  };
}

/** Add the windows' shares (in window order, so the result is the same for any number of workers) and sum up the tree. */
export function reduceShares(tree: GlobalTree, shares: WindowShare[]): NodeSums {
  const K = tree.count, R = SUM_STRIDE;
  const rec = new Float64Array(R * K);
  for (let k = 1; k < K; k++) { rec[R * k + SPILLZ] = tree.spillZ[k]; rec[R * k + PITZ] = tree.birthZ[k]; }
  for (const sh of shares) {
    for (let j = 0; j < sh.node.length; j++) {
      const b = R * sh.node[j], s = SHARE_STRIDE * j;
      rec[b + CELLS] += sh.rec[s + CELLS]; rec[b + SUMA] += sh.rec[s + SUMA]; rec[b + SUMAZ] += sh.rec[s + SUMAZ];
      rec[b + TIEN] += sh.rec[s + TIEN]; rec[b + TIEA] += sh.rec[s + TIEA];
    }
  }
  // up the tree (children have smaller numbers than their parents), as the single sweep does
  for (let k = 1; k < K; k++) {
    const p = tree.parent[k];
    if (p <= 0) continue;
    const b = R * k, q = R * p;
    rec[q + CELLS] += rec[b + CELLS]; rec[q + SUMA] += rec[b + SUMA]; rec[q + SUMAZ] += rec[b + SUMAZ];
    if (rec[b + SPILLZ] === rec[q + SPILLZ]) { rec[q + TIEN] += rec[b + TIEN]; rec[q + TIEA] += rec[b + TIEA]; }
  }
  return { z0: tree.z0, rec };
}

export async function pondsTiled(mosaic: Mosaic, opts: TiledPondsOptions = {}): Promise<TiledPondsResult> {
  const source = mosaic.source;
  if (mosaic.width * mosaic.height > MAX_MOSAIC_CELLS) {
    throw new InputError(`${source}: the mosaic has ${mosaic.width}×${mosaic.height} cells, more than the ${MAX_MOSAIC_CELLS} sill indexes; analyse it in parts`);
  }
  const connectivity = opts.connectivity ?? 8, nodataOutlet = opts.nodataOutlet ?? true;
  if (connectivity !== 4 && connectivity !== 6 && connectivity !== 8) throw new InputError(`connectivity must be 4, 6 or 8, got ${connectivity}`);
  const { minDepth, minArea, minVolume, minPersistence } = pondsFilters(opts);
  const areas = cellAreas({ transform: mosaic.transform, width: mosaic.width, height: mosaic.height, crs: mosaic.crs }, opts, source);
  const stage = opts.onStage ?? (() => undefined);
  const labels = opts.labels ?? (opts.runDir !== undefined ? folderLabelStore(opts.runDir) : memoryLabelStore());
  const runDir = opts.runDir;
  const tiles = mosaic.tiles.filter((t) => t.own.width > 0 && t.own.height > 0);
  const T = tiles.length;

  const workers = opts.workers ?? availableParallelism();
  if (!(Number.isInteger(workers) && workers >= 1)) throw new InputError(`--workers must be a whole number ≥ 1, got ${workers}`);
  const lanes = Math.min(workers, Math.max(1, T));
  const pool = lanes > 1 ? new TilePool(lanes) : null;
  let summaries: WindowSummary[], shares: WindowShare[], tree: GlobalTree;
  let perimeterCells = 0, euler: PondsEuler | null = null;
  try {
    const owns = opts.euler === false ? undefined : tiles.map((t) => t.own);
    if (pool) await pool.broadcast('setup', { setup: { conn: connectivity, nodataOutlet, rowArea: areas.rowArea, uniform: areas.uniform, owns } });
    stage('pass 1: windows', 0, T);
    const eulers: WindowEuler[] = [];
    summaries = await eachWindow(T, lanes, async (t) => {
      const read = await readHalo(mosaic, tiles[t].own);
      let s: WindowSummary;
      if (pool) {
        const r = await pool.run<{ summary: WindowSummary; euler?: WindowEuler }>('pass1', { read });
        if (r.euler) eulers[t] = r.euler;
        s = r.summary;
      } else {
        const cells = classifyWindow(read, connectivity, nodataOutlet, owns);
        if (cells.euler) eulers[t] = cells.euler;
        s = pass1(cells, connectivity, nodataOutlet);
      }
      if (runDir === undefined) return s;
      await writeRunFile(join(runDir, `pass1-${t}.run`), s as unknown as Record<string, unknown>);
      return null as unknown as WindowSummary;
    }, (done) => stage('pass 1: windows', done, T));
    if (runDir !== undefined) {
      for (let t = 0; t < T; t++) summaries[t] = await readRunFile<WindowSummary>(join(runDir, `pass1-${t}.run`));
    }
    let zmin = Infinity, zmax = -Infinity;
    for (const s of summaries) {
      perimeterCells += s.perimeterCells;
      if (s.zmin < zmin) zmin = s.zmin;
      if (s.zmax > zmax) zmax = s.zmax;
    }
    if (zmin === Infinity) throw new InputError(`${source}: every cell is nodata; check the nodata value (--nodata) and the band (--band)`);
    if (zmin === zmax) throw new InputError(`${source}: every valid cell has the same value (${zmin}); a flat surface has no depressions — check the band and the nodata value`);

    if (owns) euler = eulerOf(eulers, connectivity);
    stage('seam merge');
    tree = seamMerge(summaries);
    // pass 2 needs only the provisional flags of the summaries
    const provs = summaries.map((x) => x.prov);
    summaries = [];

    if (pool) await pool.broadcast('tree', { tree: { parent: tree.parent, spill: tree.spill, spillZ: tree.spillZ, z0: tree.z0 } });
    stage('pass 2: windows', 0, T);
    shares = await eachWindow(T, lanes, async (t) => {
      const read = await readHalo(mosaic, tiles[t].own);
      const prov = provs[t], map = tree.windowMap[t];
      const r = pool
        ? await pool.run<Pass2Result>('pass2', { read, prov, map }, transferList({ read, prov })) // the map stays in the tree
        : pass2(classifyWindow(read, connectivity, nodataOutlet), connectivity, nodataOutlet, prov, map, tree, areas.rowArea, areas.uniform);
      await labels.put(t, r.label);
      return r.share;
    }, (done) => stage('pass 2: windows', done, T));
  } finally {
    if (pool) await pool.close();
  }
  let sweepPits = 0;
  for (let k = 1; k < tree.count; k++) if (tree.vertex[k] === tree.birth[k]) sweepPits++;
  if (euler && euler.pits - 1 !== sweepPits) {
    throw new Error(`internal: the tiled depression sweep found ${sweepPits} pits but the lower links ${euler.pits - 1}; this is a bug in sill, please report it with the input`);
  }
  stage('reduce and depression hierarchy');
  const sums = reduceShares(tree, shares);
  const areaScale = areas.uniform ? areas.rowArea[0] : 1;
  const hierarchy = buildHierarchy(treeAsSweep(tree), sums, {
    minDepth: Math.max(minDepth, minPersistence), minArea, minVolume,
    areaScale, zFactor: areas.zFactor, fillOnlyBelow: opts.fillOnlyBelow,
  });

  stage('filled, depth and label rasters', 0, T);
  let filledVolume = 0, filledCells = 0, filledArea = 0;
  for (let t = 0; t < T; t++) {
    const own = tiles[t].own;
    // with its halo when a caller looks across the window's edges; the owned window alone otherwise
    const read = opts.onRasters ? await readHalo(mosaic, own) : null;
    const values = read ? ownValues(read) : await mosaic.readWindow(own);
    for (let i = 0; i < values.length; i++) if (values[i] === 0) values[i] = 0; // −0 → 0, as Grid does
    const label = await labels.take(t);
    const rs = pondRasters(values, own.width, label, hierarchy, areas.rowArea.subarray(own.row0, own.row0 + own.height));
    filledVolume += rs.filledVolume; filledCells += rs.filledCells; filledArea += rs.filledArea;
    if (opts.onRasters) await opts.onRasters(tiles[t], own, rs, { read: read!, values, hierarchy });
    stage('filled, depth and label rasters', t + 1, T);
  }
  return {
    tree, sums, hierarchy, areas, euler, sweepPits, filledVolume, filledCells, filledArea,
    seams: { perimeterCells, summaryBytes: tree.summaryBytes, eventBytes: tree.eventBytes, events: tree.events },
    options: { connectivity, nodataOutlet, minDepth, minArea, minVolume, minPersistence, fillOnlyBelow: opts.fillOnlyBelow ?? null },
  };
}
