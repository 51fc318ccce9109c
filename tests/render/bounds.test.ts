/**
 * The report page of a rough surface stays bounded: as the feature count grows a hundredfold on a
 * grid of fixed size, the page's markers, outlines, contour vertices, table rows, tooltips and
 * bytes stay under the caps the page states (docs/report.md, "Bounded size"). The surfaces are a
 * smooth bowl with white noise of growing amplitude added (invented for the test).
 */
import { describe, it, expect } from 'vitest';
import { Grid } from '../../src/surface/grid.js';
import { surveyReport } from '../../src/report/survey.js';
import { pondsReport } from '../../src/report/ponds.js';
import { runoffReport } from '../../src/report/runoff.js';
import { barriersReport } from '../../src/report/barriers.js';
import { buildSurveyReport, LIMITS } from '../../src/render/html/survey.js';
import { buildPondsReport, PONDS_LIMITS } from '../../src/render/html/ponds.js';
import { buildRunoffHtml, RUNOFF_LIMITS } from '../../src/render/html/runoff.js';
import { buildBarriersReport } from '../../src/render/html/barriers.js';
import { renderHtml } from '../../src/render/html/page.js';
import type { BuiltReport } from '../../src/render/html/model.js';

const N = 150;
/** Most contour vertices drawn on a map (src/render/figures/contours.ts). */
const CONTOUR_POINTS = 400_000;
/** The page's stated size bound: 16 MB plus 32 bytes per display cell (raster layers and read-out data). */
const pageCap = (displayCells: number) => 16 * 2 ** 20 + 32 * displayCells;

function bowl(amplitude: number, seed: number): Grid {
  let s = seed >>> 0 || 1;
  const rnd = () => { s ^= s << 13; s >>>= 0; s ^= s >>> 17; s ^= s << 5; s >>>= 0; return s / 2 ** 32; };
  const v = new Float32Array(N * N);
  for (let r = 0; r < N; r++) for (let c = 0; c < N; c++) {
    v[r * N + c] = 10 + ((c - N / 2) ** 2 + (r - N / 3) ** 2) / (N * 4) + Math.sin(c / 9) * Math.cos(r / 13) + amplitude * rnd();
  }
  return new Grid({ width: N, height: N, values: v, transform: [1000, 2, 0, 5000, 0, -2] });
}

const count = (s: string, re: RegExp) => (s.match(re) ?? []).length;

