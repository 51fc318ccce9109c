#!/usr/bin/env node
/**
 * barriers3() against survey3() on the same 3-D energy grid, measured in the same run.
 *   npm run build && node --expose-gc bench/barriers3.mjs [--size 100] [--repeat 3] [--wells 12] [--seed 5] [--json]
 *
 * The grid is an invented free-energy-like surface over three variables in kJ/mol: Gaussian wells
 * of random depth (5–30) and width on a gentle bowl, plus smooth ripples of 0.6 kJ/mol amplitude
 * (below kT at 300 K, so simplification at the default 1 kT has noise minima to remove).
 * Timed: survey3(grid, Freudenthal, closed) and barriers3(grid, kJ/mol, 300 K, default
 * persistence) — which includes its own survey3, basins, tricubic refinement, 3-D paths and basin
 * free energies — and, separately, the report object. Run alternately so both see the same load.
 * This is a report, not a test: it always exits 0.
 */
import { parseArgs } from 'node:util';
import { timeIt, median, importDist, fmtMs, collect } from './lib/util.mjs';

const { values: opt } = parseArgs({
  options: {
    size: { type: 'string', default: '100' },
    repeat: { type: 'string', default: '3' },
    wells: { type: 'string', default: '12' },
    seed: { type: 'string', default: '5' },
    json: { type: 'boolean', default: false },
  },
});
const n = Number(opt.size), repeat = Number(opt.repeat), nWells = Number(opt.wells), seed = Number(opt.seed);

const surveyMod = await importDist('morse/survey3.js');
const chem = await importDist('chem/barriers3.js');
const rep = await importDist('report/barriers3.js');
const gridMod = await importDist('surface/grid3.js');
const demo = await importDist('demo/generate.js');
if (!surveyMod || !chem || !rep || !gridMod || !demo) {
  console.error('bench/barriers3: dist/ is incomplete — run npm run build first');
  process.exit(0);
}
const { survey3 } = surveyMod, { barriers3 } = chem, { reportFromResult3 } = rep, { Grid3 } = gridMod;

function energySurface() {
  const rand = demo.rng(seed);
  const wells = [];
  for (let k = 0; k < nWells; k++) {
    wells.push({ c: [0, 1, 2].map(() => n * (0.1 + 0.8 * rand())), depth: 5 + 25 * rand(), s: n * (0.04 + 0.06 * rand()) });
  }
  const waves = Array.from({ length: 6 }, () => ({ k: [0, 1, 2].map(() => (rand() - 0.5) * 1.2), p: 2 * Math.PI * rand() }));
  const v = new Float64Array(n * n * n);
  for (let z = 0; z < n; z++) for (let y = 0; y < n; y++) for (let x = 0; x < n; x++) {
    const dx = (x - n / 2) / n, dy = (y - n / 2) / n, dz = (z - n / 2) / n;
    let e = 40 * (dx * dx + dy * dy + dz * dz);
    for (const w of waves) e += (0.6 / 6) * Math.sin(w.k[0] * x + w.k[1] * y + w.k[2] * z + w.p) * 2;
    for (const w of wells) {
      const d2 = ((x - w.c[0]) ** 2 + (y - w.c[1]) ** 2 + (z - w.c[2]) ** 2) / (2 * w.s * w.s);
      if (d2 < 30) e -= w.depth * Math.exp(-d2);
    }
    v[x + n * (y + n * z)] = e;
  }
  return v;
}

const values = energySurface();
const h = 1 / n;
const fresh = () => new Grid3({ nx: n, ny: n, nz: n, values: values.slice(), spacing: [h, h, h] });
const SURVEY = { connectivity: 14, boundary: 'closed' };
const BARRIERS = { connectivity: 14, boundary: 'closed', units: 'kJ/mol', temperature: 300 };

// warm-up on a small grid
{
  const m = 16, v = new Float64Array(m * m * m);
  for (let i = 0; i < v.length; i++) v[i] = Math.sin(i * 0.37) + Math.cos((i % m) * 0.2) * 3;
  const g = new Grid3({ nx: m, ny: m, nz: m, values: v });
  survey3(g, SURVEY);
  reportFromResult3(barriers3(g, BARRIERS), undefined, null);
}

const surveyMs = [], barriersMs = [];
let last = null;
for (let k = 0; k < repeat; k++) {
  surveyMs.push(...(await timeIt((g) => survey3(g, SURVEY), { repeat: 1, setup: fresh })));
  barriersMs.push(...(await timeIt((g) => (last = barriers3(g, BARRIERS)), { repeat: 1, setup: fresh })));
}
collect();
const reportMs = await timeIt(() => reportFromResult3(last, undefined, null), { repeat });
const s = median(surveyMs), b = median(barriersMs), r = median(reportMs);
const ratios = surveyMs.map((x, k) => barriersMs[k] / x);
const out = {
  size: n, points: n ** 3, wells: nWells, seed, repeat, node: process.version,
  surveyMs: s, barriersMs: b, reportMs: r, ratio: b / s, pairRatios: ratios,
  minima: last.minima.length, transitionStates: last.transitionStates.length,
  paths: last.transitionStates.filter((t) => t.path).length,
  pathsConverged: last.transitionStates.filter((t) => t.path?.status === 'converged').length,
  pitsBefore: last.survey.critical.minima,
};
if (opt.json) {
  process.stdout.write(JSON.stringify(out) + '\n');
} else {
  console.log(`3-D energy grid ${n}³ (${nWells} wells + ripples), ${out.pitsBefore} minima before simplification`);
  console.log(`kept: ${out.minima} minima, ${out.transitionStates} transition states, ${out.paths} paths (${out.pathsConverged} converged)`);
  console.log(`survey3             ${fmtMs(s).padStart(8)}   samples ${surveyMs.map((x) => x.toFixed(0)).join(', ')} ms`);
  console.log(`barriers3           ${fmtMs(b).padStart(8)}   samples ${barriersMs.map((x) => x.toFixed(0)).join(', ')} ms`);
  console.log(`report object       ${fmtMs(r).padStart(8)}`);
  console.log(`barriers3 / survey3 ${out.ratio.toFixed(2)} (medians); run by run ${ratios.map((x) => x.toFixed(2)).join(', ')}`);
}
