/**
 * The four analyses as the library offers them, in one shape: `analysis(surface, options) → run`,
 * where the run holds `report` (the JSON object of the matching command, DESIGN §4: records made
 * on demand from typed columns) and `result` (the typed columns and rasters themselves). Options
 * are plain objects; every option and its default is documented here. Each run passes the same
 * self-checks as the command line (the Euler relation; runoff's water balance) or throws.
 */
import { BOUNDARIES, type Connectivity, type Boundary } from '../surface/complex.js';
import type { Grid } from '../surface/grid.js';
import { parseEnergyUnit, type EnergyUnit } from '../chem/units.js';
import type { MeshFieldOptions } from '../chem/field.js';
import { parseDepth, depthUnit, DEPTH_UNITS } from '../hydro/runoff-input.js';
import { InputError } from '../errors.js';
import { surveyReport, type SurveyRun } from '../report/survey.js';
import { pondsReport, type PondsRun } from '../report/ponds.js';
import { runoffReport, type RunoffRun } from '../report/runoff.js';
import { barriersReport, type BarriersRun } from '../report/barriers.js';
import { eulerFailure, checkBalance } from '../report/common.js';
import { surfaceName, type Surface } from './surface.js';
import type { Grid3 } from '../surface/grid3.js';
import type { Boundary3, Connectivity3 } from '../surface/complex3.js';
import { survey3Report, type Survey3Run } from '../report/survey3.js';

/** Options every analysis of a grid takes. */
export interface CommonOptions {
  /** Neighbourhood of a cell: 8 (default; sublevel sets 8-connected), 6 (Freudenthal triangulation) or 4. Ignored on meshes. */
  connectivity?: Connectivity;
  /** Threads: 1 keeps everything on the calling thread. Default: the number of cores (results are identical either way). */
  threads?: number;
  /** Name of the input in the report (`input`) and in messages. Default: the path the surface was read from, else null. */
  input?: string;
}

export interface SurveyOptions extends CommonOptions {
  /** What lies beyond the edge: 'open' (default: every outside cell is one outlet vertex at −∞), 'closed', 'periodic', 'periodic-x', 'periodic-y'. */
  boundary?: Boundary;
  /** Leave out features whose persistence is below this (surface units). Default 0: keep all. */
  minPersistence?: number;
}

/** Options of the hydrology analyses (`ponds`, `runoff`). The boundary is always open: water leaves the map at its edge. */
export interface HydroOptions extends CommonOptions {
  /** Nodata cells drain to the outside (default true); false makes them walls. */
  nodataOutlet?: boolean;
  /** Vertical unit of the values: 'm' (default, assumed and stated in the report), 'ft', 'us-ft', 'cm', 'mm'. */
  zUnits?: string;
  /** Metres per vertical unit of the values (instead of zUnits). */
  zFactor?: number;
  /** Horizontal unit when the grid has no CRS: 'm' (default), 'ft', 'us-ft', 'km', 'deg' (longitude/latitude on WGS84). */
  xyUnits?: string;
  /** Called at the start of each stage of the work (for a progress display). Default none. */
  onStage?: (stage: string) => void;
}

export interface PondsOptions extends HydroOptions {
  /** Merge depressions shallower than this (spill − pit, vertical unit) into their parent. Default 0. */
  minDepth?: number;
  /** Merge depressions with a wet area below this (report's area unit) into their parent. Default 0. */
  minArea?: number;
  /** Merge depressions holding less than this (report's volume unit) into their parent. Default 0. */
  minVolume?: number;
  /** Persistence threshold; for depressions the same measure as the depth spill − pit. Default 0. */
  minPersistence?: number;
  /** In the filled and depth rasters, fill only depressions holding less than this volume. Default: fill all. */
  fillOnlyBelow?: number;
  /** The label raster holds the innermost ('leaf', default) or the outermost ('top') depression id. */
  labelLevel?: 'leaf' | 'top';
}

export interface RunoffOptions extends HydroOptions {
  /** Uniform runoff depth over every valid cell: metres as a number, or text with a unit ('40mm', '0.1m', '2in'). Give this or depthRaster. */
  depth?: number | string;
  /** Runoff depth per cell (nodata: none), resampled to the DEM when its cells differ. Give this or depth. */
  depthRaster?: Grid;
  /** Unit of depthRaster's values: 'mm', 'cm', 'dm', 'm' (default), 'in', 'ft'. */
  depthRasterUnit?: string;
  /** Water surface already present (the DEM's vertical unit): the water above the ground is added where it lies. Default none. */
  initialLevel?: Grid;
}

