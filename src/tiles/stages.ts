/**
 * `ponds` on a mosaic as stages of a run folder (src/cluster/run-folder.ts), so that the local
 * pool of child processes or a Slurm cluster runs the tile passes (docs/tiles.md, "How to run on a
 * Slurm site"). The stages are the steps of `pondsTiled` (ponds.ts), each one a task that reads
 * its inputs from the run folder and writes its result there:
 *
 *   pass1[t]    window t swept on its own → data/pass1-t.run (its summary), data/euler-t.run
 *   merge       every summary → the global tree (data/tree.run), each window's node map
 *               (data/map-t.run), the Euler block (data/euler.json)
 *   pass2[t]    window t swept again with the global tree → data/labels-t.run, data/share-t.run
 *   hierarchy   the shares added up → data/sums.run; the depressions → data/hierarchy.run
 *   rasters[t]  window t's filled, depth and label rasters → data/rasters-t.run
 *
 * Everything feature- or cell-sized is a typed column in a binary run file (runfile.ts); JSON
 * holds only what is per run or per tile (the mosaic's inputs, the options, the tiles' windows).
 * Each task reopens the mosaic from its inputs (a .vrt, a folder or the tile files: the folder
 * and the tiles must be on a file system every node sees) and checks that it still has the tiles
 * the run was planned with.
 *
 * `pondsStaged` plans the run, lets an Engine run it, then hands each window's rasters to
 * `onRasters` in window order and returns the same TiledPondsResult as `pondsTiled` on the same
 * mosaic and options: the same stage code in the same order, so the same bytes, whatever the
 * engine and the number of workers. A rerun with the same run folder resumes: a task that
 * reported success (its status file, written by the task runner after the task's files) is not
 * run again; failed and unfinished ones are.
 */
import { existsSync, mkdirSync, readdirSync, readFileSync, statSync } from 'node:fs';
import { join, resolve } from 'node:path';
import { InputError } from '../errors.js';
import { openMosaic, type OpenedMosaic } from '../io/mosaic.js';
import { cellAreas, type CellAreas, type UnitOptions } from '../hydro/areas.js';
import { buildHierarchy, type Hierarchy } from '../hydro/hierarchy.js';
import { pondRasters, type PondRasters } from '../hydro/rasters.js';
import { pondsFilters } from '../hydro/ponds.js';
import type { NodeSums } from '../hydro/sweep.js';
import type { PondsEuler } from '../hydro/common.js';
import type { Connectivity } from '../surface/complex.js';
import { RunFolder, writeWhole, type StageSpec, type TaskStatus } from '../cluster/run-folder.js';
import type { Engine } from '../cluster/engine.js';
import type { CellWindow, MosaicTile } from './mosaic.js';
import { readHalo, ownValues, classifyWindow } from './windows.js';
import type { WindowEuler } from './euler.js';
import { pass1, type WindowSummary } from './pass1.js';
import { seamMerge, type GlobalTree } from './merge.js';
import { pass2, type WindowShare } from './pass2.js';
import { writeRunFile, readRunFile } from './runfile.js';
import { MAX_MOSAIC_CELLS, eulerOf, reduceShares, treeAsSweep, type TiledPondsOptions, type TiledPondsResult } from './ponds.js';

export const PASS1 = 'pass1';
export const MERGE = 'merge';
export const PASS2 = 'pass2';
export const HIERARCHY = 'hierarchy';
export const RASTERS = 'rasters';
export const TILE_STAGES = [PASS1, MERGE, PASS2, HIERARCHY, RASTERS] as const;
export type TileStage = (typeof TILE_STAGES)[number];

/** The mosaic as a task reopens it: openMosaic's inputs and options. */
export interface MosaicSource {
  inputs: string[];
  band?: number;
  nodata?: number;
}

