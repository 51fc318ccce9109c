/**
 * Mosaic inputs: a GDAL VRT, a folder of tiles, several GeoTIFF paths (src/io/mosaic.ts).
 *
 * The fixtures in fixtures/mosaic/ were made by tests/reference/make_mosaic_fixtures.py: GDAL cut
 * the tiles (gdal_translate -srcwin: shared edge rows and columns, abutting tiles, a gap), built
 * tiles.vrt (gdalbuildvrt) and assembled the same cells into one grid, single.tif (gdal_translate of
 * the VRT). Outside source of every value check here: that GDAL-assembled grid.
 */
import { afterAll, describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { copyFileSync, mkdirSync, readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { openMosaic, isMosaicInput, intersect } from '../../src/io/mosaic.js';
import { readGeoTiff } from '../../src/io/geotiff-read.js';
import { writeGeoTiff } from '../../src/io/geotiff-write.js';
import { parseXml } from '../../src/io/xml.js';
import { InputError } from '../../src/errors.js';
import type { Mosaic } from '../../src/tiles/mosaic.js';
import { tempDir } from './helpers.js';

const FIX = fileURLToPath(new URL('../../fixtures/mosaic/', import.meta.url));
const f = (p: string) => join(FIX, p);
const TILES = ['a', 'b', 'c', 'd', 'e'].map((n) => f(`tiles/${n}.tif`));
const { dir, cleanup } = tempDir();
afterAll(cleanup);

async function inputError(p: Promise<unknown>): Promise<string> {
  const err = await p.then(() => null, (e) => e);
  expect(err).toBeInstanceOf(InputError);
  const msg = (err as Error).message;
  expect(msg.split('\n')).toHaveLength(1);
  return msg;
}

/** Every cell of the mosaic owned at most once, every tile cell owned once, owned cells inside their tile. */
function checkPartition(m: Mosaic): void {
  const owner = new Int32Array(m.width * m.height).fill(-1);
  m.tiles.forEach((t, k) => {
    expect(intersect(t.own, t)).toEqual(t.own);
    for (let r = t.own.row0; r < t.own.row0 + t.own.height; r++) {
      for (let c = t.own.col0; c < t.own.col0 + t.own.width; c++) {
        expect(owner[r * m.width + c]).toBe(-1);
        owner[r * m.width + c] = k;
      }
    }
  });
  for (const t of m.tiles) {
    for (let r = t.row0; r < t.row0 + t.height; r++) for (let c = t.col0; c < t.col0 + t.width; c++) expect(owner[r * m.width + c]).toBeGreaterThanOrEqual(0);
  }
}

describe('openMosaic on GDAL-cut tiles', async () => {
  const single = await readGeoTiff(f('single.tif'));
  const forms: [string, string[]][] = [['the VRT', [f('tiles.vrt')]], ['the folder', [f('tiles')]], ['the paths', [...TILES].reverse()]];
  for (const [what, inputs] of forms) {
    it(`${what}: same size, geotransform, CRS and tile placement as GDAL's assembled grid`, async () => {
      expect(isMosaicInput(inputs)).toBe(true);
      const m = await openMosaic(inputs);
      expect([m.width, m.height]).toEqual([single.width, single.height]);
      expect(m.transform).toEqual(single.transform);
      expect(m.crs?.epsg).toBe(32633);
      expect(m.nodata).toBe(-9999);
      expect(m.float64).toBe(false);
      // canonical order (row0, col0), placed as gdal_translate -srcwin cut them
      expect(m.tiles.map((t) => [t.name, t.col0, t.row0, t.width, t.height])).toEqual([
        ['a', 0, 0, 25, 21], ['b', 24, 0, 24, 21], ['c', 0, 20, 20, 20], ['d', 20, 20, 28, 10], ['e', 28, 30, 20, 10],
      ]);
      // the shared column 24 goes to a, the shared row 20 to a and b (d's row 20 lies under both)
      expect(m.tiles.map((t) => t.own)).toEqual([
        { col0: 0, row0: 0, width: 25, height: 21 }, { col0: 25, row0: 0, width: 23, height: 21 },
        { col0: 0, row0: 21, width: 20, height: 19 }, { col0: 20, row0: 21, width: 28, height: 9 }, { col0: 28, row0: 30, width: 20, height: 10 },
      ]);
      checkPartition(m);
      expect(m.tiles[1].transform).toEqual([512000 + 24 * 5, 5, 0, 5874000, 0, -5]);
    });

    it(`${what}: readWindow of the whole mosaic equals GDAL's assembled grid cell for cell (gap and nodata NaN)`, async () => {
      const m = await openMosaic(inputs);
      const v = await m.readWindow({ col0: 0, row0: 0, width: m.width, height: m.height });
      expect(v).toBeInstanceOf(Float32Array);
      let diff = 0, nan = 0;
      for (let i = 0; i < v.length; i++) {
        const a = v[i], b = single.values[i];
        if (a !== b && !(a !== a && b !== b)) diff++;
        if (a !== a) nan++;
      }
      expect(diff).toBe(0);
      expect(nan).toBe(8 * 10 + 1 + 1 + 4); // the gap and the nodata cells
    });
  }

  it('readWindow of windows across seams and the gap equals the same part of the assembled grid', async () => {
    const m = await openMosaic([f('tiles.vrt')]);
    await fc.assert(fc.asyncProperty(
      fc.integer({ min: 0, max: 47 }), fc.integer({ min: 0, max: 39 }), fc.integer({ min: 1, max: 48 }), fc.integer({ min: 1, max: 40 }),
      async (c0, r0, w, h) => {
        const win = { col0: c0, row0: r0, width: Math.min(w, 48 - c0), height: Math.min(h, 40 - r0) };
        const v = await m.readWindow(win);
        for (let r = 0; r < win.height; r++) {
          for (let c = 0; c < win.width; c++) {
            const a = v[r * win.width + c], b = single.values[(r0 + r) * 48 + c0 + c];
            if (a !== b && !(a !== a && b !== b)) return false;
          }
        }
        return true;
      },
    ), { numRuns: 25 });
  });

  it('a folder lists its .tif/.tiff files by name, not its subfolders or other files', async () => {
    const d = join(dir, 'folder');
    mkdirSync(join(d, 'sub'), { recursive: true });
    copyFileSync(TILES[1], join(d, 'z.TIFF'));
    copyFileSync(TILES[0], join(d, 'y.tif'));
    copyFileSync(TILES[2], join(d, 'sub', 'x.tif'));
    writeFileSync(join(d, 'notes.txt'), 'not a tile');
    const m = await openMosaic([d]);
    expect(m.kind).toBe('folder');
    expect(m.tiles.map((t) => t.name)).toEqual(['y', 'z']);
    expect([m.width, m.height]).toEqual([48, 21]);
  });

  it('a single .tif is not a mosaic; a .vrt, a folder or several paths are', () => {
    expect(isMosaicInput([TILES[0]])).toBe(false);
    expect(isMosaicInput([f('tiles.vrt')])).toBe(true);
    expect(isMosaicInput([f('tiles')])).toBe(true);
    expect(isMosaicInput(TILES.slice(0, 2))).toBe(true);
  });
});

describe('windowed reads (the overlap check reads only the blocks it needs)', () => {
  it('every window of every readable GeoTIFF fixture equals the same part of the whole band (whose values GDAL checks in geotiff-read.test.ts)', async () => {
    const { readdirSync } = await import('node:fs');
    const { readGeoTiffWindows } = await import('../../src/io/geotiff-read.js');
    const IO = fileURLToPath(new URL('../../fixtures/io/', import.meta.url));
    const names = [...readdirSync(IO).filter((n) => n.endsWith('.tif')).map((n) => join(IO, n)),
      ...readdirSync(join(IO, 'blocks')).filter((n) => n.endsWith('.tif')).map((n) => join(IO, 'blocks', n))];
    let checked = 0;
    for (const p of names) {
      let whole;
      try { whole = await readGeoTiff(p, { threads: 1 }); } catch { continue; } // the fixtures sill refuses
      const W = whole.width, H = whole.height;
      const wins = fc.sample(fc.record({ c: fc.nat(W - 1), r: fc.nat(H - 1), w: fc.integer({ min: 1, max: W }), h: fc.integer({ min: 1, max: H }) }), { numRuns: 6, seed: 7 })
        .map(({ c, r, w, h }) => ({ col0: c, row0: r, width: Math.min(w, W - c), height: Math.min(h, H - r) }));
      wins.push({ col0: W - 1, row0: 0, width: 1, height: H }, { col0: 0, row0: H - 1, width: W, height: 1 }); // an edge column and row
      const got = await readGeoTiffWindows(p, wins);
      wins.forEach((win, k) => {
        let bad = 0;
        for (let r = 0; r < win.height; r++) {
          for (let c = 0; c < win.width; c++) {
            const a = got[k][r * win.width + c], b = whole.values[(win.row0 + r) * W + win.col0 + c];
            if (a !== b && !(a !== a && b !== b)) bad++;
          }
        }
        expect(bad, `${p} window ${JSON.stringify(win)}`).toBe(0);
      });
      checked++;
    }
    expect(checked).toBeGreaterThan(40);
  });
});

describe('random tilings (property)', () => {
  /**
   * A random grid (ties, plateaus, nodata) cut by random lines into a lattice of tiles, written as
   * GeoTIFFs; with shared edges (every band of rows after the first reaches one row up, every band
   * of columns one column left, as tiles that share their edge row and column do) or with gaps
   * (tiles that abut, some left out). The mosaic must place every tile where it was cut, own each
   * cell once, and read back the grid's cells (NaN where no tile is).
   */
  it('the mosaic of the tiles reads back the cut grid cell for cell', async () => {
    let run = 0;
    await fc.assert(fc.asyncProperty(
      fc.integer({ min: 2, max: 24 }), fc.integer({ min: 2, max: 20 }),
      fc.uniqueArray(fc.integer({ min: 1, max: 23 }), { maxLength: 3 }), fc.uniqueArray(fc.integer({ min: 1, max: 19 }), { maxLength: 3 }),
      fc.boolean(), fc.array(fc.boolean(), { minLength: 16, maxLength: 16 }), fc.integer({ min: 0, max: 2 ** 31 - 1 }),
      async (W, H, colCuts, rowCuts, shared, keep, seed) => {
        const cols = [0, ...colCuts.filter((c) => c < W).sort((a, b) => a - b), W];
        const rows = [0, ...rowCuts.filter((r) => r < H).sort((a, b) => a - b), H];
        let s = seed;
        const rnd = () => ((s = (Math.imul(s, 1103515245) + 12345) >>> 0) / 4294967296);
        const grid = new Float32Array(W * H);
        for (let i = 0; i < grid.length; i++) {
          const u = rnd();
          grid[i] = u < 0.1 ? NaN : u < 0.4 ? 7 : Math.round(rnd() * 20) / 2; // nodata, a plateau, ties
        }
        const folder = join(dir, `random-${run++}`);
        mkdirSync(folder);
        const covered = new Uint8Array(W * H);
        let k = 0, written = 0;
        for (let bi = 0; bi + 1 < rows.length; bi++) {
          for (let bj = 0; bj + 1 < cols.length; bj++, k++) {
            if (!shared && !keep[k % keep.length] && !(written === 0 && bi + 2 === rows.length && bj + 2 === cols.length)) continue;
            const r0 = rows[bi] - (shared && bi > 0 ? 1 : 0), c0 = cols[bj] - (shared && bj > 0 ? 1 : 0);
            const w = cols[bj + 1] - c0, h = rows[bi + 1] - r0;
            const v = new Float32Array(w * h);
            for (let r = 0; r < h; r++) for (let c = 0; c < w; c++) { v[r * w + c] = grid[(r0 + r) * W + c0 + c]; covered[(r0 + r) * W + c0 + c] = 1; }
            await writeGeoTiff(join(folder, `t${bi}-${bj}.tif`), { width: w, height: h, values: v, transform: [1000 + c0 * 2, 2, 0, 5000 - r0 * 2, 0, -2], crs: null, nodata: -9999 }, { layout: 'strips' });
            written++;
          }
        }
        const m = await openMosaic([folder]);
        checkPartition(m);
        // the bounding box of the tiles written
        let cMin = W, rMin = H, cMax = 0, rMax = 0;
        for (let r = 0; r < H; r++) for (let c = 0; c < W; c++) if (covered[r * W + c]) { cMin = Math.min(cMin, c); rMin = Math.min(rMin, r); cMax = Math.max(cMax, c); rMax = Math.max(rMax, r); }
        expect([m.width, m.height]).toEqual([cMax - cMin + 1, rMax - rMin + 1]);
        expect(m.transform).toEqual([1000 + cMin * 2, 2, 0, 5000 - rMin * 2, 0, -2]);
        const v = await m.readWindow({ col0: 0, row0: 0, width: m.width, height: m.height });
        for (let r = 0; r < m.height; r++) {
          for (let c = 0; c < m.width; c++) {
            const i = (r + rMin) * W + c + cMin;
            const want = covered[i] ? grid[i] : NaN;
            const got = v[r * m.width + c];
            if (got !== want && !(got !== got && want !== want)) return false;
          }
        }
        return true;
      },
    ), { numRuns: 40 });
  });
});

describe('bad mosaics: one line naming the tile(s)', () => {
  const a = TILES[0];
  it('different CRS', async () => {
    expect(await inputError(openMosaic([a, f('bad/crs.tif')]))).toMatch(/bad\/crs\.tif: its CRS EPSG:32634 differs from EPSG:32633 of .*tiles\/a\.tif/);
  });
  it('different cell size', async () => {
    expect(await inputError(openMosaic([a, f('bad/cellsize.tif')]))).toMatch(/cellsize\.tif: its cell size 10 × -10 differs from 5 × -5 of .*a\.tif/);
  });
  it('different sample type', async () => {
    expect(await inputError(openMosaic([a, f('bad/type.tif')]))).toMatch(/type\.tif: its sample type Int16 differs from Float32 of .*a\.tif/);
  });
  it('an offset of half a cell', async () => {
    expect(await inputError(openMosaic([a, f('bad/halfcell.tif')]))).toMatch(/halfcell\.tif: its origin .* lies 0\.5 cell across and 0 cell down from a whole cell/);
  });
  it('overlapping cells with different values: both tiles, the first differing cell and the difference', async () => {
    const msg = await inputError(openMosaic([a, f('bad/conflict.tif')]));
    // the changed cell: row 7 of the shared column 24; x = 512000 + 24.5·5, y = 5874000 − 7.5·5
    expect(msg).toMatch(/tiles .*a\.tif and .*conflict\.tif overlap with different values: at cell \(24, 7\) of the mosaic, x 512122\.5, y 5873962\.5, a has [\d.]+ and conflict has [\d.]+ \(difference 0\.5\)/);
  });
  it('an unreadable (truncated) tile, named', async () => {
    expect(await inputError(openMosaic([a, f('bad/truncated.tif')]))).toMatch(/truncated\.tif is truncated or damaged/);
    expect(await inputError(openMosaic([a, join(dir, 'missing.tif')]))).toMatch(/cannot read .*missing\.tif: no such file/);
  });
  it('VRTs with scaling, resampling or derived bands', async () => {
    expect(await inputError(openMosaic([f('bad/scaled.vrt')]))).toMatch(/scaled\.vrt: scaling of source values .* at line \d+ is not supported/);
    expect(await inputError(openMosaic([f('bad/resampled.vrt')]))).toMatch(/resampled\.vrt: a source resampled from 25×21 to 50×42 cells .* is not supported/);
    expect(await inputError(openMosaic([f('bad/derived.vrt')]))).toMatch(/derived\.vrt: a VRTRasterBand of subClass VRTDerivedRasterBand .* is not supported/);
  });
  it('a .vrt or a folder among several paths; a band the VRT lacks; an empty folder', async () => {
    expect(await inputError(openMosaic([a, f('tiles.vrt')]))).toMatch(/not a \.vrt among other inputs/);
    expect(await inputError(openMosaic([f('tiles.vrt')], { band: 2 }))).toMatch(/has 1 band; band 2 does not exist/);
    mkdirSync(join(dir, 'empty'));
    expect(await inputError(openMosaic([join(dir, 'empty')]))).toMatch(/holds no \.tif or \.tiff file/);
  });
  it('two tiles of the same name; a tile inside another', async () => {
    mkdirSync(join(dir, 'other'));
    copyFileSync(TILES[1], join(dir, 'other', 'a.tif'));
    expect(await inputError(openMosaic([a, join(dir, 'other', 'a.tif')]))).toMatch(/have the same name a/);
    const inner = join(dir, 'inner.tif');
    const g = await readGeoTiff(a);
    const v = new Float32Array(4 * 4);
    for (let r = 0; r < 4; r++) for (let c = 0; c < 4; c++) v[r * 4 + c] = g.values[(r + 3) * 25 + c + 3];
    await writeGeoTiff(inner, { width: 4, height: 4, values: v, transform: [512000 + 15, 5, 0, 5874000 - 15, 0, -5], crs: g.crs, nodata: -9999 });
    expect(await inputError(openMosaic([a, inner]))).toMatch(/inner\.tif lies wholly inside tiles earlier in the mosaic/);
  });
  it('a block overlap that is not whole edge rows or columns', async () => {
    const g = await readGeoTiff(a);
    const p = join(dir, 'block.tif');
    // a 10 × 10 tile whose top-left 3 × 3 cells lie inside a (equal values there)
    const v = new Float32Array(100).fill(1);
    for (let r = 0; r < 3; r++) for (let c = 0; c < 3; c++) v[r * 10 + c] = g.values[(18 + r) * 25 + 22 + c];
    await writeGeoTiff(p, { width: 10, height: 10, values: v, transform: [512000 + 22 * 5, 5, 0, 5874000 - 18 * 5, 0, -5], crs: g.crs, nodata: -9999 });
    expect(await inputError(openMosaic([a, p]))).toMatch(/overlap in a block \(3×3 cells from \(22, 18\)\) that is not whole edge rows or columns/);
    // diagonal neighbours sharing only their corner cell, the tiles beside both missing: no rectangular split exists
    const q = join(dir, 'corner.tif');
    const u = new Float32Array(16).fill(2);
    u[0] = g.values[20 * 25 + 24];
    await writeGeoTiff(q, { width: 4, height: 4, values: u, transform: [512000 + 24 * 5, 5, 0, 5874000 - 20 * 5, 0, -5], crs: g.crs, nodata: -9999 });
    expect(await inputError(openMosaic([a, q]))).toMatch(/overlap in a block \(1×1 cells from \(24, 20\)\) .*diagonal neighbours may share a corner only while a tile beside both is there/);
  });
});

describe('the XML reader', () => {
  it('reads elements, attributes, entities, comments and CDATA; refuses malformed text with the line', () => {
    const x = parseXml('<?xml version="1.0"?>\n<!-- c -->\n<A k="1 &amp; 2"><B>x &lt; y</B><![CDATA[<raw>]]><C/></A>', 't.xml');
    expect(x.name).toBe('A');
    expect(x.attrs.k).toBe('1 & 2');
    expect(x.children.map((c) => c.name)).toEqual(['B', 'C']);
    expect(x.children[0].text).toBe('x < y');
    expect(x.text).toBe('<raw>');
    expect(x.line).toBe(3);
    expect(() => parseXml('<A>\n<B></A>', 't.xml')).toThrow(/t\.xml is not well-formed XML: <\/A> closes <B> at line 2/);
    expect(() => parseXml('<A x=1/>', 't.xml')).toThrow(InputError);
    expect(() => parseXml('<A>&bogus;</A>', 't.xml')).toThrow(/unknown entity/);
    expect(() => parseXml('<A/><B/>', 't.xml')).toThrow(/content after the root element/);
  });
  it('a VRT that is not well-formed is one line naming the file', async () => {
    const p = join(dir, 'broken.vrt');
    writeFileSync(p, readFileSync(f('tiles.vrt'), 'utf8').replace('</VRTRasterBand>', ''));
    expect(await inputError(openMosaic([p]))).toMatch(/broken\.vrt is not well-formed XML/);
  });
});
