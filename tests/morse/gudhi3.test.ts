/**
 * 3-D grids: persistence pairs of dimensions 0 and 2, χ and the simplex counts checked against
 * GUDHI (fixtures/reference/gudhi-pairs3.json, written by tests/reference/gudhi_pairs3.py, which
 * builds the Freudenthal triangulation from its tetrahedra and the 26-neighbour flag complex from
 * the 2×2×2 blocks, independently of src/surface/complex3.ts). With GUDHI installed, the same
 * script also checks random grids live.
 */
import { describe, it, expect } from 'vitest';
import { readFileSync } from 'node:fs';
import { spawnSync } from 'node:child_process';
import fc from 'fast-check';
import { Grid3 } from '../../src/surface/grid3.js';
import { survey3, type Survey3Result } from '../../src/morse/survey3.js';
import type { Boundary3, Connectivity3 } from '../../src/surface/complex3.js';
import { PYTHON, runs, skipNote } from '../prereq.js';

interface Case {
  name: string; nx: number; ny: number; nz: number; values: (number | null)[];
  connectivity: Connectivity3; boundary: Boundary3; periodicAxes: string;
  pairs0: [number, number][]; pairs2: [number, number][]; chi: number; simplexCounts: number[];
}
const ref = JSON.parse(readFileSync(new URL('../../fixtures/reference/gudhi-pairs3.json', import.meta.url), 'utf8')) as {
  gudhi_version: string; cases: Case[];
};

const sortPairs = (p: [number, number][]) => [...p].sort((a, b) => a[0] - b[0] || a[1] - b[1]);

function run(c: Omit<Case, 'pairs0' | 'pairs2' | 'chi' | 'simplexCounts'>): { s: Survey3Result; values: Float64Array } {
  const values = Float64Array.from(c.values, (v) => (v === null ? NaN : v));
  const grid = new Grid3({ nx: c.nx, ny: c.ny, nz: c.nz, values });
  const periodicAxes = [...'xyz'].map((a) => c.periodicAxes.includes(a)) as [boolean, boolean, boolean];
  const s = survey3(grid, { connectivity: c.connectivity, boundary: c.boundary, periodicAxes: c.boundary === 'periodic' ? undefined : periodicAxes });
  return { s, values };
}

/** Compare sill's dimension-0 and -2 pairs (positive persistence, by value) with GUDHI's. */
function comparePairs(c: Case, s: Survey3Result, values: Float64Array): void {
  const mine: Record<number, [number, number][]> = { 0: [], 2: [] };
  for (let k = 0; k < s.pairs.dim.length; k++) {
    if (!(s.pairs.persistence[k] > 0)) continue;
    mine[s.pairs.dim[k]].push([values[s.pairs.birthVertex[k]], values[s.pairs.deathVertex[k]]]);
  }
  expect(sortPairs(mine[0]), `${c.name}: dimension 0`).toEqual(sortPairs(c.pairs0));
  expect(sortPairs(mine[2]), `${c.name}: dimension 2`).toEqual(sortPairs(c.pairs2));
}

describe(`3-D persistence pairs against GUDHI ${ref.gudhi_version}`, () => {
  for (const c of ref.cases) {
    it(c.name, () => {
      const { s, values } = run(c);
      // Source: GUDHI SimplexTree persistence and simplex counts of the same complex.
      expect(s.simplices.characteristic).toBe(c.chi);
      if (c.boundary !== 'open') expect(s.simplices.byDimension).toEqual(c.simplexCounts);
      expect(s.euler.holds).toBe(true);
      comparePairs(c, s, values);
    });
  }
});

/** Random small 3-D grids with ties, plateaus (few levels) and nodata, every boundary layout. */
const liveCases = fc.record({
  nx: fc.integer({ min: 4, max: 6 }), ny: fc.integer({ min: 4, max: 5 }), nz: fc.integer({ min: 4, max: 5 }),
  levels: fc.integer({ min: 2, max: 6 }),
  holes: fc.constantFrom(0, 0, 0.08),
  connectivity: fc.constantFrom<Connectivity3>(14, 26),
  layout: fc.constantFrom<[Boundary3, string]>(['open', ''], ['closed', ''], ['periodic', 'xyz'], ['closed', 'xz'], ['open', 'y']),
  seed: fc.integer(),
});

describe('3-D persistence pairs against GUDHI, live on random grids', () => {
  it(`dimension 0 and 2 pairs equal GUDHI's${skipNote('gudhi')}`, { timeout: 120_000 }, (ctx) => {
    if (!runs('gudhi')) ctx.skip();
    const drawn = fc.sample(liveCases, { numRuns: 16, seed: 20261202 });
    const cases = drawn.map((d, k) => {
      let s = d.seed >>> 0 || 1;
      const rnd = () => ((s = (Math.imul(s, 1664525) + 1013904223) >>> 0) / 2 ** 32);
      const n = d.nx * d.ny * d.nz;
      const values = Array.from({ length: n }, (): number | null => (rnd() < d.holes ? null : Math.floor(rnd() * d.levels)));
      if (!values.some((v) => v !== null)) values[0] = 0;
      return { name: `live-${k}`, nx: d.nx, ny: d.ny, nz: d.nz, values, connectivity: d.connectivity, boundary: d.layout[0], periodicAxes: d.layout[1] };
    });
    const py = spawnSync(PYTHON, [new URL('../reference/gudhi_pairs3.py', import.meta.url).pathname, '--cases'], { input: JSON.stringify(cases), encoding: 'utf8', maxBuffer: 1 << 26 });
    expect(py.status, py.stderr).toBe(0);
    const results = JSON.parse(py.stdout) as Case[];
    expect(results.reduce((t, c) => t + c.pairs0.length + c.pairs2.length, 0), 'pairs compared').toBeGreaterThan(10);
    for (const c of results) {
      const { s, values } = run(c);
      // Source: GUDHI SimplexTree persistence of the same complex (tests/reference/gudhi_pairs3.py --cases).
      expect(s.simplices.characteristic, c.name).toBe(c.chi);
      expect(s.euler.holds, c.name).toBe(true);
      comparePairs(c, s, values);
    }
  });
});
