/**
 * `runoff`: where a given runoff depth ponds. The depression sweep of `ponds` (every depression,
 * no filters), then Fill–Spill–Merge over its tree (src/hydro/runoff-route.ts), water levels from
 * the stage–volume curves, and the water-level and water-depth rasters. See docs/runoff.md.
 */
import { InputError } from '../errors.js';
import type { Grid } from '../surface/grid.js';
import type { Mesh } from '../surface/mesh.js';
import type { GridComplex, Connectivity, Boundary } from '../surface/complex.js';
import { sortOrder } from '../morse/order.js';
import type { ThreadOptions } from '../morse/parallel.js';
import { cellAreas, type CellAreas, type UnitOptions } from './areas.js';
import { sweepDepressions, nodeSums, SUM_STRIDE as S, SPILLZ, PITZ, type NodeSums } from './sweep.js';
import { buildHierarchy, type Hierarchy } from './hierarchy.js';
import { hydroSetup, openComplex, checkedSweepPits, type PondsEuler } from './common.js';
import { stepWeights, flowDestinations, routingTree, fillSpillMerge, layerLevels, type RoutingTree, type RoutingResult } from './runoff-route.js';
import { alignRaster, checkDepthRaster, MAX_DEPTH } from './runoff-input.js';
import type { StageRow } from './stage.js';

export interface RunoffOptions extends UnitOptions, ThreadOptions {
  connectivity?: Connectivity;
  /** Only 'open': water must be able to leave the map. */
  boundary?: Boundary;
  /** Nodata cells drain to the outside (default true); false makes them walls. */
  nodataOutlet?: boolean;
  /** Uniform runoff depth over every valid cell, in metres. */
  depth?: number;
  /** Runoff depth per cell (nodata: none); its unit is `depthRasterFactor` metres (default 1). */
  depthRaster?: Grid;
  depthRasterFactor?: number;
  /** Name of the depth raster, for messages. */
  depthRasterSource?: string;
  /** Water surface already present (DEM vertical unit): the water above the ground is added where it lies. */
  initialLevel?: Grid;
  initialLevelSource?: string;
  /** Run the Euler self-check (critical points vs. simplex count). Default true. */
  euler?: boolean;
  /** Name of the input, for messages. */
  source?: string;
  onStage?: (stage: string) => void;
}

/** A connected body of ponded water: the cells under one water surface. */
export interface WaterBodies {
  count: number;
  /** Arrays indexed by body id 1..count (entry 0 unused); ids run from the largest volume down. */
  node: Int32Array;
  volume: Float64Array;
  level: Float64Array;
  cells: Float64Array;
  area: Float64Array;
  maxDepth: Float64Array;
  /** The innermost reported depression holding the body (0: a walled-in region). */
  depression: Int32Array;
  /** The body stands at the spill level of the depression it fills (and passes any more water on). */
  full: Uint8Array;
}

export interface RunoffWater {
  /** All water put on the DEM: runoff + initial (volume unit). */
  input: number;
  runoff: number;
  initial: number;
  /** Water standing on the DEM after routing: Σ over wet cells of (level − z) × cell area. */
  ponded: number;
  /** The same from the routing's bookkeeping (Σ held by the outermost nodes). */
  stored: number;
  /** Water that left the map. */
  outflow: number;
  /** Of that, the water of cells draining straight off the map, past every depression. */
  outflowDirect: number;
  /** |input − ponded − outflow|, and that relative to the input (0 when no water was put on). */
  balanceErrorVolume: number;
  balanceError: number;
}

export interface RunoffInputInfo {
  mode: 'uniform' | 'raster';
  /** Uniform depth in metres (null with a raster). */
  depth: number | null;
  raster: { source: string; factor: number; resampled: boolean; missingCells: number; outsideCells: number } | null;
  initial: { source: string; resampled: boolean; wetCells: number } | null;
  /** Valid cells that received runoff (depth > 0) or initial water. */
  wetInputCells: number;
}

