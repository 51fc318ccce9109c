#!/usr/bin/env node
/**
 * sill ponds against scikit-image's reconstruction, in one run, on the bench/ fractal terrain.
 *
 *   npm run build && node --expose-gc bench/compare-fill.mjs [--size 4000] [--repeat 3] [--seed 17] [--no-python]
 *
 * Measures, each in a child process of its own (so peak memory is the job's alone):
 *  - ponds, the library call without file writing: hierarchy, volumes, filled/depth/label
 *    arrays; once without and once with the Euler self-check (the CLI runs it);
 *  - scikit-image: skimage.morphology.reconstruction(seed, dem, method='erosion') with a 3×3
 *    footprint and the grid frame as seed — the filled DEM alone (bench/compare-fill.py,
 *    Debian's /usr/bin/python3; skipped with a message when python3-skimage is missing).
 * The two filled DEMs are compared cell for cell. Wall-clock times are the best of --repeat runs;
 * CPU times are given too, since other work on the machine inflates wall-clock times.
 * A report, not a test: it exits 0 unless the script itself breaks.
 */
import { parseArgs } from 'node:util';
import { spawnSync } from 'node:child_process';
import { writeFileSync, readFileSync, mkdtempSync, rmSync, existsSync, openSync, readSync, closeSync } from 'node:fs';
import { tmpdir, cpus, totalmem, loadavg } from 'node:os';
import { join, dirname } from 'node:path';
import { fileURLToPath } from 'node:url';
import { fractalTerrain } from './lib/terrain.mjs';

const HERE = dirname(fileURLToPath(import.meta.url));
const PY = '/usr/bin/python3';

const { values: opt } = parseArgs({
  options: {
    size: { type: 'string', default: '4000' },
    repeat: { type: 'string', default: '3' },
    seed: { type: 'string', default: '17' },
    'no-python': { type: 'boolean', default: false },
    child: { type: 'string' },
    file: { type: 'string' },
    euler: { type: 'string', default: '0' },
    out: { type: 'string' },
  },
});

const size = Number(opt.size);

if (opt.child === 'ponds') {
  // child: read the terrain, run ponds once, report times and memory
  const { Grid } = await import('../dist/surface/grid.js');
  const { ponds } = await import('../dist/hydro/ponds.js');
  // read straight into the grid's array (no second copy of the input in memory)
  const values = new Float32Array(size * size);
  const fd = openSync(opt.file, 'r');
  readSync(fd, new Uint8Array(values.buffer), 0, values.byteLength, 0);
  closeSync(fd);
  const grid = new Grid({ width: size, height: size, values, transform: [0, 10, 0, size * 10, 0, -10], crs: { epsg: 32633, geographic: false, linearUnit: 'metre' } });
  global.gc?.();
  const rssBefore = process.memoryUsage().rss;
  const stages = [];
  let last = null, lastCpu = null, lastT = 0;
  const cpu0 = process.cpuUsage();
  const t0 = performance.now();
  const stage = (name) => {
    const t = performance.now(), c = process.cpuUsage();
    if (last) stages.push({ stage: last, ms: t - lastT, cpuMs: (c.user + c.system - lastCpu.user - lastCpu.system) / 1000, rssAfter: process.memoryUsage().rss });
    last = name; lastT = t; lastCpu = c;
  };
  const r = ponds(grid, { euler: opt.euler === '1', onStage: stage });
  stage(null);
  const ms = performance.now() - t0;
  const cpu = process.cpuUsage(cpu0);
  if (opt.out) writeFileSync(opt.out, Buffer.from(r.rasters.filled.buffer, r.rasters.filled.byteOffset, r.rasters.filled.byteLength));
  process.stdout.write(JSON.stringify({
    ms, cpuMs: (cpu.user + cpu.system) / 1000, stages,
    maxRss: process.resourceUsage().maxRSS * 1024, rssBefore,
    depressions: r.hierarchy.count, pits: r.sweepPits, euler: r.euler?.holds ?? null,
  }) + '\n');
  process.exit(0);
}

