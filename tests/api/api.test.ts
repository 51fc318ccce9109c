/**
 * The library's front door (src/index.ts): the same results, files and one-line errors as the
 * command line (the CLI runs the built binary on the same input), arrays from memory checked like
 * files, options checked for a plain-JavaScript caller, and `largest(k)` equal to a full sort.
 * The results themselves are checked against outside sources in the tests of each analysis and
 * in docs/library.md (tests/package/library-docs.test.ts).
 */
import { describe, it, expect, beforeAll, afterAll } from 'vitest';
import fc from 'fast-check';
import { readFileSync, rmSync } from 'node:fs';
import { join } from 'node:path';
import {
  readSurface, gridFromArray, surfaceName, survey, ponds, runoff, barriers, writeJsonFile, writeDepressionsCsv, writeDepressionsGeoJson, writePourPointsGeoJson,
  writeCsvFile, writePointsGeoJson, pondsRasters, runoffRasters, writeGeoTiff, InputError, Grid,
} from '../../src/index.js';
import { sill, tempDir, writeTerrainNpy } from '../cli/run.js';

let dir = '';
let dem = '';
beforeAll(() => {
  dir = tempDir('sill-api-');
  dem = join(dir, 'terrain.npy');
  writeTerrainNpy(dem, 90, 70, 2); // noise of ±1: many depressions
});
afterAll(() => rmSync(dir, { recursive: true, force: true }));

const read = (p: string) => readFileSync(p);
const json = (p: string) => JSON.parse(readFileSync(p, 'utf8'));

describe('the library gives what the command line gives', () => {
  it('ponds: report, depressions.csv, depressions.geojson, pour-points.geojson and the rasters, byte for byte', async () => {
    const out = join(dir, 'ponds-cli');
    const r = sill(['ponds', dem, '-o', out, '--min-depth', '0.01', '--quiet', '--threads', '1']);
    expect(r.code, r.stderr).toBe(0);
    const run = ponds(await readSurface(dem), { minDepth: 0.01, threads: 1 });
    expect(run.report.input).toBe(dem); // named after the file it was read from
    const lib = join(dir, 'ponds-lib-');
    writeDepressionsCsv(`${lib}depressions.csv`, run);
    const outlined = writeDepressionsGeoJson(`${lib}depressions.geojson`, run);
    writePourPointsGeoJson(`${lib}pour-points.geojson`, run);
    writeJsonFile(`${lib}report.json`, run.report);
    const { filled, depth, labels } = pondsRasters(run);
    await writeGeoTiff(`${lib}filled.tif`, filled, { threads: 1 });
    await writeGeoTiff(`${lib}depth.tif`, depth, { threads: 1 });
    await writeGeoTiff(`${lib}labels.tif`, labels, { threads: 1 });
    for (const f of ['depressions.csv', 'depressions.geojson', 'pour-points.geojson', 'filled.tif', 'depth.tif', 'labels.tif']) {
      expect(read(`${lib}${f}`).equals(read(join(out, f))), f).toBe(true);
    }
    const cliReport = json(join(out, 'report.json'));
    expect(cliReport.outlines).toMatchObject({ levels: 'top', features: outlined });
    delete cliReport.outlines; // set by the command's writer, with its note
    expect(json(`${lib}report.json`)).toEqual(cliReport);
    expect(run.report.depressions.length).toBeGreaterThan(5);
  });

  it('survey, runoff and barriers: the report of --json', async () => {
    const surface = await readSurface(dem);
    const cases: [string[], unknown][] = [
      [['survey', dem, '--min-persistence', '0.5'], survey(surface, { minPersistence: 0.5 }).report],
      [['runoff', dem, '--depth', '30mm'], runoff(surface, { depth: '30mm' }).report],
      [['barriers', dem, '--units', 'kJ/mol', '--max-paths', '3'], barriers(surface, { units: 'kJ/mol', maxPaths: 3 }).report],
    ];
    for (const [args, report] of cases) {
      const r = sill([...args, '--json']);
      expect(r.code, r.stderr).toBe(0);
      expect(JSON.parse(JSON.stringify(report)), args[0]).toEqual(JSON.parse(r.stdout));
    }
  });

  it('survey: critical points as GeoJSON and CSV, as the command writes them', async () => {
    const out = join(dir, 'survey-cli');
    expect(sill(['survey', dem, '-o', out, '--quiet']).code).toBe(0);
    const surface = await readSurface(dem);
    const { report } = survey(surface);
    writePointsGeoJson(join(dir, 'lib-points.geojson'), report.criticalPoints, {
      crs: surface.crs, name: 'critical-points',
      properties: (c) => ({ kind: c.kind, value: c.value, multiplicity: c.multiplicity, col: c.col, row: c.row, onEdge: c.onEdge }),
    });
    expect(read(join(dir, 'lib-points.geojson')).equals(read(join(out, 'critical-points.geojson')))).toBe(true);
    writeCsvFile(join(dir, 'lib-points.csv'), report.criticalPoints, [
      ['kind', (c) => c.kind], ['col', (c) => c.col], ['row', (c) => c.row], ['x', (c) => c.x], ['y', (c) => c.y],
      ['value', (c) => c.value], ['multiplicity', (c) => c.multiplicity], ['on_edge', (c) => (c.onEdge ? 1 : 0)],
    ]);
    expect(read(join(dir, 'lib-points.csv')).equals(read(join(out, 'critical-points.csv')))).toBe(true);
    // the default properties: every member but x and y
    writePointsGeoJson(join(dir, 'lib-default.geojson'), report.criticalPoints);
    const f = json(join(dir, 'lib-default.geojson')).features[0];
    const { x, y, ...rest } = report.criticalPoints.at(0);
    expect(f).toEqual({ type: 'Feature', id: 0, geometry: { type: 'Point', coordinates: [x, y] }, properties: rest });
  });

  it('runoff rasters as the command writes them', async () => {
    const out = join(dir, 'runoff-cli');
    expect(sill(['runoff', dem, '--depth', '0.02m', '-o', out, '--quiet', '--threads', '1']).code).toBe(0);
    const { level, depth } = runoffRasters(runoff(await readSurface(dem), { depth: 0.02 }));
    await writeGeoTiff(join(dir, 'lib-level.tif'), level, { threads: 1 });
    await writeGeoTiff(join(dir, 'lib-depth.tif'), depth, { threads: 1 });
    expect(read(join(dir, 'lib-level.tif')).equals(read(join(out, 'water-level.tif')))).toBe(true);
    expect(read(join(dir, 'lib-depth.tif')).equals(read(join(out, 'water-depth.tif')))).toBe(true);
  });

  it('bad input: an InputError with the line the command prints', async () => {
    const missing = join(dir, 'missing.tif');
    const r = sill(['ponds', missing]);
    expect(r.code).toBe(2);
    const err = await readSurface(missing).catch((e: unknown) => e);
    expect(err).toBeInstanceOf(InputError);
    expect(r.stderr.trim()).toBe(`sill: ${(err as Error).message}`);
    const neg = sill(['ponds', dem, '--min-depth', '-1']);
    expect(neg.code).toBe(2);
    expect(() => ponds(gridFromArray(new Float64Array(9), { width: 3 }), { minDepth: -1 })).toThrow(InputError);
  });
});