/** Element counts of a built page. */
function measure(b: BuiltReport) {
  const map = b.svgs.map;
  let contourPoints = 0;
  for (const m of map.matchAll(/<path class="ct[^"]*"[^>]* d="([^"]*)"/g)) contourPoints += count(m[1], /[ML]/g);
  const html = renderHtml(b.doc);
  return {
    markers: count(map, /<g class="mk /g),
    outlines: count(map, /<path class="ol"/g),
    contourPoints,
    treeMarkers: count(b.svgs.tree ?? '', /<g class="mk /g),
    diagramMarkers: count(b.svgs.persistence ?? '', /<g class="mk /g),
    rows: Math.max(0, ...b.doc.tables.map((t) => t.rows.length)),
    tips: Object.keys(b.doc.tips).length,
    bytes: Buffer.byteLength(html),
    displayCells: b.doc.map.frame.dw * b.doc.map.frame.dh,
  };
}

const AMPLITUDES = [0, 0.3, 6];
const ctx = { commandLine: 'sill test', files: [], generated: '2026-01-01T00:00:00Z' };

describe('report pages of rough surfaces have bounded size', () => {
  it('survey: markers, tree, diagram, rows, tooltips and bytes under their caps while the critical points grow', () => {
    const feats: number[] = [];
    for (const a of AMPLITUDES) {
      const g = bowl(a, 3);
      const { result, report } = surveyReport(g, { boundary: 'open' }, 'bowl');
      const m = measure(buildSurveyReport(g, result, report, ctx));
      feats.push(report.criticalPoints.length);
      expect(m.markers).toBeLessThanOrEqual(LIMITS.markers);
      expect(m.treeMarkers).toBeLessThanOrEqual(2 * LIMITS.treeLeaves);
      expect(m.diagramMarkers).toBeLessThanOrEqual(LIMITS.diagramPoints + 1);
      expect(m.rows).toBeLessThanOrEqual(LIMITS.tableRows);
      expect(m.tips).toBeLessThanOrEqual(LIMITS.tableRows + LIMITS.diagramPoints + 2 * LIMITS.treeLeaves + 1);
      expect(m.contourPoints).toBeLessThanOrEqual(CONTOUR_POINTS);
      expect(m.bytes).toBeLessThanOrEqual(pageCap(m.displayCells));
    }
    // the roughest surface has far more features than any cap: the caps were exercised
    expect(feats[2]).toBeGreaterThan(100 * Math.max(1, feats[0]));
    expect(feats[2]).toBeGreaterThan(LIMITS.tableRows);
  });

  it('ponds and runoff: markers, outlines, tree, rows, tooltips and bytes under their caps while the depressions grow', () => {
    const deps: number[] = [];
    for (const a of AMPLITUDES) {
      const g = bowl(a, 5);
      const p = pondsReport(g, {}, 'bowl');
      const m = measure(buildPondsReport(p.result, p.report, ctx));
      deps.push(p.report.depressions.length);
      expect(m.markers).toBeLessThanOrEqual(PONDS_LIMITS.markers);
      expect(m.outlines).toBeLessThanOrEqual(PONDS_LIMITS.outlines);
      expect(m.treeMarkers).toBeLessThanOrEqual(4 * PONDS_LIMITS.treeLeaves);
      expect(m.diagramMarkers).toBeLessThanOrEqual(2500);
      expect(m.rows).toBeLessThanOrEqual(PONDS_LIMITS.tableRows);
      expect(m.tips).toBeLessThanOrEqual(PONDS_LIMITS.tableRows);
      expect(m.contourPoints).toBeLessThanOrEqual(CONTOUR_POINTS);
      expect(m.bytes).toBeLessThanOrEqual(pageCap(m.displayCells));

      const r = runoffReport(g, { depth: 0.05 }, 'bowl');
      const q = measure(buildRunoffHtml(r.result, r.report, ctx));
      expect(q.markers).toBeLessThanOrEqual(2 * RUNOFF_LIMITS.markedDepressions);
      expect(q.outlines).toBeLessThanOrEqual(RUNOFF_LIMITS.outlines);
      expect(q.treeMarkers).toBeLessThanOrEqual(4 * RUNOFF_LIMITS.treeLeaves);
      expect(q.rows).toBeLessThanOrEqual(RUNOFF_LIMITS.tableRows);
      expect(q.contourPoints).toBeLessThanOrEqual(CONTOUR_POINTS);
      expect(q.bytes).toBeLessThanOrEqual(pageCap(q.displayCells));
    }
    expect(deps[2]).toBeGreaterThan(100 * Math.max(1, deps[0]));
    expect(deps[2]).toBeGreaterThan(2 * PONDS_LIMITS.markers);
  });

  it('barriers: markers, tree, rows and bytes under their caps while the minima grow', () => {
    const mins: number[] = [];
    for (const a of AMPLITUDES) {
      const g = bowl(a, 7);
      const { result, report } = barriersReport(g, { minPersistence: 0, maxPaths: 20 }, 'bowl');
      const m = measure(buildBarriersReport(result, report, ctx));
      mins.push(report.minima.length);
      expect(m.markers).toBeLessThanOrEqual(LIMITS.markers);
      expect(m.treeMarkers).toBeLessThanOrEqual(2 * LIMITS.treeLeaves);
      expect(m.rows).toBeLessThanOrEqual(LIMITS.tableRows);
      expect(m.contourPoints).toBeLessThanOrEqual(CONTOUR_POINTS);
      expect(m.bytes).toBeLessThanOrEqual(pageCap(m.displayCells));
    }
    expect(mins[2]).toBeGreaterThan(LIMITS.markers);
  });
});
