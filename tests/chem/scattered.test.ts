import { describe, it, expect } from 'vitest';
import fc from 'fast-check';
import { barriers, MERGE_TOLERANCE, type BarriersResult, type StationaryRecord } from '../../src/chem/barriers.js';
import { noiseFloor, valueQuantum, NOISE_FACTOR } from '../../src/chem/noise.js';
import { Mesh } from '../../src/surface/mesh.js';
import { Grid } from '../../src/surface/grid.js';
import { groupByPoint } from '../../src/chem/merge.js';
import { mbGrid, mbReference, muellerBrown, scatteredSamples, wolfeQuapp, wqReference, WQ_WINDOW, type MbReference } from './mb.js';

const MB_WINDOW = { x: [-1.5, 1.2], y: [-0.5, 2.0] };

/**
 * Tolerances, from the mean sample spacing h = √(area / n) of the samples: every refined point within
 * h/4 of SciPy's root, its energy within the noise floor the run reports (the floor is 5 robust
 * deviations of the linear-interpolation error, so a refined energy off by more than it is no better
 * than a sample). Worst cases over 20 seeds (bench/barriers-scattered.mjs, docs/barriers.md): 0.18·h
 * and 0.056 × the floor on Müller–Brown, 0.004·h and 0.0012 × the floor on Wolfe–Quapp.
 */
const POSITION_TOL = 0.25;

function nearestTo(items: StationaryRecord[], x: number, y: number): { item: StationaryRecord; d: number } {
  let best = items[0], bd = Infinity;
  for (const it of items) {
    const d = Math.hypot(it.bestX - x, it.bestY - y);
    if (d < bd) { best = it; bd = d; }
  }
  return { item: best, d: bd };
}

/** Exactly the reference minima and saddles, each once, refined within the tolerances. */
function expectExactly(r: BarriersResult, ref: MbReference) {
  const h = r.field.spacing;
  const floor = r.noiseFloor.value;
  for (const [kind, list] of [['minimum', r.minima], ['saddle', r.transitionStates]] as const) {
    const want = ref.stationaryPoints.filter((p) => p.kind === kind);
    expect(list, `${kind}: ${list.map((s) => `${s.id} (${s.bestX.toFixed(3)}, ${s.bestY.toFixed(3)}) ${s.refined.status}`).join('; ')}`).toHaveLength(want.length);
    const used = new Set<string>();
    for (const p of want) {
      const { item, d } = nearestTo(list, p.x, p.y);
      expect(used.has(item.id), `${item.id} matches two reference points`).toBe(false);
      used.add(item.id);
      expect(item.refined.status).toBe('converged');
      expect(d / h).toBeLessThan(POSITION_TOL);
      expect(Math.abs(item.bestEnergy - p.energy)).toBeLessThan(floor);
      // the Hessian's signature as SciPy's analytic Hessian says
      expect(Math.sign(item.refined.eigen.values[0])).toBe(Math.sign(p.hessianEigenvalues[0]));
      expect(Math.sign(item.refined.eigen.values[1])).toBe(Math.sign(p.hessianEigenvalues[1]));
    }
  }
}

