/**
 * `sill ponds MOSAIC -o DIR --scheduler local|slurm [--run-dir RUN] [--dry-run]`: the tile passes
 * of a mosaic as run-folder stages (src/tiles/stages.ts), run by the local pool of child processes
 * or as Slurm job arrays chained with afterok dependencies. Wiring only.
 *
 * Outputs: filled/, depth/, labels/ (one GeoTIFF per input tile) and filled.vrt, depth.vrt,
 * labels.vrt, the same files the mosaic writer (src/cli/mosaic.ts writeRasterProducts) writes,
 * made tile by tile from the windows' rasters in the run folder (writeTileRasters). The
 * catalogues and the other products of `ponds -o` are not written by this path yet (docs/tiles.md).
 *
 * Also the hidden command `sill tile-stage RUN STAGE INDEX` that each task runs.
 */
import { existsSync, rmSync } from 'node:fs';
import { relative, resolve } from 'node:path';
import { cpus } from 'node:os';
import { Option, type Command } from 'commander';
import { InputError } from '../errors.js';
import { runTileStage, planPondsStages, pondsStaged, readWindowRasters, type MosaicSource } from '../tiles/stages.js';
import type { CellWindow } from '../tiles/mosaic.js';
import type { OutputFolder } from '../io/outdir.js';
import { writeGeoTiff, type RasterValues } from '../io/geotiff-write.js';
import { vrtText } from '../io/vrt-write.js';
import type { Hierarchy } from '../hydro/hierarchy.js';
import type { PondRasters } from '../hydro/rasters.js';
import { LocalEngine, type Engine } from '../cluster/engine.js';
import { SlurmEngine, slurmMissing } from '../cluster/slurm.js';
import { isMosaicInput, openMosaic, intersect, type OpenedMosaic } from '../io/mosaic.js';
import { topLabels } from '../hydro/rasters.js';
import { parseNumber, parseNodata, Progress, openOutput, say, fmt, THRESHOLD, AREA_THRESHOLD, type CommonOptions, type NumberLimits } from './common.js';
import { parseOpenBoundary, parseNodataAs, parseZAndStage } from './hydro-common.js';
import type { PondsCliOptions } from './ponds.js';
import { inputList, rasterNames, dataType, type Inputs } from './mosaic.js';

export interface StagedCliOptions extends CommonOptions {
  scheduler?: string;
  runDir?: string;
  dryRun?: boolean;
  workers?: string;
  partition?: string;
  account?: string;
  time?: string;
  memPerTask?: string;
}

/** The options of a staged run, added to `sill ponds`. */
export function addStagedOptions(cmd: Command): Command {
  return cmd
    .addOption(new Option('--scheduler <engine>', 'on a mosaic: run the tile passes as stages of a run folder, on this machine (local) or as Slurm job arrays (slurm)').choices(['local', 'slurm']))
    .option('--run-dir <dir>', 'with --scheduler: the run folder (stages, summaries, labels, logs, sbatch scripts; on a file system every node sees); a rerun with the same folder resumes')
    .option('--dry-run', 'with --scheduler slurm: only write the sbatch scripts and submit.sh into the run folder')
    .option('--workers <n>', 'with --scheduler: tasks at a time (local: default the number of cores; slurm: the arrays\' limit, none by default)')
    .option('--partition <name>', 'with --scheduler slurm: the partition of the jobs')
    .option('--account <name>', 'with --scheduler slurm: the account of the jobs')
    .option('--time <limit>', 'with --scheduler slurm: time limit per task, as sbatch takes it (e.g. 1:00:00)')
    .option('--mem-per-task <MiB>', 'with --scheduler slurm: memory per task (default: estimated from the tile size)');
}

/** True when the options ask for the staged run. */
export function stagedRequested(opts: StagedCliOptions): boolean {
  return opts.scheduler !== undefined;
}

/** Options of ponds the staged run does not do (yet): refused with one line. */
const NOT_STAGED: [keyof (PondsCliOptions & StagedCliOptions) & string, string][] = [
  ['json', '--json'], ['report', '--report'], ['png', '--png'], ['culverts', '--culverts'], ['wgs84', '--wgs84'], ['stageVolume', '--stage-volume'],
];

const RASTERS = ['filled', 'depth', 'labels'];

