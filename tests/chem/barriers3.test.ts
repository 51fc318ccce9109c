import { describe, it, expect } from 'vitest';
import fc from 'fast-check';
import { Grid3 } from '../../src/surface/grid3.js';
import { InputError } from '../../src/errors.js';
import { barriers3, lowerLinkComponents3, type Barriers3Result } from '../../src/chem/barriers3.js';
import { SADDLE1 } from '../../src/morse/survey3.js';
import { reference3, sampleGrid3, mbZ, gaussians, type Stationary3 } from './surfaces3.js';

const ref = reference3();

/** Every SciPy minimum and first-order saddle has one state within the tolerances, with the right Hessian signature. */
function checkStates(r: Barriers3Result, points: Stationary3[], tolX: number, tolE: number) {
  const refMin = points.filter((p) => p.kind === 'minimum'), refTs = points.filter((p) => p.kind === 'saddle');
  expect(r.minima).toHaveLength(refMin.length);
  expect(r.transitionStates).toHaveLength(refTs.length);
  const idOf = new Map<string, number>();
  for (const [want, got] of [[refMin, r.minima], [refTs, r.transitionStates]] as const) {
    for (const p of want) {
      const s = got.reduce((a, b) => (Math.hypot(a.bestX - p.x, a.bestY - p.y, a.bestZ - p.z) <= Math.hypot(b.bestX - p.x, b.bestY - p.y, b.bestZ - p.z) ? a : b));
      expect(s.refined.status).toBe('converged');
      expect(Math.hypot(s.bestX - p.x, s.bestY - p.y, s.bestZ - p.z)).toBeLessThan(tolX);
      expect(Math.abs(s.bestEnergy - p.energy)).toBeLessThan(tolE);
      const neg = s.refined.eigen.values.filter((l) => l < 0).length;
      expect(neg).toBe(p.hessianEigenvalues.filter((l) => l < 0).length);
      idOf.set(s.id, points.indexOf(p));
    }
  }
  return idOf;
}

describe('barriers on 3-D grids, against SciPy', () => {
  // Source: SciPy's optimize.root on the analytic gradients, signatures by numpy.linalg.eigvalsh
  // (tests/reference/energy3d.py → fixtures/chem/stationary-3d.json).
  it('Müller–Brown plus a coupled harmonic z: minima, transition states, barriers, paths, populations', () => {
    const s = ref.surfaces['mb-z'];
    const r = barriers3(sampleGrid3(mbZ, s.window, 0.025), { units: 'kJ/mol', temperature: 300 });
    expect(r.survey.euler.holds).toBe(true);
    const idOf = checkStates(r, s.stationaryPoints, 3e-3, 0.05);
    // which minima each saddle joins, as on the analytic surface: the deepest and the shallowest
    // minimum meet only through the higher saddle, the lower saddle joins the two shallower minima
    const mins = s.stationaryPoints.filter((p) => p.kind === 'minimum').sort((a, b) => a.energy - b.energy);
    const byRef = (id: string) => s.stationaryPoints[idOf.get(id)!];
    const [low, high] = r.transitionStates.slice().sort((a, b) => a.bestEnergy - b.bestEnergy);
    expect(low.connects.map(byRef).sort((a, b) => a.energy - b.energy)).toEqual([mins[1], mins[2]]);
    expect(high.connects.map(byRef).sort((a, b) => a.energy - b.energy)).toEqual([mins[0], mins[2]]);
    // barriers are differences of the refined energies (SciPy's within tolerance)
    for (const b of r.barriers) {
      const t = byRef(b.via), a = byRef(b.from), c = byRef(b.to);
      expect(Math.abs(b.forward! - (t.energy - a.energy))).toBeLessThan(0.1);
      expect(Math.abs(b.backward! - (t.energy - c.energy))).toBeLessThan(0.1);
      expect(b.basis).toBe('refined');
    }
    // every path: converged, its highest point is the transition state, ends in the minima it joins
    for (const t of r.transitionStates) {
      expect(t.path?.status).toBe('converged');
      expect(t.path!.agrees).toBe(true);
      expect(Math.abs(t.path!.maximum.energy - byRef(t.id).energy)).toBeLessThan(0.1);
      expect([...t.path!.ends].sort()).toEqual([...t.connects].sort());
    }
    // basin populations are a distribution; the deepest well holds nearly all of it at 300 K
    // (its free energy is tens of kT below the others': Boltzmann's law, common practice)
    const pop = r.minima.map((m) => m.basin.population!);
    expect(pop.reduce((a, b) => a + b, 0)).toBeCloseTo(1, 12);
    expect(r.minima[0].basin.population).toBeGreaterThan(0.99);
    // hierarchy: both transition states join basins (three minima, two joins)
    expect(r.transitionStates.every((t) => t.inTree)).toBe(true);
    expect(r.hierarchy.filter((n) => n.kind === 'transition-state')).toHaveLength(2);
  });

  it('three Gaussian wells', () => {
    const s = ref.surfaces.gaussians;
    const r = barriers3(sampleGrid3(gaussians, s.window, 0.1), { minPersistence: 0.1 });
    expect(r.survey.euler.holds).toBe(true);
    checkStates(r, s.stationaryPoints, 5e-3, 5e-3);
    for (const t of r.transitionStates) expect(t.path?.agrees).toBe(true);
  });
});