export interface RunoffResult {
  grid: Grid;
  complex: GridComplex;
  areas: CellAreas;
  /** The depressions as `ponds` reports them without filters (ids shared with `sill ponds`). */
  hierarchy: Hierarchy;
  euler: PondsEuler | null;
  sweepPits: number;
  /** The sweep's tree and its state after routing, node by node. */
  tree: RoutingTree;
  route: RoutingResult;
  sums: NodeSums;
  /** Node → the water surface over its own cells (−∞: dry); node → one level over its whole water (NaN: dry or pools at several levels). */
  surface: Float64Array;
  singleLevel: Float64Array;
  /** Node → wet cells, wet area, deepest water, over its subtree. */
  wetCells: Float64Array;
  wetArea: Float64Array;
  maxWaterDepth: Float64Array;
  /** Cell → sweep node it joined (0 the outside; nodata undefined). */
  label: Int32Array;
  rasters: {
    /** Water surface on ponded cells, NaN elsewhere (the DEM's float type). */
    level: Float32Array | Float64Array;
    /** Ponded depth (level − z), 0 on dry cells, NaN on nodata. */
    depth: Float32Array | Float64Array;
    /** Water body id per cell (0 dry, −1 nodata). */
    bodies: Int32Array;
  };
  bodies: WaterBodies;
  water: RunoffWater;
  input: RunoffInputInfo;
  /** Things the user should know (a resampled raster …). */
  warnings: string[];
  /** Walled-in regions (with --nodata-as wall): how many hold water, and how much. */
  closedRegions: { count: number; water: number };
  options: { connectivity: Connectivity; nodataOutlet: boolean };
}

/**
 * Smallest water depth, as a fraction of the largest elevation magnitude, whose balance can be
 * booked to 1e-9: water levels are elevations plus depths, and float64 keeps about 16 digits.
 * Measured (200 × 200 random DEM at 8800 m, float32 and float64): the relative balance error is
 * about 8e-19 × elevation / depth (7e-11 at 0.1 mm, 6e-9 at 1 µm); 1e-8 keeps it near 1e-10, a
 * tenth of the tolerance. Thinner water is refused with a hint to rescale; the balance check after
 * the run catches the rest.
 */
export const DEPTH_RESOLUTION = 1e-8;

/** Refuse runoff depths too thin to be added to the DEM's elevations without losing them. */
function checkDepthResolution(z: ArrayLike<number>, width: number, zFactor: number, depth: number | null, raster: ArrayLike<number> | null, factor: number, rasterSource: string): void {
  let zmax = 0;
  for (let i = 0; i < z.length; i++) { const a = Math.abs(z[i]); if (a > zmax) zmax = a; }
  const floor = zmax * zFactor * DEPTH_RESOLUTION; // metres
  const hint = `elevations reach ${zmax.toPrecision(4)} and float64 keeps about 16 digits, so water thinner than ${floor.toPrecision(3)} m cannot be balanced to 1e-9 when added to them; ` +
    'subtract a base elevation from the DEM (so it starts near 0) or route a larger depth';
  if (depth !== null && depth > 0 && depth < floor) throw new InputError(`--depth ${depth} m is too thin for this DEM: ${hint}`);
  if (raster) {
    for (let i = 0; i < raster.length; i++) {
      const d = raster[i] * factor;
      if (d > MAX_DEPTH) throw new InputError(`--depth-raster ${rasterSource}: the DEM cell (col ${i % width}, row ${Math.floor(i / width)}) gets ${d.toPrecision(3)} m of runoff, more than ${MAX_DEPTH} m; check the raster's unit (--depth-units)`);
      if (d > 0 && d < floor) throw new InputError(`--depth-raster ${rasterSource}: the DEM cell (col ${i % width}, row ${Math.floor(i / width)}) gets ${d.toPrecision(3)} m, too thin for this DEM: ${hint}, or set such cells to 0`);
    }
  }
}

