import { describe, it, expect } from 'vitest';
import { Mesh } from '../../src/surface/mesh.js';
import { survey } from '../../src/morse/survey.js';
import { rng } from '../../src/demo/generate.js';

describe('scattered samples (Delaunay mesh)', () => {
  it('a paraboloid sampled at random points has one pit near the centre', () => {
    // Source: analytic — z = (x − 0.3)² + (y + 0.2)² has its minimum at (0.3, −0.2).
    const rand = rng(42);
    const n = 2000;
    const x = new Float64Array(n), y = new Float64Array(n), v = new Float64Array(n);
    for (let i = 0; i < n; i++) { x[i] = rand() * 2 - 1; y[i] = rand() * 2 - 1; v[i] = (x[i] - 0.3) ** 2 + (y[i] + 0.2) ** 2; }
    const s = survey(new Mesh(x, y, v), { boundary: 'closed' });
    expect(s.euler).toMatchObject({ characteristic: 1, holds: true });
    const pits = Array.from(s.critical.vertex).filter((_, i) => s.critical.kind[i] === 1);
    expect(pits).toHaveLength(1);
    expect(Math.hypot(x[pits[0]] - 0.3, y[pits[0]] + 0.2)).toBeLessThan(0.1);
  });

  it('refuses duplicate and collinear points', () => {
    expect(() => new Mesh(Float64Array.of(0, 1, 0, 1), Float64Array.of(0, 0, 1, 0), Float64Array.of(1, 2, 3, 4))).toThrow(/share the location/);
    expect(() => new Mesh(Float64Array.of(0, 1, 2), Float64Array.of(0, 1, 2), Float64Array.of(1, 2, 3))).toThrow(/one line/);
  });
});