/** What run.json keeps of a staged ponds run (the run's `extra`). */
export interface StagedPondsSpec {
  kind: 'sill/ponds-stages@1';
  mosaic: MosaicSource;
  /** The working folder the inputs are relative to. */
  cwd: string;
  /** The windows the run was planned with, in order (tiles with cells to own), and each tile file's size and modification time. */
  tiles: { name: string; path: string; own: CellWindow; size: number; mtimeMs: number }[];
  options: {
    connectivity: Connectivity; nodataOutlet: boolean; minDepth: number; minArea: number; minVolume: number; minPersistence: number;
    fillOnlyBelow: number | null; euler: boolean; xyUnits: string | null; zUnits: string | null; zFactor: number | null;
  };
}

/** The options of a staged run besides pondsTiled's. */
export interface StagedOptions {
  /** The run folder (created if missing; a folder of the same run is resumed). On a file system every node sees. */
  runDir: string;
  /** The engine that runs the tasks (LocalEngine, SlurmEngine). */
  engine: Engine;
  /** Memory per task for a scheduler, MiB (default: estimated from the windows' sizes). */
  memoryMb?: number;
}

/** A task of the run failed: names the tile (or the stage), why, and where its log is. `input`: the task exited with status 2 (bad input). */
export class StageFailed extends Error {
  constructor(message: string, readonly input: boolean) {
    super(message);
    this.name = 'StageFailed';
  }
}

const data = (runDir: string, name: string): string => join(runDir, 'data', name);

// ---------------------------------------------------------------- a task's view of the run

interface StageContext {
  spec: StagedPondsSpec;
  mosaic: OpenedMosaic;
  tiles: MosaicTile[];
  owns: CellWindow[];
  areas: CellAreas;
}

function unitOptions(o: StagedPondsSpec['options']): UnitOptions {
  return { xyUnits: o.xyUnits ?? undefined, zUnits: o.zUnits ?? undefined, zFactor: o.zFactor ?? undefined };
}

function readSpec(runDir: string): StagedPondsSpec {
  const run = new RunFolder(runDir).run<StagedPondsSpec>();
  if (!run || run.extra?.kind !== 'sill/ponds-stages@1') throw new Error(`${runDir} is not the run folder of a staged ponds run (no run.json of one)`);
  return run.extra;
}

const sameWindow = (a: CellWindow, b: CellWindow): boolean => a.col0 === b.col0 && a.row0 === b.row0 && a.width === b.width && a.height === b.height;

/** The tiles of a mosaic that own cells, in order (the windows of the run). */
function windowTiles(m: OpenedMosaic): MosaicTile[] {
  return m.tiles.filter((t) => t.own.width > 0 && t.own.height > 0);
}

async function context(runDir: string): Promise<StageContext> {
  const spec = readSpec(runDir);
  const inputs = spec.mosaic.inputs.map((p) => resolve(spec.cwd, p));
  // the overlaps were checked when the run was planned; the tiles must be the same files, unchanged since
  const mosaic = await openMosaic(inputs, { band: spec.mosaic.band, nodata: spec.mosaic.nodata, threads: 1, checkOverlaps: false });
  const tiles = windowTiles(mosaic);
  if (tiles.length !== spec.tiles.length || tiles.some((t, k) => t.name !== spec.tiles[k].name || !sameWindow(t.own, spec.tiles[k].own))) {
    throw new InputError(`the mosaic ${mosaic.source} no longer has the tiles this run was planned with; start a new run (another or an empty --run-dir)`);
  }
  for (const t of spec.tiles) {
    const st = statSync(resolve(spec.cwd, t.path));
    if (st.size !== t.size || st.mtimeMs !== t.mtimeMs) throw new InputError(`tile ${t.path} has changed since this run was planned; start a new run (another or an empty --run-dir)`);
  }
  const areas = cellAreas({ transform: mosaic.transform, width: mosaic.width, height: mosaic.height, crs: mosaic.crs }, unitOptions(spec.options), mosaic.source);
  return { spec, mosaic, tiles, owns: tiles.map((t) => t.own), areas };
}

function windowOf(ctx: StageContext, t: number): CellWindow {
  const own = ctx.owns[t];
  if (!own) throw new Error(`the run has ${ctx.owns.length} windows, not ${t + 1}`);
  return own;
}