export interface BarriersOptions extends CommonOptions {
  /** What lies beyond the sampled window: 'closed' (default: a wall), 'periodic' (both axes wrap, e.g. two dihedral angles), 'periodic-x', 'periodic-y', 'open'. */
  boundary?: Boundary;
  /** Energy unit of the values: 'kJ/mol', 'kcal/mol', 'eV', 'hartree', 'kT', 'K' or 'none' (default). */
  units?: EnergyUnit;
  /** Unit of the reported energies. Default: the input unit. */
  to?: EnergyUnit;
  /** Temperature in kelvin for kT, free energies and rates. Default 300. */
  temperature?: number;
  /** Merge basins whose barrier is below this (input unit). Default 1 kT when `units` is known, else 0. */
  minPersistence?: number;
  /** Values above this (input unit) count as unsampled. Default none. */
  cap?: number;
  /** Span of each periodic axis [x, y]. Default 360 or 2π, whichever the coordinates fit. */
  period?: [number | null, number | null];
  /** Images on each minimum-energy path (5 to 10 000). Default 81. */
  images?: number;
  /** Trace paths for at most this many transition states, lowest first (0 to 10 000). Default 200. */
  maxPaths?: number;
  /** Scattered samples: the moving-least-squares fit. Default: chosen from the sample spacing. */
  meshFit?: MeshFieldOptions;
}

const inputOf = (surface: Surface, o: { input?: string }): string | null => o.input ?? surfaceName(surface);

// The keys each analysis takes (the compiler holds them equal to the option types' keys).
const COMMON = { connectivity: true, threads: true, input: true } as const;
const HYDRO = { ...COMMON, nodataOutlet: true, zUnits: true, zFactor: true, xyUnits: true, onStage: true } as const;
const KEYS = {
  survey: { ...COMMON, boundary: true, minPersistence: true } satisfies Record<keyof SurveyOptions, true>,
  ponds: { ...HYDRO, minDepth: true, minArea: true, minVolume: true, minPersistence: true, fillOnlyBelow: true, labelLevel: true } satisfies Record<keyof PondsOptions, true>,
  runoff: { ...HYDRO, depth: true, depthRaster: true, depthRasterUnit: true, initialLevel: true } satisfies Record<keyof RunoffOptions, true>,
  barriers: {
    ...COMMON, boundary: true, units: true, to: true, temperature: true, minPersistence: true, cap: true, period: true, images: true, maxPaths: true, meshFit: true,
  } satisfies Record<keyof BarriersOptions, true>,
};

/**
 * Refuse what a plain-JavaScript caller could pass that the types exclude: a misspelt option (it
 * would be ignored silently) or a value outside an option's list. Numbers are checked by the analyses.
 */
function checkOptions(analysis: keyof typeof KEYS, options: object | undefined): void {
  if (options === undefined) return;
  if (options === null || typeof options !== 'object') throw new InputError(`${analysis}: options must be an object, got ${options === null ? 'null' : typeof options}`);
  const known: Record<string, true> = KEYS[analysis];
  const o = options as Record<string, unknown>;
  for (const k of Object.keys(o)) {
    if (!known[k]) throw new InputError(`${analysis}: unknown option '${k}'; the options are ${Object.keys(known).join(', ')}`);
  }
  const oneOf = (key: string, allowed: readonly unknown[]) => {
    if (o[key] !== undefined && !allowed.includes(o[key])) {
      throw new InputError(`${analysis}: ${key} must be one of ${allowed.map((a) => (typeof a === 'string' ? `'${a}'` : String(a))).join(', ')}, got ${JSON.stringify(o[key])}`);
    }
  };
  oneOf('connectivity', [4, 6, 8]);
  oneOf('boundary', BOUNDARIES);
  oneOf('labelLevel', ['leaf', 'top']);
  oneOf('nodataOutlet', [true, false]);
  if (o.input !== undefined && typeof o.input !== 'string') throw new InputError(`${analysis}: input names the surface in the report and must be a string`);
  if (o.onStage !== undefined && typeof o.onStage !== 'function') throw new InputError(`${analysis}: onStage must be a function`);
}

/**
 * Critical points (pits, passes, peaks), the Euler check, join and split trees and persistence
 * pairs. `report.criticalPoints` and `report.pairs` are lazy lists (`pairs.top(k)` picks the k
 * most persistent); `result` holds the columns and the merge trees.
 */
export function survey(surface: Surface, options: SurveyOptions = {}): SurveyRun {
  checkOptions('survey', options);
  const { input, ...opts } = options;
  const run = surveyReport(surface, opts, inputOf(surface, options));
  if (!run.report.euler.holds) throw eulerFailure(run.report.euler);
  return run;
}

/** Options of the survey of a 3-D grid (docs/grids3d.md). */
export interface Survey3ApiOptions {
  /** 14 (default: Freudenthal triangulation) or 26 (flag complex of the 26-neighbour graph). */
  connectivity?: Connectivity3;
  /** 'closed' (default), 'open' or 'periodic' (all axes wrap). */
  boundary?: Boundary3;
  /** Axes that wrap, [x, y, z], with boundary 'open' or 'closed' for the others. */
  periodicAxes?: [boolean, boolean, boolean];
  /** Open boundary: nodata points drain to the outside (default true). */
  nodataOutlet?: boolean;
  /** Leave out features whose persistence is below this. Default 0. */
  minPersistence?: number;
  input?: string;
}