// Sources: the stationary points of the Müller–Brown potential (Müller & Brown, Theor. Chim. Acta 53,
// 75 (1979)) and of the Wolfe–Quapp surface W = x⁴ + y⁴ − 2x² − 4y² + xy + 0.3x + 0.1y, both by
// SciPy's optimize.root on the analytic gradient (tests/reference/mueller_brown.py,
// tests/reference/wolfe_quapp.py). A few seeds here; all 20 in bench/barriers-scattered.mjs.
describe('scattered samples with no options: the true stationary points, each once (SciPy)', () => {
  const mbRef = mbReference(), wqRef = wqReference();
  for (const seed of [1, 11, 14]) {
    it(`Müller–Brown, 5000 samples, seed ${seed}`, () => {
      const r = barriers(scatteredSamples(muellerBrown, 5000, seed, MB_WINDOW), { threads: 1 });
      expect(r.noiseFloor.used).toBe(true);
      expect(r.minPersistence.value).toBe(r.noiseFloor.value);
      expectExactly(r, mbRef);
    });
    it(`Wolfe–Quapp, 5000 samples, seed ${seed}`, () => {
      const r = barriers(scatteredSamples(wolfeQuapp, 5000, seed, WQ_WINDOW), { threads: 1 });
      expect(r.noiseFloor.used).toBe(true);
      // the floor stays below the shallowest true barrier (SciPy: saddle −3.9803 over minimum −4.1372)
      expect(r.noiseFloor.value).toBeLessThan(0.157);
      expectExactly(r, wqRef);
    });
  }

  it('the summary counts: what the floor removed is reported, and --min-persistence 0 keeps everything', () => {
    const m = scatteredSamples(wolfeQuapp, 5000, 1, WQ_WINDOW);
    const r = barriers(m, { threads: 1 });
    expect(r.removed.belowThreshold.minima).toBeGreaterThan(0);
    expect(r.removed.belowThreshold.threshold).toBe(r.noiseFloor.value);
    const all = barriers(m, { threads: 1, minPersistence: 0 });
    expect(all.noiseFloor.used).toBe(false);
    expect(all.minPersistence.source).toBe('given');
    expect(all.removed.belowThreshold).toMatchObject({ minima: 0, transitionStates: 0 });
    expect(all.removed.edge.transitionStates).toBe(0);
    // everything the floor removed is back (merges are not removals: merged points are listed)
    expect(all.minima.length).toBe(r.minima.length + r.removed.belowThreshold.minima);
    expect(all.transitionStates.length).toBe(r.transitionStates.length + r.removed.belowThreshold.transitionStates + r.removed.edge.transitionStates);
  });
});

describe('one state per stationary point', () => {
  it('sampled pits and passes that refine to one point are one state, with the merged points listed (Wolfe–Quapp, seed 14, nothing removed)', () => {
    const r = barriers(scatteredSamples(wolfeQuapp, 5000, 14, WQ_WINDOW), { threads: 1, minPersistence: 0 });
    expect(r.removed.merged.minima).toBeGreaterThan(0);
    expect(r.removed.merged.transitionStates).toBeGreaterThan(0);
    const merged = [...r.minima, ...r.transitionStates].flatMap((s) => s.merged.map((q) => ({ s, q })));
    expect(merged.map(({ q }) => q.rule)).toEqual(expect.arrayContaining(['same-minimum', 'same-saddle']));
    // no two states of one kind within the merge tolerance of each other
    for (const list of [r.minima, r.transitionStates]) {
      for (let i = 0; i < list.length; i++) {
        for (let j = i + 1; j < list.length; j++) {
          if (list[i].basis !== 'refined' || list[j].basis !== 'refined') continue;
          expect(Math.hypot(list[i].bestX - list[j].bestX, list[i].bestY - list[j].bestY)).toBeGreaterThan(MERGE_TOLERANCE * r.field.spacing * 0.5);
        }
      }
    }
    // each true minimum (SciPy) is one state
    for (const p of wqReference().stationaryPoints.filter((q) => q.kind === 'minimum')) {
      expect(r.minima.filter((m) => Math.hypot(m.bestX - p.x, m.bestY - p.y) < r.field.spacing)).toHaveLength(1);
    }
    // the hierarchy is over the states: every minimum a leaf once, every join a listed transition state
    const leaves = r.hierarchy.filter((n) => n.kind === 'minimum').map((n) => n.ref).sort();
    expect(leaves).toEqual(r.minima.map((m) => m.id).sort());
    const ids = new Set(r.transitionStates.map((t) => t.id));
    for (const n of r.hierarchy.filter((q) => q.kind === 'transition-state')) expect(ids.has(n.ref!)).toBe(true);
    const roots = r.hierarchy.filter((n) => n.parent === null);
    expect(roots).toHaveLength(1);
    // every sample drains to a state
    for (let i = 0; i < r.basinOf.length; i++) expect(r.basinOf[i] >= 0 && r.basinOf[i] < r.minima.length).toBe(true);
    // no barrier row joins a state to itself on this non-periodic surface
    for (const b of r.barriers) expect(b.from).not.toBe(b.to);
  });

  it('a failed minimum in another minimum\'s basin, within the threshold above it, is merged into it', () => {
    // f = x⁴ + 0.3x² + y² (analytic: one minimum, at the origin, f = 0), 3000 samples over [−1, 1]²;
    // one sample about 5.5 spacings out along x lowered to 0.0005: a pit of the samples 0.0036 deep
    // that a smoother fit (about 60 samples in its radius) does not follow, so Newton from it walks
    // off towards the origin (more than 3 spacings) and fails, while descent on the fit reaches it
    const f = (x: number, y: number) => x ** 4 + 0.3 * x * x + y * y;
    const base = scatteredSamples(f, 3000, 4, { x: [-1, 1], y: [-1, 1] });
    const h = Math.sqrt(4 / 3000);
    let k = -1, best = Infinity;
    for (let i = 0; i < base.size; i++) {
      const d = Math.hypot(base.x[i] - 5.5 * h, base.y[i]);
      if (d < best) { best = d; k = i; }
    }
    const v = base.values.slice();
    v[k] = 0.0005;
    const m = new Mesh(base.x, base.y, v);
    const fit = { neighbours: 60 };
    const r = barriers(m, { threads: 1, minPersistence: 0.002, meshFit: fit });
    expect(r.minima).toHaveLength(1);
    const only = r.minima[0];
    expect(Math.hypot(only.bestX, only.bestY)).toBeLessThan(0.25 * h);
    const q = only.merged.find((p) => p.index === k);
    expect(q, JSON.stringify(only.merged)).toBeDefined();
    expect(q!.rule).toBe('failed-minimum-in-basin');
    expect(q!.refinement).not.toBe('converged');
    // the pass that joined the two pits is folded into the minimum too
    expect(only.merged.some((p) => p.rule === 'saddle-inside-minimum')).toBe(true);
    expect(r.transitionStates.filter((t) => !t.onEdge)).toHaveLength(0);
    // with a threshold below its height above the minimum (0.0005) it stays a state of its own, unrefined, as before
    const low = barriers(m, { threads: 1, minPersistence: 0.0004, meshFit: fit });
    expect(low.minima.some((s) => s.vertex === k && s.refined.status !== 'converged')).toBe(true);
  });
});