// ---------------------------------------------------------------- the stages

/** Pass 1 of window t: its summary (and its part of the Euler check). */
export async function stagePass1(runDir: string, t: number): Promise<void> {
  const ctx = await context(runDir);
  const { connectivity: conn, nodataOutlet, euler } = ctx.spec.options;
  const cells = classifyWindow(await readHalo(ctx.mosaic, windowOf(ctx, t)), conn, nodataOutlet, euler ? ctx.owns : undefined);
  const s = pass1(cells, conn, nodataOutlet);
  if (cells.euler) await writeRunFile(data(runDir, `euler-${t}.run`), cells.euler as unknown as Record<string, unknown>);
  await writeRunFile(data(runDir, `pass1-${t}.run`), s as unknown as Record<string, unknown>);
}

/** The tree columns kept in tree.run (the window maps go to map-t.run). */
interface TreeFile extends Omit<GlobalTree, 'windowMap'> { perimeterCells: number }

/** The seam merge: the global tree from every window's summary; the Euler block of the mosaic. */
export async function stageMerge(runDir: string): Promise<void> {
  const { spec, mosaic: { source } } = await context(runDir);
  const T = spec.tiles.length;
  const summaries: WindowSummary[] = [];
  let zmin = Infinity, zmax = -Infinity, perimeterCells = 0;
  for (let t = 0; t < T; t++) {
    const s = await readRunFile<WindowSummary>(data(runDir, `pass1-${t}.run`));
    perimeterCells += s.perimeterCells;
    if (s.zmin < zmin) zmin = s.zmin;
    if (s.zmax > zmax) zmax = s.zmax;
    summaries.push(s);
  }
  if (zmin === Infinity) throw new InputError(`${source}: every cell is nodata; check the nodata value (--nodata) and the band (--band)`);
  if (zmin === zmax) throw new InputError(`${source}: every valid cell has the same value (${zmin}); a flat surface has no depressions — check the band and the nodata value`);
  let euler: PondsEuler | null = null;
  if (spec.options.euler) {
    const parts: WindowEuler[] = [];
    for (let t = 0; t < T; t++) parts.push(await readRunFile<WindowEuler>(data(runDir, `euler-${t}.run`)));
    euler = eulerOf(parts, spec.options.connectivity);
  }
  const tree = seamMerge(summaries);
  summaries.length = 0;
  let sweepPits = 0;
  for (let k = 1; k < tree.count; k++) if (tree.vertex[k] === tree.birth[k]) sweepPits++;
  if (euler && euler.pits - 1 !== sweepPits) {
    throw new Error(`internal: the tiled depression sweep found ${sweepPits} pits but the lower links ${euler.pits - 1}; this is a bug in sill, please report it with the input`);
  }
  for (let t = 0; t < T; t++) await writeRunFile(data(runDir, `map-${t}.run`), { map: tree.windowMap[t] });
  const { windowMap: _maps, ...cols } = tree;
  writeWhole(data(runDir, 'euler.json'), JSON.stringify(euler) + '\n');
  await writeRunFile(data(runDir, 'tree.run'), { ...cols, perimeterCells } as unknown as Record<string, unknown>);
}

/** Pass 2 of window t: its cells' global labels and its share of the node sums. */
export async function stagePass2(runDir: string, t: number): Promise<void> {
  const ctx = await context(runDir);
  const { connectivity: conn, nodataOutlet } = ctx.spec.options;
  const tree = await readRunFile<TreeFile>(data(runDir, 'tree.run'));
  const { map } = await readRunFile<{ map: Int32Array }>(data(runDir, `map-${t}.run`));
  const { prov } = await readRunFile<WindowSummary>(data(runDir, `pass1-${t}.run`));
  const cells = classifyWindow(await readHalo(ctx.mosaic, windowOf(ctx, t)), conn, nodataOutlet);
  const r = pass2(cells, conn, nodataOutlet, prov, map, tree, ctx.areas.rowArea, ctx.areas.uniform);
  await writeRunFile(data(runDir, `share-${t}.run`), r.share as unknown as Record<string, unknown>);
  await writeRunFile(data(runDir, `labels-${t}.run`), { label: r.label });
}

