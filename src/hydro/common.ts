/** Set-up shared by `ponds` and `runoff`: the input checks, the open-boundary complex, the Euler self-check. */
import { InputError } from '../errors.js';
import type { Grid } from '../surface/grid.js';
import type { Mesh } from '../surface/mesh.js';
import { buildComplex, GridComplex, type Connectivity, type Boundary } from '../surface/complex.js';
import { countCriticalPoints } from '../morse/critical.js';
import { useWorker, gridTask, startEulerJob, type EulerCounts, type ThreadOptions } from '../morse/parallel.js';
import type { EulerInfo } from '../report/common.js';
import type { DepressionSweep } from './sweep.js';

/** The Euler self-check of a hydrology command (the same block every report carries). */
export type PondsEuler = EulerInfo;

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

export interface HydroSetupOptions {
  connectivity?: Connectivity;
  boundary?: Boundary;
  nodataOutlet?: boolean;
  source?: string;
}

/** The input and the options every hydrology command starts from; `command` names it in messages. */
export function hydroSetup(command: string, surface: Grid | Mesh, opts: HydroSetupOptions): { source: string; grid: Grid; connectivity: Connectivity; nodataOutlet: boolean } {
  const source = opts.source ?? 'input';
  const grid = checkPondsInput(surface, source);
  const boundary = opts.boundary ?? 'open';
  if (boundary !== 'open') {
    throw new InputError(`${command} needs --boundary open (water leaves the map at its edge and, unless --nodata-as wall, at nodata cells); got '${boundary}'`);
  }
  return { source, grid, connectivity: opts.connectivity ?? 8, nodataOutlet: opts.nodataOutlet ?? true };
}

/** The Euler self-check, taken when the caller needs it (it may be running in a worker thread). */
export interface PendingEuler {
  /** The counting runs in the worker thread. */
  readonly inWorker: boolean;
  /** The check's figures (null when it was not asked for); waits for the worker if it is still counting. */
  result(): PondsEuler | null;
}

/**
 * The open-boundary complex, and the Euler self-check (unless `euler` is false). On two threads,
 * and when the values are on shared memory (the loaders put them there), the check's counting
 * runs in a worker while the caller sorts and sweeps; otherwise it runs here at once, while
 * little memory is in use. Either way it counts without lists and allocates nothing grid-sized.
 */
export function openComplex(grid: Grid, connectivity: Connectivity, nodataOutlet: boolean, euler: boolean, stage: (s: string) => void, threads: ThreadOptions = {}): { complex: GridComplex; euler: PendingEuler } {
  stage('outlets and neighbour graph');
  const complex = buildComplex(grid, { connectivity, boundary: 'open', nodataOutlet }) as GridComplex;
  if (!euler) return { complex, euler: { inWorker: false, result: () => null } };
  if (useWorker(threads, complex.n) && grid.values.buffer instanceof SharedArrayBuffer) {
    const job = startEulerJob(gridTask(complex));
    return { complex, euler: { inWorker: true, result: () => eulerBlock(job.result()) } };
  }
  stage('Euler check');
  const block = eulerBlock({ critical: countCriticalPoints(complex), simplices: complex.countSimplices() });
  return { complex, euler: { inWorker: false, result: () => block } };
}

function eulerBlock({ critical, simplices }: EulerCounts): PondsEuler {
  const chi = simplices.characteristic;
  return {
    characteristic: chi, pits: critical.pits, passes: critical.passes, peaks: critical.peaks,
    holds: critical.pits - critical.passes + critical.peaks === chi,
    outsidePit: critical.outsidePit, simplices: simplices.byDimension,
  };
}

/**
 * Pits found by the sweep (cells that start a component), checked against the Euler check's.
 * The sweep and the lower links find pits independently: a cell starts a component exactly when
 * its lower link is empty. The outside vertex is the one extra pit.
 */
export function checkedSweepPits(sw: DepressionSweep, euler: PondsEuler | null): number {
  let sweepPits = 0;
  for (let k = 1; k < sw.count; k++) if (sw.vertex[k] === sw.birth[k]) sweepPits++;
  if (euler && euler.pits - 1 !== sweepPits) {
    throw new Error(`internal: the depression sweep found ${sweepPits} pits but the lower links ${euler.pits - 1}; this is a bug in sill, please report it with the input`);
  }
  return sweepPits;
}
