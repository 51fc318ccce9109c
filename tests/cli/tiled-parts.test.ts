/**
 * The parts of the tile-by-tile command line that need no run: the progress bar's line, and the
 * assembly of whole input tiles from the owned windows' rasters (tiles that share edge rows and
 * columns get those cells from the window that owns them).
 */
import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { progressLine, clock } from '../../src/cli/progress-bar.js';
import { TileAssembler } from '../../src/cli/tiled.js';
import { Grid } from '../../src/surface/grid.js';
import { gridMosaic } from '../../src/tiles/memory.js';
import type { RasterValues } from '../../src/io/geotiff-write.js';
import { guillotine, tilesOf } from '../tiles/helpers.js';

describe('progress line', () => {
  it('shows the stage, the tiles done of the total, the time elapsed and the time left', () => {
    expect(progressLine({ stage: 'pass 1: windows', done: 4, total: 16, elapsedMs: 30_000, stageMs: 20_000 }))
      .toBe('pass 1: windows [#####...............] 4/16 tiles, 0:30 elapsed, ~1:00 left');
    expect(progressLine({ stage: 'seam merge', elapsedMs: 3_725_000, stageMs: 0 })).toBe('seam merge, 1:02:05 elapsed');
    expect(progressLine({ stage: 'pass 2: windows', done: 0, total: 9, elapsedMs: 1000, stageMs: 0 })).toBe('pass 2: windows [....................] 0/9 tiles, 0:01 elapsed');
    expect(clock(59_499)).toBe('0:59');
  });

  it('property: never longer than the terminal, the bar fills with the tiles done, and the time left is the stage\'s pace times the tiles left', () => {
    fc.assert(fc.property(
      fc.string({ maxLength: 80 }), fc.integer({ min: 1, max: 10_000 }), fc.nat(), fc.nat({ max: 10 ** 9 }), fc.integer({ min: 10, max: 300 }),
      (stage, total, d, ms, columns) => {
        const done = d % (total + 1);
        const line = progressLine({ stage, done, total, elapsedMs: ms + 1000, stageMs: ms }, columns);
        expect(line.length).toBeLessThanOrEqual(columns);
        const full = progressLine({ stage, done, total, elapsedMs: ms + 1000, stageMs: ms }, 10_000);
        expect(full).toContain(`] ${done}/${total} tiles`);
        expect((full.match(/\[(#*)\.*\]/) ?? ['', ''])[1].length).toBe(Math.floor((20 * done) / total));
        if (done > 0 && done < total) expect(full.endsWith(`~${clock((ms / done) * (total - done))} left`)).toBe(true);
        else expect(full).not.toContain('left');
      }), { seed: 20261202, numRuns: 300 });
  });
});

describe('whole tiles from owned windows', () => {
  it('property: on random tilings with and without shared edges, every tile comes out once, equal to the grid\'s cells under it', () => {
    fc.assert(fc.property(fc.integer({ min: 2, max: 14 }), fc.integer({ min: 2, max: 14 }), fc.integer(), fc.integer({ min: 1, max: 10 }), fc.boolean(), (w, h, seed, maxTiles, shared) => {
      const values = Float32Array.from({ length: w * h }, (_, i) => i * 0.5);
      const mosaic = gridMosaic(new Grid({ width: w, height: h, values }), tilesOf(guillotine(w, h, seed, maxTiles), shared));
      // the mosaic readers' canonical order: by top-left cell, row first
      const tiles = [...mosaic.tiles].sort((a, b) => a.row0 - b.row0 || a.col0 - b.col0);
      const asm = new TileAssembler(tiles);
      const got = new Map<number, RasterValues[]>();
      for (let k = 0; k < tiles.length; k++) {
        const o = tiles[k].own;
        const a = new Float32Array(o.width * o.height), b = new Int32Array(o.width * o.height);
        for (let r = 0; r < o.height; r++) for (let c = 0; c < o.width; c++) { const i = (o.row0 + r) * w + o.col0 + c; a[r * o.width + c] = values[i]; b[r * o.width + c] = -i; }
        for (const [u, v] of asm.window(k, o, [a, b])) { expect(got.has(u)).toBe(false); got.set(u, v); }
      }
      expect(asm.finished()).toBe(true);
      expect(got.size).toBe(tiles.length);
      for (const [u, [a, b]] of got) {
        const t = tiles[u];
        expect(a).toBeInstanceOf(Float32Array);
        expect(b).toBeInstanceOf(Int32Array);
        for (let r = 0; r < t.height; r++) for (let c = 0; c < t.width; c++) {
          const i = (t.row0 + r) * w + t.col0 + c;
          expect(a[r * t.width + c]).toBe(values[i]);
          expect(b[r * t.width + c]).toBe(-i === 0 ? 0 : -i);
        }
      }
    }), { seed: 7, numRuns: 200 });
  });
});
