/**
 * The tile passes on worker threads give byte-identical results for every number of workers
 * (the shares are added in window order whatever order the windows finish in). The worker is the
 * compiled dist/tiles/worker.js: build first (npm test does).
 */
import { describe, it, expect } from 'vitest';
import { Grid } from '../../src/surface/grid.js';
import { gridMosaic } from '../../src/tiles/memory.js';
import { pondsTiled, folderLabelStore, type LabelStore } from '../../src/tiles/ponds.js';
import { mkdtempSync, readdirSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { tileWorkerFile } from '../../src/tiles/pool.js';
import { randomGrid } from '../hydro/helpers.js';
import { guillotine, tilesOf } from './helpers.js';

async function run(g: Grid, seed: number, workers: number, labels?: LabelStore, runDir?: string): Promise<Buffer> {
  const mosaic = gridMosaic(g, tilesOf(guillotine(g.width, g.height, seed, 9), seed % 2 === 0));
  const parts: Buffer[] = [];
  const b = (a: ArrayBufferView): void => { parts.push(Buffer.from(a.buffer, a.byteOffset, a.byteLength)); };
  const rasters: Buffer[] = [];
  const r = await pondsTiled(mosaic, {
    workers, connectivity: 8, labels, runDir,
    onRasters: (tile, _own, rs) => { rasters[mosaic.tiles.indexOf(tile)] = Buffer.concat([Buffer.from(rs.filled.buffer.slice(0)), Buffer.from(rs.labels.buffer.slice(0))]); },
  });
  for (const a of [r.tree.vertex, r.tree.parent, r.tree.spill, r.tree.entry, r.tree.to, r.sums.rec, r.hierarchy.volume, r.hierarchy.area, r.hierarchy.pit]) b(a);
  parts.push(...rasters);
  parts.push(Buffer.from(new Float64Array([r.filledVolume]).buffer), Buffer.from(JSON.stringify(r.euler)));
  return Buffer.concat(parts);
}

describe('tile passes on worker threads', () => {
  it('finds the built worker module', () => {
    expect(tileWorkerFile()).not.toBeNull();
  });
  it('gives byte-identical results for 1, 2 and 3 workers, labels in files, summaries through a run folder', async () => {
    for (const seed of [3, 8]) {
      const g = randomGrid(seed, 90, 70, seed === 3 ? 0 : 4, 0.03);
      const one = await run(g, seed, 1);
      expect((await run(g, seed, 2)).equals(one)).toBe(true);
      expect((await run(g, seed, 3)).equals(one)).toBe(true);
      // labels waiting in files instead of memory: the same, and no file left
      const dir = mkdtempSync(join(tmpdir(), 'sill-tiles-'));
      try {
        expect((await run(g, seed, 2, folderLabelStore(dir))).equals(one)).toBe(true);
        expect(readdirSync(dir)).toEqual([]);
        // pass-1 summaries through stage files of a run folder: the same
        expect((await run(g, seed, 2, undefined, dir)).equals(one)).toBe(true);
        expect(readdirSync(dir).every((f) => /^pass1-\d+\.run$/.test(f))).toBe(true);
      } finally { rmSync(dir, { recursive: true, force: true }); }
    }
  });
});
