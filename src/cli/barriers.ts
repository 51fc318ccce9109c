/** `sill barriers IN`: minima, transition states, barriers, minimum-energy paths, basin hierarchy. */
import type { Command } from 'commander';
import { barriersReport, pathRows, type BarriersReport, type BarriersReportOptions, type BarrierEntry, type SpreadEntry } from '../report/barriers.js';
import type { BarriersResult } from '../chem/barriers.js';
import { BIN_LIMITS, DEFAULT_BLOCKS, MAX_BLOCKS, type SampleOptions } from '../chem/samples.js';
import { DEFAULT_RESAMPLES, DEFAULT_SEED, MAX_RESAMPLES } from '../chem/bootstrap.js';
import { barriersFromSamples, DEFAULT_MIN_COUNT } from '../report/samples.js';
import { parseEnergyUnit, checkTemperature, ENERGY_UNITS, type EnergyUnit } from '../chem/units.js';
import { MAX_IMAGES, MAX_PATHS, IMAGES_WHY, PATHS_WHY, MERGE_TOLERANCE } from '../chem/barriers.js';
import { NOISE_FACTOR } from '../chem/noise.js';
import { disconnectivitySvg } from '../render/disconnectivity.js';
import { landscapeSvg } from '../render/landscape.js';
import { withFileSink, writeJson, writeCsvRecords, TextSink } from '../io/stream.js';
import type { OutputFolder } from '../io/outdir.js';
import { GeoPackageWriter, type GpkgColumnType, type GpkgValue } from '../io/gpkg.js';
import { reportRequest, addReport, reportSummary, reportNames, flagsOf, BARRIERS_FLAGS, type ReportRequest } from './report-option.js';
import { buildBarriersReport as buildBarriersHtml } from '../render/html/barriers.js';
import { InputError, SelfCheckError } from '../errors.js';
import { addCommonOptions, parseBoundary, parseConnectivity, parseNumber, parseThreads, Progress, say, fmt, openOutput, VALUE_LIMIT, VALUE_WHY, GPKG_FILE, NO_GPKG, inputTime, MAX_COLUMN, type CommonOptions, type NumberLimits } from './common.js';
import { loadInput, columnCount } from './load.js';
import { checkCellBudget } from './budget.js';
import { eulerFailure } from './hydro-common.js';
import type { Boundary } from '../surface/complex.js';
import type { Grid } from '../surface/grid.js';
import type { Mesh } from '../surface/mesh.js';
import type { Grid3 } from '../surface/grid3.js';
import type { Connectivity3 } from '../surface/complex3.js';
import type { Barriers3Options } from '../chem/barriers3.js';
import { barriers3Report, path3Rows, type Barriers3Report, type Barriers3ReportOptions } from '../report/barriers3.js';
import type { Barriers3Result } from '../chem/barriers3.js';
import { slices3Svg, profiles3Svg } from '../render/landscape3.js';
import { isGrid3File, readGrid3 } from '../io/grid3-read.js';
import { grid3ReadOptions } from './survey3.js';

export interface BarriersCliOptions extends CommonOptions {
  units?: string;
  to?: string;
  temperature?: string;
  cap?: string;
  periodic?: boolean;
  period?: string;
  /** 3-D grids: axes that wrap (x,y,z). */
  periodicAxes?: string;
  images?: string;
  maxPaths?: string;
  /** Set by the command: --min-persistence was left at its default. */
  minPersistenceDefault?: boolean;
  /** Set by the command: --boundary was left at its default. */
  boundaryDefault?: boolean;
  /** Set by the command: --connectivity was left at its default. */
  connectivityDefault?: boolean;
  /** false with --no-gpkg: no results.gpkg. */
  gpkg?: boolean;
  samples?: string;
  bins?: string;
  variables?: string;
  weights?: string;
  logWeights?: string;
  range?: string;
  bandwidth?: string;
  blocks?: string;
  resamples?: string;
  seed?: string;
  minCount?: string;
}

/** Options that only mean something with --samples. */
const SAMPLE_FLAGS: [keyof BarriersCliOptions, string][] = [
  ['bins', '--bins'], ['variables', '--variables'], ['weights', '--weights'], ['logWeights', '--log-weights'], ['range', '--range'],
  ['bandwidth', '--bandwidth'], ['blocks', '--blocks'], ['resamples', '--resamples'], ['seed', '--seed'], ['minCount', '--min-count'],
];

