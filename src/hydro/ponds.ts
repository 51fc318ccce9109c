/**
 * `ponds`: the depression hierarchy of a DEM — spill levels, pour points, volumes — and the
 * filled, depth and label rasters. See docs/ponds.md for the method.
 */
import { InputError } from '../errors.js';
import type { Grid } from '../surface/grid.js';
import type { Mesh } from '../surface/mesh.js';
import type { GridComplex, Connectivity, Boundary } from '../surface/complex.js';
import { sortOrder } from '../morse/order.js';
import type { ThreadOptions } from '../morse/parallel.js';
import { cellAreas, type CellAreas, type UnitOptions } from './areas.js';
import { sweepDepressions, nodeSums } from './sweep.js';
import { buildHierarchy, type Hierarchy, type HierarchyFilters } from './hierarchy.js';
import { pondRasters, type PondRasters, type SpareMemory } from './rasters.js';
import { catchments as catchmentsOf, type Catchments } from './catchments.js';
import { depressionShapes, type DepressionShapes } from './shape.js';
import { hydroSetup, openComplex, checkedSweepPits, type PondsEuler } from './common.js';

export interface PondsOptions extends UnitOptions, HierarchyFilters, ThreadOptions {
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
  /**
   * Catchments: 'sums' (default) finds every depression's catchment cells and area in memory the sweep
   * no longer needs; 'raster' also keeps the catchment of every cell (`catchments.labels`, one more
   * 4-byte array per cell); 'none' skips them.
   */
  catchments?: 'none' | 'sums' | 'raster';
  /** Shape attributes of the wet areas (perimeter, axes, orientation, box ratio). Default true. */
  shapes?: boolean;
  /** Name of the input, for messages. */
  source?: string;
  /** Called at the start of each stage (for progress display). */
  onStage?: (stage: string) => void;
}

export interface PondsResult {
  grid: Grid;
  complex: GridComplex;
  areas: CellAreas;
  hierarchy: Hierarchy;
  rasters: PondRasters;
  /** The catchments, when asked for (`catchments: true`). */
  catchments: Catchments | null;
  /** Shape attributes, unless `shapes: false`. */
  shapes: DepressionShapes | null;
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

/** A filter threshold from the options: a number ≥ 0 (0 when not given). */
function checkThreshold(name: string, v: number | undefined): number {
  if (v === undefined) return 0;
  if (!Number.isFinite(v) || v < 0) throw new InputError(`${name} must be a number ≥ 0, got ${v}`);
  return v;
}

/** The filter options of ponds, checked (one line each for a bad value): the single grid's and the tiled run's. */
export function pondsFilters(opts: HierarchyFilters & { minPersistence?: number; fillOnlyBelow?: number }): { minDepth: number; minArea: number; minVolume: number; minPersistence: number } {
  const f = {
    minDepth: checkThreshold('--min-depth', opts.minDepth),
    minArea: checkThreshold('--min-area', opts.minArea),
    minVolume: checkThreshold('--min-volume', opts.minVolume),
    minPersistence: checkThreshold('--min-persistence', opts.minPersistence),
  };
  if (opts.fillOnlyBelow !== undefined && !(opts.fillOnlyBelow > 0 && Number.isFinite(opts.fillOnlyBelow))) {
    throw new InputError(`--fill-only-below must be a volume > 0, got ${opts.fillOnlyBelow}`);
  }
  return f;
}

export function ponds(surface: Grid | Mesh, opts: PondsOptions = {}): PondsResult {
  const { source, grid, connectivity, nodataOutlet } = hydroSetup('ponds', surface, opts);
  const { minDepth, minArea, minVolume, minPersistence } = pondsFilters(opts);
  const areas = cellAreas(grid, opts, source);
  const stage = opts.onStage ?? (() => undefined);

  const { complex, euler: pendingEuler } = openComplex(grid, connectivity, nodataOutlet, opts.euler !== false, stage, opts);
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
  const euler = pendingEuler.result();
  const sweepPits = checkedSweepPits(sw, euler);
  let catchments: Catchments | null = null;
  const catchMode = opts.catchments ?? 'sums';
  if (catchMode !== 'none') {
    stage('catchments');
    const sp = sw.spare;
    const scratch = catchMode === 'sums' && sp.byteOffset % 4 === 0 && sp.byteLength >= 4 * grid.size ? new Int32Array(sp.buffer, sp.byteOffset, grid.size) : undefined;
    catchments = catchmentsOf(complex, sw, hierarchy, grid.transform, areas.rowArea, areas.uniform, !areas.uniform, scratch);
  }
  stage('filled, depth and label rasters');
  const spare: SpareMemory[] = [sw.spare];
  if (order.length === grid.size) spare.push({ buffer: order.buffer as ArrayBuffer, byteOffset: order.byteOffset, byteLength: order.byteLength });
  const rasters = pondRasters(grid.values, grid.width, sw.label, hierarchy, areas.rowArea, spare);
  let shapes: DepressionShapes | null = null;
  if (opts.shapes !== false) {
    stage('shape attributes');
    shapes = depressionShapes(grid, rasters.labels, hierarchy, areas.rowArea, !areas.uniform, connectivity, opts);
  }

  return {
    grid, complex, areas, hierarchy, rasters, catchments, shapes, sweepPits, euler,
    options: { connectivity, nodataOutlet, minDepth, minArea, minVolume, minPersistence, fillOnlyBelow: opts.fillOnlyBelow ?? null },
  };
}
