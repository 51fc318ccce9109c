import { describe, it, expect, beforeAll } from 'vitest';
import { writeFileSync, readFileSync, existsSync, readdirSync, mkdirSync } from 'node:fs';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { sill, tempDir } from './run.js';
import { loadSurface } from '../../src/io/load.js';
import { surveyReport } from '../../src/report/survey.js';

let dir: string;
const bowl = (n: number) => {
  // z = (x² + y²) on a 9×7 lattice with a tiny tilt: one pit (analytic).
  const lines = ['# test bowl', 'x y z'];
  for (let r = 0; r < 7; r++) for (let c = 0; c < n; c++) lines.push(`${c * 10} ${r * 10} ${(c - 4) ** 2 + (r - 3) ** 2 + 0.01 * c}`);
  return lines.join('\n') + '\n';
};

beforeAll(() => {
  dir = tempDir();
  writeFileSync(join(dir, 'bowl.txt'), bowl(9));
  writeFileSync(join(dir, 'bad-field.txt'), '0 0 1\n1 0 2\n0 1 x3\n1 1 4\n');
  writeFileSync(join(dir, 'one.txt'), '5 5 1\n');
  writeFileSync(join(dir, 'allnan.txt'), '0 0 nan\n1 0 nan\n0 1 nan\n1 1 nan\n');
  writeFileSync(join(dir, 'inf.txt'), '0 0 1\n1 0 inf\n0 1 2\n1 1 3\n');
  writeFileSync(join(dir, 'notatiff.tif'), 'this is not a tiff');
  writeFileSync(join(dir, 'a-file'), 'x');
});