export function registerBarriers(program: Command): void {
  const cmd = program
    .command('barriers')
    .description('energy landscapes: minima, transition states, barriers, minimum-energy paths and the disconnectivity graph')
    .argument('[input]', 'energy grid or scattered samples (text x y energy, GeoTIFF, .npy); or give --samples');
  addCommonOptions(cmd, { boundary: 'closed' });
  const mp = cmd.options.find((o) => o.long === '--min-persistence');
  if (mp) {
    mp.description = 'merge basins whose barrier is below V (input energy unit)';
    mp.defaultValueDescription = '1 kT at --temperature when --units is given, else the noise floor of the samples; 0 keeps everything';
  }
  cmd
    .option('--units <unit>', `energy unit of the input: ${ENERGY_UNITS.join(', ')}`, 'none')
    .option('--to <unit>', 'report energies in this unit (default: the input unit)')
    .option('--temperature <kelvin>', 'temperature for kT, free energies and rates (0.001 to 100 000 K)', '300')
    .option('--cap <energy>', 'treat samples above this energy (input unit) as unsampled')
    .option('--periodic', 'shorthand for --boundary periodic (both axes wrap, e.g. two dihedral angles)')
    .option('--period <p[,q]>', 'span of a periodic axis (x, or x,y); default 360 or 2π (3-D grids: one value, or one per periodic axis; default points × spacing)')
    .option('--periodic-axes <axes>', '3-D grids: axes that wrap, e.g. x,y (the others follow --boundary open or closed)')
    .option('--images <n>', 'images on each minimum-energy path (string method; 5 to 10 000)', '81')
    .option('--max-paths <n>', 'trace paths for at most N transition states, lowest first (up to 10 000)', '200')
    .option(...NO_GPKG)
    .option('--samples <file>', 'free energy from per-frame values of the variables (text columns or a 2-D .npy of frames × columns) instead of an energy grid')
    .option('--bins <nx,ny>', 'with --samples: bins along each variable (3 to 10 000 each)')
    .option('--variables <cols>', 'with --samples: 1-based columns of the variables (default 1,2)')
    .option('--weights <col>', 'with --samples: 1-based column of per-frame weights (reweighted or biased runs)')
    .option('--log-weights <col>', 'with --samples: 1-based column of per-frame log-weights ln w (e.g. bias/kT)')
    .option('--range <lo,hi,lo,hi>', 'with --samples: range of each variable (default: from the data; one period on periodic axes)')
    .option('--bandwidth <s[,s]>', 'with --samples: Gaussian kernel density with this bandwidth per variable (variable units) instead of the histogram')
    .option('--blocks <n>', `with --samples: blocks of the block bootstrap (2 to ${MAX_BLOCKS})`, String(DEFAULT_BLOCKS))
    .option('--resamples <n>', `with --samples: bootstrap resamples (2 to ${MAX_RESAMPLES})`, String(DEFAULT_RESAMPLES))
    .option('--seed <n>', 'with --samples: seed of the bootstrap resampling', String(DEFAULT_SEED))
    .option('--min-count <n>', 'with --samples: warn when a transition state sits in a bin with fewer frames', String(DEFAULT_MIN_COUNT))
    .action(async (input: string | undefined, opts: BarriersCliOptions, command: Command) => {
      for (const [key] of SAMPLE_FLAGS) if (command.getOptionValueSource(key) === 'default') opts[key] = undefined as never;
      opts.minPersistenceDefault = command.getOptionValueSource('minPersistence') === 'default';
      opts.boundaryDefault = command.getOptionValueSource('boundary') === 'default';
      opts.connectivityDefault = command.getOptionValueSource('connectivity') === 'default';
      await runBarriersCommand(input, opts);
    });
}

function parsePeriod(s: string | undefined): [number | null, number | null] | undefined {
  if (s === undefined) return undefined;
  const parts = s.split(',');
  if (parts.length < 1 || parts.length > 2) throw new InputError(`--period takes one span or two separated by a comma (x,y), got '${s}'`);
  const v = parts.map((p) => parseNumber('--period', p, { positive: true, max: VALUE_LIMIT, minMagnitude: 1 / VALUE_LIMIT, why: VALUE_WHY }));
  return [v[0], v.length === 2 ? v[1] : v[0]];
}

function parseList(name: string, s: string, counts: number[], limits: NumberLimits): number[] {
  const parts = s.split(',');
  if (!counts.includes(parts.length)) throw new InputError(`${name} takes ${counts.join(' or ')} numbers separated by commas, got '${s}'`);
  return parts.map((p) => parseNumber(name, p, limits));
}

interface SampleSetup {
  file: string;
  options: SampleOptions;
  boot: { resamples: number; seed: number };
  minCount: number;
}

/** The --samples options, checked (one line per problem). */
function parseSampleOptions(opts: BarriersCliOptions, boundary: Boundary, period: [number | null, number | null] | undefined): SampleSetup {
  if (opts.bins === undefined) throw new InputError('--samples needs --bins NX,NY: the number of bins along each variable (e.g. --bins 50,50)');
  const col = { integer: true, min: 1, max: MAX_COLUMN };
  const bins = parseList('--bins', opts.bins, [2, 3], { integer: true, min: BIN_LIMITS[0], max: BIN_LIMITS[1], why: 'more bins than frames can fill leave most of them empty' });
  const dims = bins.length;
  if (dims === 3) {
    throw new InputError('--bins with 3 numbers: barriers on 3-variable surfaces is not available yet in this version; give 2 variables (--bins NX,NY and --variables)');
  }
  const variables = opts.variables === undefined ? Array.from({ length: dims }, (_, i) => i + 1) : parseList('--variables', opts.variables, [dims], col);
  const weightCol = opts.weights === undefined ? undefined : parseNumber('--weights', opts.weights, col);
  const logCol = opts.logWeights === undefined ? undefined : parseNumber('--log-weights', opts.logWeights, col);
  if (weightCol !== undefined && logCol !== undefined) throw new InputError('--weights and --log-weights both name a weight column; give one of them');
  let range: ([number, number] | null)[] | undefined;
  if (opts.range !== undefined) {
    const v = parseList('--range', opts.range, [2 * dims], { max: VALUE_LIMIT, why: VALUE_WHY });
    range = [];
    for (let a = 0; a < dims; a++) {
      if (!(v[2 * a + 1] > v[2 * a])) throw new InputError(`--range: the range of variable ${a + 1} must be low,high with low < high, got ${v[2 * a]},${v[2 * a + 1]}`);
      range.push([v[2 * a], v[2 * a + 1]]);
    }
  }
  let bandwidth: number[] | null = null;
  if (opts.bandwidth !== undefined) {
    const v = parseList('--bandwidth', opts.bandwidth, [1, dims], { positive: true, max: VALUE_LIMIT, why: VALUE_WHY });
    bandwidth = v.length === 1 ? new Array<number>(dims).fill(v[0]) : v;
  }
  const periodic = [boundary === 'periodic' || boundary === 'periodic-x', boundary === 'periodic' || boundary === 'periodic-y'];
  if (boundary === 'open') throw new InputError('--boundary open has no meaning for a surface from samples (the edge of the range is not an outlet); use closed or periodic');
  const blocks = parseNumber('--blocks', opts.blocks ?? String(DEFAULT_BLOCKS), { integer: true, min: 2, max: MAX_BLOCKS, why: 'each block keeps a grid of its own' });
  const resamples = parseNumber('--resamples', opts.resamples ?? String(DEFAULT_RESAMPLES), { integer: true, min: 2, max: MAX_RESAMPLES, why: 'each resample repeats the analysis' });
  const seed = parseNumber('--seed', opts.seed ?? String(DEFAULT_SEED), { integer: true, min: 0, max: 4294967295 });
  const minCount = parseNumber('--min-count', opts.minCount ?? String(DEFAULT_MIN_COUNT), { integer: true, min: 0, max: 1e12 });
  return {
    file: opts.samples!,
    options: {
      bins, variables, weights: weightCol, logWeights: logCol, range, bandwidth, blocks,
      periodic, period: period ? [periodic[0] ? period[0] : null, periodic[1] ? period[1] : null] : undefined,
    },
    boot: { resamples, seed },
    minCount,
  };
}

