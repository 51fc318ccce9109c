#!/usr/bin/env node
/**
 * barriers() against survey() on the same energy grid, measured in the same run.
 *   npm run build && node --expose-gc bench/barriers.mjs [--size 1000] [--repeat 3] [--wells 40] [--seed 5]
 *
 * The grid is an invented free-energy-like surface in kJ/mol: a sum of Gaussian wells of random
 * depth and width on a gentle bowl, plus smooth noise of 0.6 kJ/mol amplitude (below kT at 300 K,
 * so persistence simplification at the default 1 kT has thousands of noise minima to remove).
 * Timed: survey(grid, closed boundary) and barriers(grid, kJ/mol, 300 K, default persistence) —
 * which includes its own survey, basins, refinement, paths, thermodynamics — and, separately, the
 * report object (unit conversion, layout); the SVG figures are not timed.
 * The two are run alternately (survey, barriers, survey, …) so both see the same machine load.
 * Target: barriers ≤ 3 × survey. This is a report, not a test: it always exits 0.
 */
import { parseArgs } from 'node:util';
import { timeIt, median, importDist, fmtMs, collect } from './lib/util.mjs';

const { values: opt } = parseArgs({
  options: {
    size: { type: 'string', default: '1000' },
    repeat: { type: 'string', default: '3' },
    wells: { type: 'string', default: '40' },
    seed: { type: 'string', default: '5' },
    json: { type: 'boolean', default: false },
  },
});
const size = Number(opt.size), repeat = Number(opt.repeat), nWells = Number(opt.wells), seed = Number(opt.seed);

const surveyMod = await importDist('morse/survey.js');
const chem = await importDist('chem/barriers.js');
const rep = await importDist('report/barriers.js');
const gridMod = await importDist('surface/grid.js');
const demo = await importDist('demo/generate.js');
if (!surveyMod || !chem || !rep || !gridMod || !demo) {
  console.error('bench/barriers: dist/ is incomplete — run npm run build first');
  process.exit(0);
}
const { survey } = surveyMod, { barriers } = chem, { reportFromResult } = rep, { Grid } = gridMod;

/** The invented energy surface, float64 values in kJ/mol. */
function energySurface(n) {
  const rand = demo.rng(seed);
  const wells = [];
  for (let k = 0; k < nWells; k++) {
    wells.push({ c: n * (0.08 + 0.84 * rand()), r: n * (0.08 + 0.84 * rand()), depth: 5 + 25 * rand(), s: n * (0.03 + 0.06 * rand()) });
  }
  const noise = demo.fractalNoise(n, n, seed + 1, Math.max(8, n / 25), 4);
  const v = new Float64Array(n * n);
  for (let r = 0; r < n; r++) {
    for (let c = 0; c < n; c++) {
      const dx = (c - n / 2) / n, dy = (r - n / 2) / n;
      let e = 40 * (dx * dx + dy * dy) + 0.6 * noise[r * n + c];
      for (const w of wells) {
        const d2 = ((c - w.c) ** 2 + (r - w.r) ** 2) / (2 * w.s * w.s);
        if (d2 < 30) e -= w.depth * Math.exp(-d2);
      }
      v[r * n + c] = e;
    }
  }
  return v;
}

const values = energySurface(size);
const step = 1 / size; // a unit square window
const fresh = () => new Grid({ width: size, height: size, values: values.slice(), transform: [0, step, 0, 1, 0, -step] });
const SURVEY = { connectivity: 8, boundary: 'closed' };
const BARRIERS = { connectivity: 8, boundary: 'closed', units: 'kJ/mol', temperature: 300 };

// warm up on a small grid so compilation is not charged to the timed runs
{
  const n = 128, v = new Float64Array(n * n);
  for (let i = 0; i < v.length; i++) v[i] = Math.sin(i * 0.37) + Math.cos((i % n) * 0.2) * 3;
  const g = new Grid({ width: n, height: n, values: v, transform: [0, 1 / n, 0, 1, 0, -1 / n] });
  survey(g, SURVEY);
  reportFromResult(barriers(g, BARRIERS), undefined, null);
}

// interleaved (survey, barriers, survey, …) so both see the same machine load
const surveyMs = [], barriersMs = [];
let last = null;
for (let k = 0; k < repeat; k++) {
  surveyMs.push(...(await timeIt((g) => survey(g, SURVEY), { repeat: 1, setup: fresh })));
  barriersMs.push(...(await timeIt((g) => (last = barriers(g, BARRIERS)), { repeat: 1, setup: fresh })));
}
collect();
const reportMs = await timeIt(() => reportFromResult(last, undefined, null), { repeat });

const s = median(surveyMs), b = median(barriersMs), r = median(reportMs);
const ratios = surveyMs.map((x, k) => barriersMs[k] / x);
const traced = last.transitionStates.filter((t) => t.path).length;
const out = {
  size, cells: size * size, wells: nWells, seed, repeat,
  node: process.version,
  surveyMs: s, barriersMs: b, reportMs: r,
  ratio: b / s, ratioWithReport: (b + r) / s, pairRatios: ratios,
  bestRatio: Math.min(...barriersMs) / Math.min(...surveyMs),
  minima: last.minima.length, transitionStates: last.transitionStates.length, paths: traced,
  noisePits: last.survey.critical.pits,
  minPersistence: last.minPersistence,
};
if (opt.json) {
  process.stdout.write(JSON.stringify(out) + '\n');
} else {
  console.log(`energy grid ${size} × ${size} (${nWells} wells + noise), ${out.noisePits} pits before simplification`);
  console.log(`kept: ${out.minima} minima, ${out.transitionStates} transition states, ${traced} paths traced; min persistence ${out.minPersistence.value.toFixed(3)} kJ/mol (${out.minPersistence.source})`);
  console.log(`survey              ${fmtMs(s).padStart(8)}   samples ${surveyMs.map((x) => x.toFixed(0)).join(', ')} ms`);
  console.log(`barriers            ${fmtMs(b).padStart(8)}   samples ${barriersMs.map((x) => x.toFixed(0)).join(', ')} ms`);
  console.log(`report object       ${fmtMs(r).padStart(8)}`);
  console.log(`barriers / survey   ${out.ratio.toFixed(2)} (medians; with report ${out.ratioWithReport.toFixed(2)}), ${out.bestRatio.toFixed(2)} (fastest runs); run by run ${ratios.map((x) => x.toFixed(2)).join(', ')}; target ≤ 3`);
}
