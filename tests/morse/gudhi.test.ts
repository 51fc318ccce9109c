/**
 * Persistence pairs checked against GUDHI (fixtures/reference/gudhi-pairs.json, produced by
 * tests/reference/gudhi_pairs.py with the GUDHI version recorded in the file): the multiset of
 * finite, non-zero persistence pairs of dimensions 0 and 1 must match on every case.
 */
import { describe, it, expect } from 'vitest';
import { readFileSync } from 'node:fs';
import { Grid } from '../../src/surface/grid.js';
import { survey } from '../../src/morse/survey.js';
import type { Boundary, Connectivity } from '../../src/surface/complex.js';

interface Case {
  name: string; width: number; height: number; values: (number | null)[];
  connectivity: Connectivity; boundary: Boundary; pairs0: [number, number][]; pairs1: [number, number][];
  chi: number; essential: Record<string, number>;
}
const ref = JSON.parse(readFileSync(new URL('../../fixtures/reference/gudhi-pairs.json', import.meta.url), 'utf8')) as {
  gudhi_version: string; cases: Case[];
};

const sortPairs = (p: [number, number][]) => [...p].sort((a, b) => a[0] - b[0] || a[1] - b[1]);

describe(`persistence pairs against GUDHI ${ref.gudhi_version}`, () => {
  for (const c of ref.cases) {
    it(c.name, () => {
      const values = Float64Array.from(c.values, (v) => (v === null ? NaN : v));
      const g = new Grid({ width: c.width, height: c.height, values });
      const s = survey(g, { connectivity: c.connectivity, boundary: c.boundary });
      // Source: GUDHI SimplexTree persistence of the same complex.
      expect(s.simplices.characteristic).toBe(c.chi);
      expect(s.euler.holds).toBe(true);
      const mine: [number, number][][] = [[], []];
      for (let k = 0; k < s.pairs.dim.length; k++) {
        if (!(s.pairs.persistence[k] > 0)) continue;
        mine[s.pairs.dim[k]].push([values[s.pairs.birthVertex[k]], values[s.pairs.deathVertex[k]]]);
      }
      for (const [d, want] of [[0, c.pairs0], [1, c.pairs1]] as const) {
        const got = sortPairs(mine[d]);
        const exp = sortPairs(want);
        expect(got.length, `dimension ${d} pair count`).toBe(exp.length);
        got.forEach((p, i) => {
          expect(p[0]).toBeCloseTo(exp[i][0], 9);
          expect(p[1]).toBeCloseTo(exp[i][1], 9);
        });
      }
    });
  }
});