export async function runPondsStaged(input: Inputs, opts: PondsCliOptions & StagedCliOptions): Promise<void> {
  const inputs = inputList(input);
  if (!isMosaicInput(inputs)) throw new InputError('--scheduler runs the tile passes of a mosaic; give a .vrt, a folder of GeoTIFF tiles or several GeoTIFF paths (one grid runs in one process: leave --scheduler out)');
  for (const [key, flag] of NOT_STAGED) {
    if (opts[key] !== undefined && opts[key] !== false) throw new InputError(`${flag} is not available with --scheduler yet (this run writes filled, depth and labels per tile); leave ${flag} out`);
  }
  const { connectivity } = parseOpenBoundary('ponds', opts);
  const nodataOutlet = parseNodataAs(opts) === 'outlet';
  const labelLevel = opts.labelLevel ?? 'leaf';
  if (labelLevel !== 'leaf' && labelLevel !== 'top') throw new InputError(`--label-level must be leaf or top, got '${labelLevel}'`);
  const num = (name: string, v: string | undefined, limits: NumberLimits) => (v === undefined ? undefined : parseNumber(name, v, limits));
  const minPersistence = parseNumber('--min-persistence', opts.minPersistence ?? '0', THRESHOLD);
  const minDepth = num('--min-depth', opts.minDepth, THRESHOLD);
  const minArea = num('--min-area', opts.minArea, AREA_THRESHOLD);
  const minVolume = num('--min-volume', opts.minVolume, AREA_THRESHOLD);
  const fillOnlyBelow = num('--fill-only-below', opts.fillOnlyBelow, { ...AREA_THRESHOLD, positive: true });
  const { zFactor } = parseZAndStage(opts);
  const slurm = opts.scheduler === 'slurm';
  if (opts.dryRun && !slurm) throw new InputError('--dry-run writes the sbatch scripts of --scheduler slurm; add --scheduler slurm');
  for (const [flag, v] of [['--partition', opts.partition], ['--account', opts.account], ['--time', opts.time], ['--mem-per-task', opts.memPerTask]] as const) {
    if (v !== undefined && !slurm) throw new InputError(`${flag} is for --scheduler slurm; add it, or leave ${flag} out`);
    if (v !== undefined && !/^[A-Za-z0-9_.:,+\-]+$/.test(v)) throw new InputError(`${flag} '${v}' holds characters Slurm does not take; give a plain name or time`);
  }
  if (!opts.out && !opts.dryRun) throw new InputError('--scheduler writes the rasters of every tile: give an output folder with -o/--out');
  if (!opts.runDir && !opts.out) throw new InputError('--dry-run writes the scripts into the run folder: give it with --run-dir');
  const workers = opts.workers === undefined ? undefined
    : parseNumber('--workers', opts.workers, { integer: true, min: 1, max: 4096, why: 'more workers than that exhaust the process table' });
  const memoryMb = opts.memPerTask === undefined ? undefined : parseNumber('--mem-per-task', opts.memPerTask, { integer: true, min: 64, max: 2 ** 30 });
  if (slurm && !opts.dryRun) {
    const why = slurmMissing();
    if (why !== null) throw new InputError(`--scheduler slurm submits jobs with sbatch, but ${why}; run on a Slurm login node, or add --dry-run to only write the scripts`);
  }
  const band = parseNumber('--band', opts.band ?? '1', { integer: true, min: 1, max: 65535, why: 'a TIFF holds at most 65 535 bands (SamplesPerPixel is a 16-bit field)' });
  const source: MosaicSource = { inputs, band, ...(opts.nodata !== undefined ? { nodata: parseNodata(opts.nodata) } : {}) };
  // the default run folder sits beside DIR (DIR itself is replaced whole when the outputs are committed)
  const given = opts.runDir !== undefined;
  const runDir = resolve(opts.runDir ?? `${opts.out!.replace(/[\\/]+$/, '')}.sill-run`);
  const lib = { connectivity, nodataOutlet, minDepth, minArea, minVolume, minPersistence, fillOnlyBelow, zUnits: opts.zUnits, zFactor, xyUnits: opts.xyUnits, runDir, memoryMb };
  const engine: Engine = slurm
    ? new SlurmEngine({ workers, partition: opts.partition, account: opts.account, time: opts.time, dryRun: opts.dryRun, pollSeconds: Number(process.env.SILL_SLURM_POLL) || undefined })
    : new LocalEngine(workers ?? cpus().length);
  if (opts.dryRun) {
    const { run } = await planPondsStages(source, lib);
    const written = (engine as SlurmEngine).writeScripts(run);
    say(opts, `wrote ${written.map((p) => relative(process.cwd(), p) || p).join(', ')}\nsubmit with: bash ${relative(process.cwd(), written[written.length - 1])}`);
    return;
  }

  const mosaic = await openMosaic(inputs, { band: source.band, nodata: source.nodata, threads: 1 });
  const out = openOutput(opts, 'ponds', rasterNames(RASTERS, true), [...inputs, ...mosaic.tiles.map((t) => t.path)])!;
  const progress = new Progress(opts.quiet);
  try {
    const result = await pondsStaged(source, { ...lib, engine, onStage: (s, done, total) => progress.stage(total !== undefined ? `${s}: ${done}/${total}` : s) });
    progress.stage('writing filled, depth and labels: a GeoTIFF a tile and a VRT each');
    await writeTileRasters(out, runDir, mosaic, labelLevel === 'top' ? result.hierarchy : null);
    await out.commit();
    progress.done();
    const h = result.hierarchy;
    let top = 0, volume = 0;
    for (let d = 1; d <= h.count; d++) if (h.parent[d] === 0) { top++; volume += h.volume[d]; }
    say(opts, `ponds on ${mosaic.tiles.length} tiles (${result.tree.count - 1} sweep nodes), ${slurm ? 'on Slurm' : 'by the local pool'}: ${h.count} depressions (${top} top-level), ` +
      `${fmt(volume)} ${result.areas.units.volume} at their spill levels\nwrote ${rasterNames(RASTERS, true).join(', ')} into ${opts.out}${given ? `; the run folder ${opts.runDir} is kept` : ''}`);
    if (!given && existsSync(runDir)) rmSync(runDir, { recursive: true, force: true });
  } catch (e) {
    progress.done();
    throw out.fail(e);
  }
}

