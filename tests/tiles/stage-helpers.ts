/** Mosaics of GeoTIFF tiles on disk for the staged-run tests, an engine that runs the stages in this process, and a byte-for-byte comparison of two results. */
import { mkdirSync } from 'node:fs';
import { join } from 'node:path';
import { expect } from 'vitest';
import { hostname } from 'node:os';
import { writeGeoTiff } from '../../src/io/geotiff-write.js';
import type { Grid } from '../../src/surface/grid.js';
import type { TileCut } from '../../src/tiles/memory.js';
import type { TiledPondsResult } from '../../src/tiles/ponds.js';
import type { PondRasters } from '../../src/hydro/rasters.js';
import type { CellWindow } from '../../src/tiles/mosaic.js';
import { InputError } from '../../src/errors.js';
import { runTileStage } from '../../src/tiles/stages.js';
import { lostStatus, type Engine } from '../../src/cluster/engine.js';
import type { RunFolder } from '../../src/cluster/run-folder.js';

/** Write the tiles of `g` (each tile's extent; nodata as −9999) into `folder`, named so that the folder's order is the cut order. */
export async function writeTiles(folder: string, g: Grid, cuts: TileCut[]): Promise<void> {
  mkdirSync(folder, { recursive: true });
  const [x0, dx, rx, y0, ry, dy] = g.transform;
  for (let k = 0; k < cuts.length; k++) {
    const c = cuts[k];
    const v = new Float64Array(c.width * c.height);
    for (let r = 0; r < c.height; r++) for (let q = 0; q < c.width; q++) {
      const z = g.values[(c.row0 + r) * g.width + c.col0 + q];
      v[r * c.width + q] = z === z ? z : -9999;
    }
    await writeGeoTiff(join(folder, `t${String(k).padStart(3, '0')}.tif`), {
      width: c.width, height: c.height, values: v, crs: g.crs, nodata: -9999,
      transform: [x0 + c.col0 * dx + c.row0 * rx, dx, rx, y0 + c.col0 * ry + c.row0 * dy, ry, dy],
    });
  }
}

/** Runs every task of a run folder in this process, stage by stage (what a task runner would do, without the child processes). */
export class InlineEngine implements Engine {
  readonly name = 'inline';
  async run(folder: RunFolder): Promise<void> {
    for (const name of folder.run()!.stages) {
      const stage = folder.stage(name);
      const pending = folder.pending(stage);
      if (!folder.dependenciesMet(stage)) {
        for (const i of pending) folder.writeStatus(lostStatus(stage, i, 'not run: an earlier stage failed'));
        continue;
      }
      for (const i of pending) {
        let error: string | null = null, exit = 0;
        try {
          await runTileStage(folder.dir, name, i);
        } catch (e) {
          error = (e as Error).message;
          exit = e instanceof InputError ? 2 : 1;
        }
        folder.writeStatus({ schema: 'sill/task@1', stage: name, index: i, label: stage.tasks[i].label, ok: exit === 0, exit, signal: null, error, seconds: 0, host: hostname(), outputRun: null });
      }
    }
  }
}

/** Collects the rasters handed to onRasters, window by window. */
export function rasterSink(): { onRasters: (t: unknown, own: CellWindow, rs: PondRasters) => void; got: { own: CellWindow; rs: PondRasters }[] } {
  const got: { own: CellWindow; rs: PondRasters }[] = [];
  return { got, onRasters: (_t, own, rs) => { got.push({ own: { ...own }, rs: { ...rs, filled: rs.filled.slice(), depth: rs.depth.slice(), labels: rs.labels.slice() } }); } };
}

const bytes = (a: ArrayBufferView) => Buffer.from(a.buffer, a.byteOffset, a.byteLength);

/** Two values equal to the bit: typed arrays byte for byte (same type), numbers by Object.is, objects member by member. */
export function sameBits(a: unknown, b: unknown, path = 'result'): void {
  if (ArrayBuffer.isView(a) || ArrayBuffer.isView(b)) {
    expect(ArrayBuffer.isView(a) && ArrayBuffer.isView(b), path).toBe(true);
    expect((a as object).constructor.name, path).toBe((b as object).constructor.name);
    expect(bytes(a as ArrayBufferView).equals(bytes(b as ArrayBufferView)), path).toBe(true);
    return;
  }
  if (a !== null && b !== null && typeof a === 'object' && typeof b === 'object') {
    expect(Object.keys(a).sort(), path).toEqual(Object.keys(b).sort());
    for (const k of Object.keys(a)) sameBits((a as Record<string, unknown>)[k], (b as Record<string, unknown>)[k], `${path}.${k}`);
    return;
  }
  expect(Object.is(a, b), `${path}: ${String(a)} vs ${String(b)}`).toBe(true);
}

/** The staged result and rasters equal the in-process ones to the bit. */
export function sameResult(staged: TiledPondsResult, ref: TiledPondsResult, rs: ReturnType<typeof rasterSink>['got'], rr: ReturnType<typeof rasterSink>['got']): void {
  sameBits(staged, ref);
  expect(rs.length).toBe(rr.length);
  for (let t = 0; t < rr.length; t++) sameBits(rs[t], rr[t], `rasters of window ${t}`);
}
