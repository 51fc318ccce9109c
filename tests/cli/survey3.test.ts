/** `sill survey` on 3-D grids: .npy (C and Fortran order) and x y z value text, periodic axes, refusals. */
import { describe, it, expect, beforeAll } from 'vitest';
import { writeFileSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { sill, tempDir, itRejects } from './run.js';
import { writeNpy } from '../io/npy-write.js';

let dir: string;

// a paraboloid with its lowest point at lattice point (x, y, z) = (4, 2, 3) of a 7 × 5 × 6 grid
const bowl = ([z, y, x]: number[]) => (x - 4) ** 2 + 1.3 * (y - 2) ** 2 + 0.7 * (z - 3) ** 2;
// separable periodic function: cos(2x) + 0.8 cos(y) + 1.3 cos(3z) sampled off-symmetric
const NX = 16, NY = 12, NZ = 18;
const sep = ([k, j, i]: number[]) => Math.cos((4 * Math.PI * (i + 0.37)) / NX) + 0.8 * Math.cos((2 * Math.PI * (j + 0.21)) / NY) + 1.3 * Math.cos((6 * Math.PI * (k + 0.13)) / NZ);

beforeAll(() => {
  dir = tempDir();
  writeNpy(join(dir, 'bowl-c.npy'), [6, 5, 7], false, bowl);
  writeNpy(join(dir, 'sep.npy'), [NZ, NY, NX], false, sep);
  // the bowl as text rows in a scrambled order, value first, coordinates scaled
  const rows: string[] = [];
  for (let q = 0; q < 210; q++) {
    const p = (q * 97) % 210; // 97 is prime to 210: a permutation
    const x = p % 7, y = Math.floor(p / 7) % 5, z = Math.floor(p / 35);
    rows.push(`${bowl([z, y, x])} ${-90 + 30 * x} ${10 + 0.5 * y} ${2 * z}`);
  }
  writeFileSync(join(dir, 'bowl.txt'), 'energy phi psi d\n' + rows.join('\n') + '\n');
  writeFileSync(join(dir, 'flat.txt'), '0 0 1\n1 0 2\n0 1 3\n1 1 4\n');
});

describe('sill survey on 3-D grids (command line)', () => {
  it('a 3-D .npy array [z, y, x]: the bowl has one minimum at its centre; χ = 1 on the closed box', () => {
    const r = sill(['survey', join(dir, 'bowl-c.npy'), '--json', '--origin', '10,20,30', '--spacing', '0.5,2,1']);
    expect(r.code, r.stderr).toBe(0);
    const rep = JSON.parse(r.stdout);
    expect(rep.surface).toMatchObject({ kind: 'grid3', width: 7, height: 5, depth: 6, validCells: 210, cellSize: [0.5, 2, 1], origin: [10, 20, 30] });
    expect(rep.connectivity).toBe(14);
    expect(rep.boundary).toBe('closed');
    // Source: analytic — a convex paraboloid on a closed box: one minimum, χ(ball) = 1.
    expect(rep.euler).toMatchObject({ characteristic: 1, minima: 1, saddles1: 0, saddles2: 0, maxima: 0, holds: true });
    const mins = rep.criticalPoints.filter((c: { kind: string }) => c.kind === 'minimum');
    expect(mins).toEqual([expect.objectContaining({ col: 4, row: 2, layer: 3, x: 12, y: 24, z: 33, value: 0, morseIndex: 0 })]);
  });

  it('x y z value text in any order, columns picked: the same survey as the array', () => {
    const c = JSON.parse(sill(['survey', join(dir, 'bowl-c.npy'), '--json', '--connectivity', '26']).stdout);
    const r = sill(['survey', join(dir, 'bowl.txt'), '--json', '--connectivity', '26', '--columns', '2,3,4,1']);
    expect(r.code, r.stderr).toBe(0);
    const t = JSON.parse(r.stdout);
    expect(t.surface).toMatchObject({ width: 7, height: 5, depth: 6, origin: [-90, 10, 0], cellSize: [30, 0.5, 2], names: ['phi', 'psi', 'd'] });
    expect(t.criticalPoints.map((p: { index: number; kind: string }) => [p.index, p.kind])).toEqual(c.criticalPoints.map((p: { index: number; kind: string }) => [p.index, p.kind]));
  });

  it('periodic axes: the separable function on the 3-torus has the product-formula counts; -o writes the files; the summary', () => {
    const out = join(dir, 'sep-out');
    const r = sill(['survey', join(dir, 'sep.npy'), '--boundary', 'periodic', '--spacing', '22.5,30,20', '--period', '360', '-o', out]);
    expect(r.code, r.stderr).toBe(0);
    expect(r.stdout).toMatch(/16 × 12 × 18 3-D grid/);
    expect(r.stdout).toMatch(/6 minima, 18 index-1 saddles, 18 index-2 saddles, 6 maxima/);
    expect(r.stdout).toMatch(/χ = 0 by counting simplices: holds/);
    const rep = JSON.parse(readFileSync(join(out, 'report.json'), 'utf8'));
    // Source: product formula (2 + 2t)(1 + t)(3 + 3t) = 6 + 18t + 18t² + 6t³; χ(T³) = 0.
    expect(rep.euler).toMatchObject({ characteristic: 0, minima: 6, saddles1: 18, saddles2: 18, maxima: 6, holds: true });
    expect(rep.periodicAxes).toEqual(['x', 'y', 'z']);
    expect(rep.surface.periods).toEqual([360, 360, 360]);
    expect(rep.pairs.length).toBeGreaterThan(0);
    expect(rep.pairs.every((p: { dim: number }) => p.dim === 0 || p.dim === 2)).toBe(true);
    const csv = readFileSync(join(out, 'critical-points.csv'), 'utf8').trim().split('\n');
    expect(csv[0]).toBe('kind,morse_index,col,row,layer,x,y,z,value,multiplicity,on_edge');
    expect(csv).toHaveLength(1 + 48);
    const tree = JSON.parse(readFileSync(join(out, 'merge-tree.json'), 'utf8'));
    expect(tree.join.nodes.filter((n: { kind: string }) => n.kind === 'minimum')).toHaveLength(6);
  });
});

describe('sill survey on 3-D grids: refusals', () => {
  // more refusals of the reader are checked without the command line in tests/io/grid3-read.test.ts
  itRejects([
    ['report on 3-D', () => ['survey', join(dir, 'bowl-c.npy'), '--report'], /--report and --png draw 2-D maps/],
    ['2-D connectivity', () => ['survey', join(dir, 'bowl-c.npy'), '--connectivity', '8'], /must be 14 .* or 26/],
    ['periodic axes on 2-D input', () => ['survey', join(dir, 'flat.txt'), '--periodic-axes', 'x'], /apply to 3-D grids/],
    ['3-D grid to a 2-D command', () => ['ponds', join(dir, 'bowl.txt')], /is a 3-D grid .* sill survey and sill barriers read 3-D grids/],
  ], () => dir);
});
