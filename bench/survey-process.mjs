#!/usr/bin/env node
/**
 * The survey command as a user runs it, whole process from a GeoTIFF on disk, against outside
 * references measured in the same run, on the bench's rough fractal terrain (bench/lib/terrain.mjs).
 *
 *   npm run build && node bench/survey-process.mjs [--sizes 2000,4000] [--repeat 3] [--seed 17]
 *        [--no-gudhi] [--no-out] [--before OLD/dist/cli/main.js]
 *
 * Each round runs, one after the other (so all see the same load from other work):
 *  - floor: bench/lib/read-sort.mjs, a node process that reads the GeoTIFF (loadSurface) and radix-sorts its values;
 *  - `sill survey T.tif --json > FILE` and `sill survey T.tif -o DIR --quiet` (every file written);
 *  - GUDHI (Debian python3-gudhi): GDAL read + CubicalComplex(top_dimensional_cells).persistence()
 *    (bench/survey-gudhi.py, /usr/bin/python3);
 *  - with --before, the same two commands of another build (a before/after table from one run).
 * Every process is timed by /usr/bin/time (wall, user + system CPU, peak RSS = the kernel's
 * high-water mark). Ratios are taken round by round and their median printed.
 * Targets (issue 10): survey --json ≥ 5 × faster than GUDHI; peak RSS of survey --json ≤ 40 B/cell
 * at 6000² (run --sizes 6000 --no-gudhi --repeat 1). A report, not a test: exits 0 unless it breaks.
 */
import { parseArgs } from 'node:util';
import { spawnSync } from 'node:child_process';
import { mkdtempSync, rmSync, mkdirSync, writeFileSync, statSync, readdirSync, existsSync } from 'node:fs';
import { tmpdir, cpus, totalmem, loadavg } from 'node:os';
import { join, dirname } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';
import { fractalTerrain } from './lib/terrain.mjs';
import { timeProcess } from './lib/util.mjs';

const HERE = dirname(fileURLToPath(import.meta.url));
const DIST = join(HERE, '..', 'dist');
const PY = '/usr/bin/python3';
const { values: opt } = parseArgs({
  options: {
    sizes: { type: 'string', default: '2000,4000' }, repeat: { type: 'string', default: '3' }, seed: { type: 'string', default: '17' },
    'no-gudhi': { type: 'boolean', default: false }, 'no-out': { type: 'boolean', default: false }, before: { type: 'string' },
  },
});

