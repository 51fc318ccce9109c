/** The library's 3-D survey: `survey3(grid, options)` from the package entry, its report and refusals. */
import { describe, it, expect } from 'vitest';
import { Grid3, survey3, readGrid3, InputError } from '../../src/index.js';

describe('survey3 (library)', () => {
  it('a bowl on a closed box: one minimum, χ = 1; the report has z and surface.depth', () => {
    const nx = 6, ny = 5, nz = 4;
    const values = new Float64Array(nx * ny * nz);
    for (let k = 0; k < nz; k++) for (let j = 0; j < ny; j++) for (let i = 0; i < nx; i++) values[i + nx * (j + ny * k)] = (i - 2) ** 2 + (j - 3) ** 2 + (k - 1) ** 2;
    const { report, result } = survey3(new Grid3({ nx, ny, nz, values, origin: [0, 0, 10], spacing: [1, 1, 0.5] }), { input: 'bowl' });
    // Source: analytic — a convex paraboloid on a closed box has one minimum; χ(ball) = 1.
    expect(report.euler).toMatchObject({ characteristic: 1, minima: 1, saddles1: 0, saddles2: 0, maxima: 0, holds: true });
    expect(report.surface).toMatchObject({ width: 6, height: 5, depth: 4 });
    expect(report.criticalPoints.toArray()).toEqual([expect.objectContaining({ kind: 'minimum', col: 2, row: 3, layer: 1, x: 2, y: 3, z: 10.5 })]);
    expect(result.critical.vertex).toBeInstanceOf(Int32Array);
    expect(report.input).toBe('bowl');
    expect(typeof readGrid3).toBe('function');
  });

  it('minPersistence cancels the pairs of dimensions 0 and 2 only: on the 3-torus one minimum and one maximum stay', () => {
    const nx = 16, ny = 12, nz = 18;
    const values = new Float64Array(nx * ny * nz);
    for (let k = 0; k < nz; k++) for (let j = 0; j < ny; j++) for (let i = 0; i < nx; i++) {
      values[i + nx * (j + ny * k)] = Math.cos((4 * Math.PI * (i + 0.37)) / nx) + 0.8 * Math.cos((2 * Math.PI * (j + 0.21)) / ny) + 1.3 * Math.cos((6 * Math.PI * (k + 0.13)) / nz);
    }
    const { report } = survey3(new Grid3({ nx, ny, nz, values }), { boundary: 'periodic', minPersistence: 100 });
    // Source: product formula 6 + 18t + 18t² + 6t³ for the critical points; b0 = b3 = 1 for the
    // 3-torus, so 5 minimum–saddle and 5 saddle–maximum pairs are finite and cancelled.
    expect(report.euler).toMatchObject({ minima: 6, saddles1: 18, saddles2: 18, maxima: 6, holds: true });
    expect(report.eulerKept).toMatchObject({ minima: 1, saddles1: 13, saddles2: 13, maxima: 1, holds: true });
    expect(report.counts.removedPairs).toEqual({ dim0: 5, dim2: 5 });
    expect(report.pairs.length).toBe(0);
  });

  it('refuses unknown options and 2-D settings with one line', () => {
    const g = new Grid3({ nx: 4, ny: 4, nz: 4, values: new Float64Array(64) });
    expect(() => survey3(g, { threads: 2 } as never)).toThrow(InputError);
    expect(() => survey3(g, { connectivity: 8 as never })).toThrow(/must be 14 or 26, got 8/);
    expect(() => survey3(new Grid3({ nx: 3, ny: 4, nz: 4, values: new Float64Array(48) }), { boundary: 'periodic' })).toThrow(/at least 4 points \(x has 3\)/);
  });
});