describe('groupByPoint', () => {
  it('joins points within the larger tolerance, transitively, and across the seam of a periodic axis', () => {
    // analytic: distances on a line and on a circle of circumference 360
    const plain = (ax: number, ay: number, bx: number, by: number): [number, number] => [bx - ax, by - ay];
    const wrap = (ax: number, ay: number, bx: number, by: number): [number, number] => [bx - ax - 360 * Math.round((bx - ax) / 360), by - ay];
    const x = [0.5, 359.7, 10, 10.8, 11.2, 50, 11.9], y = [0, 0, 0, 0, 0, 0, 0];
    const tol = [1, 1, 1, 0.5, 0.5, 1, 0.5], use = [true, true, true, true, true, true, true];
    const g = groupByPoint(x, y, tol, use, plain, null);
    expect(g[0]).not.toBe(g[1]);
    expect(g[2]).toBe(g[3]);
    expect(g[3]).toBe(g[4]); // so 10 and 11.2, 1.2 apart, are one group through 10.8
    expect(g[6]).not.toBe(g[4]); // 0.7 apart, both tolerances 0.5
    expect(g[5]).not.toBe(g[2]);
    const w = groupByPoint(x, y, tol, use, wrap, 360);
    expect(w[0]).toBe(w[1]); // 0.8 apart across the seam
    const off = groupByPoint(x, y, tol, [true, false, true, true, true, true, true], wrap, 360);
    expect(off[0]).not.toBe(off[1]);
  });
});

