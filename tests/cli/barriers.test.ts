import { describe, it, expect, beforeAll } from 'vitest';
import { writeFileSync, readFileSync, existsSync, readdirSync } from 'node:fs';
import { join } from 'node:path';
import { sill, tempDir } from './run.js';
import { muellerBrown, mbReference, mbScattered } from '../chem/mb.js';
import { dihedralScan } from '../../src/demo/generate.js';

let dir: string;

/** Müller–Brown on a lattice as "x y energy" text (optionally with an extra column before the energy). */
function mbText(h: number, extra = false): string {
  const lines = ['# Müller–Brown potential (Müller & Brown 1979) sampled on a lattice', extra ? 'x y weight energy' : 'x y energy'];
  const nx = Math.round(2.7 / h), ny = Math.round(2.5 / h);
  for (let r = 0; r <= ny; r++) {
    for (let c = 0; c <= nx; c++) {
      const x = Number((-1.5 + c * h).toFixed(6)), y = Number((-0.5 + r * h).toFixed(6));
      lines.push(extra ? `${x} ${y} 1 ${muellerBrown(x, y)}` : `${x} ${y} ${muellerBrown(x, y)}`);
    }
  }
  return lines.join('\n') + '\n';
}

beforeAll(() => {
  dir = tempDir('sill-barriers-');
  writeFileSync(join(dir, 'mb.txt'), mbText(0.02));
  writeFileSync(join(dir, 'mb-extra.txt'), mbText(0.02, true));
  writeFileSync(join(dir, 'scan.txt'), dihedralScan(10).text);
  // 350° of a scan: 35 columns 10° apart
  writeFileSync(join(dir, 'scan-350.txt'), dihedralScan(10).text.split('\n').filter((l) => !/^170 /.test(l)).join('\n'));
  const m = mbScattered(3000, 2024);
  const pts = ['x y energy'];
  for (let i = 0; i < m.size; i++) pts.push(`${m.x[i]} ${m.y[i]} ${m.values[i]}`);
  writeFileSync(join(dir, 'mb-scattered.txt'), pts.join('\n') + '\n');
  writeFileSync(join(dir, 'line.txt'), 'x y energy\n0 0 1\n1 1 2\n2 2 3\n3 3 1\n4 4.000001 2\n'.replace('4.000001', '4'));
});