export async function runBarriersCommand(input: string | undefined, opts: BarriersCliOptions): Promise<BarriersReport | Barriers3Report> {
  if (opts.samples !== undefined && input !== undefined) throw new InputError(`give either an energy surface (${input}) or --samples ${opts.samples}, not both`);
  if (opts.samples === undefined) {
    if (input === undefined) throw new InputError('barriers needs an input: an energy surface file, or --samples FILE with --bins (frames of sampled variables)');
    const stray = SAMPLE_FLAGS.find(([key]) => opts[key] !== undefined);
    if (stray) throw new InputError(`${stray[1]} applies to --samples (a free energy from frames); leave it out for an energy surface`);
  }
  const progress = new Progress(opts.quiet || opts.json);
  // 14 and 26 are the 3-D connectivities: checked once the input is read
  const given3 = opts.connectivity === '14' || opts.connectivity === '26';
  const connectivity = given3 ? 8 : parseConnectivity(opts.connectivity);
  let boundary: Boundary = parseBoundary(opts.boundary ?? 'closed');
  if (opts.periodic) {
    if (opts.boundaryDefault === false && boundary !== 'periodic') {
      throw new InputError(`--periodic means --boundary periodic, but --boundary ${boundary} was also given; give one of them`);
    }
    boundary = 'periodic';
  }
  const units = parseEnergyUnit(opts.units ?? 'none', '--units');
  const to = opts.to === undefined ? undefined : parseEnergyUnit(opts.to, '--to');
  const temperature = parseNumber('--temperature', opts.temperature ?? '300');
  if (!(temperature > 0)) throw new InputError(`--temperature must be a temperature in kelvin above 0, got '${opts.temperature}'`);
  checkTemperature(temperature);
  if (to !== undefined && to !== units && (units === 'none' || to === 'none')) {
    throw new InputError(units === 'none'
      ? `--to ${to} needs the input unit: add --units (one of ${ENERGY_UNITS.filter((u) => u !== 'none').join(', ')})`
      : `--to none would drop the unit; leave --to out to report in ${units}`);
  }
  const minPersistence = opts.minPersistenceDefault || opts.minPersistence === undefined
    ? undefined : parseNumber('--min-persistence', opts.minPersistence, { min: 0, max: VALUE_LIMIT, why: VALUE_WHY });
  const cap = opts.cap === undefined ? undefined : parseNumber('--cap', opts.cap, { max: VALUE_LIMIT, why: VALUE_WHY });
  if (cap !== undefined && cap < -VALUE_LIMIT) throw new InputError(`--cap must be at least -1e150, got '${opts.cap}': ${VALUE_WHY}`);
  // a 3-D grid (3-D .npy, or x y z value rows) goes to the 3-D analysis; --period is then per axis
  const is3 = opts.samples === undefined && opts.layout === undefined && (await isGrid3File(input!, columnCount(opts.columns)));
  if (!is3 && opts.periodicAxes !== undefined) throw new InputError(`--periodic-axes applies to 3-D grids (a 3-D .npy array, or x y z value text); for a 2-D grid use --boundary periodic, periodic-x or periodic-y`);
  const options3 = is3 ? barriers3Options(opts, boundary) : null;
  const read3 = options3 ? grid3ReadOptions(opts, options3.boundary ?? 'closed') : null;
  const period = is3 ? undefined : parsePeriod(opts.period);
  const images = parseNumber('--images', opts.images ?? '81', { integer: true, min: 5, max: MAX_IMAGES, why: IMAGES_WHY });
  const maxPaths = parseNumber('--max-paths', opts.maxPaths ?? '200', { integer: true, min: 0, max: MAX_PATHS, why: PATHS_WHY });
  const setup = opts.samples === undefined ? null : parseSampleOptions(opts, boundary, period);
  if (setup && units === 'none') throw new InputError(`--samples makes a free energy F = −kT ln p, which needs an energy unit: add --units (one of ${ENERGY_UNITS.filter((u) => u !== 'none').join(', ')})`);
  const source = setup ? setup.file : input!;

  // the command line in the report names the boundary in effect and leaves out a defaulted --min-persistence
  const render = reportRequest('barriers', setup ? [] : [source], { ...opts, boundary, periodic: undefined, minPersistence: minPersistence === undefined ? undefined : opts.minPersistence }, flagsOf({ ...opts }, BARRIERS_FLAGS));
  const out = openOutput(opts, 'barriers', [...BARRIERS_FILES, ...BARRIERS3_FILES, ...(opts.gpkg === false ? [] : [GPKG_FILE]), ...reportNames(render)], [source]);
  const analysis: BarriersReportOptions = { connectivity, boundary, units, to, temperature, minPersistence, cap, period, images, maxPaths, threads: parseThreads(opts.threads) };
  let result: BarriersResult, report: BarriersReport;
  const warnings: string[] = [];
  if (setup) {
    if (given3) {
      const err = new InputError(`--connectivity ${opts.connectivity} is for 3-D grids; --samples with 2 variables makes a 2-D surface: use 4, 6 or 8`);
      throw out ? out.fail(err) : err;
    }
    progress.stage(`reading the frames of ${source} (two passes), the analysis and a block bootstrap of ${setup.boot.resamples} resamples`);
    const run = await barriersFromSamples(source, { ...analysis, samples: setup.options, bootstrap: setup.boot, minCount: setup.minCount });
    ({ result, report } = run);
    warnings.push(...run.warnings);
  } else {
    progress.stage(`reading ${source}`);
    const surface = read3 ? await readGrid3(source, read3) : (await loadInput(source, opts)) as Grid | Mesh | Grid3;
    checkCellBudget('barriers', surface.size, source);
    if (surface.kind === 'grid3') {
      try {
        if (render) throw new InputError(`${source}: --report is not available for 3-D grids yet; -o DIR writes the 3-D figures (slices.svg, profiles.svg, disconnectivity.svg)`);
        const o3 = { ...options3!, periodicAxes: options3!.boundary === 'periodic' ? undefined : read3?.periodicAxes };
        progress.stage('critical points, basins, refinement and paths (3-D)');
        return await runBarriers3(surface, source, { ...o3, units, to, temperature, minPersistence, cap, images, maxPaths }, opts, out, progress);
      } catch (e) {
        throw out ? out.fail(e) : e;
      }
    }
    if (given3) {
      const err = new InputError(`--connectivity ${opts.connectivity} is for 3-D grids; ${source} is a 2-D surface: use 4, 6 or 8`);
      throw out ? out.fail(err) : err;
    }
    progress.stage('critical points, basins, refinement and paths');
    ({ result, report } = barriersReport(surface, analysis, source));
  }
  progress.done();
  if (!report.euler.holds) throw eulerFailure(report.euler);
  for (const w of warnings) process.stderr.write(`warning: ${w}\n`);
  if (out) await writeBarriersFiles(out, result, report, render, opts.gpkg !== false && inputTime(source));
  if (opts.json) {
    const sink = new TextSink(1);
    writeJson(sink, report);
    sink.write('\n');
    sink.close();
  }
  say(opts, barriersSummary(report, opts.out, opts.gpkg !== false));
  if (render && opts.out) say(opts, reportSummary(opts.out, render));
  return report;
}