/** The typed columns of a Hierarchy (hierarchy.run); `removed` (a few numbers) goes to hierarchy.json. */
const HIERARCHY_COLUMNS = ['node', 'parent', 'childStart', 'children', 'level', 'pit', 'spillCell', 'pitValue', 'spillValue', 'into', 'pourTo',
  'wetCells', 'area', 'volume', 'maxDepth', 'meanDepth', 'tin', 'tout', 'repOfNode', 'fillOfNode'] as const;

async function writeHierarchy(runDir: string, h: Hierarchy): Promise<void> {
  const rec: Record<string, unknown> = { count: h.count };
  for (const k of HIERARCHY_COLUMNS) rec[k] = h[k];
  writeWhole(data(runDir, 'hierarchy.json'), JSON.stringify(h.removed) + '\n');
  await writeRunFile(data(runDir, 'hierarchy.run'), rec);
}

async function readHierarchy(runDir: string): Promise<Hierarchy> {
  const h = await readRunFile<Hierarchy>(data(runDir, 'hierarchy.run'));
  h.removed = JSON.parse(readFileSync(data(runDir, 'hierarchy.json'), 'utf8'));
  return h;
}

/** The reduce (the windows' shares added in window order) and the depression hierarchy. */
export async function stageHierarchy(runDir: string): Promise<void> {
  const ctx = await context(runDir);
  const o = ctx.spec.options;
  const tree: GlobalTree = { ...(await readRunFile<TreeFile>(data(runDir, 'tree.run'))), windowMap: [] };
  const shares: WindowShare[] = [];
  for (let t = 0; t < ctx.owns.length; t++) shares.push(await readRunFile<WindowShare>(data(runDir, `share-${t}.run`)));
  const sums = reduceShares(tree, shares);
  const areaScale = ctx.areas.uniform ? ctx.areas.rowArea[0] : 1;
  const hierarchy = buildHierarchy(treeAsSweep(tree), sums, {
    minDepth: Math.max(o.minDepth, o.minPersistence), minArea: o.minArea, minVolume: o.minVolume,
    areaScale, zFactor: ctx.areas.zFactor, fillOnlyBelow: o.fillOnlyBelow ?? undefined,
  });
  await writeRunFile(data(runDir, 'sums.run'), sums as unknown as Record<string, unknown>);
  await writeHierarchy(runDir, hierarchy);
}

/** The filled, depth and label rasters of window t. */
export async function stageRasters(runDir: string, t: number): Promise<void> {
  const ctx = await context(runDir);
  const own = windowOf(ctx, t);
  const hierarchy = await readHierarchy(runDir);
  const { label } = await readRunFile<{ label: Int32Array }>(data(runDir, `labels-${t}.run`));
  const values = await ctx.mosaic.readWindow(own);
  for (let i = 0; i < values.length; i++) if (values[i] === 0) values[i] = 0; // −0 → 0, as Grid does
  const rs = pondRasters(values, own.width, label, hierarchy, ctx.areas.rowArea.subarray(own.row0, own.row0 + own.height));
  await writeRunFile(data(runDir, `rasters-${t}.run`), rs as unknown as Record<string, unknown>);
}

/** The filled, depth and label rasters of window t of a finished run (its owned window, row-major). */
export async function readWindowRasters(runDir: string, t: number): Promise<PondRasters> {
  return readRunFile<PondRasters>(data(runDir, `rasters-${t}.run`));
}

/** Run task `index` of stage `stage` of the run folder (what `sill tile-stage RUN STAGE INDEX` does). */
export async function runTileStage(runDir: string, stage: string, index: number): Promise<void> {
  switch (stage) {
    case PASS1: return stagePass1(runDir, index);
    case MERGE: return stageMerge(runDir);
    case PASS2: return stagePass2(runDir, index);
    case HIERARCHY: return stageHierarchy(runDir);
    case RASTERS: return stageRasters(runDir, index);
    default: throw new InputError(`unknown stage '${stage}' of a staged ponds run; the stages are ${TILE_STAGES.join(', ')}`);
  }
}

