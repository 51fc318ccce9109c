import { describe, it, expect, beforeAll } from 'vitest';
import { readFileSync, existsSync } from 'node:fs';
import { join } from 'node:path';
import { tempDir } from './run.js';
import { runBarriers3 } from '../../src/cli/barriers.js';
import { openOutput } from '../../src/cli/common.js';
import type { Barriers3Report } from '../../src/report/barriers3.js';
import { reference3, sampleGrid3, mbZ } from '../chem/surfaces3.js';

// The files and keys of `barriers` on a 3-D grid, from the step the command takes once the grid is
// loaded. Energies: SciPy's stationary points of Müller–Brown-z (tests/reference/energy3d.py →
// fixtures/chem/stationary-3d.json).
const ref = reference3().surfaces['mb-z'];
let dir: string;
let report: Barriers3Report;

beforeAll(async () => {
  dir = tempDir('sill-barriers3-');
  const grid = sampleGrid3(mbZ, ref.window, 0.05);
  const opts = { out: join(dir, 'out'), quiet: true };
  report = await runBarriers3(grid, 'mb-z (in memory)', { units: 'kJ/mol', to: 'kcal/mol' }, opts, openOutput(opts, 'barriers', ['report.json', 'minima.csv', 'transition-states.csv', 'barriers.csv', 'lowest-barriers.csv', 'paths/', 'disconnectivity.json', 'disconnectivity.svg', 'slices.svg', 'profiles.svg'], []));
}, 60_000);

describe('barriers on a 3-D grid: report and files', () => {
  it('report.json: the 2-D keys plus z, surface.depth, 3 × 3 Hessians; energies converted', () => {
    const j = JSON.parse(readFileSync(join(dir, 'out', 'report.json'), 'utf8'));
    expect(j).toEqual(JSON.parse(JSON.stringify(report)));
    expect(j.schema).toBe('sill/barriers@1');
    expect(j.surface).toMatchObject({ kind: 'grid3', width: 55, height: 51, depth: 33 });
    expect(j.periodic).toEqual({ x: null, y: null, z: null });
    expect(j.minima).toHaveLength(3);
    expect(j.transitionStates).toHaveLength(2);
    for (const s of [...j.minima, ...j.transitionStates]) {
      for (const k of ['x', 'y', 'z', 'energy', 'col', 'row', 'layer', 'refined', 'hessian', 'hessianEigenvalues']) expect(s).toHaveProperty(k);
      expect(Object.keys(s.refined)).toEqual(['x', 'y', 'z', 'energy']);
      expect(s.hessian).toHaveLength(3);
      expect(s.hessianEigenvalues).toHaveLength(3);
    }
    // kcal/mol: SciPy's lowest minimum (kJ/mol) ÷ 4.184 (the thermochemical calorie, common practice)
    const lowest = Math.min(...ref.stationaryPoints.map((p) => p.energy));
    expect(Math.abs(j.minima[0].refined.energy - lowest / 4.184)).toBeLessThan(0.05);
    for (const t of j.transitionStates) {
      expect(Object.keys(t.path.maximum)).toEqual(['s', 'x', 'y', 'z', 'energy']);
      expect(t.path.agrees).toBe(true);
    }
    expect(j.units).toMatchObject({ input: 'kJ/mol', output: 'kcal/mol' });
  });

  it('CSV files carry z; a path per transition state; the figures name their slices', () => {
    const out = join(dir, 'out');
    const minima = readFileSync(join(out, 'minima.csv'), 'utf8').split('\n');
    expect(minima[0].split(',').slice(0, 5)).toEqual(['id', 'x', 'y', 'z', 'energy']);
    expect(minima[0]).toContain('eigenvalue_3');
    for (const t of report.transitionStates) {
      const rows = readFileSync(join(out, 'paths', `${t.id}.csv`), 'utf8').trim().split('\n');
      expect(rows[0]).toBe('arc_length,x,y,z,energy');
      expect(rows).toHaveLength(82);
    }
    for (const f of ['barriers.csv', 'disconnectivity.svg', 'disconnectivity.json', 'profiles.svg']) expect(existsSync(join(out, f))).toBe(true);
    const slices = readFileSync(join(out, 'slices.svg'), 'utf8');
    for (const s of [...report.minima, ...report.transitionStates]) expect(slices).toContain(`${s.id}<tspan font-weight="400"> · z = `);
    expect(slices).toMatch(/\(layer \d+\)/);
    // report.json names the same slices: each state's layer is the one nearest its z
    expect(report.slices.map((c) => c.id)).toEqual([...report.minima, ...report.transitionStates].map((s) => s.id));
    for (const c of report.slices) {
      const s = [...report.minima, ...report.transitionStates].find((q) => q.id === c.id)!;
      expect(Math.abs(c.z - (s.refined ?? s).z)).toBeLessThanOrEqual(0.025 + 1e-12);
      expect(slices).toContain(`${c.id}<tspan font-weight="400"> · z = ${Number(c.z.toPrecision(4))} (layer ${c.layer})`);
    }
  });
});
