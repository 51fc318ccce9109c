import { describe, it, expect, beforeAll } from 'vitest';
import { writeFileSync, readFileSync, existsSync } from 'node:fs';
import { join } from 'node:path';
import { sill, tempDir } from './run.js';
import { reference3, mbZ } from '../chem/surfaces3.js';

// `sill barriers` on a 3-D .npy grid, end to end (the built command). Energies: SciPy's stationary
// points of Müller–Brown-z (tests/reference/energy3d.py → fixtures/chem/stationary-3d.json).
const ref = reference3().surfaces['mb-z'];
let dir: string;

/** W sampled at spacing h over the reference window as a float64 .npy array [z, y, x]. */
function writeNpy(path: string, h: number): void {
  const [[x0, x1], [y0, y1], [z0, z1]] = ref.window;
  const nx = Math.round((x1 - x0) / h) + 1, ny = Math.round((y1 - y0) / h) + 1, nz = Math.round((z1 - z0) / h) + 1;
  const v = new Float64Array(nx * ny * nz);
  for (let k = 0; k < nz; k++) for (let j = 0; j < ny; j++) for (let i = 0; i < nx; i++) v[i + nx * (j + ny * k)] = mbZ(x0 + i * h, y0 + j * h, z0 + k * h);
  const header = `{'descr': '<f8', 'fortran_order': False, 'shape': (${nz}, ${ny}, ${nx}), }`.padEnd(117) + '\n';
  writeFileSync(path, Buffer.concat([Buffer.from([0x93]), Buffer.from('NUMPY'), Buffer.from([1, 0, header.length & 255, header.length >> 8]), Buffer.from(header), Buffer.from(v.buffer)]));
}

beforeAll(() => {
  dir = tempDir('sill-barriers3-cli-');
  writeNpy(join(dir, 'mbz.npy'), 0.05);
});

describe('sill barriers on a 3-D grid (command line)', () => {
  it("reads the .npy grid, finds SciPy's states and writes the 3-D files", () => {
    const out = join(dir, 'out');
    const [[x0], [y0], [z0]] = ref.window;
    const r = sill(['barriers', join(dir, 'mbz.npy'), '--spacing', '0.05,0.05,0.05', '--origin', `${x0},${y0},${z0}`, '--units', 'kJ/mol', '-o', out]);
    expect(r.code, r.stderr).toBe(0);
    expect(r.stdout).toMatch(/^surface {3}55 × 51 × 33 grid/);
    expect(r.stdout).toMatch(/figures {3}slices\.svg: x–y planes through M1 at layer \d+/);
    const j = JSON.parse(readFileSync(join(out, 'report.json'), 'utf8'));
    expect(j.surface).toMatchObject({ kind: 'grid3', depth: 33 });
    expect(j.minima).toHaveLength(3);
    expect(j.transitionStates).toHaveLength(2);
    for (const p of ref.stationaryPoints) {
      const all = [...j.minima, ...j.transitionStates];
      const d = Math.min(...all.map((s) => Math.hypot(s.refined.x - p.x, s.refined.y - p.y, s.refined.z - p.z)));
      expect(d).toBeLessThan(3e-3);
    }
    for (const f of ['minima.csv', 'transition-states.csv', 'barriers.csv', 'paths/T1.csv', 'paths/T2.csv', 'slices.svg', 'profiles.svg', 'disconnectivity.svg']) expect(existsSync(join(out, f)), f).toBe(true);
  });

  it('refuses --report and the 2-D periodic boundaries on a 3-D grid with one line, exit 2, nothing written', () => {
    for (const [args, msg] of [
      [['--report'], /--report is not available for 3-D grids yet/],
      [['--boundary', 'periodic-x'], /--boundary periodic-x is for 2-D grids; on a 3-D grid give --boundary closed \(or open\) --periodic-axes x/],
      [['--connectivity', '8'], /--connectivity must be 14 \(Freudenthal triangulation\) or 26 on a 3-D grid/],
    ] as const) {
      const out = join(dir, `bad-${args.join('')}`);
      const r = sill(['barriers', join(dir, 'mbz.npy'), ...args, '-o', out]);
      expect(r.code).toBe(2);
      expect(r.stderr.trim().split('\n')).toHaveLength(1);
      expect(r.stderr).toMatch(msg);
      expect(existsSync(out)).toBe(false);
    }
  });
});