// ---------------------------------------------------------------- the plan and the driver

/**
 * Memory per task, MiB (our estimate, not measured per stage): a window task holds its halo
 * window's values, the sweep's order and labels and the complex, ≈ 64 bytes a cell; the merge
 * and the hierarchy hold the summaries and the node columns, ≈ 64 bytes per perimeter cell and
 * per node, bounded here by 16 bytes per mosaic cell. Plus 256 MiB for the process itself.
 */
export function stageMemoryMb(spec: StagedPondsSpec, width: number, height: number): { window: number; whole: number } {
  let biggest = 0, perimeter = 0;
  for (const t of spec.tiles) {
    biggest = Math.max(biggest, (t.own.width + 2) * (t.own.height + 2));
    perimeter += 2 * (t.own.width + t.own.height);
  }
  const mib = (bytes: number) => Math.ceil((256 * 2 ** 20 + bytes) / (64 * 2 ** 20)) * 64;
  return { window: mib(64 * biggest), whole: mib(Math.min(64 * perimeter + 64 * biggest, 16 * width * height)) };
}

/** The stages of a staged ponds run; tasks are `sill tile-stage RUN STAGE INDEX`. */
export function pondsStages(runDir: string, spec: StagedPondsSpec, memory: { window: number; whole: number }): StageSpec[] {
  const each = (name: TileStage, after: string | null): StageSpec => ({
    schema: 'sill/stage@1', name, cpus: 1, after: after ? [{ stage: after, when: 'ok' }] : [],
    tasks: spec.tiles.map((t, i) => ({ label: t.name, argv: ['tile-stage', runDir, name, String(i)], memoryMb: memory.window })),
  });
  const one = (name: TileStage, after: string): StageSpec => ({
    schema: 'sill/stage@1', name, cpus: 1, after: [{ stage: after, when: 'ok' }],
    tasks: [{ label: name, argv: ['tile-stage', runDir, name, '0'], memoryMb: memory.whole }],
  });
  return [each(PASS1, null), one(MERGE, PASS1), each(PASS2, MERGE), one(HIERARCHY, PASS2), each(RASTERS, HIERARCHY)];
}

/** What decides a run's results: a rerun resumes only when this is the same. */
function sameRun(a: StagedPondsSpec, b: StagedPondsSpec): boolean {
  return JSON.stringify(a) === JSON.stringify(b);
}

/**
 * Plan (or resume) the run in `runDir` for the mosaic and options: returns the run folder, ready
 * for an engine. A folder that holds another run, or files that are no run of sill, is refused.
 */
