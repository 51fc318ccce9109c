#!/usr/bin/env node
/**
 * sill runoff against sill ponds on the same DEM, in one run: the bench/ fractal terrain
 * (bench/lib/terrain.mjs), a uniform runoff depth.
 *
 *   npm run build && node --expose-gc bench/runoff.mjs [--size 4000] [--repeat 3] [--seed 17] [--depth 40mm] [--no-cli]
 *
 * Each measurement runs in a child process of its own (so its peak memory is its alone), ponds and
 * runoff alternating so both see the same load from other work on the machine:
 *  - library: `ponds(grid)` and `runoff(grid, { depth })` on a Grid read straight from a file,
 *    both with the Euler self-check (the command line runs it) — stages and peak RSS;
 *  - command: `sill ponds T.tif -o DIR --quiet` and `sill runoff T.tif --depth D -o DIR --quiet`
 *    on the same terrain written as a GeoTIFF — reading, analysis, report object, every file.
 * Wall-clock and CPU times; best of --repeat runs and the median of the run-by-run ratios.
 * Target (issue 4): runoff ≤ 2 × ponds. A report, not a test: it exits 0 unless the script breaks.
 */
import { parseArgs } from 'node:util';
import { spawnSync } from 'node:child_process';
import { writeFileSync, readFileSync, mkdtempSync, rmSync, openSync, readSync, closeSync, mkdirSync } from 'node:fs';
import { tmpdir, cpus, totalmem, loadavg } from 'node:os';
import { join, dirname } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';
import { fractalTerrain } from './lib/terrain.mjs';

const HERE = dirname(fileURLToPath(import.meta.url));
const DIST = join(HERE, '..', 'dist');

const { values: opt } = parseArgs({
  options: {
    size: { type: 'string', default: '4000' },
    repeat: { type: 'string', default: '3' },
    seed: { type: 'string', default: '17' },
    depth: { type: 'string', default: '40mm' },
    'no-cli': { type: 'boolean', default: false },
    child: { type: 'string' },
    which: { type: 'string' },
    file: { type: 'string' },
    result: { type: 'string' },
  },
  allowPositionals: true,
});
const size = Number(opt.size);

if (opt.child === 'lib') {
  const { Grid } = await import(pathToFileURL(join(DIST, 'surface/grid.js')).href);
  const { ponds } = await import(pathToFileURL(join(DIST, 'hydro/ponds.js')).href);
  const { runoff } = await import(pathToFileURL(join(DIST, 'hydro/runoff.js')).href);
  const { parseDepth } = await import(pathToFileURL(join(DIST, 'hydro/runoff-input.js')).href);
  const values = new Float32Array(size * size);
  const fd = openSync(opt.file, 'r');
  readSync(fd, new Uint8Array(values.buffer), 0, values.byteLength, 0);
  closeSync(fd);
  const grid = new Grid({ width: size, height: size, values, transform: [0, 10, 0, size * 10, 0, -10], crs: { epsg: 32633, geographic: false, linearUnit: 'metre' } });
  global.gc?.();
  const stages = [];
  let last = null, lastT = 0, lastCpu = null;
  const stage = (name) => {
    const t = performance.now(), c = process.cpuUsage();
    if (last) stages.push({ stage: last, ms: t - lastT, cpuMs: (c.user + c.system - lastCpu.user - lastCpu.system) / 1000 });
    last = name; lastT = t; lastCpu = c;
  };
  const cpu0 = process.cpuUsage();
  const t0 = performance.now();
  const r = opt.which === 'ponds' ? ponds(grid, { onStage: stage }) : runoff(grid, { depth: parseDepth(opt.depth).metres, onStage: stage });
  stage(null);
  const ms = performance.now() - t0;
  const cpu = process.cpuUsage(cpu0);
  process.stdout.write(JSON.stringify({
    ms, cpuMs: (cpu.user + cpu.system) / 1000, stages, maxRss: process.resourceUsage().maxRSS * 1024,
    depressions: r.hierarchy.count, euler: r.euler?.holds ?? null, water: r.water ?? null, ponds: r.bodies?.count ?? null,
  }) + '\n');
  process.exit(0);
}