describe('gridFromArray', () => {
  it('copies by default: the caller’s array is untouched, nodata and −0 are normalised in the copy', () => {
    const v = new Float32Array([1, -9999, -0, 4, 5, 6]);
    const g = gridFromArray(v, { width: 3, nodata: -9999, name: 'mine' });
    expect(Array.from(v)).toEqual([1, -9999, -0, 4, 5, 6]);
    expect(Object.is(v[2], -0)).toBe(true);
    expect(g.values).toBeInstanceOf(Float32Array);
    expect(g.values.buffer).toBeInstanceOf(SharedArrayBuffer);
    expect(Number.isNaN(g.values[1])).toBe(true);
    expect(Object.is(g.values[2], 0)).toBe(true);
    expect([g.width, g.height, g.validCount()]).toEqual([3, 2, 5]);
    expect(surfaceName(g)).toBe('mine');
  });

  it('copy: false uses a float array in place; other arrays become float64', () => {
    const v = new Float64Array([1, 2, 3, 4]);
    expect(gridFromArray(v, { width: 2, copy: false }).values).toBe(v);
    const g = gridFromArray(new Int16Array([1, 2, 3, 4]), { width: 2, copy: false });
    expect(g.values).toBeInstanceOf(Float64Array);
    expect(gridFromArray([1, 2, 3, 4], { width: 2 }).values).toBeInstanceOf(Float64Array);
  });

  it('georeferencing: a transform, or origin (centre of the first cell) and spacing', () => {
    const v = new Float64Array(6);
    expect(gridFromArray(v, { width: 3 }).transform).toEqual([0, 1, 0, 0, 0, 1]);
    const g = gridFromArray(v, { width: 3, origin: [100, 50], spacing: [2, -2] });
    expect([g.x(0, 0), g.y(0, 0), g.x(2, 1), g.y(2, 1)]).toEqual([100, 50, 104, 48]);
    expect(gridFromArray(v, { width: 3, transform: [10, 1, 0, 20, 0, -1] }).transform).toEqual([10, 1, 0, 20, 0, -1]);
  });

  it('is checked like a file: one-line InputErrors', () => {
    const bad: [() => unknown, RegExp][] = [
      [() => gridFromArray(new Float64Array(10), { width: 4 }), /10 values do not fill rows of 4/],
      [() => gridFromArray(new Float64Array(12), { width: 4, height: 4 }), /do not fill 4 × 4 cells/],
      [() => gridFromArray(new Float64Array(3), { width: 3 }), /too small/],
      [() => gridFromArray(new Float64Array([1, Infinity, 3, 4]), { width: 2 }), /cell \(col 1, row 0\) is \+Infinity/],
      [() => gridFromArray(new Float64Array([1, 2e200, 3, 4]), { width: 2 }), /out of range/],
      [() => gridFromArray(new Float64Array(4), { width: 2, origin: [0, 0], transform: [0, 1, 0, 0, 0, 1] }), /either transform or origin\/spacing/],
      [() => gridFromArray(new Float64Array(4), { width: 2, spacing: [0, 1] }), /spacing must not be 0/],
      [() => gridFromArray(new Float64Array(4), { width: 1.5 }), /width must be a whole number/],
    ];
    for (const [f, msg] of bad) {
      let err: unknown;
      try { f(); } catch (e) { err = e; }
      expect(err, String(msg)).toBeInstanceOf(InputError);
      expect((err as Error).message).toMatch(msg);
      expect((err as Error).message).not.toContain('\n');
    }
    // the infinity that is the nodata value is nodata
    expect(gridFromArray(new Float64Array([1, -Infinity, 3, 4]), { width: 2, nodata: -Infinity }).validCount()).toBe(3);
  });
});