/** The files `barriers -o DIR` may write (besides the report's); paths/ holds one CSV per path. */
export const BARRIERS_FILES = [
  'report.json', 'minima.csv', 'transition-states.csv', 'barriers.csv', 'lowest-barriers.csv', 'paths/',
  'disconnectivity.json', 'disconnectivity.svg', 'landscape.svg',
];

/** Column types of the results.gpkg layers minima and transition-states (named like the CSV columns; the rest are REAL). */
const TEXT_COLUMNS = new Set(['id', 'energy_basis', 'refinement', 'connects_1', 'connects_2', 'path_file']);
const INTEGER_COLUMNS = new Set(['col', 'row', 'on_edge', 'basin_samples', 'multiplicity', 'in_hierarchy', 'path_agrees', 'bootstrap_found', 'bin_frames']);
const columnType = (name: string): GpkgColumnType => (TEXT_COLUMNS.has(name) ? 'TEXT' : INTEGER_COLUMNS.has(name) ? 'INTEGER' : 'REAL');

/** A CSV accessor's value as a GeoPackage value (undefined: NULL). */
const gpkgValue = (v: unknown): GpkgValue => (v === undefined || v === null ? null : typeof v === 'number' || typeof v === 'string' || typeof v === 'boolean' ? v : String(v));