const fmt = (ms) => (ms >= 1000 ? `${(ms / 1000).toFixed(2)} s` : `${ms.toFixed(0)} ms`);
const cells = size * size;
const dir = mkdtempSync(join(tmpdir(), 'sill-compare-fill-'));
try {
  console.log(`terrain   ${size} × ${size} fractal (bench/lib/terrain.mjs, seed ${opt.seed}), float32; ${cpus().length} cores, ${(totalmem() / 2 ** 30).toFixed(0)} GiB, load average ${loadavg()[0].toFixed(1)}`);
  const z = fractalTerrain(size, { seed: Number(opt.seed) });
  const file = join(dir, 'terrain.f32');
  writeFileSync(file, Buffer.from(z.buffer, z.byteOffset, z.byteLength));

  const runChild = (euler, out) => {
    const args = ['--expose-gc', '--max-old-space-size=8192', fileURLToPath(import.meta.url), '--child', 'ponds', '--file', file, '--size', String(size), '--euler', euler ? '1' : '0'];
    if (out) args.push('--out', out);
    const p = spawnSync(process.execPath, args, { encoding: 'utf8', maxBuffer: 1 << 26 });
    if (p.status !== 0) throw new Error(`ponds child failed: ${p.stderr}`);
    return JSON.parse(p.stdout.trim().split('\n').pop());
  };
  const repeat = Math.max(1, Number(opt.repeat));
  const best = (euler) => {
    let b = null;
    for (let k = 0; k < repeat; k++) {
      const r = runChild(euler, k === 0 && !euler ? join(dir, 'sill-filled.f32') : undefined);
      if (!b || r.ms < b.ms) b = { ...r, cpuBest: Math.min(b?.cpuBest ?? Infinity, r.cpuMs) };
      else b.cpuBest = Math.min(b.cpuBest, r.cpuMs);
    }
    return b;
  };
  const core = best(false);
  const full = best(true);
  console.log(`ponds     ${fmt(core.ms)} wall, ${fmt(core.cpuBest)} CPU (best of ${repeat}): ${core.depressions} depressions`);
  for (const s of core.stages) console.log(`            ${s.stage.padEnd(32)} ${fmt(s.ms).padStart(8)} wall ${fmt(s.cpuMs).padStart(8)} CPU   RSS after ${(s.rssAfter / cells).toFixed(1)} B/cell`);
  console.log(`          + Euler self-check: ${fmt(full.ms)} wall, ${fmt(full.cpuBest)} CPU (Euler relation ${full.euler ? 'holds' : 'FAILS'})`);
  const perCell = (b) => (b / cells).toFixed(1);
  console.log(`memory    peak RSS ${(core.maxRss / 2 ** 20).toFixed(0)} MiB = ${perCell(core.maxRss)} B/cell (input and Node included); ` +
    `${perCell(core.maxRss - core.rssBefore)} B/cell above the loaded input; with the Euler check ${perCell(full.maxRss)} B/cell`);

  let sk = null;
  if (opt['no-python']) {
    console.log('skimage   skipped (--no-python)');
  } else if (!existsSync(PY) || spawnSync(PY, ['-c', 'import skimage'], { stdio: 'ignore' }).status !== 0) {
    console.log(`skimage   skipped: ${PY} with scikit-image is not installed (Debian: apt-get install python3-skimage)`);
  } else {
    const p = spawnSync(PY, [join(HERE, 'compare-fill.py'), file, String(size), join(dir, 'skimage-filled.f32'), String(Math.min(repeat, 2))], { encoding: 'utf8' });
    if (p.status !== 0) throw new Error(`compare-fill.py failed: ${p.stderr}`);
    sk = JSON.parse(p.stdout.trim().split('\n').pop());
    console.log(`skimage   ${sk.skimage} reconstruction (erosion, 3×3): ${fmt(sk.ms)} wall, ${fmt(sk.cpuMs)} CPU (best of ${sk.repeat}); peak RSS ${(sk.maxRss / 2 ** 20).toFixed(0)} MiB`);
    const a = new Float32Array(readFileSync(join(dir, 'sill-filled.f32')).buffer.slice(0));
    const b = new Float32Array(readFileSync(join(dir, 'skimage-filled.f32')).buffer.slice(0));
    let bad = 0;
    for (let i = 0; i < cells; i++) if (a[i] !== b[i]) bad++;
    console.log(`agreement filled DEMs ${bad === 0 ? 'identical' : `differ in ${bad} cells`} (${cells} cells)`);
    const ratio = sk.ms / core.ms, ratioFull = sk.ms / full.ms;
    console.log(`ratio     skimage / ponds = ${ratio.toFixed(2)}× (target ≥ 4×: ${ratio >= 4 ? 'met' : 'NOT met'}); with the Euler check ${ratioFull.toFixed(2)}×; CPU-time ratio ${(sk.cpuMs / core.cpuBest).toFixed(2)}×`);
  }
  console.log(`memory    target ≤ 32 B/cell: ${core.maxRss / cells <= 32 ? 'met' : 'NOT met'} (${perCell(core.maxRss)} B/cell peak RSS); load average now ${loadavg()[0].toFixed(1)}`);
  console.log(JSON.stringify({ size, ponds: core, pondsWithEuler: full, skimage: sk }));
} finally {
  rmSync(dir, { recursive: true, force: true });
}
