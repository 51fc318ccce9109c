#!/usr/bin/env node
/**
 * barriers() with no options on scattered samples of two analytic surfaces, over 20 seeds, against
 * the stationary points SciPy's root finder gives (fixtures/chem/mueller-brown.json,
 * fixtures/chem/wolfe-quapp.json):
 *   npm run build && node bench/barriers-scattered.mjs [--n 5000] [--seeds 20] [--json]
 *
 * For each seed: n uniform random points (mulberry32, the generator of tests/chem/mb.ts) over the
 * reference window; the run must report exactly the reference minima and first-order saddles, each
 * once. Recorded: whether it did, the worst distance of a refined point from its reference in mean
 * sample spacings h = √(area/n), the worst energy error as a fraction of the reported noise floor,
 * the floor, and the time per run. The worst case over all seeds goes to docs/barriers.md.
 * tests/chem/scattered.test.ts runs three of these seeds with the same tolerances (h/4, the floor).
 * This is a report, not a test: it always exits 0.
 */
import { parseArgs } from 'node:util';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { importDist, ROOT_DIR } from './lib/util.mjs';
import { scatteredPoints } from './lib/scattered.mjs';

const { values: opt } = parseArgs({
  options: {
    n: { type: 'string', default: '5000' },
    seeds: { type: 'string', default: '20' },
    json: { type: 'boolean', default: false },
  },
});
const n = Number(opt.n), seeds = Number(opt.seeds);

const chem = await importDist('chem/barriers.js');
const meshMod = await importDist('surface/mesh.js');
if (!chem || !meshMod) {
  console.error('bench/barriers-scattered: dist/ is incomplete — run npm run build first');
  process.exit(0);
}
const { barriers } = chem, { Mesh } = meshMod;

// Müller & Brown, Theor. Chim. Acta 53, 75 (1979)
const A = [-200, -100, -170, 15], a = [-1, -1, -6.5, 0.7], b = [0, 0, 11, 0.6], c = [-10, -10, -6.5, 0.7];
const x0 = [1, 0, -0.5, -1], y0 = [0, 0.5, 1.5, 1];
function muellerBrown(x, y) {
  let e = 0;
  for (let k = 0; k < 4; k++) {
    const dx = x - x0[k], dy = y - y0[k];
    e += A[k] * Math.exp(a[k] * dx * dx + b[k] * dx * dy + c[k] * dy * dy);
  }
  return e;
}
const wolfeQuapp = (x, y) => x ** 4 + y ** 4 - 2 * x * x - 4 * y * y + x * y + 0.3 * x + 0.1 * y;

function samples(f, seed, win) {
  const { x, y, v } = scatteredPoints(f, n, seed, win);
  return new Mesh(x, y, v);
}

const ref = (name) => JSON.parse(readFileSync(join(ROOT_DIR, 'fixtures', 'chem', name), 'utf8'));
const surfaces = [
  { name: 'Müller–Brown', f: muellerBrown, ref: ref('mueller-brown.json') },
  { name: 'Wolfe–Quapp', f: wolfeQuapp, ref: ref('wolfe-quapp.json') },
];

const out = [];
for (const S of surfaces) {
  const want = { minimum: S.ref.stationaryPoints.filter((p) => p.kind === 'minimum'), saddle: S.ref.stationaryPoints.filter((p) => p.kind === 'saddle') };
  const rows = [];
  for (let seed = 1; seed <= seeds; seed++) {
    const mesh = samples(S.f, seed, S.ref.window);
    const t0 = performance.now();
    const r = barriers(mesh, { threads: 1 });
    const ms = performance.now() - t0;
    const h = r.field.spacing, floor = r.noiseFloor.value;
    let exact = r.minima.length === want.minimum.length && r.transitionStates.length === want.saddle.length;
    let posWorst = 0, eWorst = 0;
    for (const [list, pts] of [[r.minima, want.minimum], [r.transitionStates, want.saddle]]) {
      const used = new Set();
      for (const p of pts) {
        let best = null, bd = Infinity;
        for (const s of list) {
          const d = Math.hypot(s.bestX - p.x, s.bestY - p.y);
          if (d < bd) { bd = d; best = s; }
        }
        if (!best || used.has(best.id) || best.refined.status !== 'converged') { exact = false; continue; }
        used.add(best.id);
        posWorst = Math.max(posWorst, bd / h);
        eWorst = Math.max(eWorst, Math.abs(best.bestEnergy - p.energy) / floor);
      }
    }
    rows.push({ seed, exact, minima: r.minima.length, transitionStates: r.transitionStates.length, positionPerSpacing: posWorst, energyPerFloor: eWorst, floor, ms });
  }
  const worst = {
    surface: S.name, n, seeds,
    exact: rows.filter((q) => q.exact).length,
    positionPerSpacing: Math.max(...rows.map((q) => q.positionPerSpacing)),
    energyPerFloor: Math.max(...rows.map((q) => q.energyPerFloor)),
    floorRange: [Math.min(...rows.map((q) => q.floor)), Math.max(...rows.map((q) => q.floor))],
    msMedian: rows.map((q) => q.ms).sort((p, q) => p - q)[rows.length >> 1],
  };
  out.push({ worst, rows });
}

if (opt.json) console.log(JSON.stringify(out, null, 1));
else {
  for (const { worst: w, rows } of out) {
    console.log(`${w.surface}: ${w.n} samples, ${w.seeds} seeds`);
    for (const q of rows) {
      console.log(`  seed ${String(q.seed).padStart(2)}  ${q.exact ? 'exact' : 'WRONG'}  ${q.minima} minima, ${q.transitionStates} saddles  position ≤ ${q.positionPerSpacing.toFixed(4)} h  energy ≤ ${q.energyPerFloor.toFixed(4)} × floor  floor ${q.floor.toPrecision(3)}  ${q.ms.toFixed(0)} ms`);
    }
    console.log(`  worst: exact in ${w.exact}/${w.seeds}; position ${w.positionPerSpacing.toFixed(3)} h; energy ${w.energyPerFloor.toFixed(4)} × floor; floor ${w.floorRange.map((x) => x.toPrecision(3)).join('–')}; median ${w.msMedian.toFixed(0)} ms per run`);
  }
}