export async function writeBarriersFiles(out: OutputFolder, result: BarriersResult, report: BarriersReport, render?: ReportRequest | null, gpkg: Date | false = new Date()): Promise<string[]> {
  let gp: GeoPackageWriter | null = null;
  try {
    const json = (name: string, value: unknown) => withFileSink(out.path(name), (sink) => { writeJson(sink, value, 1); sink.write('\n'); });
    const csv = <T>(name: string, rows: readonly T[], columns: [string, (r: T) => unknown][]) => withFileSink(out.path(name), (sink) => writeCsvRecords(sink, rows, columns));
    json('report.json', report);
    const stationaryCols = <T extends BarriersReport['minima'][number] | BarriersReport['transitionStates'][number]>(): [string, (r: T) => unknown][] => [
      ['id', (r) => r.id],
      ['x', (r) => r.refined?.x ?? r.x], ['y', (r) => r.refined?.y ?? r.y], ['energy', (r) => r.refined?.energy ?? r.energy],
      ['energy_basis', (r) => r.energyBasis],
      ['sampled_x', (r) => r.x], ['sampled_y', (r) => r.y], ['sampled_energy', (r) => r.energy],
      ['col', (r) => r.col], ['row', (r) => r.row], ['on_edge', (r) => (r.onEdge ? 1 : 0)],
      ['hessian_xx', (r) => r.hessian?.[0][0]], ['hessian_xy', (r) => r.hessian?.[0][1]], ['hessian_yy', (r) => r.hessian?.[1][1]],
      ['eigenvalue_1', (r) => r.hessianEigenvalues?.[0]], ['eigenvalue_2', (r) => r.hessianEigenvalues?.[1]],
      ['refinement', (r) => r.refinement.status],
      ['persistence', (r) => r.persistence], ['merged_points', (r) => r.merged.length],
    ];
    const minimaCols: [string, (r: BarriersReport['minima'][number]) => unknown][] = [
      ...stationaryCols<BarriersReport['minima'][number]>(),
      ['basin_samples', (m) => m.basin.samples], ['basin_area', (m) => m.basin.area],
      ['free_energy', (m) => m.basin.freeEnergy], ['relative_free_energy', (m) => m.basin.relativeFreeEnergy],
      ['population', (m) => m.basin.population],
    ];
    const tsCols: [string, (r: BarriersReport['transitionStates'][number]) => unknown][] = [
      ...stationaryCols<BarriersReport['transitionStates'][number]>(),
      ['connects_1', (t) => t.connects[0]], ['connects_2', (t) => t.connects[1]],
      ['multiplicity', (t) => t.multiplicity], ['in_hierarchy', (t) => (t.inTree ? 1 : 0)],
      ['path_file', (t) => t.path?.file], ['path_maximum', (t) => t.path?.maximum.energy], ['path_agrees', (t) => (t.path ? (t.path.agrees ? 1 : 0) : null)],
    ];
    // a surface from samples: the bin's frames and the bootstrap spreads as extra columns
    const fromSamples = report.samples !== undefined;
    const spreadCols = <T>(name: string, get: (r: T) => SpreadEntry | null | undefined): [string, (r: T) => unknown][] =>
      (['mean', 'se', 'low', 'high'] as const).map((k) => [`${name}_${k}`, (r: T) => get(r)?.[k]] as [string, (r: T) => unknown]);
    if (fromSamples) {
      minimaCols.push(['bootstrap_found', (m) => m.basin.uncertainty?.found], ...spreadCols<BarriersReport['minima'][number]>('relative_free_energy', (m) => m.basin.uncertainty?.relativeFreeEnergy));
      tsCols.push(['bin_frames', (t) => t.binFrames]);
    }
    csv('minima.csv', report.minima, minimaCols);
    csv('transition-states.csv', report.transitionStates, tsCols);
    csv('barriers.csv', report.barriers, [
      ['from', (b) => b.from], ['to', (b) => b.to], ['via', (b) => b.via],
      ['forward', (b) => b.forward], ['backward', (b) => b.backward], ['energy_basis', (b) => b.energyBasis],
      ['rate_forward_per_s', (b) => b.rateForward], ['rate_backward_per_s', (b) => b.rateBackward],
      ...(fromSamples ? [
        ['bootstrap_found', (b: BarrierEntry) => b.uncertainty?.found] as [string, (b: BarrierEntry) => unknown],
        ...spreadCols<BarrierEntry>('forward', (b) => b.uncertainty?.forward), ...spreadCols<BarrierEntry>('backward', (b) => b.uncertainty?.backward),
      ] : []),
    ]);
    if (report.lowestBarriers) {
      csv('lowest-barriers.csv', report.lowestBarriers, [
        ['a', (r) => r.a], ['b', (r) => r.b], ['via', (r) => r.via], ['energy', (r) => r.energy], ['from_a', (r) => r.fromA], ['from_b', (r) => r.fromB],
      ]);
    }
    for (const t of result.transitionStates) {
      if (!t.path || t.path.images.length === 0) continue;
      csv(`paths/${t.id}.csv`, pathRows(result, t.path, report.units.factor), [
        ['arc_length', (p) => p.s], ['x', (p) => p.x], ['y', (p) => p.y], ['energy', (p) => p.energy],
      ]);
    }
    if (gpkg !== false) {
      // minima and transition states as points (the rows of their CSV files, at the refined
      // position when there is one), the paths as lines (the x, y of paths/ID.csv)
      gp = new GeoPackageWriter(out.path(GPKG_FILE), result.surface.crs, { lastChange: gpkg });
      const points = <T extends { refined: { x: number; y: number } | null; x: number; y: number }>(name: string, description: string, rows: readonly T[], cols: [string, (r: T) => unknown][]) => {
        const layer = gp!.layer({ name, geometry: 'POINT', description, columns: cols.map(([n]) => [n, columnType(n)] as const) });
        for (let i = 0; i < rows.length; i++) {
          const r = rows[i];
          layer.point(i + 1, r.refined?.x ?? r.x, r.refined?.y ?? r.y, cols.map(([, f]) => gpkgValue(f(r))));
        }
      };
      points('minima', 'local minima of the energy (the rows of minima.csv)', report.minima, minimaCols);
      points('transition-states', 'transition states: first-order saddles between basins (the rows of transition-states.csv)', report.transitionStates, tsCols);
      const paths = gp.layer({
        name: 'paths', geometry: 'LINESTRING', description: 'minimum-energy paths through the transition states (the x, y columns of paths/ID.csv)',
        columns: [['id', 'TEXT'], ['images', 'INTEGER'], ['maximum', 'REAL'], ['file', 'TEXT']],
      });
      let fid = 0;
      for (let i = 0; i < result.transitionStates.length; i++) {
        const t = result.transitionStates[i], rec = report.transitionStates[i];
        if (!t.path || t.path.images.length === 0) continue;
        const rows = pathRows(result, t.path, report.units.factor);
        const xy = new Float64Array(2 * rows.length);
        for (let k = 0; k < rows.length; k++) { xy[2 * k] = rows[k].x; xy[2 * k + 1] = rows[k].y; }
        paths.line(++fid, xy, [t.id, rows.length, rec.path?.maximum.energy ?? null, `paths/${t.id}.csv`]);
      }
      gp.finish();
      gp = null;
    }
    json('disconnectivity.json', { schema: 'sill/disconnectivity@1', unit: report.units.output, ...report.disconnectivity });
    out.write('disconnectivity.svg', disconnectivitySvg(report));
    out.write('landscape.svg', landscapeSvg(result, report));
    addReport(out, render, ['report.json', 'minima.csv', 'transition-states.csv', 'barriers.csv', 'disconnectivity.svg', 'landscape.svg'], (ctx) => buildBarriersHtml(result, report, ctx));
    return await out.commit();
  } catch (e) {
    gp?.abort();
    throw out.fail(e);
  }
}