export function runoff(surface: Grid | Mesh, opts: RunoffOptions): RunoffResult {
  const { source, grid, connectivity, nodataOutlet } = hydroSetup('runoff', surface, opts);
  const hasDepth = opts.depth !== undefined, hasRaster = opts.depthRaster !== undefined;
  if (hasDepth === hasRaster) throw new InputError(hasDepth ? 'give either --depth or --depth-raster, not both' : 'say how much runoff: --depth D (e.g. 25mm) or --depth-raster R.tif');
  if (hasDepth && !(Number.isFinite(opts.depth) && opts.depth! >= 0)) throw new InputError(`--depth must be a finite depth ≥ 0, got ${opts.depth}`);
  const factor = opts.depthRasterFactor ?? 1;
  if (!(Number.isFinite(factor) && factor > 0)) throw new InputError(`the depth raster's unit must be a positive number of metres, got ${factor}`);
  const areas = cellAreas(grid, opts, source);
  const stage = opts.onStage ?? (() => undefined);
  const warnings: string[] = [];

  // the water, on the DEM's grid (checked before any work)
  const rasterSource = opts.depthRasterSource ?? 'depth raster';
  let depthValues: Float32Array | Float64Array | null = null;
  let rasterInfo: RunoffInputInfo['raster'] = null;
  if (opts.depthRaster) {
    checkDepthRaster(opts.depthRaster, '--depth-raster', rasterSource);
    const al = alignRaster(grid, opts.depthRaster, '--depth-raster', rasterSource);
    if (al.warning) warnings.push(al.warning);
    depthValues = al.values;
    rasterInfo = { source: rasterSource, factor, resampled: al.resampled, missingCells: al.missing, outsideCells: al.outside };
  }
  let initialValues: Float32Array | Float64Array | null = null;
  let initialInfo: RunoffInputInfo['initial'] = null;
  if (opts.initialLevel) {
    const src = opts.initialLevelSource ?? 'initial level raster';
    const v = opts.initialLevel.values;
    for (let i = 0; i < v.length; i++) {
      const x = v[i];
      if (x === x && !Number.isFinite(x)) {
        throw new InputError(`--initial-level ${src}: cell (col ${i % opts.initialLevel.width}, row ${Math.floor(i / opts.initialLevel.width)}) holds ${x}, not a water level; fix the file or mark the cell as nodata`);
      }
    }
    const al = alignRaster(grid, opts.initialLevel, '--initial-level', src);
    if (al.warning) warnings.push(al.warning);
    initialValues = al.values;
    initialInfo = { source: src, resampled: al.resampled, wetCells: 0 };
  }

  checkDepthResolution(grid.values, grid.width, areas.zFactor, opts.depth ?? null, depthValues, factor, rasterSource);

  const { complex, euler: pendingEuler } = openComplex(grid, connectivity, nodataOutlet, opts.euler !== false, stage, opts);
  stage('ordering the cells');
  const values = grid.values, W = grid.width, H = grid.height, n = grid.size;
  const order = sortOrder(values);
  stage('depression sweep');
  const areaScale = areas.uniform ? areas.rowArea[0] : 1;
  const sw = sweepDepressions(complex, order, areas);
  const sums = nodeSums(sw, values, W, areas.rowArea, areas.uniform);
  stage('depression hierarchy');
  const hierarchy = buildHierarchy(sw, sums, { areaScale, zFactor: areas.zFactor });
  const euler = pendingEuler.result();
  const sweepPits = checkedSweepPits(sw, euler);

  stage('flow paths');
  const label = sw.label;
  const dest = new Int32Array(sw.spare.buffer, sw.spare.byteOffset, n);
  flowDestinations(complex, label, dest, stepWeights(grid.transform, H, connectivity, !areas.uniform));

  // water per leaf: the runoff (and initial water) of the cells draining to it
  stage('runoff to the pits');
  const K = sw.count;
  const direct = new Float64Array(K);
  const zf = areas.zFactor, rowArea = areas.rowArea;
  const uniformDepth = opts.depth ?? 0;
  let runoffVolume = 0, initialVolume = 0, wetInputCells = 0;
  for (let r = 0, i = 0; r < H; r++) {
    const a = rowArea[r];
    let rowRunoff = 0, rowInitial = 0;
    for (let c = 0; c < W; c++, i++) {
      const z = values[i];
      if (z !== z) continue;
      let d = uniformDepth;
      if (depthValues) { const x = depthValues[i]; d = x === x ? x * factor : 0; }
      let e = 0;
      if (initialValues) { const L = initialValues[i]; if (L > z) { e = (L - z) * zf; initialInfo!.wetCells++; } }
      if (d > 0 || e > 0) {
        wetInputCells++;
        direct[dest[i]] += (d + e) * a;
        rowRunoff += d;
        rowInitial += e;
      }
    }
    runoffVolume += rowRunoff * a;
    initialVolume += rowInitial * a;
  }

  stage('fill, spill, merge');
  const tree = routingTree(sw, sums, values, dest, areaScale, zf);
  const route = fillSpillMerge(tree, direct);
  stage('water levels');
  const layer = layerLevels(tree, route, sums, order, label, values, W, rowArea, areas.uniform, areaScale, zf);

  // the water surface over each node's own cells, top-down; water bodies
  const { parent, childStart, children } = tree;
  const { full, own, stored } = route;
  const rec = sums.rec;
  const layerWet = (k: number): boolean => full[k] === 1 || own[k] > 0;
  const surf = new Float64Array(K).fill(-Infinity);
  const bodyRoot = new Int32Array(K).fill(-1);
  for (let k = K - 1; k >= 1; k--) {
    const p = parent[k];
    if (p > 0 && layerWet(p)) { surf[k] = surf[p]; bodyRoot[k] = bodyRoot[p]; continue; }
    if (full[k]) surf[k] = rec[S * k + SPILLZ];
    else if (own[k] > 0) surf[k] = layer[k];
    else continue;
    bodyRoot[k] = k;
  }
  // bodies numbered from the largest volume down (ties by node): the radix sort of the cell order, on −volume
  let nRoots = 0;
  for (let k = 1; k < K; k++) if (bodyRoot[k] === k && stored[k] > 0) nRoots++;
  const rootNode = new Int32Array(nRoots), negVolume = new Float64Array(nRoots);
  for (let k = 1, q = 0; k < K; k++) if (bodyRoot[k] === k && stored[k] > 0) { rootNode[q] = k; negVolume[q++] = -stored[k]; }
  const roots = Array.from(sortOrder(negVolume), (q) => rootNode[q]);
  const B = roots.length + 1;
  const bodyOfRoot = new Int32Array(K);
  const bodies: WaterBodies = {
    count: roots.length, node: new Int32Array(B), volume: new Float64Array(B), level: new Float64Array(B), cells: new Float64Array(B),
    area: new Float64Array(B), maxDepth: new Float64Array(B), depression: new Int32Array(B), full: new Uint8Array(B),
  };
  roots.forEach((k, q) => {
    const id = q + 1;
    bodyOfRoot[k] = id;
    bodies.node[id] = k; bodies.volume[id] = stored[k]; bodies.level[id] = surf[k];
    bodies.maxDepth[id] = surf[k] - rec[S * k + PITZ];
    bodies.depression[id] = hierarchy.repOfNode[k];
    bodies.full[id] = full[k];
  });

  // rasters, one pass in storage order
  stage('water-level and water-depth rasters');
  const f32 = values instanceof Float32Array;
  const levelOut = f32
    ? (order.length === n ? new Float32Array(order.buffer, order.byteOffset, n) : new Float32Array(n))
    : new Float64Array(n);
  const depthOut = f32 ? new Float32Array(n) : new Float64Array(n);
  const bodyOut = dest; // the flow destinations are not needed any more
  const wetCells = new Float64Array(K), wetArea = new Float64Array(K);
  let ponded = 0;
  for (let r = 0, i = 0; r < H; r++) {
    const a = rowArea[r];
    let rowSum = 0;
    for (let c = 0; c < W; c++, i++) {
      const z = values[i];
      if (z !== z) { levelOut[i] = NaN; depthOut[i] = NaN; bodyOut[i] = -1; continue; }
      const k = label[i];
      const s = k > 0 ? surf[k] : -Infinity;
      if (z < s) {
        levelOut[i] = s;
        depthOut[i] = s - z;
        rowSum += s - z;
        wetCells[k]++;
        wetArea[k] += a;
        const b = bodyOfRoot[bodyRoot[k]];
        bodyOut[i] = b;
        bodies.cells[b]++;
        bodies.area[b] += a;
      } else {
        levelOut[i] = NaN;
        depthOut[i] = 0;
        bodyOut[i] = 0;
      }
    }
    ponded += rowSum * a;
  }
  ponded *= zf;

  // per node over its subtree: wet cells and area, deepest water, one level (or NaN)
  const maxWaterDepth = new Float64Array(K), singleLevel = new Float64Array(K).fill(NaN);
  for (let k = 1; k < K; k++) {
    let lev = NaN, seen = false, several = false, md = 0;
    for (let q = childStart[k]; q < childStart[k + 1]; q++) {
      const c = children[q];
      wetCells[k] += wetCells[c];
      wetArea[k] += wetArea[c];
      if (maxWaterDepth[c] > md) md = maxWaterDepth[c];
      if (stored[c] > 0) {
        const l = singleLevel[c];
        if (!seen) { lev = l; seen = true; } else if (!(l === lev)) several = true;
      }
    }
    if (layerWet(k) && stored[k] > 0) {
      singleLevel[k] = surf[k];
      md = Math.max(md, surf[k] - rec[S * k + PITZ]);
    } else singleLevel[k] = several ? NaN : lev;
    maxWaterDepth[k] = md;
  }

  // totals
  let storedTotal = 0, closedCount = 0, closedWater = 0;
  for (let k = 1; k < K; k++) {
    if (parent[k] > 0) continue;
    storedTotal += stored[k];
    if (parent[k] === -1 && stored[k] > 0) { closedCount++; closedWater += stored[k]; }
  }
  const input = runoffVolume + initialVolume;
  const err = Math.abs(input - ponded - route.outflow);
  const water: RunoffWater = {
    input, runoff: runoffVolume, initial: initialVolume, ponded, stored: storedTotal,
    outflow: route.outflow, outflowDirect: route.outflowDirect,
    balanceErrorVolume: err, balanceError: input > 0 ? err / input : err,
  };

  return {
    grid, complex, areas, hierarchy, euler, sweepPits, tree, route, sums,
    surface: surf, singleLevel, wetCells, wetArea, maxWaterDepth, label,
    rasters: { level: levelOut, depth: depthOut, bodies: bodyOut },
    bodies, water,
    input: { mode: hasDepth ? 'uniform' : 'raster', depth: hasDepth ? uniformDepth : null, raster: rasterInfo, initial: initialInfo, wetInputCells },
    warnings,
    closedRegions: { count: closedCount, water: closedWater },
    options: { connectivity, nodataOutlet },
  };
}