describe('the noise floor', () => {
  // Box–Muller normal deviates from a seeded generator
  const gauss = (seed: number) => {
    let s = seed >>> 0;
    const u = () => ((s = (Math.imul(s, 1664525) + 1013904223) >>> 0) + 0.5) / 4294967296;
    return () => Math.sqrt(-2 * Math.log(u())) * Math.cos(2 * Math.PI * u());
  };

  it('scattered samples of a plane with normal noise σ: the estimated spread is σ·(1 to 1.2)', () => {
    // Source: for normal errors the median absolute deviation × 1.4826 (= 1/Φ⁻¹(¾)) estimates σ
    // (common practice); the residual against a plane fitted through k ≈ 6 neighbours has standard
    // deviation σ·√(1 + 1/k) or a little more — analytic, a plane's own residual is exactly 0
    const sigma = 0.3;
    const g = gauss(5);
    const flat = scatteredSamples((x, y) => 2 * x - 3 * y + 1, 4000, 8, { x: [0, 1], y: [0, 1] });
    expect(noiseFloor(flat).scale!).toBeLessThan(1e-12);
    const noisy = new Mesh(flat.x, flat.y, flat.values.map((z) => z + sigma * g()));
    const f = noiseFloor(noisy);
    expect(f.scale! / sigma).toBeGreaterThan(1);
    expect(f.scale! / sigma).toBeLessThan(1.2);
    expect(f.value).toBeCloseTo(NOISE_FACTOR * f.scale!, 12);
  });

  it('grids: the value quantum of rounded values, else 0 with the reason', () => {
    // Müller–Brown on a 0.02 grid rounded to 0.01: the quantum is 0.01 (analytic: the rounding step)
    const g = mbGrid(0.02);
    const rounded = g.values.map((z) => Math.round(z * 100) / 100);
    expect(valueQuantum(rounded)).toBeCloseTo(0.01, 9);
    expect(valueQuantum(Float32Array.from(g.values, (z) => Math.round(z * 4) / 4))).toBeCloseTo(0.25, 9);
    expect(valueQuantum(g.values)).toBeNull();
    // more values than the estimate samples: 300 000 values of 50·sin(i) rounded to 0.001
    const big = Float64Array.from({ length: 300000 }, (_, i) => Math.round(50000 * Math.sin(i)) / 1000);
    expect(valueQuantum(big)).toBeCloseTo(0.001, 12);
    big[123457] += 0.0004; // one value off the steps
    expect(valueQuantum(big)).toBeNull();
    const rg = new Grid({ width: g.width, height: g.height, values: rounded, transform: g.transform });
    const r = barriers(rg, { threads: 1 });
    expect(r.noiseFloor).toMatchObject({ used: true });
    expect(r.noiseFloor.value).toBeCloseTo(0.01, 9);
    const r2 = barriers(g, { threads: 1 });
    expect(r2.noiseFloor.value).toBe(0);
    expect(r2.noiseFloor.estimator).toMatch(/not quantised/);
    // Source: SciPy's Müller–Brown stationary points — the rounded grid still has exactly them
    const ref = mbReference().stationaryPoints;
    expect(r.minima).toHaveLength(ref.filter((p) => p.kind === 'minimum').length);
    expect(r.transitionStates).toHaveLength(ref.filter((p) => p.kind === 'saddle').length);
  });

  it('property: noise of amplitude ε never creates a state deeper than the reported floor plus ε', () => {
    // Wolfe–Quapp at 3000 samples has 3 minima and 3 saddles (SciPy). A state the noise created would
    // be one more: so at most 3 minima and 3 transition states may be deeper than the floor plus ε
    // (a floor of 0 fails this: noise of amplitude ε makes features up to 2ε deep)
    const clean = scatteredSamples(wolfeQuapp, 3000, 21, WQ_WINDOW);
    const ref = wqReference().stationaryPoints;
    const nMin = ref.filter((p) => p.kind === 'minimum').length, nTs = ref.filter((p) => p.kind === 'saddle').length;
    fc.assert(fc.property(fc.double({ min: 1e-4, max: 0.3, noNaN: true }), fc.integer({ min: 1, max: 2 ** 30 }), (eps, seed) => {
      let s = seed >>> 0;
      const u = () => ((s = (Math.imul(s, 1664525) + 1013904223) >>> 0) / 4294967296) * 2 - 1;
      const noisy = new Mesh(clean.x, clean.y, clean.values.map((z) => z + eps * u()));
      const r = barriers(noisy, { threads: 1, maxPaths: 0 });
      const deep = (list: StationaryRecord[]) => list.filter((st) => st.persistence === null || st.persistence > r.noiseFloor.value + eps);
      expect(deep(r.minima).length, `ε = ${eps}`).toBeLessThanOrEqual(nMin);
      expect(deep(r.transitionStates).length, `ε = ${eps}`).toBeLessThanOrEqual(nTs);
    }), { numRuns: 12, seed: 15 });
  });
});