/** One line: how many features were removed or merged, and by which rule; null when none were. */
export function removedLine(r: BarriersReport, u: string): string | null {
  const rm = r.removed;
  const n = (k: number, one: string, many: string) => `${k} ${k === 1 ? one : many}`;
  const both = (a: number, b: number) => [a ? n(a, 'minimum', 'minima') : '', b ? n(b, 'transition state', 'transition states') : ''].filter(Boolean).join(' and ');
  const parts: string[] = [];
  const below = both(rm.belowThreshold.minima, rm.belowThreshold.transitionStates);
  if (below) {
    const what = r.noiseFloor.used ? 'the noise floor' : r.minPersistence.source === 'given' ? '--min-persistence' : '1 kT';
    parts.push(`${below} with persistence below ${what} ${fmt(rm.belowThreshold.threshold, 4)}${u}`);
  }
  if (rm.edge.transitionStates) parts.push(`${n(rm.edge.transitionStates, 'transition state', 'transition states')} on the hull of the samples where the surface rises out of the window (more than the threshold within one spacing)`);
  const merged = both(rm.merged.minima, rm.merged.transitionStates);
  if (merged) parts.push(`${merged} merged into another state (same refined point within ${MERGE_TOLERANCE} local spacing, a failed minimum inside its basin, or the saddle between two such pits; listed as \`merged\` in report.json)`);
  return parts.length ? parts.join('; ') : null;
}

export function barriersSummary(r: BarriersReport, outDir?: string, gpkg = true): string {
  const s = r.surface;
  const u = r.units.output === 'none' ? '' : ` ${r.units.output}`;
  const lines: string[] = [];
  lines.push(s.kind === 'grid'
    ? `surface   ${s.width} × ${s.height} grid, ${s.validCells} valid cells`
    : `surface   ${s.points} scattered samples (Delaunay triangulation)`);
  lines.push(`complex   connectivity ${r.connectivity ?? 'triangulation'}, boundary ${r.boundary}; Euler ${r.euler.holds ? 'holds' : 'FAILS'} (χ = ${r.euler.characteristic})`);
  const threshold = r.noiseFloor.used
    ? `min persistence ${fmt(r.minPersistence.value, 4)}${u}: the noise floor of the samples (${r.surface.kind === 'grid' ? (r.noiseFloor.scale === null ? 'grid values not quantised' : 'the value quantum') : `${fmt(r.noiseFloor.scale, 3)}${u} robust spread of the plane-fit residuals × ${NOISE_FACTOR}`})`
    : `${r.minPersistence.source.startsWith('default') ? 'default ' : ''}min persistence ${fmt(r.minPersistence.value, 4)}${u}`;
  lines.push(`energies  in${u || ' input units'}${r.units.kT !== null ? `, T = ${r.units.temperature} K, kT = ${fmt(r.units.kT, 4)}${u}` : ''}; ${threshold}`);
  const why = removedLine(r, u);
  if (why) lines.push(`removed   ${why}`);
  const edgeMin = r.counts.onEdge.minima, edgeTs = r.counts.onEdge.transitionStates;
  lines.push(`found     ${r.counts.minima} minima${edgeMin ? ` (${edgeMin} on the edge of the samples)` : ''}, ${r.counts.transitionStates} transition states${edgeTs ? ` (${edgeTs} on the edge)` : ''}`);
  const e = (x: number | null | undefined) => fmt(x ?? null, 5);
  lines.push('minima:');
  for (const m of r.minima.slice(0, 20)) {
    const p = m.refined ?? m;
    const pop = m.basin.population === null ? '' : `  population ${fmt(m.basin.population, 3)}`;
    lines.push(`  ${m.id.padEnd(4)} E ${e(p.energy).padStart(10)}  at (${fmt(p.x, 6)}, ${fmt(p.y, 6)})${m.refined ? '' : ` [${m.refinement.status}]`}${m.onEdge ? ' [edge]' : ''}${pop}`);
  }
  if (r.minima.length > 20) lines.push(`  … ${r.minima.length - 20} more in report.json`);
  if (r.transitionStates.length) lines.push('transition states:');
  for (const t of r.transitionStates.slice(0, 20)) {
    const p = t.refined ?? t;
    const path = t.path ? `, path max ${t.path.agrees ? 'agrees' : `differs by ${fmt(t.path.maximumMinusTs, 3)}`}` : '';
    lines.push(`  ${t.id.padEnd(4)} E ${e(p.energy).padStart(10)}  at (${fmt(p.x, 6)}, ${fmt(p.y, 6)})  joins ${t.connects.join('–')}${t.refined ? '' : ` [${t.refinement.status}]`}${t.onEdge ? ' [edge]' : ''}${path}`);
  }
  if (r.transitionStates.length > 20) lines.push(`  … ${r.transitionStates.length - 20} more in report.json`);
  if (r.barriers.length) {
    lines.push(`barriers${u ? ` (${u.trim()})` : ''}:   from → to   via   forward   backward${r.rates ? '   k_forward (1/s, order of magnitude)' : ''}`);
    for (const b of r.barriers.slice(0, 30)) {
      const rate = r.rates ? `   ${b.rateForward === null ? '—' : b.rateForward.toExponential(1)}` : '';
      lines.push(`  ${`${b.from} → ${b.to}`.padEnd(14)} ${b.via.padEnd(5)} ${e(b.forward).padStart(9)} ${e(b.backward).padStart(10)}${rate}`);
      const u = b.uncertainty;
      if (u) {
        const one = (s: SpreadEntry | null | undefined) => (s ? `± ${fmt(s.se, 2)} [${fmt(s.low, 4)}, ${fmt(s.high, 4)}]` : '—');
        lines.push(`  ${''.padEnd(20)} bootstrap: forward ${one(u.forward)}, backward ${one(u.backward)}; found in ${u.found}/${u.resamples}`);
      }
    }
    if (r.barriers.length > 30) lines.push(`  … ${r.barriers.length - 30} more in barriers.csv`);
  }
  const sm = r.samples;
  if (sm) {
    lines.push(`samples   ${sm.frames} frames${sm.weights ? ` (${sm.weights.kind} in column ${sm.weights.column}, ${fmt(sm.effectiveFrames, 3)} effective)` : ''}, ${sm.estimator === 'histogram' ? 'histogram' : `kernel density, bandwidth ${sm.bandwidth!.map((b) => fmt(b, 4)).join(', ')}`} on ${sm.bins.join(' × ')} bins, ${sm.maskedBins} masked (no frame)` +
      (sm.bootstrap ? `; block bootstrap: ${sm.bootstrap.resamples} resamples of ${sm.bootstrap.blocks} blocks, seed ${sm.bootstrap.seed}, ${sm.bootstrap.level * 100} % percentile intervals` : ''));
  }
  for (const n of r.notes) lines.push(`note      ${n}`);
  if (outDir) lines.push(`files     ${outDir}/ report.json minima.csv transition-states.csv barriers.csv paths/ disconnectivity.svg landscape.svg${gpkg ? ' results.gpkg' : ''}`);
  return lines.join('\n');
}