const SURVEY3_KEYS: Record<keyof Survey3ApiOptions, true> = { connectivity: true, boundary: true, periodicAxes: true, nodataOutlet: true, minPersistence: true, input: true };

/** The survey of a 3-D grid: minima, index-1 and index-2 saddles, maxima, Euler check, merge trees, pairs of dimensions 0 and 2. */
export function survey3(grid: Grid3, options: Survey3ApiOptions = {}): Survey3Run {
  if (options === null || typeof options !== 'object') throw new InputError('survey3: options must be an object');
  for (const k of Object.keys(options)) {
    if (!(SURVEY3_KEYS as Record<string, true>)[k]) throw new InputError(`survey3: unknown option '${k}'; the options are ${Object.keys(SURVEY3_KEYS).join(', ')}`);
  }
  const { input, ...opts } = options;
  const run = survey3Report(grid, opts, input ?? null);
  const e = run.report.euler;
  if (!e.holds) throw eulerFailure({ characteristic: e.characteristic, pits: e.minima, passes: e.saddles1 - e.saddles2, peaks: e.maxima, holds: false, outsidePit: e.outsidePit } as Parameters<typeof eulerFailure>[0]);
  return run;
}

/**
 * Closed depressions of a DEM: spill levels, pour points, volumes and nesting. `report.depressions`
 * is a lazy list over typed columns (`largest(k)`, `at(i)`, `columns`); `result.rasters` holds
 * the filled, depth and label rasters (`pondsRasters` makes them ready for `writeGeoTiff`).
 */
export function ponds(surface: Surface, options: PondsOptions = {}): PondsRun {
  checkOptions('ponds', options);
  const { input, ...opts } = options;
  const name = inputOf(surface, options);
  const run = pondsReport(surface, { ...opts, boundary: 'open', source: name ?? 'input' }, name);
  if (run.report.euler && !run.report.euler.holds) throw eulerFailure(run.report.euler);
  return run;
}

/**
 * Routes a runoff depth through the depression hierarchy (fill, spill, merge): where water ponds,
 * at what level, and how much leaves the map. The water balance is checked (relative error ≤ 1e-9).
 */
export function runoff(surface: Surface, options: RunoffOptions): RunoffRun {
  checkOptions('runoff', options);
  const { input, depth, depthRasterUnit, ...opts } = options ?? {};
  const name = inputOf(surface, options ?? {});
  if (depth !== undefined && typeof depth !== 'number' && typeof depth !== 'string') throw new InputError(`runoff: depth is metres as a number or text with a unit ('40mm'), got ${typeof depth}`);
  let metres: number | undefined, depthText: string | undefined;
  if (typeof depth === 'string') { metres = parseDepth(depth, 'depth').metres; depthText = depth.trim(); }
  else if (depth !== undefined) { metres = depth; depthText = `${depth}m`; }
  let unit = 'm';
  if (depthRasterUnit !== undefined) {
    const u = depthUnit(depthRasterUnit);
    if (u === null) throw new InputError(`depthRasterUnit must be one of ${Object.keys(DEPTH_UNITS).join(', ')}; got '${depthRasterUnit}'`);
    unit = u;
  }
  const run = runoffReport(surface, {
    ...opts, boundary: 'open', depth: metres, depthText, source: name ?? 'input',
    depthRasterFactor: DEPTH_UNITS[unit], depthRasterUnit: opts.depthRaster ? unit : undefined,
    depthRasterSource: opts.depthRaster ? surfaceName(opts.depthRaster) ?? 'depth raster' : undefined,
    initialLevelSource: opts.initialLevel ? surfaceName(opts.initialLevel) ?? 'initial level' : undefined,
  }, name);
  if (run.report.euler && !run.report.euler.holds) throw eulerFailure(run.report.euler);
  checkBalance(run.report.water);
  return run;
}

/**
 * Energy landscapes: minima, transition states (refined, with Hessians), barriers, minimum-energy
 * paths, basin free energies and the disconnectivity graph; energies in `to` (default the input unit).
 */
export function barriers(surface: Surface, options: BarriersOptions = {}): BarriersRun {
  checkOptions('barriers', options);
  const { input, ...opts } = options;
  const units = opts.units === undefined ? 'none' : parseEnergyUnit(opts.units, 'barriers: units');
  const to = opts.to === undefined ? undefined : parseEnergyUnit(opts.to, 'barriers: to');
  if (to !== undefined && to !== units && (units === 'none' || to === 'none')) {
    throw new InputError(units === 'none' ? `barriers: to '${to}' needs the input unit: set units` : `barriers: to 'none' would drop the unit; leave to out to report in ${units}`);
  }
  const run = barriersReport(surface, { ...opts, units, to }, inputOf(surface, options));
  if (!run.report.euler.holds) throw eulerFailure(run.report.euler);
  return run;
}
