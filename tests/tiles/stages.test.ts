/**
 * The tiled ponds run as run-folder stages (src/tiles/stages.ts) against the in-process tiled run
 * `pondsTiled` on the same GeoTIFF tiles: the same result to the bit (tree, sums, hierarchy, Euler
 * block, every window's rasters), on random DEMs (ties, plateaus, nodata) cut into random tilings
 * with and without shared edges. The in-process run is the reference here; it is checked against
 * the single grid in ponds-tiled.test.ts, and the single grid's filled DEM against scikit-image's
 * morphological reconstruction in tests/hydro/reference.test.ts (outside source).
 *
 * The stages are run in this process (InlineEngine: many cases, cheap) and by the local pool of
 * child processes (LocalEngine: the real task runner and `sill tile-stage`), including a tile that
 * fails (a damaged tile file: the run ends naming it) and the rerun that resumes.
 */
import { describe, it, expect, beforeAll, afterAll } from 'vitest';
import fc from 'fast-check';
import { copyFileSync, readFileSync, rmSync, writeFileSync, statSync, utimesSync } from 'node:fs';
import { join } from 'node:path';
import { openMosaic } from '../../src/io/mosaic.js';
import { pondsTiled } from '../../src/tiles/ponds.js';
import { pondsStaged, StageFailed, PASS1, RASTERS } from '../../src/tiles/stages.js';
import { LocalEngine } from '../../src/cluster/engine.js';
import { RunFolder } from '../../src/cluster/run-folder.js';
import { InputError } from '../../src/errors.js';
import { gridArb } from '../hydro/arbitraries.js';
import { randomGrid } from '../hydro/helpers.js';
import { guillotine, tilesOf, tilingArb } from './helpers.js';
import { InlineEngine, rasterSink, sameResult, writeTiles } from './stage-helpers.js';
import { tempDir } from '../cli/run.js';

let dir: string;
beforeAll(() => { dir = tempDir('sill-stages-'); });
afterAll(() => { if (dir) rmSync(dir, { recursive: true, force: true }); });

let case_ = 0;

describe('ponds as run-folder stages equals the in-process tiled run', () => {
  it('random DEMs and tilings, connectivity 4/6/8, filters; stages run in this process', async () => {
    const filters = fc.constantFrom<Record<string, number>>({}, { minDepth: 0.5 }, { minVolume: 20 }, { fillOnlyBelow: 30 });
    await fc.assert(fc.asyncProperty(gridArb, tilingArb, filters, async ({ g, conn, outlet }, tiling, f) => {
      const folder = join(dir, `m${case_++}`);
      const owns = guillotine(g.width, g.height, tiling.seed, Math.min(tiling.maxTiles, 6));
      await writeTiles(folder, g, tilesOf(owns, tiling.shared));
      const opts = { connectivity: conn, nodataOutlet: outlet, ...f };
      const ref = rasterSink(), got = rasterSink();
      let r;
      try {
        r = await pondsTiled(await openMosaic([folder]), { ...opts, workers: 1, onRasters: ref.onRasters });
      } catch (e) {
        if (!(e instanceof InputError)) throw e;
        await expect(pondsStaged({ inputs: [folder] }, { ...opts, runDir: join(dir, `bad${case_}`), engine: new InlineEngine() })).rejects.toThrow(e.message);
        await expect(pondsStaged({ inputs: [folder] }, { ...opts, runDir: join(dir, `bad${case_}`), engine: new InlineEngine() })).rejects.toThrow(StageFailed);
        return;
      }
      const s = await pondsStaged({ inputs: [folder] }, { ...opts, runDir: join(dir, `run${case_}`), engine: new InlineEngine(), onRasters: got.onRasters });
      sameResult(s, r, got.got, ref.got);
    }), { numRuns: 10 });
  });

  it('the local pool of child processes: a damaged tile ends the run naming it; the rerun resumes and equals the in-process run', async () => {
    const g = randomGrid(77, 14, 11, 4, 0.05);
    const folder = join(dir, 'pool');
    await writeTiles(folder, g, tilesOf(guillotine(14, 11, 3, 3), false));
    const ref = rasterSink();
    const r = await pondsTiled(await openMosaic([folder]), { workers: 1, minDepth: 0.5, onRasters: ref.onRasters });
    const runDir = join(dir, 'pool-run');
    // damage the last tile's compressed cells, keeping its header, size and time: the run is planned, the passes that read it fail
    const victim = join(folder, 't002.tif');
    const keep = join(dir, 't002.tif.good');
    copyFileSync(victim, keep);
    const st = statSync(victim);
    const buf = readFileSync(victim);
    buf.fill(0x55, buf.length - 24);
    writeFileSync(victim, buf);
    utimesSync(victim, st.atime, st.mtime);
    const failed = await pondsStaged({ inputs: [folder] }, { minDepth: 0.5, runDir, engine: new LocalEngine(2) }).then(() => null, (e) => e);
    expect(failed).toBeInstanceOf(StageFailed);
    expect((failed as Error).message).toMatch(/^tile t00\d \(stage pass1\) failed: .*t002\.tif is truncated or damaged/);
    expect((failed as Error).message).toMatch(/rerun with the same --run-dir to resume/);
    const run = new RunFolder(runDir);
    expect(run.status(PASS1, 2)?.ok).toBe(false);
    const okBefore = [0, 1].filter((t) => run.status(PASS1, t)?.ok);
    const before = okBefore.map((t) => readFileSync(run.statusPath(PASS1, t), 'utf8'));
    // repaired (same size and time, as a restored copy would be): the rerun does only what is missing
    copyFileSync(keep, victim);
    utimesSync(victim, st.atime, st.mtime);
    const got = rasterSink();
    const stages: string[] = [];
    const s = await pondsStaged({ inputs: [folder] }, { minDepth: 0.5, runDir, engine: new LocalEngine(2), onRasters: got.onRasters, onStage: (x) => stages.push(x) });
    expect(okBefore.map((t) => readFileSync(run.statusPath(PASS1, t), 'utf8'))).toEqual(before); // not run again
    expect(run.status(RASTERS, 2)?.ok).toBe(true);
    sameResult(s, r, got.got, ref.got);
    expect(stages).toContain('seam merge');
  }, 120_000);

  it('a run folder of another run, or of foreign files, is refused with one line', async () => {
    const g = randomGrid(5, 8, 7, 3, 0);
    const folder = join(dir, 'other');
    await writeTiles(folder, g, tilesOf(guillotine(8, 7, 2, 2), false));
    const runDir = join(dir, 'other-run');
    await pondsStaged({ inputs: [folder] }, { runDir, engine: new InlineEngine() });
    await expect(pondsStaged({ inputs: [folder] }, { runDir, minDepth: 1, engine: new InlineEngine() })).rejects.toThrow(/holds another run \(other inputs, tiles or options\)/);
    await expect(pondsStaged({ inputs: [folder] }, { runDir: folder, engine: new InlineEngine() })).rejects.toThrow(/holds files but no run of sill/);
  });
});