describe('sill survey (command line)', () => {
  it('--json prints the report object with the contract keys and nothing else', () => {
    const r = sill(['survey', join(dir, 'bowl.txt'), '--json', '--boundary', 'closed']);
    expect(r.code).toBe(0);
    const rep = JSON.parse(r.stdout);
    expect(rep.schema).toBe('sill/survey@1');
    expect(rep.surface).toMatchObject({ width: 9, height: 7, validCells: 63, crs: null });
    expect(rep.surface.cellSize).toEqual([10, 10]);
    expect(rep.connectivity).toBe(8);
    expect(rep.boundary).toBe('closed');
    // Source: analytic — a paraboloid on a closed rectangle has one pit and χ(rectangle) = 1.
    expect(rep.euler).toMatchObject({ characteristic: 1, pits: 1, passes: 0, peaks: 0, holds: true });
    const pits = rep.criticalPoints.filter((c: { kind: string }) => c.kind === 'pit');
    expect(pits).toHaveLength(1);
    expect(pits[0]).toMatchObject({ col: 4, x: 40, y: 30, multiplicity: 1 });
    expect(Array.isArray(rep.pairs)).toBe(true);
  });

  it('--json and report.json are the library report as JSON.stringify writes it, pairs most persistent first', async () => {
    // Source: JSON.stringify of the library's report (its lazy lists materialised), the text the
    // command wrote before its output was streamed; a rough grid with ties, so many pairs tie.
    const lines = ['x y z'];
    for (let r = 0; r < 23; r++) for (let c = 0; c < 31; c++) lines.push(`${c} ${r} ${Math.round(Math.sin(c * 1.7) * Math.cos(r * 2.3) * 4 + ((c * 7 + r * 13) % 5))}`);
    writeFileSync(join(dir, 'rough.txt'), lines.join('\n') + '\n');
    const surface = await loadSurface(join(dir, 'rough.txt'));
    const { report } = surveyReport(surface, { connectivity: 8, boundary: 'open', minPersistence: 1 }, join(dir, 'rough.txt'));
    const r = sill(['survey', join(dir, 'rough.txt'), '--json', '--min-persistence', '1']);
    expect(r.code).toBe(0);
    expect(r.stdout).toBe(JSON.stringify(report) + '\n');
    const out = join(dir, 'out-rough');
    expect(sill(['survey', join(dir, 'rough.txt'), '--min-persistence', '1', '-o', out, '--quiet']).code).toBe(0);
    expect(readFileSync(join(out, 'report.json'), 'utf8')).toBe(JSON.stringify(report, null, 1) + '\n');
    const p = JSON.parse(r.stdout).pairs as { persistence: number }[];
    expect(p.length).toBeGreaterThan(10);
    for (let k = 1; k < p.length; k++) expect(p[k - 1].persistence).toBeGreaterThanOrEqual(p[k].persistence);
  });

  it('-o writes every file, in the surface coordinates', () => {
    const out = join(dir, 'out1');
    const r = sill(['survey', join(dir, 'bowl.txt'), '-o', out, '--quiet']);
    expect(r.code).toBe(0);
    expect(r.stdout).toBe('');
    expect(readdirSync(out).sort()).toEqual(['.sill-manifest.json', 'critical-points.csv', 'critical-points.geojson', 'merge-tree.json', 'report.json', 'results.gpkg']);
    const gj = JSON.parse(readFileSync(join(out, 'critical-points.geojson'), 'utf8'));
    expect(gj.type).toBe('FeatureCollection');
    const pit = gj.features.find((f: { properties: { kind: string } }) => f.properties.kind === 'pit');
    expect(pit.geometry.coordinates).toEqual([40, 30]);
    const csv = readFileSync(join(out, 'critical-points.csv'), 'utf8').split('\n');
    expect(csv[0]).toBe('kind,col,row,x,y,value,multiplicity,on_edge');
    const tree = JSON.parse(readFileSync(join(out, 'merge-tree.json'), 'utf8'));
    expect(tree.join.nodes.length).toBeGreaterThan(0);
    expect(tree.split.nodes.length).toBeGreaterThan(0);
  });

  it('prints a terminal summary with the Euler check', () => {
    const r = sill(['survey', join(dir, 'bowl.txt')]);
    expect(r.code).toBe(0);
    expect(r.stdout).toMatch(/9 × 7 grid, 63 valid cells/);
    expect(r.stdout).toMatch(/χ = 2 by counting simplices: holds/);
  });

  const bad: [string, string[], RegExp][] = [
    ['a missing file', ['survey', 'no-such-file.tif'], /cannot read/],
    ['a non-numeric field (line and column named)', ['survey', 'bad-field.txt'], /line 3.*column 3|column 3.*line 3/],
    ['a 1×1 grid', ['survey', 'one.txt'], /.+/],
    ['a grid with no valid cell', ['survey', 'allnan.txt'], /.+/],
    ['an infinite value', ['survey', 'inf.txt'], /inf/i],
    ['a file that is not a TIFF', ['survey', 'notatiff.tif'], /.+/],
    ['an unknown boundary', ['survey', 'bowl.txt', '--boundary', 'round'], /--boundary/],
    ['a negative persistence', ['survey', 'bowl.txt', '--min-persistence', '-1'], /--min-persistence/],
    ['a connectivity of 5', ['survey', 'bowl.txt', '--connectivity', '5'], /--connectivity/],
    ['zero threads', ['survey', 'bowl.txt', '--threads', '0'], /--threads must be at least 1/],
    ['a fractional thread count', ['survey', 'bowl.txt', '--threads', '1.5'], /--threads must be a whole number/],
    ['an unknown option', ['survey', 'bowl.txt', '--frobnicate'], /unknown option/],
    ['an output path that is a file', ['survey', 'bowl.txt', '-o', 'a-file'], /not a folder/],
  ];
  for (const [what, args, msg] of bad) {
    it(`refuses ${what} with one line and exit 2`, () => {
      const r = sill(args, { cwd: dir });
      expect(r.code).toBe(2);
      expect(r.stderr.trim().split('\n')).toHaveLength(1);
      expect(r.stderr).toMatch(msg);
      expect(r.stdout).toBe('');
    });
  }

  it('--threads 1 and --threads 2 give the same report', () => {
    const tif = join(fileURLToPath(new URL('../../fixtures/io/blocks/', import.meta.url)), 'f32-tile-deflate-pred3.tif');
    const one = sill(['survey', tif, '--json', '--threads', '1']);
    const two = sill(['survey', tif, '--json', '--threads', '2']);
    expect(one.code).toBe(0);
    expect(two.stdout).toBe(one.stdout);
  });

  it('leaves nothing behind in -o when the input is bad', () => {
    const out = join(dir, 'never');
    const r = sill(['survey', join(dir, 'bad-field.txt'), '-o', out]);
    expect(r.code).toBe(2);
    expect(existsSync(out)).toBe(false);
    const existing = join(dir, 'existing');
    mkdirSync(existing);
    expect(sill(['survey', join(dir, 'inf.txt'), '-o', existing]).code).toBe(2);
    expect(readdirSync(existing)).toEqual([]);
  });

  it('periodic needs at least 4 samples per wrapped axis', () => {
    writeFileSync(join(dir, 'narrow.txt'), '0 0 1\n1 0 2\n2 0 3\n0 1 4\n1 1 5\n2 1 0\n0 2 1\n1 2 1\n2 2 2\n');
    const r = sill(['survey', join(dir, 'narrow.txt'), '--boundary', 'periodic']);
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/periodic axis needs at least 4/);
  });
});