describe('barriers on 3-tori (analytic)', () => {
  const torus = (n: number, f: (x: number, y: number, z: number) => number) => {
    const h = (2 * Math.PI) / n;
    const values = new Float64Array(n * n * n);
    for (let k = 0; k < n; k++) for (let j = 0; j < n; j++) for (let i = 0; i < n; i++) values[i + n * (j + n * k)] = f(i * h, j * h, k * h);
    return new Grid3({ nx: n, ny: n, nz: n, values, spacing: [h, h, h] });
  };

  it('one minimum: no basins to join, the three loop saddles counted, not reported', () => {
    // Source (analytic): V = −cos x − cos y − cos z − ¼ cos(x − z) is a Morse function on the 3-torus
    // with stationary points at x, y, z ∈ {0, π}: one minimum (0,0,0), V = −3.25, and three index-1
    // saddles (0,π,0), (π,0,0), (0,0,π) — the counts 1, 3, 3, 1 of the torus's Betti numbers. Each
    // saddle closes a loop round the torus; none merges basins.
    const r = barriers3(torus(20, (x, y, z) => -Math.cos(x) - Math.cos(y) - Math.cos(z) - 0.25 * Math.cos(x - z)), { boundary: 'periodic', minPersistence: 0.1 });
    expect(r.survey.euler.characteristic).toBe(0);
    expect(r.minima).toHaveLength(1);
    expect(r.minima[0].bestEnergy).toBeCloseTo(-3.25, 3);
    expect(r.field.distance(r.minima[0].bestX, r.minima[0].bestY, r.minima[0].bestZ, 0, 0, 0)).toBeLessThan(1e-3);
    expect(r.transitionStates).toHaveLength(0);
    expect(r.removed.loops.saddles).toBe(3);
    expect(r.notes.some((n) => n.startsWith('3 index-1 saddles that close a loop'))).toBe(true);
    expect(r.period.every((p) => Math.abs(p! - 2 * Math.PI) < 1e-12)).toBe(true);
  });

  it('two minima across the seams: the merging saddle joins them, the path crosses the seam', () => {
    // Source (analytic): V = −cos 2x − ½ cos y − ½ cos z has minima at x ∈ {0, π}, y = z = 0 (V = −2)
    // and index-1 saddles at x = ±π/2, y = z = 0 (V = 0, Hessian eigenvalues −4, ½, ½) and at
    // x ∈ {0, π} with y or z = π (V = −1: each leads from a minimum round the torus back to itself).
    // The basins of the two minima merge at V = 0 (one of the two equal saddles — ties broken by
    // the order of the lattice points); the other five close loops.
    const r = barriers3(torus(24, (x, y, z) => -Math.cos(2 * x) - 0.5 * Math.cos(y) - 0.5 * Math.cos(z)), { boundary: 'periodic', minPersistence: 0.1, units: 'kT' });
    expect(r.minima).toHaveLength(2);
    for (const m of r.minima) expect(m.bestEnergy).toBeCloseTo(-2, 3);
    expect(r.transitionStates).toHaveLength(1);
    const t = r.transitionStates[0];
    expect(t.bestEnergy).toBeCloseTo(0, 3);
    const ev = t.refined.eigen.values;
    // (the fit's second derivatives are O(h²) accurate, h = π/12 here: within 5 %)
    expect(Math.abs(ev[0] + 4)).toBeLessThan(0.2);
    expect(Math.abs(ev[1] - 0.5)).toBeLessThan(0.025);
    expect(Math.abs(ev[2] - 0.5)).toBeLessThan(0.025);
    for (const b of r.barriers) { expect(b.forward).toBeCloseTo(2, 3); expect(b.backward).toBeCloseTo(2, 3); }
    expect([...t.connects].sort()).toEqual(['M1', 'M2']);
    expect(t.refined.eigen.values.filter((l) => l < 0)).toHaveLength(1);
    expect(t.path?.status).toBe('converged');
    expect(t.path!.agrees).toBe(true);
    expect([...t.path!.ends].sort()).toEqual(['M1', 'M2']);
    // Morse counts on the 3-torus: 2 minima, 6 index-1 saddles in all (analytic: 2 at x = ±π/2, 4 at y or z = π)
    expect(r.removed.loops.saddles).toBe(5);
    // equal basins by symmetry: equal populations
    expect(r.minima[0].basin.population).toBeCloseTo(0.5, 6);
  });
});

