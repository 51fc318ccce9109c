import { describe, it, expect } from 'vitest';
import { barriers, type BarriersResult } from '../../src/chem/barriers.js';
import { mbGrid, mbScattered, mbReference, muellerBrown } from './mb.js';

// Source for every check in this file: the stationary points of the Müller–Brown potential
// (Müller & Brown, Theor. Chim. Acta 53, 75 (1979)) computed by SciPy's optimize.root on the
// analytic gradient — tests/reference/mueller_brown.py → fixtures/chem/mueller-brown.json.
const ref = mbReference();
const refMin = ref.stationaryPoints.filter((p) => p.kind === 'minimum');
const refTs = ref.stationaryPoints.filter((p) => p.kind === 'saddle');

function nearest<T extends { bestX: number; bestY: number }>(items: T[], x: number, y: number): T {
  return items.reduce((a, b) => (Math.hypot(a.bestX - x, a.bestY - y) <= Math.hypot(b.bestX - x, b.bestY - y) ? a : b));
}

function checkAgainstScipy(r: BarriersResult) {
  const interiorTs = r.transitionStates.filter((t) => !t.onEdge);
  expect(r.minima).toHaveLength(3);
  expect(interiorTs).toHaveLength(2);
  expect(refMin).toHaveLength(3);
  expect(refTs).toHaveLength(2);
  const idOf = new Map<string, number>();
  for (const p of refMin) {
    const m = nearest(r.minima, p.x, p.y);
    expect(m.refined.status).toBe('converged');
    expect(Math.abs(m.refined.x - p.x)).toBeLessThan(2e-3);
    expect(Math.abs(m.refined.y - p.y)).toBeLessThan(2e-3);
    expect(Math.abs(m.refined.energy - p.energy)).toBeLessThan(0.05);
    // a minimum: both Hessian eigenvalues positive, as SciPy's Hessian says
    expect(m.refined.eigen.values[0]).toBeGreaterThan(0);
    expect(p.hessianEigenvalues[0]).toBeGreaterThan(0);
    idOf.set(m.id, refMin.indexOf(p));
  }
  for (const p of refTs) {
    const t = nearest(interiorTs, p.x, p.y);
    expect(t.refined.status).toBe('converged');
    expect(Math.abs(t.refined.x - p.x)).toBeLessThan(2e-3);
    expect(Math.abs(t.refined.y - p.y)).toBeLessThan(2e-3);
    expect(Math.abs(t.refined.energy - p.energy)).toBeLessThan(0.05);
    // first-order saddle: exactly one negative eigenvalue, as in SciPy's Hessian
    expect(Math.sign(t.refined.eigen.values[0])).toBe(Math.sign(p.hessianEigenvalues[0]));
    expect(Math.sign(t.refined.eigen.values[1])).toBe(Math.sign(p.hessianEigenvalues[1]));
    expect(t.refined.eigen.values[0]).toBeLessThan(0);
    expect(t.refined.eigen.values[1]).toBeGreaterThan(0);
    // the string-method path: its highest point is the transition state (within 0.1)
    expect(t.path).not.toBeNull();
    expect(t.path!.status).toBe('converged');
    expect(Math.abs(t.path!.maximum.energy - p.energy)).toBeLessThan(0.1);
    expect(t.path!.agrees).toBe(true);
    // the path runs between the two minima the saddle joins, which descend from it on the analytic surface
    expect([...t.path!.ends].sort()).toEqual([...t.connects].sort());
  }
  // which minima each saddle joins: the deepest minimum (SciPy's first) and the shallowest meet
  // only through the higher saddle; the lower saddle joins the two shallower minima
  const [lowTs, highTs] = refTs.slice().sort((a, b) => a.energy - b.energy);
  const joins = (p: typeof lowTs) => nearest(interiorTs, p.x, p.y).connects.map((id) => idOf.get(id)).sort();
  const byEnergy = refMin.map((p, k) => [p.energy, k] as const).sort((a, b) => a[0] - b[0]).map(([, k]) => k);
  expect(joins(lowTs)).toEqual([byEnergy[1], byEnergy[2]].sort());
  expect(joins(highTs)).toEqual([byEnergy[0], byEnergy[2]].sort());
  // barriers are differences of the refined energies, both ways
  for (const b of r.barriers.filter((row) => interiorTs.some((t) => t.id === row.via))) {
    const t = r.transitionStates.find((s) => s.id === b.via)!;
    const from = r.minima.find((m) => m.id === b.from)!, to = r.minima.find((m) => m.id === b.to)!;
    expect(b.forward).toBeCloseTo(t.refined.energy - from.refined.energy, 10);
    expect(b.backward).toBeCloseTo(t.refined.energy - to.refined.energy, 10);
    expect(b.basis).toBe('refined');
  }
}

describe('Müller–Brown potential against SciPy', () => {
  it('grid at spacing 0.01: 3 minima, 2 transition states, refined within 2e-3 / 0.05, paths peak at the saddles', () => {
    const g = mbGrid(0.01);
    expect([g.width, g.height]).toEqual([271, 251]);
    // the grid samples the analytic formula exactly (check one value against the formula)
    expect(g.values[0]).toBe(muellerBrown(-1.5, 2.0));
    const r = barriers(g, { minPersistence: 1 });
    expect(r.transitionStates.filter((t) => t.onEdge)).toHaveLength(0);
    checkAgainstScipy(r);
    // the disconnectivity hierarchy: the two shallower basins join first (at the lower saddle)
    const root = r.hierarchy.find((n) => n.parent === null)!;
    expect(root.kind).toBe('transition-state');
    expect(root.energy).toBeCloseTo(Math.max(...refTs.map((p) => p.energy)), 1);
    expect(r.survey.euler.holds).toBe(true);
    // lowest-barrier connections: the two shallower minima meet over the lower saddle; the deepest
    // meets either of them only over the higher one (SciPy's saddles: which pairs each joins)
    const [lo, hi] = refTs.slice().sort((a, b) => a.energy - b.energy);
    const lowId = nearest(r.transitionStates, lo.x, lo.y).id, highId = nearest(r.transitionStates, hi.x, hi.y).id;
    expect(r.minimax).toEqual([
      expect.objectContaining({ a: 'M1', b: 'M2', via: highId }),
      expect.objectContaining({ a: 'M1', b: 'M3', via: highId }),
      expect.objectContaining({ a: 'M2', b: 'M3', via: lowId }),
    ]);
  });

  it('5000 scattered samples (moving least squares): the same points within the same tolerances', () => {
    const m = mbScattered(5000);
    const r = barriers(m, { minPersistence: 1 });
    checkAgainstScipy(r);
    // passes on the hull of the samples are reported but flagged as edge features, never refined silently
    for (const t of r.transitionStates.filter((s) => s.onEdge)) {
      if (t.refined.status !== 'converged') {
        expect(t.basis).toBe('sampled');
        expect(t.refined.message).toMatch(/\w/);
      }
    }
  });

  it('with a quadratic local fit on the scattered samples the saddles are still found and flagged honestly', () => {
    const m = mbScattered(5000);
    const r = barriers(m, { minPersistence: 1, meshFit: { degree: 2 } });
    const interior = r.transitionStates.filter((t) => !t.onEdge);
    expect(interior).toHaveLength(2);
    for (const t of interior) {
      if (t.refined.status === 'converged') expect(t.refined.eigen.values[0]).toBeLessThan(0);
      else expect(t.refined.message).toBeTruthy();
    }
  });
});
