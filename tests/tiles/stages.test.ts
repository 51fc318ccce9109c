/**
 * The tiled ponds run as run-folder stages (src/tiles/stages.ts) against the in-process tiled run
 * `pondsTiled` on the same GeoTIFF tiles: the same result to the bit (tree, sums, hierarchy, Euler
 * block, every window's rasters), on random DEMs (ties, plateaus, nodata) cut into random tilings
 * with and without shared edges. The in-process run is the reference here; it is checked against
 * the single grid in ponds-tiled.test.ts, and the single grid's filled DEM against scikit-image's
 * morphological reconstruction in tests/hydro/reference.test.ts (outside source).
 *
 * The stages run in this process here (InlineEngine: many cases, cheap); the local pool of child
 * processes and Slurm run them in tests/cluster/ponds-stages*.test.ts.
 */
import { describe, it, expect, beforeAll, afterAll } from 'vitest';
import fc from 'fast-check';
import { readFileSync, rmSync, utimesSync } from 'node:fs';
import { join } from 'node:path';
import { openMosaic } from '../../src/io/mosaic.js';
import { pondsTiled } from '../../src/tiles/ponds.js';
import { pondsStaged, stagePass1, StageFailed } from '../../src/tiles/stages.js';
import { InputError } from '../../src/errors.js';
import { gridArb } from '../hydro/arbitraries.js';
import { randomGrid } from '../hydro/helpers.js';
import { guillotine, tilesOf, tilingArb } from './helpers.js';
import { InlineEngine, rasterSink, sameResult, writeTiles } from './stage-helpers.js';
import { listFiles, tempDir } from '../cli/run.js';
import { OutputFolder } from '../../src/io/outdir.js';
import { rasterNames, writeRasterProducts } from '../../src/cli/mosaic.js';
import { topLabels } from '../../src/hydro/rasters.js';

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
      const mosaic = await openMosaic([folder]).catch((e) => { if (e instanceof InputError) return null; throw e; }); // e.g. a tile inside others
      if (!mosaic) return;
      let r;
      try {
        r = await pondsTiled(mosaic, { ...opts, workers: 1, onRasters: ref.onRasters });
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

  it('a run folder of another run, or of foreign files, is refused with one line', async () => {
    const g = randomGrid(5, 8, 7, 3, 0);
    const folder = join(dir, 'other');
    await writeTiles(folder, g, tilesOf(guillotine(8, 7, 2, 2), false));
    const runDir = join(dir, 'other-run');
    await pondsStaged({ inputs: [folder] }, { runDir, engine: new InlineEngine() });
    await expect(pondsStaged({ inputs: [folder] }, { runDir, minDepth: 1, engine: new InlineEngine() })).rejects.toThrow(/holds another run \(other inputs, tiles or options\)/);
    await expect(pondsStaged({ inputs: [folder] }, { runDir: folder, engine: new InlineEngine() })).rejects.toThrow(/holds files but no run of sill/);
    // a tile touched after the plan: a task refuses to go on, a rerun is another run
    const t0 = join(folder, 't000.tif');
    utimesSync(t0, new Date(), new Date(Date.now() + 5000));
    await expect(stagePass1(runDir, 0)).rejects.toThrow(/tile .*t000\.tif has changed since this run was planned/);
    await expect(pondsStaged({ inputs: [folder] }, { runDir, engine: new InlineEngine() })).rejects.toThrow(/holds another run/);
  });
});
