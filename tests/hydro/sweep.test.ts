/**
 * The depression sweep must give exactly what an independent method gives (tests/hydro/critical-sweep.ts:
 * critical cells only, receivers downhill) — the same tree, spill and pour cells, and labels —
 * and both must give the join tree of src/morse (same passes and pits).
 */
import { describe, it, expect } from 'vitest';
import fc from 'fast-check';
import { buildComplex, GridComplex } from '../../src/surface/complex.js';
import { sortOrder } from '../../src/morse/order.js';
import { buildMergeTree } from '../../src/morse/mergetree.js';
import { sweepDepressions } from '../../src/hydro/sweep.js';
import { sweepByCriticalCells } from './critical-sweep.js';
import { randomGrid } from './helpers.js';

describe('depression sweeps', () => {
  it('critical-cell sweep = plain sweep = join tree (property test)', () => {
    fc.assert(fc.property(
      fc.integer(), fc.integer({ min: 2, max: 16 }), fc.integer({ min: 2, max: 16 }), fc.constantFrom(0, 2, 3, 6, 50),
      fc.constantFrom(0, 0, 0.1, 0.3), fc.constantFrom<4 | 6 | 8>(4, 6, 8), fc.boolean(), fc.boolean(),
      (seed, w, h, levels, holes, conn, outlet, f32) => {
        const g = randomGrid(seed, w, h, levels, holes, f32);
        const cx = buildComplex(g, { connectivity: conn, boundary: 'open', nodataOutlet: outlet }) as GridComplex;
        const order = sortOrder(g.values);
        const a = sweepDepressions(cx, order);
        const labelsA = Array.from(a.label);
        const b = sweepByCriticalCells(cx, sortOrder);
        expect(b.count).toBe(a.count);
        for (const key of ['vertex', 'birth', 'parent', 'spill', 'entry', 'to'] as const) expect(Array.from(b[key])).toEqual(Array.from(a[key]));
        for (let i = 0; i < g.size; i++) if (g.values[i] === g.values[i]) expect(b.label[i]).toBe(labelsA[i]);
        // the join tree of src/morse: the same pass cells (its non-leaf nodes other than the outside)
        const jt = buildMergeTree(cx, order, 'join');
        const passesJ: number[] = [], pitsJ: number[] = [];
        for (let k = 0; k < jt.vertex.length; k++) {
          if (jt.vertex[k] < 0) continue;
          (jt.childCount[k] === 0 ? pitsJ : passesJ).push(jt.vertex[k]);
        }
        const pitsA: number[] = [], merges: number[] = [];
        for (let k = 1; k < a.count; k++) (a.vertex[k] === a.birth[k] ? pitsA : merges).push(a.vertex[k]);
        const outletPasses = new Set<number>();
        for (let k = 1; k < a.count; k++) if (a.parent[k] === 0) outletPasses.add(a.spill[k]);
        expect(pitsA.sort((x, y) => x - y)).toEqual(pitsJ.sort((x, y) => x - y));
        // join-tree passes = merges between depressions + passes where depressions reach the outside
        const ours = new Set([...merges, ...outletPasses]);
        expect([...ours].sort((x, y) => x - y)).toEqual([...new Set(passesJ)].sort((x, y) => x - y));
      }), { numRuns: 400 });
  });
});
