/**
 * Property tests (fast-check) of the 3-D survey on random small grids with ties, plateaus and
 * nodata, in every boundary layout and both connectivities:
 * - the Euler relation minima − index-1 + index-2 − maxima = χ, with χ counted from the simplices
 *   (Morse theory: the alternating count of critical points, with multiplicity, is χ; the
 *   lower-star form with 1 − χ(lower link) per vertex is the standard one, e.g. Edelsbrunner and
 *   Harer, Computational Topology, 2010 — cited from memory);
 * - χ of the grid without nodata is that of the space it models: closed box 1, 3-torus 0, a box
 *   with some periodic axes 0, open faces (all outlets identified) 0, or 1 with one periodic axis;
 * - merge trees and pairs sit on critical points of the right kinds, and simplifying by
 *   persistence keeps the Euler relation;
 * - the 3-D sweep's fast path (src/morse/mergetree3.ts) builds the same trees as the general sweep.
 */
import { describe, it, expect } from 'vitest';
import fc from 'fast-check';
import { Grid3 } from '../../src/surface/grid3.js';
import { survey3, rowOf, MINIMUM, SADDLE1, SADDLE2, MAXIMUM } from '../../src/morse/survey3.js';
import { buildMergeTree, type MergeTree } from '../../src/morse/mergetree.js';
import type { Boundary3, Connectivity3 } from '../../src/surface/complex3.js';

/** Values: whole numbers below `levels` on blocks of `block` points (plateaus), a share of NaN. */
function values3(nx: number, ny: number, nz: number, levels: number, block: number, holeRate: number, seed: number): Float64Array {
  let s = seed >>> 0 || 1;
  const rnd = () => ((s = (Math.imul(s, 1664525) + 1013904223) >>> 0) / 2 ** 32);
  const bx = Math.ceil(nx / block), by = Math.ceil(ny / block), bz = Math.ceil(nz / block);
  const coarse = Float64Array.from({ length: bx * by * bz }, () => Math.floor(rnd() * levels));
  const v = new Float64Array(nx * ny * nz);
  for (let z = 0; z < nz; z++) for (let y = 0; y < ny; y++) for (let x = 0; x < nx; x++) {
    const i = x + nx * (y + ny * z);
    v[i] = coarse[Math.floor(x / block) + bx * (Math.floor(y / block) + by * Math.floor(z / block))];
    if (block > 1 && rnd() < 0.1) v[i] += rnd() < 0.5 ? -1 : 1;
    if (rnd() < holeRate) v[i] = NaN;
  }
  if (!v.some((x) => x === x)) v[0] = 0;
  return v;
}

const grids = fc.record({
  nx: fc.integer({ min: 4, max: 8 }), ny: fc.integer({ min: 4, max: 7 }), nz: fc.integer({ min: 4, max: 7 }),
  levels: fc.integer({ min: 1, max: 6 }),
  block: fc.constantFrom(1, 1, 2, 3),
  holeRate: fc.constantFrom(0, 0, 0.05, 0.2),
  connectivity: fc.constantFrom<Connectivity3>(14, 26),
  boundary: fc.constantFrom<Boundary3>('open', 'closed', 'periodic'),
  axes: fc.tuple(fc.boolean(), fc.boolean(), fc.boolean()),
  nodataOutlet: fc.boolean(),
  seed: fc.integer(),
});

/** χ of the box without nodata: periodic axes k, open or closed faces. */
function expectedChi(boundary: Boundary3, wrap: readonly boolean[]): number {
  const k = wrap.filter(Boolean).length;
  if (k === 3) return 0;
  // closed: (ball) × (circles): 1 when no axis wraps, else 0. Open: P/G = P ∪ cone(G), G the
  // outlet shell: χ = χ(P) − χ(G) + 1 with χ(G) = 2 (sphere, k = 0), 0 (torus or annulus × circle)
  if (boundary === 'closed') return k === 0 ? 1 : 0;
  return k === 0 ? 0 : 1;
}

const pairSet = (t: MergeTree) => Array.from(t.pairBirth, (b, k) => `${b}-${t.pairDeath[k]}`).sort();

describe('3-D survey properties', () => {
  it('Euler relation, χ of the modelled space, trees and pairs on critical points', () => {
    fc.assert(fc.property(grids, (g) => {
      const v = values3(g.nx, g.ny, g.nz, g.levels, g.block, g.holeRate, g.seed);
      if (g.levels > 3) for (let i = 0; i < v.length; i++) if (v[i] === v[i]) v[i] += Math.sin(i * 1.7) * 0.3; // some runs without ties
      const grid = new Grid3({ nx: g.nx, ny: g.ny, nz: g.nz, values: v });
      const s = survey3(grid, { connectivity: g.connectivity, boundary: g.boundary, periodicAxes: g.boundary === 'periodic' ? undefined : g.axes, nodataOutlet: g.nodataOutlet });
      const e = s.euler;
      expect(e.minima - e.saddles1 + e.saddles2 - e.maxima).toBe(s.simplices.characteristic);
      expect(e.holds).toBe(true);
      if (g.holeRate === 0) expect(s.simplices.characteristic).toBe(expectedChi(g.boundary, s.complex.wrap));
      const cp = s.critical;
      for (let k = 0; k < s.pairs.dim.length; k++) {
        const zero = s.pairs.dim[k] === 0;
        expect(rowOf(cp, s.pairs.birthVertex[k], zero ? MINIMUM : SADDLE2)).toBeGreaterThanOrEqual(0);
        expect(rowOf(cp, s.pairs.deathVertex[k], zero ? SADDLE1 : MAXIMUM)).toBeGreaterThanOrEqual(0);
        expect(s.pairs.persistence[k]).toBeGreaterThanOrEqual(0);
      }
      // leaves of the join tree are the minima (ω aside), leaves of the split tree the maxima
      let joinLeaves = 0, splitLeaves = 0, minRows = 0, maxRows = 0;
      for (let q = 0; q < s.join.vertex.length; q++) if (s.join.childCount[q] === 0 && s.join.vertex[q] >= 0) joinLeaves++;
      for (let q = 0; q < s.split.vertex.length; q++) if (s.split.childCount[q] === 0 && s.split.vertex[q] >= 0) splitLeaves++;
      for (let r = 0; r < cp.kind.length; r++) { if (cp.kind[r] === MINIMUM) minRows++; if (cp.kind[r] === MAXIMUM) maxRows++; }
      expect(joinLeaves).toBe(minRows);
      expect(splitLeaves).toBe(maxRows);
      // the 3-D sweep's fast path builds the trees the general sweep builds (same nodes, parents, pairs)
      for (const [t, kind] of [[s.join, 'join'], [s.split, 'split']] as const) {
        const g = buildMergeTree(s.complex, s.order, kind);
        expect(Array.from(t.vertex)).toEqual(Array.from(g.vertex));
        expect(Array.from(t.parent)).toEqual(Array.from(g.parent));
        expect(Array.from(t.birth)).toEqual(Array.from(g.birth));
        expect(pairSet(t)).toEqual(pairSet(g));
      }
      // simplification by persistence cancels pairs and keeps the relation
      const t = survey3(grid, { connectivity: g.connectivity, boundary: g.boundary, periodicAxes: g.boundary === 'periodic' ? undefined : g.axes, nodataOutlet: g.nodataOutlet, minPersistence: 1.5 });
      expect(t.eulerKept.holds).toBe(true);
    }), { numRuns: 150, seed: 3 });
  });
});