describe('sill barriers (command line)', () => {
  it('--json prints the report with the contract keys; energies and positions match SciPy', () => {
    const r = sill(['barriers', join(dir, 'mb.txt'), '--json', '--units', 'kJ/mol']);
    expect(r.code).toBe(0);
    const rep = JSON.parse(r.stdout);
    expect(rep.schema).toBe('sill/barriers@1');
    expect(rep.surface).toMatchObject({ width: 136, height: 126 });
    expect(rep.connectivity).toBe(8);
    expect(rep.boundary).toBe('closed');
    expect(rep.euler).toMatchObject({ characteristic: 1, holds: true });
    expect(rep.units).toMatchObject({ input: 'kJ/mol', output: 'kJ/mol', temperature: 300, constants: 'CODATA 2018' });
    expect(rep.minPersistence.source).toMatch(/default: 1 kT at 300 K/);
    expect(rep.minima).toHaveLength(3);
    expect(rep.transitionStates).toHaveLength(2);
    for (const m of rep.minima) {
      expect(Object.keys(m)).toEqual(expect.arrayContaining(['id', 'x', 'y', 'energy', 'refined', 'hessianEigenvalues', 'onEdge']));
      expect(Object.keys(m.refined)).toEqual(['x', 'y', 'energy']);
    }
    // Source: SciPy stationary points (fixtures/chem/mueller-brown.json); a 0.02 grid, so 2e-3 / 0.05 still hold
    const ref = mbReference().stationaryPoints;
    for (const p of ref) {
      const list = p.kind === 'minimum' ? rep.minima : rep.transitionStates;
      const q = list.reduce((a: { refined: { x: number; y: number } }, b: { refined: { x: number; y: number } }) =>
        Math.hypot(a.refined.x - p.x, a.refined.y - p.y) < Math.hypot(b.refined.x - p.x, b.refined.y - p.y) ? a : b);
      expect(Math.hypot(q.refined.x - p.x, q.refined.y - p.y)).toBeLessThan(2e-3);
      expect(Math.abs(q.refined.energy - p.energy)).toBeLessThan(0.05);
    }
    for (const t of rep.transitionStates) {
      expect(t.connects).toHaveLength(2);
      expect(t.hessianEigenvalues[0]).toBeLessThan(0);
      expect(t.hessianEigenvalues[1]).toBeGreaterThan(0);
    }
    expect(rep.barriers).toHaveLength(2);
    for (const b of rep.barriers) expect(Object.keys(b)).toEqual(expect.arrayContaining(['from', 'to', 'via', 'forward', 'backward']));
    expect(rep.rates.caution).toMatch(/order-of-magnitude/);
    expect(rep.disconnectivity.nodes).toHaveLength(5);
    expect(r.stderr).toBe('');
  });

  it('--to converts every energy: kcal/mol = kJ/mol / 4.184', () => {
    // Source: definition of the thermochemical calorie (1 kcal = 4.184 kJ exactly)
    const a = JSON.parse(sill(['barriers', join(dir, 'mb.txt'), '--json', '--units', 'kJ/mol', '--min-persistence', '1']).stdout);
    const b = JSON.parse(sill(['barriers', join(dir, 'mb.txt'), '--json', '--units', 'kJ/mol', '--to', 'kcal/mol', '--min-persistence', '1']).stdout);
    expect(b.units.output).toBe('kcal/mol');
    for (let k = 0; k < a.barriers.length; k++) {
      expect(b.barriers[k].forward).toBeCloseTo(a.barriers[k].forward / 4.184, 10);
      expect(b.barriers[k].rateForward).toBeCloseTo(a.barriers[k].rateForward, 0);
    }
    expect(b.minima[0].refined.energy).toBeCloseTo(a.minima[0].refined.energy / 4.184, 10);
    expect(b.minima[0].hessianEigenvalues[1]).toBeCloseTo(a.minima[0].hessianEigenvalues[1] / 4.184, 8);
    expect(b.minPersistence.value).toBeCloseTo(1 / 4.184, 12);
  });

  it('-o writes every file, paths as CSV, figures as SVG', () => {
    const out = join(dir, 'out-mb');
    const r = sill(['barriers', join(dir, 'mb.txt'), '--units', 'kJ/mol', '-o', out, '--quiet']);
    expect(r.code).toBe(0);
    expect(r.stdout).toBe('');
    expect(readdirSync(out).sort()).toEqual([
      '.sill-manifest.json', 'barriers.csv', 'disconnectivity.json', 'disconnectivity.svg', 'landscape.svg', 'lowest-barriers.csv',
      'minima.csv', 'paths', 'report.json', 'results.gpkg', 'transition-states.csv',
    ]);
    expect(readdirSync(join(out, 'paths')).sort()).toEqual(['T1.csv', 'T2.csv']);
    const path = readFileSync(join(out, 'paths', 'T1.csv'), 'utf8').trim().split('\n');
    expect(path[0]).toBe('arc_length,x,y,energy');
    expect(path).toHaveLength(82);
    expect(readFileSync(join(out, 'barriers.csv'), 'utf8').split('\n')[0]).toBe('from,to,via,forward,backward,energy_basis,rate_forward_per_s,rate_backward_per_s');
    for (const f of ['disconnectivity.svg', 'landscape.svg']) {
      const svg = readFileSync(join(out, f), 'utf8');
      expect(svg.startsWith('<svg xmlns="http://www.w3.org/2000/svg"')).toBe(true);
      expect(svg.trim().endsWith('</svg>')).toBe(true);
      expect(svg).not.toMatch(/NaN|undefined/);
    }
    const rep = JSON.parse(readFileSync(join(out, 'report.json'), 'utf8'));
    expect(rep.transitionStates[0].path.file).toBe('paths/T1.csv');
    expect(readdirSync(out).some((n) => n.startsWith('.sill-staging'))).toBe(false);
  });

  it('prints the states, transition states and barrier table in the chosen unit', () => {
    const r = sill(['barriers', join(dir, 'mb.txt'), '--units', 'kJ/mol', '--to', 'kcal/mol']);
    expect(r.code).toBe(0);
    expect(r.stdout).toMatch(/found {5}3 minima, 2 transition states/);
    expect(r.stdout).toMatch(/barriers \(kcal\/mol\):/);
    expect(r.stdout).toMatch(/M\d → M\d +T1/);
    expect(r.stdout).toMatch(/order of magnitude/);
  });

  it('a periodic dihedral scan with --periodic; a closed run suggests it', () => {
    const r = sill(['barriers', join(dir, 'scan.txt'), '--units', 'kJ/mol', '--periodic', '--json']);
    expect(r.code).toBe(0);
    const rep = JSON.parse(r.stdout);
    expect(rep.boundary).toBe('periodic');
    expect(rep.periodic).toEqual({ x: 360, y: 360 });
    expect(rep.euler.characteristic).toBe(0);
    expect(rep.minima.length).toBe(3);
    const closed = sill(['barriers', join(dir, 'scan.txt'), '--units', 'kJ/mol']);
    expect(closed.code).toBe(0);
    expect(closed.stdout).toMatch(/spans a full 360°.*--boundary periodic-x/);
  });

  it('--columns picks the energy column', () => {
    const a = JSON.parse(sill(['barriers', join(dir, 'mb.txt'), '--json']).stdout);
    const b = JSON.parse(sill(['barriers', join(dir, 'mb-extra.txt'), '--json', '--columns', '1,2,4']).stdout);
    expect(b.minima.map((m: { refined: unknown }) => m.refined)).toEqual(a.minima.map((m: { refined: unknown }) => m.refined));
    expect(b.units.input).toBe('none');
    expect(b.rates).toBeNull();
  });

  it('scattered samples go through the triangulation and the local fit', () => {
    const r = sill(['barriers', join(dir, 'mb-scattered.txt'), '--json', '--min-persistence', '1']);
    expect(r.code).toBe(0);
    const rep = JSON.parse(r.stdout);
    expect(rep.surface.kind).toBe('mesh');
    expect(rep.fit.kind).toBe('mls');
    expect(rep.minima).toHaveLength(3);
    expect(rep.transitionStates.filter((t: { onEdge: boolean }) => !t.onEdge)).toHaveLength(2);
  });

  it('scattered samples with no options: the noise floor of the samples, printed and in the report, and one line saying what it removed', () => {
    const r = sill(['barriers', join(dir, 'mb-scattered.txt')]);
    expect(r.code).toBe(0);
    expect(r.stdout).toMatch(/min persistence [\d.]+: the noise floor of the samples \([\d.]+ robust spread of the plane-fit residuals × 5\)/);
    expect(r.stdout).toMatch(/^removed {3}\d+ minima and \d+ transition states with persistence below the noise floor [\d.]+/m);
    const j = sill(['barriers', join(dir, 'mb-scattered.txt'), '--json']);
    const rep = JSON.parse(j.stdout);
    expect(rep.noiseFloor).toMatchObject({ used: true, samples: expect.any(Number) });
    expect(rep.noiseFloor.value).toBeGreaterThan(0);
    expect(rep.minPersistence.value).toBe(rep.noiseFloor.value);
    expect(rep.minPersistence.source).toMatch(/noise floor/);
    expect(rep.removed.belowThreshold.minima).toBeGreaterThan(0);
    // Source: SciPy's Müller–Brown stationary points (fixtures/chem/mueller-brown.json): 3 minima, 2 saddles, each once
    expect(rep.minima).toHaveLength(3);
    expect(rep.transitionStates).toHaveLength(2);
    for (const s of [...rep.minima, ...rep.transitionStates]) {
      expect(s.refinement.status).toBe('converged');
      expect(Array.isArray(s.merged)).toBe(true);
      expect(s.persistence === null || s.persistence >= rep.noiseFloor.value).toBe(true);
    }
    // --min-persistence 0 keeps everything, and says so
    const z = sill(['barriers', join(dir, 'mb-scattered.txt'), '--json', '--min-persistence', '0']);
    const all = JSON.parse(z.stdout);
    expect(all.noiseFloor.used).toBe(false);
    expect(all.minPersistence).toMatchObject({ value: 0, source: 'given' });
    expect(all.removed.belowThreshold).toMatchObject({ minima: 0, transitionStates: 0 });
    expect(all.minima.length).toBeGreaterThan(3);
  });

  it('sill demo runs barriers on the invented periodic scan', () => {
    const out = join(dir, 'demo');
    const r = sill(['demo', '-o', out, '--quiet']);
    expect(r.code).toBe(0);
    const rep = JSON.parse(readFileSync(join(out, 'dihedral-barriers', 'report.json'), 'utf8'));
    expect(rep.schema).toBe('sill/barriers@1');
    expect(rep.boundary).toBe('periodic');
    expect(rep.units.input).toBe('kJ/mol');
    // the invented scan has three wells (src/demo/generate.ts); on a torus χ = 0
    expect(rep.minima).toHaveLength(3);
    expect(rep.euler).toMatchObject({ characteristic: 0, holds: true });
    for (const t of rep.transitionStates) expect(t.path.agrees).toBe(true);
    expect(existsSync(join(out, 'dihedral-barriers', 'disconnectivity.svg'))).toBe(true);
    // the invented frames of a chain on the same surface: the same three basins, each within two 10° bins of the scan's minimum
    const fr = JSON.parse(readFileSync(join(out, 'dihedral-frames-barriers', 'report.json'), 'utf8'));
    expect(fr.samples).toMatchObject({ frames: 40000, bins: [36, 36], periods: [360, 360], estimator: 'histogram' });
    expect(fr.minima).toHaveLength(3);
    for (const m of rep.minima) {
      const d = (a: number, b: number) => Math.abs(((a - b + 540) % 360) - 180);
      expect(fr.minima.some((q: { refined: { x: number; y: number } }) => Math.hypot(d(q.refined.x, m.refined.x), d(q.refined.y, m.refined.y)) < 20)).toBe(true);
    }
    for (const b of fr.barriers) expect(b.uncertainty.resamples).toBe(50);
    // the invented three-variable grid (φ, ψ periodic, r not): three states built in (src/demo/generate.ts);
    // a torus times an interval has χ = 0; the refined states lie near the wells' centres put in the generator
    const t3 = JSON.parse(readFileSync(join(out, 'torsion-distance-barriers', 'report.json'), 'utf8'));
    expect(t3.surface.depth).toBe(17);
    expect(t3.euler).toMatchObject({ characteristic: 0, holds: true });
    expect(t3.minima).toHaveLength(3);
    const wells = [[-65, -45, 4.5], [-120, 130, 6.5], [60, 140, 6.25]];
    for (const [p0, q0, r0] of wells) {
      const d = (a: number, b: number) => Math.abs(((a - b + 540) % 360) - 180);
      expect(t3.minima.some((m: { refined: { x: number; y: number; z: number } }) => d(m.refined.x, p0) < 20 && d(m.refined.y, q0) < 20 && Math.abs(m.refined.z - r0) < 0.5)).toBe(true);
    }
    expect(t3.transitionStates.length).toBeGreaterThanOrEqual(2);
    expect(existsSync(join(out, 'torsion-distance-barriers', 'slices.svg'))).toBe(true);
  });

  it('bad input: one line on stderr, exit 2, nothing written', () => {
    const cases: [string[], RegExp][] = [
      [['barriers', join(dir, 'mb.txt'), '--units', 'furlongs'], /--units must be one of kJ\/mol, kcal\/mol, eV, hartree, kT, K, none, got 'furlongs'/],
      [['barriers', join(dir, 'mb.txt'), '--units', 'eV', '--temperature', '0'], /--temperature must be a temperature in kelvin above 0/],
      [['barriers', join(dir, 'mb.txt'), '--units', 'eV', '--temperature', '-20'], /above 0/],
      [['barriers', join(dir, 'mb.txt'), '--to', 'kcal/mol'], /--to kcal\/mol needs the input unit: add --units/],
      [['barriers', join(dir, 'scan-350.txt'), '--periodic'], /does not close — 35 samples 10 apart span 350, not one period \(360° or 2π\)/],
      [['barriers', join(dir, 'line.txt')], /on one line/],
      [['barriers', join(dir, 'mb.txt'), '--periodic', '--boundary', 'open'], /--periodic means --boundary periodic/],
      [['barriers', join(dir, 'mb.txt'), '--boundary', 'open', '--min-persistence', '1000'], /no minimum is left after simplification/],
    ];
    for (const [args, msg] of cases) {
      const out = join(dir, `bad-${Math.random().toString(36).slice(2)}`);
      const r = sill([...args, '-o', out]);
      expect(r.code, args.join(' ')).toBe(2);
      expect(r.stderr).toMatch(msg);
      expect(r.stderr.trim().split('\n')).toHaveLength(1);
      expect(r.stdout).toBe('');
      expect(existsSync(out)).toBe(false);
    }
  });
});