/** The files `barriers -o DIR` writes on a 3-D grid besides the 2-D names (which figures differ). */
export const BARRIERS3_FILES = ['slices.svg', 'profiles.svg'];

/** Connectivity and periodic axes of a 3-D run from the command line. */
function barriers3Options(opts: BarriersCliOptions, boundary: Boundary): Pick<Barriers3Options, 'connectivity' | 'boundary' | 'periodicAxes'> {
  let connectivity: Connectivity3 = 14;
  if (!opts.connectivityDefault && opts.connectivity !== undefined) {
    if (opts.connectivity !== '14' && opts.connectivity !== '26') throw new InputError(`--connectivity must be 14 (Freudenthal triangulation) or 26 on a 3-D grid, got '${opts.connectivity}'`);
    connectivity = Number(opts.connectivity) as Connectivity3;
  }
  if (boundary === 'periodic-x' || boundary === 'periodic-y') {
    throw new InputError(`--boundary ${boundary} is for 2-D grids; on a 3-D grid give --boundary closed (or open) --periodic-axes ${boundary.slice(-1)}`);
  }
  return { connectivity, boundary };
}

/**
 * `barriers` on a 3-D grid once it is loaded: the analysis, report.json and the files, the summary.
 * (Also what the library and the samples command call with a grid built in memory.)
 */
export async function runBarriers3(grid: Grid3, input: string | null, options: Barriers3ReportOptions, opts: BarriersCliOptions, out: OutputFolder | null, progress?: Progress): Promise<Barriers3Report> {
  const { result, report } = barriers3Report(grid, options, input);
  progress?.done();
  if (!report.euler.holds) {
    const e = report.euler;
    throw new SelfCheckError('the Euler relation does not hold', `χ = ${e.characteristic} by counting simplices, minima − index-1 + index-2 − maxima = ${e.minima - e.saddles1 + e.saddles2 - e.maxima}`);
  }
  if (out) await writeBarriers3Files(out, result, report);
  if (opts.json) {
    const sink = new TextSink(1);
    writeJson(sink, report);
    sink.write('\n');
    sink.close();
  }
  say(opts, barriers3Summary(report, opts.out));
  return report;
}

export async function writeBarriers3Files(out: OutputFolder, result: Barriers3Result, report: Barriers3Report): Promise<string[]> {
  try {
    const json = (name: string, value: unknown) => withFileSink(out.path(name), (sink) => { writeJson(sink, value, 1); sink.write('\n'); });
    const csv = <T>(name: string, rows: readonly T[], columns: [string, (r: T) => unknown][]) => withFileSink(out.path(name), (sink) => writeCsvRecords(sink, rows, columns));
    json('report.json', report);
    type S = Barriers3Report['minima'][number] | Barriers3Report['transitionStates'][number];
    const stationaryCols = <T extends S>(): [string, (r: T) => unknown][] => [
      ['id', (r) => r.id],
      ['x', (r) => r.refined?.x ?? r.x], ['y', (r) => r.refined?.y ?? r.y], ['z', (r) => r.refined?.z ?? r.z], ['energy', (r) => r.refined?.energy ?? r.energy],
      ['energy_basis', (r) => r.energyBasis],
      ['sampled_x', (r) => r.x], ['sampled_y', (r) => r.y], ['sampled_z', (r) => r.z], ['sampled_energy', (r) => r.energy],
      ['col', (r) => r.col], ['row', (r) => r.row], ['layer', (r) => r.layer], ['on_edge', (r) => (r.onEdge ? 1 : 0)],
      ['hessian_xx', (r) => r.hessian?.[0][0]], ['hessian_xy', (r) => r.hessian?.[0][1]], ['hessian_xz', (r) => r.hessian?.[0][2]],
      ['hessian_yy', (r) => r.hessian?.[1][1]], ['hessian_yz', (r) => r.hessian?.[1][2]], ['hessian_zz', (r) => r.hessian?.[2][2]],
      ['eigenvalue_1', (r) => r.hessianEigenvalues?.[0]], ['eigenvalue_2', (r) => r.hessianEigenvalues?.[1]], ['eigenvalue_3', (r) => r.hessianEigenvalues?.[2]],
      ['refinement', (r) => r.refinement.status],
      ['persistence', (r) => r.persistence], ['merged_points', (r) => r.merged.length],
    ];
    type Mi = Barriers3Report['minima'][number];
    type Ts = Barriers3Report['transitionStates'][number];
    csv('minima.csv', report.minima, [
      ...stationaryCols<Mi>(),
      ['basin_samples', (m) => m.basin.samples], ['basin_volume', (m) => m.basin.area],
      ['free_energy', (m) => m.basin.freeEnergy], ['relative_free_energy', (m) => m.basin.relativeFreeEnergy],
      ['population', (m) => m.basin.population],
    ]);
    csv('transition-states.csv', report.transitionStates, [
      ...stationaryCols<Ts>(),
      ['connects_1', (t) => t.connects[0]], ['connects_2', (t) => t.connects[1]],
      ['multiplicity', (t) => t.multiplicity], ['in_hierarchy', (t) => (t.inTree ? 1 : 0)],
      ['path_file', (t) => t.path?.file], ['path_maximum', (t) => t.path?.maximum.energy], ['path_agrees', (t) => (t.path ? (t.path.agrees ? 1 : 0) : null)],
    ]);
    csv('barriers.csv', report.barriers, [
      ['from', (b) => b.from], ['to', (b) => b.to], ['via', (b) => b.via],
      ['forward', (b) => b.forward], ['backward', (b) => b.backward], ['energy_basis', (b) => b.energyBasis],
      ['rate_forward_per_s', (b) => b.rateForward], ['rate_backward_per_s', (b) => b.rateBackward],
    ]);
    if (report.lowestBarriers) {
      csv('lowest-barriers.csv', report.lowestBarriers, [
        ['a', (r) => r.a], ['b', (r) => r.b], ['via', (r) => r.via], ['energy', (r) => r.energy], ['from_a', (r) => r.fromA], ['from_b', (r) => r.fromB],
      ]);
    }
    for (const t of result.transitionStates) {
      if (!t.path || t.path.x.length === 0) continue;
      csv(`paths/${t.id}.csv`, path3Rows(result, t.path, report.units.factor), [
        ['arc_length', (p) => p.s], ['x', (p) => p.x], ['y', (p) => p.y], ['z', (p) => p.z], ['energy', (p) => p.energy],
      ]);
    }
    json('disconnectivity.json', { schema: 'sill/disconnectivity@1', unit: report.units.output, ...report.disconnectivity });
    out.write('disconnectivity.svg', disconnectivitySvg(report));
    out.write('slices.svg', slices3Svg(result, report));
    out.write('profiles.svg', profiles3Svg(result, report));
    return await out.commit();
  } catch (e) {
    throw out.fail(e);
  }
}

