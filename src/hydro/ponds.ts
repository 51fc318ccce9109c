/**
 * `ponds`: the depression hierarchy of a DEM — spill levels, pour points, volumes — and the
 * filled, depth and label rasters. See docs/ponds.md for the method.
 */
import { InputError } from '../errors.js';
import type { Grid } from '../surface/grid.js';
import type { Mesh } from '../surface/mesh.js';
import { buildComplex, GridComplex, type Connectivity, type Boundary, type SimplexCounts } from '../surface/complex.js';
import { sortOrder } from '../morse/order.js';
import { countCriticalPoints } from '../morse/critical.js';
import { cellAreas, type CellAreas, type UnitOptions } from './areas.js';
import { sweepDepressions, nodeSums } from './sweep.js';
import { buildHierarchy, type Hierarchy, type HierarchyFilters } from './hierarchy.js';
import { pondRasters, type PondRasters, type SpareMemory } from './rasters.js';

export interface PondsOptions extends UnitOptions, HierarchyFilters {
  connectivity?: Connectivity;
  /** Only 'open' is meaningful for ponding (water must be able to leave the map). */
  boundary?: Boundary;
  /** Nodata cells drain to the outside (default true); false makes them walls. */
  nodataOutlet?: boolean;
  /** Survey's persistence threshold; for depressions it is the same measure as the depth spill − pit. */
  minPersistence?: number;
  /** Fill only depressions whose volume (volume unit) is below this. */
  fillOnlyBelow?: number;
  /** Run the Euler self-check (critical points vs. simplex count). Default true. */
  euler?: boolean;
  /** Name of the input, for messages. */
  source?: string;
  /** Called at the start of each stage (for progress display). */
  onStage?: (stage: string) => void;
}

export interface PondsEuler {
  characteristic: number;
  pits: number;
  passes: number;
  peaks: number;
  holds: boolean;
  outsidePit: boolean;
  simplices: number[];
}

export interface PondsResult {
  grid: Grid;
  complex: GridComplex;
  areas: CellAreas;
  hierarchy: Hierarchy;
  rasters: PondRasters;
  /** Pits found by the sweep (cells that start a component). */
  sweepPits: number;
  euler: PondsEuler | null;
  options: {
    connectivity: Connectivity;
    nodataOutlet: boolean;
    minDepth: number;
    minArea: number;
    minVolume: number;
    minPersistence: number;
    fillOnlyBelow: number | null;
  };
}

function checkThreshold(name: string, v: number | undefined): number {
  if (v === undefined) return 0;
  if (!Number.isFinite(v) || v < 0) throw new InputError(`${name} must be a number ≥ 0, got ${v}`);
  return v;
}

/** Check that a surface can be analysed for ponding; returns it as a Grid. */
export function checkPondsInput(surface: Grid | Mesh, source: string): Grid {
  if (surface.kind !== 'grid') {
    throw new InputError(`${source}: ponds needs a regular grid (a raster DEM); these are scattered samples — grid them first, or give a matrix or a GeoTIFF`);
  }
  const v = surface.values;
  let lo = Infinity, hi = -Infinity;
  for (let i = 0; i < v.length; i++) { const z = v[i]; if (z < lo) lo = z; if (z > hi) hi = z; }
  if (lo === Infinity) throw new InputError(`${source}: every cell is nodata; check the nodata value (--nodata) and the band (--band)`);
  if (lo === hi) throw new InputError(`${source}: every valid cell has the same value (${lo}); a flat surface has no depressions — check the band and the nodata value`);
  return surface;
}

export function ponds(surface: Grid | Mesh, opts: PondsOptions = {}): PondsResult {
  const source = opts.source ?? 'input';
  const grid = checkPondsInput(surface, source);
  const boundary = opts.boundary ?? 'open';
  if (boundary !== 'open') {
    throw new InputError(`ponds needs --boundary open (water leaves the map at its edge and, unless --nodata-as wall, at nodata cells); got '${boundary}'`);
  }
  const connectivity = opts.connectivity ?? 8;
  const nodataOutlet = opts.nodataOutlet ?? true;
  const minDepth = checkThreshold('--min-depth', opts.minDepth);
  const minArea = checkThreshold('--min-area', opts.minArea);
  const minVolume = checkThreshold('--min-volume', opts.minVolume);
  const minPersistence = checkThreshold('--min-persistence', opts.minPersistence);
  if (opts.fillOnlyBelow !== undefined && !(opts.fillOnlyBelow > 0 && Number.isFinite(opts.fillOnlyBelow))) {
    throw new InputError(`--fill-only-below must be a volume > 0, got ${opts.fillOnlyBelow}`);
  }
  const areas = cellAreas(grid, opts, source);
  const stage = opts.onStage ?? (() => undefined);

  stage('outlets and neighbour graph');
  const complex = buildComplex(grid, { connectivity, boundary: 'open', nodataOutlet }) as GridComplex;
  // The Euler self-check first, while little memory is in use (counts only, no lists).
  let euler: PondsEuler | null = null;
  if (opts.euler !== false) {
    stage('Euler check');
    const critical = countCriticalPoints(complex);
    const simplices: SimplexCounts = complex.countSimplices();
    const chi = simplices.characteristic;
    euler = {
      characteristic: chi, pits: critical.pits, passes: critical.passes, peaks: critical.peaks,
      holds: critical.pits - critical.passes + critical.peaks === chi,
      outsidePit: critical.outsidePit, simplices: simplices.byDimension,
    };
  }
  stage('ordering the cells');
  const order = sortOrder(grid.values);
  stage('depression sweep');
  const areaScale = areas.uniform ? areas.rowArea[0] : 1;
  const sw = sweepDepressions(complex, order, areas);
  stage('depression hierarchy');
  const hierarchy = buildHierarchy(sw, nodeSums(sw, grid.values, grid.width, areas.rowArea, areas.uniform), {
    minDepth: Math.max(minDepth, minPersistence), minArea, minVolume,
    areaScale, zFactor: areas.zFactor, fillOnlyBelow: opts.fillOnlyBelow,
  });
  sw.sums = undefined; // the per-node sums are in the hierarchy now; let their memory go
  let sweepPits = 0;
  for (let k = 1; k < sw.count; k++) if (sw.vertex[k] === sw.birth[k]) sweepPits++;
  // The sweep and the lower links find pits independently: a cell starts a component exactly
  // when its lower link is empty. The outside vertex is the one extra pit.
  if (euler && euler.pits - 1 !== sweepPits) {
    throw new Error(`internal: the depression sweep found ${sweepPits} pits but the lower links ${euler.pits - 1}; this is a bug in sill, please report it with the input`);
  }
  stage('filled, depth and label rasters');
  const spare: SpareMemory[] = [sw.spare];
  if (order.length === grid.size) spare.push({ buffer: order.buffer as ArrayBuffer, byteOffset: order.byteOffset, byteLength: order.byteLength });
  const rasters = pondRasters(grid.values, grid.width, sw.label, hierarchy, areas.rowArea, spare);

  return {
    grid, complex, areas, hierarchy, rasters, sweepPits, euler,
    options: { connectivity, nodataOutlet, minDepth, minArea, minVolume, minPersistence, fillOnlyBelow: opts.fillOnlyBelow ?? null },
  };
}