export async function planPondsStages(source: MosaicSource, opts: TiledPondsOptions & { runDir: string; memoryMb?: number }): Promise<{ run: RunFolder; spec: StagedPondsSpec; mosaic: OpenedMosaic; resumed: number }> {
  const mosaic = await openMosaic(source.inputs, { band: source.band, nodata: source.nodata, threads: 1 });
  if (mosaic.width * mosaic.height > MAX_MOSAIC_CELLS) {
    throw new InputError(`${mosaic.source}: the mosaic has ${mosaic.width}×${mosaic.height} cells, more than the ${MAX_MOSAIC_CELLS} sill indexes; analyse it in parts`);
  }
  const connectivity = opts.connectivity ?? 8, nodataOutlet = opts.nodataOutlet ?? true;
  if (connectivity !== 4 && connectivity !== 6 && connectivity !== 8) throw new InputError(`connectivity must be 4, 6 or 8, got ${connectivity}`);
  const { minDepth, minArea, minVolume, minPersistence } = pondsFilters(opts);
  // the units are checked now, before any task runs
  cellAreas({ transform: mosaic.transform, width: mosaic.width, height: mosaic.height, crs: mosaic.crs }, opts, mosaic.source);
  if (opts.workers !== undefined && !(Number.isInteger(opts.workers) && opts.workers >= 1)) throw new InputError(`--workers must be a whole number ≥ 1, got ${opts.workers}`);
  const tiles = windowTiles(mosaic).map((t) => {
    const st = statSync(t.path);
    return { name: t.name, path: t.path, own: { ...t.own }, size: st.size, mtimeMs: st.mtimeMs };
  });
  const spec: StagedPondsSpec = {
    kind: 'sill/ponds-stages@1', mosaic: { inputs: [...source.inputs], ...(source.band !== undefined ? { band: source.band } : {}), ...(source.nodata !== undefined ? { nodata: source.nodata } : {}) },
    cwd: process.cwd(), tiles,
    options: {
      connectivity, nodataOutlet, minDepth, minArea, minVolume, minPersistence, fillOnlyBelow: opts.fillOnlyBelow ?? null, euler: opts.euler !== false,
      xyUnits: opts.xyUnits ?? null, zUnits: opts.zUnits ?? null, zFactor: opts.zFactor ?? null,
    },
  };
  const runDir = resolve(opts.runDir);
  const run = new RunFolder(runDir);
  const old = existsSync(run.specPath) ? run.run<StagedPondsSpec>() : null;
  if (!old && existsSync(runDir) && readdirSync(runDir).length > 0) {
    throw new InputError(`run folder ${opts.runDir} holds files but no run of sill; give an empty or new folder to --run-dir`);
  }
  if (old && !(old.extra?.kind === 'sill/ponds-stages@1' && sameRun(old.extra, spec))) {
    throw new InputError(`run folder ${opts.runDir} holds another run (other inputs, tiles or options); give another --run-dir, or empty it to start over`);
  }
  const mem = opts.memoryMb !== undefined ? { window: opts.memoryMb, whole: opts.memoryMb } : stageMemoryMb(spec, mosaic.width, mosaic.height);
  const stages = pondsStages(runDir, spec, mem);
  let resumed = 0;
  if (old) {
    // resume: what succeeded stays; what failed or never reported runs again
    for (const s of stages) {
      for (let i = 0; i < s.tasks.length; i++) {
        if (run.status(s.name, i)?.ok) resumed++;
        else run.clearStatus(s.name, i);
      }
    }
  }
  mkdirSync(join(runDir, 'data'), { recursive: true });
  run.create({ schema: 'sill/run@1', stages: stages.map((s) => s.name), extra: spec }, stages);
  return { run, spec, mosaic, resumed };
}

/** The first failed task of the run, as a StageFailed naming its tile; null when every task succeeded. */
export function runFailure(run: RunFolder): StageFailed | null {
  const spec = run.run()!;
  for (const name of spec.stages) {
    const stage = run.stage(name);
    const failed: TaskStatus[] = [];
    for (let i = 0; i < stage.tasks.length; i++) {
      const s = run.status(name, i);
      if (!s) failed.push({ schema: 'sill/task@1', stage: name, index: i, label: stage.tasks[i].label, ok: false, exit: null, signal: null, error: 'it did not report', seconds: 0, host: '', outputRun: null });
      else if (!s.ok) failed.push(s);
    }
    if (failed.length === 0) continue;
    const f = failed[0];
    const what = stage.tasks.length > 1 || name === PASS1 || name === PASS2 || name === RASTERS ? `tile ${f.label} (stage ${name})` : `stage ${name}`;
    const more = failed.length > 1 ? ` (and ${failed.length - 1} more task${failed.length === 2 ? '' : 's'} of stage ${name}: ${failed.slice(1, 4).map((x) => x.label).join(', ')}${failed.length > 4 ? ', …' : ''})` : '';
    return new StageFailed(`${what} failed: ${f.error ?? 'failed'}${more}; its log is ${run.logPath(name, f.index)}; fix it and run the same command again (same --run-dir) to resume`, f.exit === 2);
  }
  return null;
}

const STAGE_TITLES: Record<string, string> = {
  [PASS1]: 'pass 1: windows', [MERGE]: 'seam merge', [PASS2]: 'pass 2: windows', [HIERARCHY]: 'reduce and depression hierarchy', [RASTERS]: 'filled, depth and label rasters',
};

