/**
 * Filled DEMs against scikit-image. Reference: skimage.morphology.reconstruction(seed, dem,
 * method='erosion') with a 3×3 (connectivity 8), cross (4) or six-neighbour (6) footprint and the
 * outlets (grid frame, draining nodata) as seed — fixtures/hydro/fill-reference.json, made by
 * tests/reference/fill_reference.py with the scikit-image version recorded in the file.
 */
import { describe, it, expect } from 'vitest';
import { ponds } from '../../src/hydro/ponds.js';
import { pondsReport } from '../../src/report/ponds.js';
import { fillReference, gridOf } from './helpers.js';

const ref = fillReference();

describe(`filled DEM equals scikit-image ${ref.skimage_version} reconstruction by erosion`, () => {
  for (const c of ref.cases) {
    it(`${c.name} (${c.width}×${c.height}, connectivity ${c.connectivity}, nodata ${c.nodataAs})`, () => {
      const g = gridOf(c.width, c.height, c.values, { f32: c.dtype === 'float32' });
      const r = ponds(g, { connectivity: c.connectivity, nodataOutlet: c.nodataAs === 'outlet' });
      const bad: string[] = [];
      for (let i = 0; i < c.filled.length; i++) {
        const want = c.filled[i], got = r.rasters.filled[i];
        if (want === null ? !Number.isNaN(got) : got !== want) bad.push(`cell ${i}: ${got} ≠ ${want}`);
      }
      expect(bad).toEqual([]);
      // depth = filled − z, and the water it holds: Σ depth × cell area (cells of area 1 here)
      let sum = 0, raised = 0;
      for (let i = 0; i < c.values.length; i++) {
        const z = c.values[i];
        if (z === null) continue;
        const d = r.rasters.depth[i];
        sum += d;
        if (d > 0) raised++;
      }
      expect(raised).toBe(c.raisedCells);
      expect(sum).toBeCloseTo(c.sumDepth, 4);
      // the volumes from the sweep's running sums add up to the same water
      const { report } = pondsReport(g, { connectivity: c.connectivity, nodataOutlet: c.nodataAs === 'outlet' });
      expect(Math.abs(report.totals.volume - c.sumDepth)).toBeLessThanOrEqual(1e-9 * Math.max(1, c.sumDepth) + (c.dtype === 'float32' ? 1e-4 : 0));
      expect(report.euler?.holds).toBe(true);
    });
  }
});