/**
 * Write filled/, depth/ and labels/ (one GeoTIFF per input tile, the tile's own geotransform) and
 * their VRTs from the windows' rasters in the run folder, one tile at a time: memory is a tile and
 * the owned windows it overlaps, never the mosaic. The same files writeRasterProducts
 * (src/cli/mosaic.ts) writes from mosaic-sized rasters. `top`: the hierarchy, for labels of the
 * outermost depressions (--label-level top).
 */
export async function writeTileRasters(out: OutputFolder, runDir: string, mosaic: OpenedMosaic, top: Hierarchy | null): Promise<void> {
  const windows = mosaic.tiles.map((t, k) => ({ k, own: t.own })).filter((w) => w.own.width > 0 && w.own.height > 0);
  const valueNodata = mosaic.nodata !== null && Number.isFinite(mosaic.nodata) ? mosaic.nodata : NaN;
  const products = [
    { name: 'filled', nodata: valueNodata, overviews: 'average' as const, pick: (r: PondRasters): RasterValues => r.filled },
    { name: 'depth', nodata: -9999, overviews: 'average' as const, pick: (r: PondRasters): RasterValues => r.depth },
    { name: 'labels', nodata: -1, overviews: 'nearest' as const, pick: (r: PondRasters): RasterValues => (top ? topLabels(r.labels, top) : r.labels) },
  ];
  const types = new Map<string, string>();
  for (const tile of mosaic.tiles) {
    const parts: { own: CellWindow; cut: CellWindow; rs: PondRasters }[] = [];
    for (let w = 0; w < windows.length; w++) {
      const cut = intersect(tile, windows[w].own);
      if (cut) parts.push({ own: windows[w].own, cut, rs: await readWindowRasters(runDir, w) });
    }
    await Promise.all(products.map((p) => {
      let v: RasterValues | null = null;
      for (const { own, cut, rs } of parts) {
        const src = p.pick(rs);
        v ??= new (src.constructor as new (n: number) => RasterValues)(tile.width * tile.height);
        for (let r = 0; r < cut.height; r++) {
          const from = (cut.row0 - own.row0 + r) * own.width + cut.col0 - own.col0;
          v.set(src.subarray(from, from + cut.width), (cut.row0 - tile.row0 + r) * tile.width + cut.col0 - tile.col0);
        }
      }
      if (!v) throw new Error(`internal: tile ${tile.name} lies in no owned window`);
      types.set(p.name, dataType(v));
      return writeGeoTiff(out.path(`${p.name}/${tile.name}.tif`), { width: tile.width, height: tile.height, transform: tile.transform, crs: mosaic.crs, values: v, nodata: p.nodata },
        { overviews: p.overviews, threads: 1 });
    }));
    await out.checkpoint();
  }
  for (const p of products) {
    out.write(`${p.name}.vrt`, vrtText({
      width: mosaic.width, height: mosaic.height, transform: mosaic.transform, crs: mosaic.crs, dataType: types.get(p.name)!, nodata: p.nodata,
      sources: mosaic.tiles.map((t) => ({ file: `${p.name}/${t.name}.tif`, col0: t.col0, row0: t.row0, width: t.width, height: t.height })),
    }));
  }
}

/** `sill tile-stage RUN STAGE INDEX`: one task of a staged run (the task runner starts it). */
export function registerTileStage(program: Command): void {
  program
    .command('tile-stage', { hidden: true })
    .description('one task of a staged ponds run: stage pass1, merge, pass2, hierarchy or rasters of a run folder')
    .argument('<run-dir>')
    .argument('<stage>')
    .argument('<index>')
    .action(async (runDir: string, stage: string, index: string) => {
      await runTileStage(resolve(runDir), stage, parseNumber('index', index, { integer: true, min: 0 }));
    });
}