/**
 * `pondsTiled` as run-folder stages run by `engine`: the same result (and the same rasters handed
 * to onRasters, window by window in window order) as `pondsTiled(mosaic, opts)` on the mosaic
 * `source` opens. Bad options and inputs found while planning are InputErrors; a task that failed
 * (bad input it found included) is a StageFailed naming its tile: the run failed (exit 1).
 */
export async function pondsStaged(source: MosaicSource, opts: TiledPondsOptions & StagedOptions): Promise<TiledPondsResult> {
  const { run, spec, mosaic } = await planPondsStages(source, opts);
  const stage = opts.onStage ?? (() => undefined);
  // nothing left (a rerun after the tasks ended, e.g. after a --dry-run's scripts were submitted by hand): no engine needed
  const left = run.run()!.stages.some((name) => run.pending(run.stage(name)).length > 0);
  if (left) await opts.engine.run(run, (p) => {
    if (p.tasks > 1 || p.stage === PASS1 || p.stage === PASS2 || p.stage === RASTERS) stage(STAGE_TITLES[p.stage] ?? p.stage, p.done, p.tasks);
    else stage(STAGE_TITLES[p.stage] ?? p.stage);
  });
  const failure = runFailure(run);
  if (failure) throw failure;
  return collect(run.dir, spec, mosaic, opts);
}

/** The result of a finished run folder: the tree, sums, hierarchy and Euler block, and each window's rasters handed to onRasters. */
async function collect(runDir: string, spec: StagedPondsSpec, mosaic: OpenedMosaic, opts: TiledPondsOptions): Promise<TiledPondsResult> {
  const o = spec.options;
  const tiles = windowTiles(mosaic);
  const T = tiles.length;
  const { perimeterCells, ...cols } = await readRunFile<TreeFile>(data(runDir, 'tree.run'));
  const windowMap: Int32Array[] = [];
  for (let t = 0; t < T; t++) windowMap.push((await readRunFile<{ map: Int32Array }>(data(runDir, `map-${t}.run`))).map);
  const tree: GlobalTree = { ...cols, windowMap };
  const sums = await readRunFile<NodeSums>(data(runDir, 'sums.run'));
  const hierarchy = await readHierarchy(runDir);
  const euler = JSON.parse(readFileSync(data(runDir, 'euler.json'), 'utf8')) as PondsEuler | null;
  const areas = cellAreas({ transform: mosaic.transform, width: mosaic.width, height: mosaic.height, crs: mosaic.crs }, unitOptions(o), mosaic.source);
  let sweepPits = 0;
  for (let k = 1; k < tree.count; k++) if (tree.vertex[k] === tree.birth[k]) sweepPits++;
  let filledVolume = 0, filledCells = 0, filledArea = 0;
  for (let t = 0; t < T; t++) {
    const rs = await readWindowRasters(runDir, t);
    filledVolume += rs.filledVolume; filledCells += rs.filledCells; filledArea += rs.filledArea;
    if (opts.onRasters) {
      // the window's cells with their halo, as pondsTiled hands them over (for lookups across the window's edges)
      const read = await readHalo(mosaic, tiles[t].own);
      const values = ownValues(read);
      for (let i = 0; i < values.length; i++) if (values[i] === 0) values[i] = 0; // −0 → 0, as Grid does
      await opts.onRasters(tiles[t], tiles[t].own, rs, { read, values, hierarchy });
    }
  }
  return {
    tree, sums, hierarchy, areas, euler, sweepPits, filledVolume, filledCells, filledArea,
    seams: { perimeterCells, summaryBytes: tree.summaryBytes, eventBytes: tree.eventBytes, events: tree.events },
    options: { connectivity: o.connectivity, nodataOutlet: o.nodataOutlet, minDepth: o.minDepth, minArea: o.minArea, minVolume: o.minVolume, minPersistence: o.minPersistence, fillOnlyBelow: o.fillOnlyBelow },
  };
}