/**
 * Stage–volume table of depression `id` (an id of the hierarchy, as in `sill ponds`): water level,
 * wet area, volume and cells from its pit to its spill level in steps of `step` (default 1/50 of
 * its depth), one level across the whole depression (nested ones included).
 */
export function runoffStageVolume(res: RunoffResult, id: number, step?: number): StageRow[] {
  const H = res.hierarchy;
  if (!Number.isInteger(id) || id < 1 || id > H.count) {
    throw new InputError(`--stage-volume ${id}: there ${H.count === 1 ? 'is 1 depression' : `are ${H.count} depressions`} (ids 1…${H.count}); pick one from runoff.csv`);
  }
  const pit = H.pitValue[id], spill = H.spillValue[id];
  const dz = step ?? (spill - pit) / 50;
  if (!(dz > 0)) throw new InputError(`--stage-step must be greater than 0, got ${step}`);
  const steps = Math.ceil((spill - pit) / dz - 1e-9);
  if (steps > 100000) throw new InputError(`--stage-step ${dz} gives ${steps} rows from ${pit} to ${spill}; choose a step of at least ${(spill - pit) / 100000}`);
  const { tin, tout } = res.tree;
  const k = H.node[id];
  const lo = tin[k], hi = tout[k];
  const values = res.grid.values, label = res.label, W = res.grid.width, rowArea = res.areas.rowArea;
  let m = 0;
  for (let i = 0; i < values.length; i++) { const q = label[i]; const z = values[i]; if (q > 0 && z < spill && tin[q] >= lo && tin[q] < hi) m++; }
  const zs = new Float64Array(m), as = new Float64Array(m);
  for (let i = 0, j = 0; i < values.length; i++) {
    const q = label[i], z = values[i];
    if (q > 0 && z < spill && tin[q] >= lo && tin[q] < hi) { zs[j] = z; as[j++] = rowArea[(i / W) | 0]; }
  }
  const idx = new Uint32Array(m);
  for (let j = 0; j < m; j++) idx[j] = j;
  idx.sort((a, b) => zs[a] - zs[b]);
  const rows: StageRow[] = [];
  let p = 0, A = 0, AZ = 0, N = 0;
  const zf = res.areas.zFactor;
  for (let s = 0; s <= steps; s++) {
    const h = s === steps ? spill : pit + s * dz;
    while (p < m && zs[idx[p]] < h) { const q = idx[p++]; A += as[q]; AZ += as[q] * (zs[q] - pit); N++; }
    rows.push({ level: h, cells: N, area: A, volume: Math.max(0, ((h - pit) * A - AZ) * zf) });
  }
  return rows;
}
