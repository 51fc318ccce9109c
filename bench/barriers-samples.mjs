#!/usr/bin/env node
/**
 * Free energies from samples (barriers --samples), two parts:
 *   npm run build && node bench/barriers-samples.mjs [--seeds 20] [--frames 1000000] [--bins 30] [--resamples 200] [--stream 10000000] [--json]
 *
 * 1. Coverage of the bootstrap intervals. For each seed, frames of a Metropolis chain
 *    (bench/lib/metropolis.mjs) on the Müller–Brown potential (Müller & Brown, Theor. Chim. Acta
 *    53, 75 (1979)) at V/kT = V_MB/20 over x ∈ [−1.5, 1.2], y ∈ [−0.5, 2.0] (every 5th step of
 *    5 × frames steps), a 30 × 30 histogram, `--cap 7`, the default threshold of 1 kT and a block
 *    bootstrap (10 blocks). At this temperature two basins are left, joined by the saddle near
 *    (−0.822, 0.624); the exact barriers are the energy differences of SciPy's stationary points
 *    (fixtures/chem/mueller-brown.json) divided by 20. Recorded: whether the exact forward and
 *    backward barriers lie inside their 95 % percentile intervals, the estimates, standard errors
 *    and the share of resamples in which the barrier was found. Also the same with frames from the
 *    biased potential V/2 (bias −V/2) and log-weights −V/2kT (the reweighting check).
 * 2. Streaming: `--stream N` frames of two float64 variables in a .npy file; the time of
 *    sampleDensity (two passes, 100 × 100 bins) against the time to read the file's bytes twice in
 *    the same run (the ratio is the cost of parsing and binning), and the peak resident memory.
 * This is a report, not a test: it always exits 0.
 */
