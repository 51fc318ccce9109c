import { describe, it, expect } from 'vitest';
import fc from 'fast-check';
import { smallGrids } from './arbitraries.js';
import type { Grid } from '../../src/surface/grid.js';
import { Mesh } from '../../src/surface/mesh.js';
import { survey } from '../../src/morse/survey.js';
import { buildMergeTree } from '../../src/morse/mergetree.js';
import { PIT } from '../../src/morse/critical.js';
import { GridComplex, type Boundary, type Connectivity } from '../../src/surface/complex.js';

const BOUNDARIES: Boundary[] = ['open', 'closed', 'periodic', 'periodic-x', 'periodic-y'];
const CONNS: Connectivity[] = [4, 6, 8];

/** Random small grids with few distinct values (ties, plateaus) and some NaN cells. */
const gridArb = smallGrids({ maxSide: 9, minLevels: 1, maxLevels: 4, holeRates: [0, 0, 0.1, 0.3] });

/**
 * Brute-force χ from the definition, independent of the library's block counting: list the
 * vertices, build the neighbour graph, then count all cliques (flag complex, connectivity 8) or the
 * explicit triangles (6) / squares (4). Open boundary: pad with a frame of outlet cells, treat nodata
 * as outlets, and use χ(P/G) = χ(P) − χ(G) + 1.
 */
function bruteChi(g: Grid, conn: Connectivity, boundary: Boundary): number {
  const W = g.width, H = g.height;
  const wrapX = boundary === 'periodic' || boundary === 'periodic-x';
  const wrapY = boundary === 'periodic' || boundary === 'periodic-y';
  const open = boundary === 'open';
  const valid = (c: number, r: number) => c >= 0 && r >= 0 && c < W && r < H && g.values[r * W + c] === g.values[r * W + c];
  const ghost = (c: number, r: number) => open && c >= -1 && r >= -1 && c <= W && r <= H && !valid(c, r);
  const chiOf = (inSet: (c: number, r: number) => boolean): number => {
    const key = (c: number, r: number) => `${c},${r}`;
    const norm = (c: number, r: number): [number, number] => [wrapX ? (c + W) % W : c, wrapY ? (r + H) % H : r];
    const verts: [number, number][] = [];
    for (let r = -1; r <= H; r++) for (let c = -1; c <= W; c++) if ((c === norm(c, r)[0] && r === norm(c, r)[1]) && inSet(c, r)) verts.push([c, r]);
    const adj = new Map<string, Set<string>>();
    for (const [c, r] of verts) adj.set(key(c, r), new Set());
    const offs = conn === 8 ? [[1, 0], [0, 1], [1, 1], [1, -1]] : conn === 6 ? [[1, 0], [0, 1], [1, 1]] : [[1, 0], [0, 1]];
    for (const [c, r] of verts) for (const [dc, dr] of offs) {
      const [cc, rr] = norm(c + dc, r + dr);
      if (adj.has(key(cc, rr)) && inSet(cc, rr)) { adj.get(key(c, r))!.add(key(cc, rr)); adj.get(key(cc, rr))!.add(key(c, r)); }
    }
    let chi = 0;
    if (conn === 8) {
      const ids = [...adj.keys()];
      const rank = new Map(ids.map((k, i) => [k, i]));
      const extend = (size: number, cands: string[]) => {
        chi += size % 2 === 1 ? 1 : -1;
        cands.forEach((x, k) => extend(size + 1, cands.slice(k + 1).filter((y) => adj.get(x)!.has(y))));
      };
      for (const v of ids) extend(1, [...adj.get(v)!].filter((y) => rank.get(y)! > rank.get(v)!));
      return chi;
    }
    let E = 0;
    for (const s of adj.values()) E += s.size;
    chi = verts.length - E / 2;
    for (const [c, r] of verts) {
      const [c1, r1] = norm(c + 1, r + 1);
      const [cb] = norm(c + 1, r), [, rd] = norm(c, r + 1);
      const cells = conn === 6 ? [[[c, r], [cb, r], [c1, r1]], [[c, r], [c, rd], [c1, r1]]] : [[[c, r], [cb, r], [c, rd], [c1, r1]]];
      for (const cell of cells) if (cell.every(([x, y]) => adj.has(key(x, y)))) chi++;
    }
    return chi;
  };
  if (!open) return chiOf(valid);
  return chiOf((c, r) => valid(c, r) || ghost(c, r)) - chiOf(ghost) + 1;
}

describe('Euler relation (property)', () => {
  for (const conn of CONNS) {
    for (const boundary of BOUNDARIES) {
      it(`holds on random grids with ties and nodata, connectivity ${conn}, boundary ${boundary}`, () => {
        // Source: the Euler–Poincaré formula (alternating sum of critical points = χ), χ counted by brute force.
        fc.assert(
          fc.property(gridArb, fc.constantFrom(0, 0.5, 1.5), (g, minP) => {
            const s = survey(g, { connectivity: conn, boundary, minPersistence: minP });
            expect(s.euler.holds).toBe(true);
            expect(s.eulerKept.holds).toBe(true);
            expect(s.simplices.characteristic).toBe(bruteChi(g, conn, boundary));
            // Source: definition of the join tree — every pit starts a component of the sublevel
            // sets, so the pits found from lower links are exactly the leaves of the join tree.
            const raw = buildMergeTree(s.complex, s.order, 'join');
            const leaves = Array.from(raw.vertex).filter((v, k) => v >= 0 && raw.childCount[k] === 0).sort((a, b) => a - b);
            const pits = Array.from(s.critical.vertex).filter((_, k) => s.critical.kind[k] === PIT);
            expect(pits).toEqual(leaves);
          }),
          { numRuns: 60 },
        );
      });
    }
  }

  it('holds on random scattered point sets (open and closed)', () => {
    // Source: Euler–Poincaré; a triangulated disk has χ = 1, coned by the outside vertex a sphere (χ = 2).
    fc.assert(
      fc.property(fc.integer({ min: 4, max: 60 }), fc.integer(), fc.integer({ min: 1, max: 5 }), (n, seed, levels) => {
        let s = seed >>> 0 || 7;
        const rnd = () => ((s = (Math.imul(s, 1103515245) + 12345) >>> 0) / 2 ** 32);
        const x = new Float64Array(n), y = new Float64Array(n), v = new Float64Array(n);
        for (let i = 0; i < n; i++) { x[i] = rnd(); y[i] = rnd(); v[i] = Math.floor(rnd() * levels); }
        const mesh = new Mesh(x, y, v);
        for (const boundary of ['open', 'closed'] as const) {
          const r = survey(mesh, { boundary, minPersistence: 0.5 });
          expect(r.simplices.characteristic).toBe(boundary === 'open' ? 2 : 1);
          expect(r.euler.holds).toBe(true);
          expect(r.eulerKept.holds).toBe(true);
        }
      }),
      { numRuns: 100 },
    );
  });
});