if (opt.child === 'cli') {
  // run the command line in this process and report its CPU time and peak memory when it exits
  const args = process.argv.slice(process.argv.indexOf('--') + 1);
  const cpu0 = process.cpuUsage();
  const t0 = performance.now();
  process.on('exit', (code) => {
    const cpu = process.cpuUsage(cpu0);
    writeFileSync(opt.result, JSON.stringify({ code, ms: performance.now() - t0, cpuMs: (cpu.user + cpu.system) / 1000, maxRss: process.resourceUsage().maxRSS * 1024 }));
  });
  process.argv = [process.argv[0], join(DIST, 'cli/cli.js'), ...args];
  await import(pathToFileURL(join(DIST, 'cli/cli.js')).href);
} else {
  const fmt = (ms) => (ms >= 1000 ? `${(ms / 1000).toFixed(2)} s` : `${ms.toFixed(0)} ms`);
  const median = (xs) => { const s = [...xs].sort((a, b) => a - b); const m = s.length >> 1; return s.length % 2 ? s[m] : (s[m - 1] + s[m]) / 2; };
  const cells = size * size;
  const dir = mkdtempSync(join(tmpdir(), 'sill-bench-runoff-'));
  const repeat = Math.max(1, Number(opt.repeat));
  const out = { size, seed: Number(opt.seed), depth: opt.depth, repeat, cores: cpus().length, loadStart: loadavg()[0] };
  try {
    console.log(`terrain   ${size} × ${size} fractal (bench/lib/terrain.mjs, seed ${opt.seed}), float32, 10 m cells; runoff ${opt.depth}; ` +
      `${cpus().length} cores, ${(totalmem() / 2 ** 30).toFixed(0)} GiB, load average ${loadavg()[0].toFixed(1)}`);
    const z = fractalTerrain(size, { seed: Number(opt.seed) });
    const raw = join(dir, 'terrain.f32');
    writeFileSync(raw, Buffer.from(z.buffer, z.byteOffset, z.byteLength));

    const self = fileURLToPath(import.meta.url);
    const lib = (which) => {
      const p = spawnSync(process.execPath, ['--expose-gc', '--max-old-space-size=8192', self, '--child', 'lib', '--which', which, '--file', raw, '--size', String(size), '--depth', opt.depth], { encoding: 'utf8', maxBuffer: 1 << 26 });
      if (p.status !== 0) throw new Error(`${which} child failed: ${p.stderr}`);
      return JSON.parse(p.stdout.trim().split('\n').pop());
    };
    const runs = { ponds: [], runoff: [] };
    for (let k = 0; k < repeat; k++) { runs.ponds.push(lib('ponds')); runs.runoff.push(lib('runoff')); }
    const best = (rs, key = 'ms') => rs.reduce((b, r) => (r[key] < b[key] ? r : b));
    const ratios = runs.ponds.map((p, k) => runs.runoff[k].ms / p.ms), cpuRatios = runs.ponds.map((p, k) => runs.runoff[k].cpuMs / p.cpuMs);
    const bp = best(runs.ponds), br = best(runs.runoff);
    console.log(`library   ponds ${fmt(bp.ms)} wall, ${fmt(best(runs.ponds, 'cpuMs').cpuMs)} CPU; runoff ${fmt(br.ms)} wall, ${fmt(best(runs.runoff, 'cpuMs').cpuMs)} CPU (best of ${repeat}; ${bp.depressions} depressions, ${br.ponds} ponds, Euler ${br.euler ? 'holds' : 'FAILS'})`);
    for (const s of br.stages) console.log(`            ${s.stage.padEnd(36)} ${fmt(s.ms).padStart(8)} wall ${fmt(s.cpuMs).padStart(8)} CPU`);
    const w = br.water;
    console.log(`          water: input ${w.input.toExponential(4)} m³, ponded ${w.ponded.toExponential(4)}, outflow ${w.outflow.toExponential(4)}; balance error ${w.balanceError.toExponential(1)}`);
    console.log(`          peak RSS ponds ${(bp.maxRss / cells).toFixed(1)} B/cell, runoff ${(br.maxRss / cells).toFixed(1)} B/cell`);
    const rl = median(ratios);
    console.log(`ratio     runoff / ponds (library): ${rl.toFixed(2)} × wall (run by run ${ratios.map((x) => x.toFixed(2)).join(', ')}), ${median(cpuRatios).toFixed(2)} × CPU — target ≤ 2: ${rl <= 2 ? 'met' : 'NOT met'}`);
    Object.assign(out, { library: { ponds: runs.ponds, runoff: runs.runoff, ratio: rl, cpuRatio: median(cpuRatios) } });

    if (!opt['no-cli']) {
      const { writeGeoTiff } = await import(pathToFileURL(join(DIST, 'io/index.js')).href);
      const tif = join(dir, 'terrain.tif');
      await writeGeoTiff(tif, { width: size, height: size, values: z, transform: [512000, 10, 0, 5874000 + size * 10, 0, -10], crs: { epsg: 32633, geographic: false }, nodata: -9999 });
      const cli = (args) => {
        const res = join(dir, 'cli.json');
        const target = join(dir, `out-${args[0]}`);
        rmSync(target, { recursive: true, force: true });
        const p = spawnSync(process.execPath, ['--max-old-space-size=8192', self, '--child', 'cli', '--result', res, '--', ...args, tif, '-o', target, '--quiet'], { encoding: 'utf8', maxBuffer: 1 << 26 });
        if (p.status !== 0) throw new Error(`sill ${args.join(' ')} failed: ${p.stderr}`);
        const r = JSON.parse(readFileSync(res, 'utf8'));
        rmSync(target, { recursive: true, force: true });
        return r;
      };
      const cr = { ponds: [], runoff: [] };
      for (let k = 0; k < repeat; k++) { cr.ponds.push(cli(['ponds'])); cr.runoff.push(cli(['runoff', '--depth', opt.depth])); }
      const cratios = cr.ponds.map((p, k) => cr.runoff[k].ms / p.ms), ccpu = cr.ponds.map((p, k) => cr.runoff[k].cpuMs / p.cpuMs);
      const cp = best(cr.ponds), cq = best(cr.runoff);
      console.log(`command   sill ponds ${fmt(cp.ms)} wall, ${fmt(best(cr.ponds, 'cpuMs').cpuMs)} CPU, peak ${(cp.maxRss / 2 ** 30).toFixed(2)} GiB; ` +
        `sill runoff --depth ${opt.depth} ${fmt(cq.ms)} wall, ${fmt(best(cr.runoff, 'cpuMs').cpuMs)} CPU, peak ${(cq.maxRss / 2 ** 30).toFixed(2)} GiB (best of ${repeat})`);
      const rc = median(cratios);
      console.log(`ratio     runoff / ponds (command): ${rc.toFixed(2)} × wall (run by run ${cratios.map((x) => x.toFixed(2)).join(', ')}), ${median(ccpu).toFixed(2)} × CPU — target ≤ 2: ${rc <= 2 ? 'met' : 'NOT met'}`);
      Object.assign(out, { command: { ponds: cr.ponds, runoff: cr.runoff, ratio: rc, cpuRatio: median(ccpu) } });
    }
    out.loadEnd = loadavg()[0];
    console.log(`load average now ${loadavg()[0].toFixed(1)}`);
    mkdirSync(join(HERE, 'out'), { recursive: true });
    writeFileSync(join(HERE, 'out', `runoff-${size}.json`), JSON.stringify(out, null, 1));
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}