import { parseArgs } from 'node:util';
import { readFileSync, writeFileSync, openSync, readSync, closeSync, mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { importDist, ROOT_DIR } from './lib/util.mjs';
import { metropolis } from './lib/metropolis.mjs';

const { values: opt } = parseArgs({
  options: {
    seeds: { type: 'string', default: '20' },
    frames: { type: 'string', default: '1000000' },
    resamples: { type: 'string', default: '200' },
    bins: { type: 'string', default: '30' },
    stream: { type: 'string', default: '10000000' },
    json: { type: 'boolean', default: false },
  },
});
const seeds = Number(opt.seeds), frames = Number(opt.frames), resamples = Number(opt.resamples), stream = Number(opt.stream), nbins = Number(opt.bins);

const samples = await importDist('chem/samples.js');
const boot = await importDist('chem/bootstrap.js');
const chem = await importDist('chem/barriers.js');
if (!samples || !boot || !chem) {
  console.error('bench/barriers-samples: dist/ is incomplete — run npm run build first');
  process.exit(0);
}
const { sampleDensity, framesInMemory, framesFromFile, freeEnergyGrid } = samples;
const { bootstrapBarriers } = boot;
const { barriers } = chem;

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
const S = 20;
const box = { x: [-1.5, 1.2], y: [-0.5, 2.0] };
const ref = JSON.parse(readFileSync(join(ROOT_DIR, 'fixtures', 'chem', 'mueller-brown.json'), 'utf8')).stationaryPoints;
const near = (x, y) => ref.reduce((p, q) => (Math.hypot(q.x - x, q.y - y) < Math.hypot(p.x - x, p.y - y) ? q : p));
const MA = near(-0.558, 1.442), MB = near(0.623, 0.028), TS = near(-0.822, 0.624);
const analysis = { units: 'kT', cap: 7 };

async function one(seed, weighted) {
  const t0 = performance.now();
  const energy = (x, y) => (weighted ? 0.5 : 1) * muellerBrown(x, y) / S;
  const ch = metropolis({ energy, box, start: [-0.55, 1.44], frames, thin: 5, step: 0.05, seed, extra: weighted ? (x, y) => -0.5 * muellerBrown(x, y) / S : undefined });
  const d = await sampleDensity(framesInMemory(ch.data, ch.fields), { bins: [nbins, nbins], range: [box.x, box.y], logWeights: weighted ? 3 : undefined });
  const r = barriers(freeEnergyGrid(d, 1), { ...analysis, maxPaths: 0 });
  const bs = bootstrapBarriers(d, 1, r, analysis, { resamples, seed });
  const k = r.barriers.findIndex((row) => {
    const t = r.transitionStates.find((q) => q.id === row.via);
    return Math.hypot(t.bestX - TS.x, t.bestY - TS.y) < 2 * 2.7 / nbins;
  });
  const out = { seed, weighted, seconds: (performance.now() - t0) / 1000, minima: r.minima.length, transitionStates: r.transitionStates.length, found: k >= 0 };
  if (k < 0) return out;
  const row = r.barriers[k], u = bs.barriers[k];
  const from = r.minima.find((m) => m.id === row.from);
  const fromA = Math.hypot(from.bestX - MA.x, from.bestY - MA.y) < 2 * 2.7 / nbins;
  const exact = fromA ? [(TS.energy - MA.energy) / S, (TS.energy - MB.energy) / S] : [(TS.energy - MB.energy) / S, (TS.energy - MA.energy) / S];
  const sides = [['forward', row.forward, u.forward, exact[0]], ['backward', row.backward, u.backward, exact[1]]].map(([name, est, s, want]) => ({
    name, estimate: est, exact: want, se: s?.se ?? null, low: s?.low ?? null, high: s?.high ?? null, inside: s !== null && want >= s.low && want <= s.high,
  }));
  return { ...out, foundIn: u.found / resamples, sides };
}

const results = [];
for (const weighted of [false, true]) {
  for (let seed = 1; seed <= seeds; seed++) {
    const r = await one(seed, weighted);
    results.push(r);
    if (!opt.json) {
      console.log(`${weighted ? 'reweighted' : 'unbiased  '} seed ${String(seed).padStart(2)}: ${r.found ? r.sides.map((s) => `${s.name} ${s.estimate.toFixed(3)} ± ${s.se.toFixed(3)} [${s.low.toFixed(3)}, ${s.high.toFixed(3)}] exact ${s.exact.toFixed(3)} ${s.inside ? 'inside' : 'OUTSIDE'}`).join('; ') + `; found in ${(100 * r.foundIn).toFixed(0)} %` : 'saddle not found'}  (${r.seconds.toFixed(1)} s)`);
    }
  }
}
const summary = (weighted) => {
  const rs = results.filter((r) => r.weighted === weighted);
  const sides = rs.flatMap((r) => r.sides ?? []);
  return {
    weighted, seeds: rs.length, saddleFound: rs.filter((r) => r.found).length,
    inside: sides.filter((s) => s.inside).length, intervals: sides.length,
    forwardInside: sides.filter((s) => s.name === 'forward' && s.inside).length, backwardInside: sides.filter((s) => s.name === 'backward' && s.inside).length,
    meanSe: sides.reduce((t, s) => t + (s.se ?? 0), 0) / Math.max(1, sides.length),
    secondsPerSeed: rs.reduce((t, r) => t + r.seconds, 0) / rs.length,
  };
};
const coverage = [summary(false), summary(true)];

// part 2: streaming a large .npy
let streaming = null;
if (stream > 0) {
  const dir = mkdtempSync(join(tmpdir(), 'sill-bench-samples-'));
  try {
    const path = join(dir, 'frames.npy');
    const header = `{'descr': '<f8', 'fortran_order': False, 'shape': (${stream}, 2), }`.padEnd(117) + '\n';
    const fd = openSync(path, 'w');
    writeFileSync(fd, Buffer.concat([Buffer.from([0x93]), Buffer.from('NUMPY'), Buffer.from([1, 0, header.length & 255, header.length >> 8]), Buffer.from(header)]));
    const chunk = 1 << 20;
    let s = 12345;
    const rnd = () => ((s = (Math.imul(s, 1103515245) + 12345) >>> 0) / 4294967296);
    for (let start = 0; start < stream; start += chunk) {
      const n = Math.min(chunk, stream - start);
      const buf = new Float64Array(2 * n);
      for (let i = 0; i < 2 * n; i++) buf[i] = rnd() + rnd() + rnd();
      writeFileSync(fd, Buffer.from(buf.buffer));
    }
    closeSync(fd);
    // reference: read the bytes twice (the two passes), nothing else
    const t0 = performance.now();
    for (let pass = 0; pass < 2; pass++) {
      const f = openSync(path, 'r');
      const b = Buffer.alloc(8 << 20);
      while (readSync(f, b, 0, b.length, null) > 0);
      closeSync(f);
    }
    const read = (performance.now() - t0) / 1000;
    const t1 = performance.now();
    const d = await sampleDensity(framesFromFile(path), { bins: [100, 100] });
    const bin = (performance.now() - t1) / 1000;
    streaming = { frames: d.frames, readSeconds: read, sampleDensitySeconds: bin, ratio: bin / read, peakRssMiB: process.resourceUsage().maxRSS / 1024 };
    if (!opt.json) console.log(`streaming: ${stream} frames (.npy, 2 × float64): read twice ${read.toFixed(2)} s, sampleDensity ${bin.toFixed(2)} s (× ${(bin / read).toFixed(1)}), peak RSS ${streaming.peakRssMiB.toFixed(0)} MiB`);
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}

if (opt.json) console.log(JSON.stringify({ frames, bins: nbins, resamples, coverage, streaming, results }, null, 1));
else for (const c of coverage) console.log(`${c.weighted ? 'reweighted' : 'unbiased'}: saddle found in ${c.saddleFound}/${c.seeds} seeds; exact barrier inside the 95 % interval in ${c.inside}/${c.intervals} (forward ${c.forwardInside}, backward ${c.backwardInside}); mean se ${c.meanSe.toFixed(3)} kT; ${c.secondsPerSeed.toFixed(1)} s per seed`);