{
  const sizes = opt.sizes.split(',').map(Number);
  const repeat = Math.max(1, Number(opt.repeat));
  const gudhi = !opt['no-gudhi'] && existsSync(PY) && spawnSync(PY, ['-c', 'import gudhi, osgeo.gdal'], { stdio: 'ignore' }).status === 0;
  if (!opt['no-gudhi'] && !gudhi) console.log('GUDHI reference skipped: /usr/bin/python3 with gudhi and osgeo.gdal not found (apt-get install python3-gudhi python3-gdal)');
  const fmt = (ms) => (ms >= 1000 ? `${(ms / 1000).toFixed(2)} s` : `${ms.toFixed(0)} ms`);
  const median = (xs) => { const s = [...xs].sort((a, b) => a - b); const m = s.length >> 1; return s.length % 2 ? s[m] : (s[m - 1] + s[m]) / 2; };
  const dir = mkdtempSync(join(tmpdir(), 'sill-bench-survey-'));
  const sill = join(DIST, 'cli/main.js');
  console.log(`${cpus().length} cores, ${(totalmem() / 2 ** 30).toFixed(0)} GiB, load average ${loadavg()[0].toFixed(1)}; node ${process.version}`);

  /** Run a command under /usr/bin/time; stdout to `stdoutFile` (or discarded). */
  const timed = (cmd, args, stdoutFile) => {
    const { ms, cpuMs, maxRss, status, stderr } = timeProcess(cmd, args, { stdout: stdoutFile });
    const r = { ms, cpuMs, maxRss };
    // a run that fails is reported with its message (the build before streaming dies on large grids)
    if (status !== 0) r.failed = (stderr.split('\n').find((l) => /\S/.test(l) && !/^Command exited/.test(l)) ?? `exit ${status}`).slice(0, 160);
    return r;
  };
  const du = (p) => (statSync(p).isDirectory() ? readdirSync(p).reduce((s, f) => s + du(join(p, f)), 0) : statSync(p).size);
  const all = [];
  try {
    for (const size of sizes) {
      const cells = size * size;
      const z = fractalTerrain(size, { seed: Number(opt.seed) });
      const { writeGeoTiff } = await import(pathToFileURL(join(DIST, 'io/index.js')).href);
      const tif = join(dir, `terrain-${size}.tif`);
      await writeGeoTiff(tif, { width: size, height: size, values: z, transform: [512000, 10, 0, 5874000 + size * 10, 0, -10], crs: { epsg: 32633, geographic: false }, nodata: -9999 });
      console.log(`\nterrain   ${size} × ${size} fractal (seed ${opt.seed}), float32 GeoTIFF, ${(cells / 1e6).toFixed(0)} M cells`);
      const jobs = [['floor', () => timed(process.execPath, [join(HERE, 'lib', 'read-sort.mjs'), tif, DIST])]];
      const json = join(dir, 'out.json'), out = join(dir, 'out');
      const cli = (bin, key) => {
        jobs.push([`${key} --json`, () => { const r = timed(process.execPath, ['--max-old-space-size=8192', bin, 'survey', tif, '--json'], json); r.bytes = r.failed ? 0 : statSync(json).size; rmSync(json, { force: true }); return r; }]);
        if (!opt['no-out']) jobs.push([`${key} -o`, () => { rmSync(out, { recursive: true, force: true }); const r = timed(process.execPath, ['--max-old-space-size=8192', bin, 'survey', tif, '-o', out, '--quiet']); r.bytes = existsSync(out) ? du(out) : 0; rmSync(out, { recursive: true, force: true }); return r; }]);
      };
      cli(sill, 'survey');
      if (opt.before) cli(opt.before, 'before');
      if (gudhi) jobs.push(['gudhi', () => timed(PY, [join(HERE, 'survey-gudhi.py'), tif])]);
      const runs = Object.fromEntries(jobs.map(([k]) => [k, []]));
      for (let k = 0; k < repeat; k++) for (const [key, f] of jobs) runs[key].push(f());
      const best = (key, f = 'ms') => Math.min(...runs[key].map((r) => r[f]));
      const ratio = (a, b, f = 'ms') => median(runs[a].map((r, k) => runs[b][k][f] / r[f]));
      const failed = (key) => runs[key].find((r) => r.failed)?.failed;
      const row = (key) => {
        const r = runs[key];
        if (failed(key)) { console.log(`  ${key.padEnd(16)} FAILED after ${fmt(r[0].ms)}, peak ${(Math.max(...r.map((x) => x.maxRss)) / 2 ** 20).toFixed(0)} MiB: ${failed(key)}`); return; }
        const extra = r[0].bytes ? `, ${(r[0].bytes / 2 ** 20).toFixed(0)} MiB written` : '';
        console.log(`  ${key.padEnd(16)} ${fmt(best(key)).padStart(9)} wall ${fmt(best(key, 'cpuMs')).padStart(9)} CPU   peak ${(Math.max(...r.map((x) => x.maxRss)) / cells).toFixed(1).padStart(5)} B/cell (${(Math.max(...r.map((x) => x.maxRss)) / 2 ** 20).toFixed(0)} MiB)${extra}`);
      };
      console.log(`  (best of ${repeat}; ratios are medians of the round-by-round ratios, wall / CPU)`);
      for (const [key] of jobs) row(key);
      const res = { size, cells, repeat, runs, load: loadavg()[0] };
      for (const [key] of jobs) {
        if (key === 'floor' || failed(key)) continue;
        const vsFloor = ratio('floor', key), vsFloorCpu = ratio('floor', key, 'cpuMs');
        res[`${key} / floor`] = vsFloor;
        let line = `  ${key.padEnd(16)} ${vsFloor.toFixed(2)} × the floor (CPU ${vsFloorCpu.toFixed(2)} ×)`;
        if (gudhi && key !== 'gudhi' && !failed('gudhi')) {
          const g = ratio(key, 'gudhi'), gc = ratio(key, 'gudhi', 'cpuMs');
          res[`gudhi / ${key}`] = g;
          line += `; GUDHI takes ${g.toFixed(2)} × as long (CPU ${gc.toFixed(2)} ×)${key === 'survey --json' ? ` — target ≥ 5: ${g >= 5 ? 'met' : 'NOT met'}` : ''}`;
        }
        if (key.startsWith('before') && runs[key.replace('before', 'survey')] && !failed(key.replace('before', 'survey'))) line += `; after / before ${ratio(key, key.replace('before', 'survey')).toFixed(2)} ×`;
        console.log(line);
      }
      const peak = Math.max(...runs['survey --json'].map((r) => r.maxRss)) / cells;
      console.log(`  peak RSS of survey --json ${peak.toFixed(1)} B/cell — target ≤ 40 at 6000²: ${peak <= 40 ? 'met' : 'NOT met'} at this size`);
      all.push(res);
      rmSync(tif);
    }
    console.log(`\nload average now ${loadavg()[0].toFixed(1)}`);
    mkdirSync(join(HERE, 'out'), { recursive: true });
    writeFileSync(join(HERE, 'out', `survey-process-${sizes.join('-')}.json`), JSON.stringify(all, null, 1));
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}
