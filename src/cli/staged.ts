/**
 * `sill ponds MOSAIC -o DIR --scheduler local|slurm [--run-dir RUN] [--dry-run]`: the tile passes
 * of a mosaic as run-folder stages (src/tiles/stages.ts), run by the local pool of child processes
 * or as Slurm job arrays chained with afterok dependencies. Wiring only.
 *
 * Outputs: filled/, depth/, labels/ (one GeoTIFF per input tile) and filled.vrt, depth.vrt,
 * labels.vrt, the same files the mosaic writer (src/cli/mosaic.ts writeRasterProducts) writes,
 * plus depressions.csv, pour-points.geojson and report.json: the tile-by-tile driver of
 * src/cli/tiled.ts (runTiledPonds) with pondsStaged running the passes; what a tile-by-tile run
 * does not compute is listed there (docs/tiles.md).
 *
 * Also the hidden command `sill tile-stage RUN STAGE INDEX` that each task runs.
 */
import { existsSync, rmSync } from 'node:fs';
import { relative, resolve } from 'node:path';
import { cpus } from 'node:os';
import { Option, type Command } from 'commander';
import { InputError } from '../errors.js';
import { runTileStage, planPondsStages, pondsStaged, type MosaicSource } from '../tiles/stages.js';
import type { TiledPondsOptions } from '../tiles/ponds.js';
import { LocalEngine, type Engine } from '../cluster/engine.js';
import { SlurmEngine, slurmMissing } from '../cluster/slurm.js';
import { isMosaicInput, openMosaic } from '../io/mosaic.js';
import { parseNumber, parseNodata, parseThreads, openOutput, say, THRESHOLD, AREA_THRESHOLD, type CommonOptions, type NumberLimits } from './common.js';
import { parseOpenBoundary, parseNodataAs, parseZAndStage } from './hydro-common.js';
import { pondsSummary, type PondsCliOptions } from './ponds.js';
import { runTiledPonds, tiledNote, TILED_PONDS_FILES } from './tiled.js';
import { inputList, type Inputs } from './mosaic.js';

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
    .option('--dry-run', 'with --scheduler slurm: only write the sbatch scripts and submit.sh into the run folder')
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
  ['json', '--json'], ['report', '--report'], ['png', '--png'], ['culverts', '--culverts'], ['wgs84', '--wgs84'], ['stageVolume', '--stage-volume'], ['tiled', '--tiled'],
];

export async function runPondsStaged(input: Inputs, opts: PondsCliOptions & StagedCliOptions): Promise<void> {
  const inputs = inputList(input);
  if (!isMosaicInput(inputs)) throw new InputError('--scheduler runs the tile passes of a mosaic; give a .vrt, a folder of GeoTIFF tiles or several GeoTIFF paths (one grid runs in one process: leave --scheduler out)');
  for (const [key, flag] of NOT_STAGED) {
    if (opts[key] !== undefined && opts[key] !== false) throw new InputError(`${flag} is not available with --scheduler (a tile-by-tile run: docs/tiles.md); leave ${flag} out`);
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
    : new LocalEngine(workers ?? cpus().length, 'the tasks finished so far are kept in the run folder (run the same command again, same --run-dir, to resume)');
  if (opts.dryRun) {
    const { run } = await planPondsStages(source, lib);
    const written = (engine as SlurmEngine).writeScripts(run);
    say(opts, `wrote ${written.map((p) => relative(process.cwd(), p) || p).join(', ')}\nsubmit with: bash ${relative(process.cwd(), written[written.length - 1])}`);
    return;
  }

  const mosaic = await openMosaic(inputs, { band: source.band, nodata: source.nodata, threads: 1 });
  const out = openOutput(opts, 'ponds', TILED_PONDS_FILES, [...inputs, ...mosaic.tiles.map((t) => t.path)])!;
  // the same driver and outputs as a tile-by-tile run on worker threads (src/cli/tiled.ts); only the passes run as stages
  const { report, written } = await runTiledPonds({
    mosaic, out, why: 'scheduler', connectivity, nodataOutlet, minDepth, minArea, minVolume, minPersistence, fillOnlyBelow,
    zUnits: opts.zUnits, zFactor, xyUnits: opts.xyUnits, labelLevel, workers, runDir, threads: parseThreads(opts.threads), quiet: !!opts.quiet,
    run: (o: TiledPondsOptions) => pondsStaged(source, { ...o, runDir, memoryMb, engine }),
  });
  if (!opts.quiet) process.stderr.write(`sill ponds: ${tiledNote(mosaic.source, 'scheduler')}\n`);
  say(opts, `${pondsSummary(report, opts.out, written)}\n${slurm ? 'ran on Slurm' : 'ran by the local pool of processes'}${given ? `; the run folder ${opts.runDir} is kept` : ''}`);
  if (!given && existsSync(runDir)) rmSync(runDir, { recursive: true, force: true });
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
