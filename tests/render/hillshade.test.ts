import { describe, it, expect } from 'vitest';
import fc from 'fast-check';
import { hillshade, shadeOfGradient, autoZFactor } from '../../src/render/figures/hillshade.js';

// Source: the hillshade formula of common cartographic practice,
//   shade = cos(zenith)·cos(slope) + sin(zenith)·sin(slope)·cos(azimuth − aspect),
// is Lambert's cosine law: the dot product of the unit surface normal with the unit vector toward
// the sun. The tests compute that dot product directly (x east, y north, z up).
const RAD = Math.PI / 180;
function lambert(gx: number, gy: number, az: number, alt: number): number {
  const nrm = Math.hypot(gx, gy, 1);
  const nx = -gx / nrm, ny = -gy / nrm, nz = 1 / nrm;
  const sx = Math.sin(az * RAD) * Math.cos(alt * RAD), sy = Math.cos(az * RAD) * Math.cos(alt * RAD), sz = Math.sin(alt * RAD);
  return Math.max(0, nx * sx + ny * sy + nz * sz);
}

describe('hillshade', () => {
  it('matches the dot product of normal and sun vector for any plane and sun', () => {
    fc.assert(fc.property(fc.double({ min: -3, max: 3, noNaN: true }), fc.double({ min: -3, max: 3, noNaN: true }),
      fc.double({ min: 0, max: 360, noNaN: true }), fc.double({ min: 5, max: 90, noNaN: true }), (gx, gy, az, alt) =>
        Math.abs(shadeOfGradient(gx, gy, az, alt) - lambert(gx, gy, az, alt)) < 1e-12));
  });

  it('known values: flat ground is sin(altitude); a 45° slope facing a 45° sun is fully lit, facing away dark', () => {
    expect(shadeOfGradient(0, 0, 315, 45)).toBeCloseTo(Math.SQRT1_2, 12);
    // downhill toward the north-west: z rises to the south-east, gradient (+east, −north)·(1/√2)
    const g = 1 / Math.SQRT2;
    expect(shadeOfGradient(g, -g, 315, 45)).toBeCloseTo(1, 12);
    expect(shadeOfGradient(-g, g, 315, 45)).toBeCloseTo(0, 12);
  });

  it('on a grid, Horn differences recover a tilted plane exactly (north-up rows run south)', () => {
    const w = 9, h = 7, dx = 5, dy = 5;
    const a = 0.3, b = -0.2; // z = a·east + b·north
    const z = new Float32Array(w * h);
    for (let r = 0; r < h; r++) for (let c = 0; c < w; c++) z[r * w + c] = a * c * dx + b * (h - 1 - r) * dy;
    const s = hillshade(z, w, h, dx, dy, { azimuth: 315, altitude: 45, rowsSouth: true });
    for (let r = 1; r < h - 1; r++) for (let c = 1; c < w - 1; c++) expect(s[r * w + c]).toBeCloseTo(lambert(a, b, 315, 45), 5);
    // rows running north flip the sign of the north gradient
    const zs = new Float32Array(w * h);
    for (let r = 0; r < h; r++) for (let c = 0; c < w; c++) zs[r * w + c] = a * c * dx + b * r * dy;
    const s2 = hillshade(zs, w, h, dx, dy, { rowsSouth: false });
    expect(s2[3 * w + 4]).toBeCloseTo(lambert(a, b, 315, 45), 5);
  });

  it('keeps nodata as NaN and shades its neighbours as flat continuations', () => {
    const z = new Float32Array(9).fill(1);
    z[4] = NaN;
    const s = hillshade(z, 3, 3, 1, 1);
    expect(Number.isNaN(s[4])).toBe(true);
    expect(s[0]).toBeCloseTo(Math.SQRT1_2, 6);
  });

  it('exaggeration brings the 90th-percentile slope near the target and stays within bounds', () => {
    const w = 50, h = 50, z = new Float32Array(w * h);
    for (let r = 0; r < h; r++) for (let c = 0; c < w; c++) z[r * w + c] = 0.01 * c; // slope 0.01 everywhere
    const f = autoZFactor(z, w, h, 1, 1, 20, 100);
    expect(Math.atan(0.01 * f) / RAD).toBeCloseTo(20, 0);
    expect(autoZFactor(z, w, h, 1, 1, 20, 5)).toBe(5);
  });
});