describe('options from plain JavaScript', () => {
  const bowl = () => gridFromArray(Float64Array.from({ length: 64 }, (_, i) => (i % 8 - 3.5) ** 2 + (Math.floor(i / 8) - 3.5) ** 2), { width: 8 });
  it('a misspelt option or a value off its list is refused, naming it', () => {
    const g = bowl();
    const call = (f: () => unknown) => { try { f(); } catch (e) { return e as Error; } return null; };
    const cases: [Error | null, RegExp][] = [
      [call(() => ponds(g, { mindepth: 1 } as never)), /ponds: unknown option 'mindepth'; the options are .*minDepth/],
      [call(() => survey(g, { connectivity: 5 } as never)), /survey: connectivity must be one of 4, 6, 8, got 5/],
      [call(() => survey(g, { boundary: 'torus' } as never)), /boundary must be one of 'open', 'closed'/],
      [call(() => ponds(g, { labelLevel: 'all' } as never)), /labelLevel must be one of 'leaf', 'top'/],
      [call(() => barriers(g, { units: 'kcal' } as never)), /barriers: units must be one of kJ\/mol/],
      [call(() => runoff(g, { depth: 40 } as never)), null as never],
      [call(() => runoff(g, { depth: '40' })), /give the unit with the number/],
      [call(() => runoff(g, {})), /say how much runoff/],
    ];
    for (const [err, msg] of cases) {
      if (msg === null) { expect(err).toBe(null); continue; }
      expect(err).toBeInstanceOf(InputError);
      expect(err!.message).toMatch(msg);
    }
  });

  it('unit spellings the command line accepts are accepted', () => {
    const r = barriers(bowl(), { units: 'KJ/MOL' as never, maxPaths: 0 });
    expect(r.report.units.input).toBe('kJ/mol');
  });

  it('a Grid built directly works too (no name: input is null)', () => {
    const g = new Grid({ width: 8, height: 8, values: bowl().values.slice() });
    const r = ponds(g);
    expect(r.report.input).toBe(null);
    expect(r.report.depressions.length).toBe(1);
  });
});

describe('records from columns', () => {
  it('largest(k) is the k first of all records sorted by volume (ties: smaller id first)', () => {
    fc.assert(fc.property(
      fc.integer({ min: 4, max: 14 }), fc.integer({ min: 4, max: 14 }), fc.integer({ min: 0, max: 12 }), fc.integer({ min: 1, max: 2 ** 31 - 1 }),
      (w, h, k, seed) => {
        let s = seed;
        const rnd = () => ((s = (Math.imul(s, 1103515245) + 12345) >>> 0) % 5); // few levels: ties and flats
        const g = gridFromArray(Float64Array.from({ length: w * h }, rnd), { width: w });
        const rows = ponds(g, { threads: 1 }).report.depressions;
        const all = rows.toArray().sort((a, b) => b.volume - a.volume || a.id - b.id);
        expect(rows.largest(k).map((d) => d.id)).toEqual(all.slice(0, k).map((d) => d.id));
        const deep = rows.toArray().sort((a, b) => b.maxDepth - a.maxDepth || a.id - b.id);
        expect(rows.largest(k, 'maxDepth').map((d) => d.id)).toEqual(deep.slice(0, k).map((d) => d.id));
      },
    ), { numRuns: 60 });
  });

  it('writeCsvFile writes any records: a lazy list or an array', () => {
    const run = survey(gridFromArray(Float64Array.from({ length: 36 }, (_, i) => Math.sin(i) * 10), { width: 6 }));
    const path = join(dir, 'points.csv');
    writeCsvFile(path, run.report.criticalPoints, [['kind', (p) => p.kind], ['x', (p) => p.x], ['value', (p) => p.value]]);
    const lines = readFileSync(path, 'utf8').trim().split('\n');
    expect(lines[0]).toBe('kind,x,value');
    expect(lines.length - 1).toBe(run.report.criticalPoints.length);
    const first = run.report.criticalPoints.at(0);
    expect(lines[1]).toBe(`${first.kind},${first.x},${first.value}`);
    writeCsvFile(join(dir, 'two.csv'), [{ a: 1 }, { a: 'x,y' }], [['a', (r) => r.a]]);
    expect(readFileSync(join(dir, 'two.csv'), 'utf8')).toBe('a\n1\n"x,y"\n');
  });
});