export function barriers3Summary(r: Barriers3Report, outDir?: string): string {
  const s = r.surface;
  const u = r.units.output === 'none' ? '' : ` ${r.units.output}`;
  const e = (x: number | null | undefined) => fmt(x ?? null, 5);
  const at = (p: { x: number; y: number; z: number }) => `(${fmt(p.x, 6)}, ${fmt(p.y, 6)}, ${fmt(p.z, 6)})`;
  const lines: string[] = [];
  lines.push(`surface   ${s.width} × ${s.height} × ${s.depth} grid, ${s.validCells} valid points`);
  lines.push(`complex   connectivity ${r.connectivity}, boundary ${r.boundary}; Euler ${r.euler.holds ? 'holds' : 'FAILS'} (χ = ${r.euler.characteristic})`);
  lines.push(`energies  in${u || ' input units'}${r.units.kT !== null ? `, T = ${r.units.temperature} K, kT = ${fmt(r.units.kT, 4)}${u}` : ''}; ${r.minPersistence.source.startsWith('default') ? 'default ' : ''}min persistence ${fmt(r.minPersistence.value, 4)}${u}`);
  lines.push(`found     ${r.counts.minima} minima, ${r.counts.transitionStates} transition states`);
  lines.push('minima:');
  for (const m of r.minima.slice(0, 20)) {
    const p = m.refined ?? m;
    const pop = m.basin.population === null ? '' : `  population ${fmt(m.basin.population, 3)}`;
    lines.push(`  ${m.id.padEnd(4)} E ${e(p.energy).padStart(10)}  at ${at(p)}${m.refined ? '' : ` [${m.refinement.status}]`}${m.onEdge ? ' [edge]' : ''}${pop}`);
  }
  if (r.minima.length > 20) lines.push(`  … ${r.minima.length - 20} more in report.json`);
  if (r.transitionStates.length) lines.push('transition states:');
  for (const t of r.transitionStates.slice(0, 20)) {
    const p = t.refined ?? t;
    const path = t.path ? `, path max ${t.path.agrees ? 'agrees' : `differs by ${fmt(t.path.maximumMinusTs, 3)}`}` : '';
    lines.push(`  ${t.id.padEnd(4)} E ${e(p.energy).padStart(10)}  at ${at(p)}  joins ${t.connects.join('–')}${t.refined ? '' : ` [${t.refinement.status}]`}${t.onEdge ? ' [edge]' : ''}${path}`);
  }
  if (r.transitionStates.length > 20) lines.push(`  … ${r.transitionStates.length - 20} more in report.json`);
  if (r.barriers.length) {
    lines.push(`barriers${u ? ` (${u.trim()})` : ''}:   from → to   via   forward   backward`);
    for (const b of r.barriers.slice(0, 30)) lines.push(`  ${`${b.from} → ${b.to}`.padEnd(14)} ${b.via.padEnd(5)} ${e(b.forward).padStart(9)} ${e(b.backward).padStart(10)}`);
    if (r.barriers.length > 30) lines.push(`  … ${r.barriers.length - 30} more in barriers.csv`);
  }
  for (const n of r.notes) lines.push(`note      ${n}`);
  if (outDir) {
    const sl = r.slices.map((c) => `${c.id} at layer ${c.layer} (z = ${fmt(c.z, 4)})`).join(', ');
    lines.push(`figures   slices.svg: x–y planes through ${sl}; profiles.svg: energy along each path`);
    lines.push(`files     ${outDir}/ report.json minima.csv transition-states.csv barriers.csv paths/ disconnectivity.svg slices.svg profiles.svg`);
  }
  return lines.join('\n');
}
