/** Reading 3-D grids: .npy in C and Fortran order, x y z value text in any order, periods, refusals. */
import { describe, it, expect, beforeAll } from 'vitest';
import { writeFileSync, mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { readGrid3, isGrid3File } from '../../src/io/grid3-read.js';
import { InputError } from '../../src/errors.js';
import { writeNpy } from './npy-write.js';

let dir: string;
// element [z][y][x] of a 4 × 3 × 5 array: distinct values that tell the axes apart
const elem = ([z, y, x]: number[]) => 100 * z + 10 * y + x + 0.5;

beforeAll(() => {
  dir = mkdtempSync(join(tmpdir(), 'sill-grid3-'));
  writeNpy(join(dir, 'c.npy'), [4, 3, 5], false, elem);
  writeNpy(join(dir, 'f.npy'), [4, 3, 5], true, elem);
  writeNpy(join(dir, 'two.npy'), [3, 5], false, ([y, x]) => x + y);
  const rows: string[] = [];
  for (let q = 0; q < 60; q++) {
    const p = (q * 7) % 60; // 7 is prime to 60: rows in a scrambled order
    const x = p % 5, y = Math.floor(p / 5) % 3, z = Math.floor(p / 15);
    if (p === 17) continue; // one lattice point without a row: nodata
    rows.push(`${-1 + 0.25 * x},${5 + 2 * y},${10 * z},${elem([z, y, x])}`);
  }
  writeFileSync(join(dir, 'cols.csv'), 'phi,psi,r,F\n' + rows.join('\n') + '\n');
  writeFileSync(join(dir, 'dup.txt'), 'x y z v\n0 0 0 1\n1 0 0 2\n0 0 0 3\n1 1 1 4\n');
  writeFileSync(join(dir, 'irregular.txt'), 'x y z v\n0 0 0 1\n1 0 0 2\n2.5 0 0 3\n0 1 1 4\n');
  writeFileSync(join(dir, 'sparse.txt'), 'x y z v\n0 0 0 1\n1 0 0 1\n9 0 0 2\n0 1 0 1\n0 9 0 3\n0 0 1 1\n0 0 9 4\n');
  writeFileSync(join(dir, 'inf.txt'), 'x y z v\n0 0 0 1\n1 0 0 inf\n0 1 0 3\n1 1 0 4\n');
  writeFileSync(join(dir, 'allnan.txt'), 'x y z v\n0 0 0 nan\n1 0 0 nan\n0 1 0 nan\n1 1 0 nan\n');
  writeFileSync(join(dir, 'plain.txt'), '0 0 1\n1 0 2\n0 1 3\n1 1 4\n');
  writeFileSync(join(dir, 'matrix4.txt'), '1 2 3 4\n5 6 7 8\n');
});

describe('readGrid3', () => {
  it('a C-order array [z, y, x]: x fastest, origin and spacing placed', async () => {
    const g = await readGrid3(join(dir, 'c.npy'), { origin: [1, 2, 3], spacing: [0.5, 1, 2] });
    expect([g.nx, g.ny, g.nz]).toEqual([5, 3, 4]);
    expect(g.values[g.index(4, 2, 3)]).toBe(elem([3, 2, 4]));
    expect([g.x(4), g.y(2), g.z(3)]).toEqual([3, 4, 9]);
  });

  it('Fortran order reads to the same grid', async () => {
    const c = await readGrid3(join(dir, 'c.npy'));
    const f = await readGrid3(join(dir, 'f.npy'));
    expect(Array.from(f.values)).toEqual(Array.from(c.values));
  });

  it('x y z value rows in any order: lattice, names, a missing point as nodata', async () => {
    const t = await readGrid3(join(dir, 'cols.csv'));
    const c = await readGrid3(join(dir, 'c.npy'));
    expect([t.nx, t.ny, t.nz]).toEqual([5, 3, 4]);
    expect(t.origin).toEqual([-1, 5, 0]);
    expect(t.spacing).toEqual([0.25, 2, 10]);
    expect(t.names).toEqual(['phi', 'psi', 'r']);
    expect(Number.isNaN(t.values[17])).toBe(true);
    const rest = Array.from(t.values).map((v, i) => (i === 17 ? c.values[i] : v));
    expect(rest).toEqual(Array.from(c.values));
  });

  it('columns picked by number', async () => {
    const t = await readGrid3(join(dir, 'cols.csv'), { columns: [2, 1, 3, 4] });
    expect([t.nx, t.ny, t.nz]).toEqual([3, 5, 4]);
    expect(t.names).toEqual(['psi', 'phi', 'r']);
  });

  it('periods: one period spanned by n points; given or n × spacing', async () => {
    const g = await readGrid3(join(dir, 'c.npy'), { spacing: [72, 1, 1], periodicAxes: [true, false, false], period: [360] });
    expect(g.periods).toEqual([360, null, null]);
    const h = await readGrid3(join(dir, 'c.npy'), { periodicAxes: [true, false, true] });
    expect(h.periods).toEqual([5, null, 4]);
  });

  it('which files are 3-D grids', async () => {
    expect(await isGrid3File(join(dir, 'c.npy'), 0)).toBe(true);
    expect(await isGrid3File(join(dir, 'two.npy'), 0)).toBe(false);
    expect(await isGrid3File(join(dir, 'cols.csv'), 0)).toBe(true);
    expect(await isGrid3File(join(dir, 'cols.csv'), 3)).toBe(false);
    expect(await isGrid3File(join(dir, 'plain.txt'), 0)).toBe(false);
    expect(await isGrid3File(join(dir, 'matrix4.txt'), 0)).toBe(false);
    expect(await isGrid3File(join(dir, 'matrix4.txt'), 4)).toBe(true);
    expect(await isGrid3File(join(dir, 'no-such-file'), 0)).toBe(false);
    expect(await isGrid3File(dir, 0)).toBe(false);
  });

  const refusals: [string, () => Promise<unknown>, RegExp][] = [
    ['duplicate point', () => readGrid3(join(dir, 'dup.txt')), /lines 2 and 4 both give the lattice point \(0, 0, 0\)/],
    ['irregular lattice', () => readGrid3(join(dir, 'irregular.txt')), /x coordinates \(column 1\) do not form a regular lattice/],
    ['sparse lattice', () => readGrid3(join(dir, 'sparse.txt')), /cover only .* of their 10×10×10 lattice/],
    ['infinite value', () => readGrid3(join(dir, 'inf.txt')), /line 3, column 4: the value is \+Infinity/],
    ['period not spanned', () => readGrid3(join(dir, 'c.npy'), { periodicAxes: [true, false, false], period: [7] }), /x axis has 5 points 1 apart \(5\), which is not one period 7/],
    ['both ends', () => readGrid3(join(dir, 'c.npy'), { periodicAxes: [false, false, true], period: [3] }), /z axis holds both ends of its period 3/],
    ['period without axes', () => readGrid3(join(dir, 'c.npy'), { period: [3] }), /--period needs periodic axes/],
    ['spacing on text', () => readGrid3(join(dir, 'cols.csv'), { spacing: [1, 1, 1] }), /carry their own coordinates/],
    ['columns on npy', () => readGrid3(join(dir, 'c.npy'), { columns: [1, 2, 3, 4] }), /--columns applies to x y z value text/],
    ['2-D array', () => readGrid3(join(dir, 'two.npy')), /holds a 2-D array .* a 3-D grid needs a 3-D array indexed \[z, y, x\]/],
    ['all nodata', () => readGrid3(join(dir, 'allnan.txt')), /every point of the 2×2×1 grid is nodata/],
    ['bad spacing', () => readGrid3(join(dir, 'c.npy'), { spacing: [1, 0, 1] }), /three finite numbers, all positive/],
  ];
  for (const [name, f, msg] of refusals) {
    it(`refuses: ${name} (one line)`, async () => {
      const err = await f().then(() => null, (e: unknown) => e);
      expect(err).toBeInstanceOf(InputError);
      expect((err as Error).message).toMatch(msg);
      expect((err as Error).message).not.toMatch(/\n/);
    });
  }
});