describe('barriers on random 3-D grids (fast-check)', () => {
  it('states, basins and tables stay consistent in every boundary mode', () => {
    // Source: the definitions (common practice): every lattice point drains to one minimum or the
    // outside, populations add to one, a barrier is the transition state's energy minus its minimum's.
    fc.assert(fc.property(
      fc.integer({ min: 1, max: 2 ** 30 }), fc.constantFrom('closed' as const, 'open' as const, 'periodic' as const), fc.constantFrom(14 as const, 26 as const), fc.boolean(),
      (seed, boundary, connectivity, rough) => {
        let s = seed;
        const rnd = () => ((s = (s * 1103515245 + 12345) % 2147483648) / 2147483648);
        const n = 6;
        const values = new Float64Array(n * n * n);
        // a smooth random field: a few random Gaussian wells
        const wells = Array.from({ length: 3 }, () => [rnd() * n, rnd() * n, rnd() * n, 1 + rnd()]);
        for (let k = 0; k < n; k++) for (let j = 0; j < n; j++) for (let i = 0; i < n; i++) {
          let v = 0;
          for (const [a, b, c, d] of wells) v -= d * Math.exp(-((i - a) ** 2 + (j - b) ** 2 + (k - c) ** 2) / 4);
          // rough: whole numbers 0…5 (ties and plateaus) with a little nodata
          values[i + n * (j + n * k)] = rough ? (rnd() < 0.04 ? NaN : Math.floor(rnd() * 6)) : v;
        }
        const run = () => barriers3(new Grid3({ nx: n, ny: n, nz: n, values }), { boundary, connectivity, units: 'kT', minPersistence: 0.01, maxPaths: 3 });
        // on an open boundary every basin may spill off the grid: then the one-line refusal
        if (boundary === 'open') {
          try { run(); } catch (e) {
            expect(e).toBeInstanceOf(InputError);
            expect(String((e as Error).message)).toMatch(/^no minimum is left after simplification/);
            return;
          }
        }
        const r = run();
        expect(r.survey.euler.holds).toBe(true);
        // the lower-link pieces found here agree with survey3's index-1 multiplicities (components − 1)
        const cp = r.survey.critical;
        for (let q = 0; q < cp.vertex.length; q++) {
          if (cp.kind[q] === SADDLE1) expect(lowerLinkComponents3(r.survey.complex, cp.vertex[q]).length - 1).toBe(cp.multiplicity[q]);
        }
        const ids = new Set(r.minima.map((m) => m.id));
        for (const t of r.transitionStates) for (const c of t.connects) expect(c === 'outside' || ids.has(c)).toBe(true);
        for (let i = 0; i < r.basinOf.length; i++) {
          if (values[i] !== values[i]) expect(r.basinOf[i]).toBe(-1);
          else if (boundary === 'open') expect(r.basinOf[i] >= 0 || r.basinOf[i] === -2).toBe(true);
          else expect(r.basinOf[i]).toBeGreaterThanOrEqual(0);
        }
        expect(r.minima.reduce((a, m) => a + m.basin.samples, 0)).toBe(r.basinOf.filter((b) => b >= 0).length);
        expect(r.minima.reduce((a, m) => a + m.basin.population!, 0)).toBeCloseTo(1, 10);
        const byId = new Map(r.minima.map((m) => [m.id, m]));
        const tsById = new Map(r.transitionStates.map((t) => [t.id, t]));
        for (const b of r.barriers) {
          if (b.forward !== null) expect(b.forward).toBeCloseTo(tsById.get(b.via)!.bestEnergy - byId.get(b.from)!.bestEnergy, 10);
        }
      },
    ), { numRuns: 40 });
  });
});
