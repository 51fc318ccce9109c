#!/usr/bin/env node
/**
 * Every output of `sill ponds` and `sill runoff` on a set of inputs, saved for a byte-for-byte
 * comparison between two builds (a rewrite of the writers must not change a byte).
 *
 *   npm run build && node bench/hydro-outputs.mjs save DIR [--size 1000] [--skip-large]
 *   node bench/hydro-outputs.mjs compare BEFORE AFTER
 *
 * `save` writes the inputs into DIR/inputs (the GeoTIFF and .npy fixtures of fixtures/io, the
 * bench fractal terrain at --size, a rounded one with ties and flats, one with nodata holes, a
 * float64 white-noise grid in degrees, a spectral terrain when /usr/bin/python3 has NumPy, the
 * demo DEM), then runs each command line of RUNS on each input it applies to and keeps, per run,
 * the output folder, stdout (the --json document or the summary), stderr and the exit status.
 * `compare` lists every file that differs or exists on one side only (the save folders' own paths,
 * which reports and summaries name, and the report page's time of making replaced by placeholders), and exits 1 if any does.
 */
import { spawnSync } from 'node:child_process';
import { mkdirSync, readdirSync, readFileSync, writeFileSync, existsSync, statSync, rmSync } from 'node:fs';
import { join, dirname, relative, resolve } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';
import { fractalTerrain, makeRandom } from './lib/terrain.mjs';

const HERE = dirname(fileURLToPath(import.meta.url));
const ROOT = join(HERE, '..');
const MAIN = join(ROOT, 'dist', 'cli', 'main.js');
const [mode, a, b, ...rest] = process.argv.slice(2);

/** The command lines run on each input: [name, args, applies(input)]. */
const RUNS = [
  ['ponds-json', ['ponds', '--json'], () => true],
  ['ponds-out', ['ponds', '-o', 'OUT'], () => true],
  ['ponds-out-json', ['ponds', '-o', 'OUT', '--json', '--stage-volume', '1'], (i) => i.big],
  ['ponds-filters', ['ponds', '-o', 'OUT', '--min-depth', '0.5', '--label-level', 'top', '--wgs84', '--stage-volume', '2', '--stage-step', '0.25'], (i) => i.big && i.epsg],
  ['ponds-fill-below', ['ponds', '-o', 'OUT', '--fill-only-below', '50000', '--min-volume', '10', '--connectivity', '4'], (i) => i.big],
  ['ponds-wall', ['ponds', '-o', 'OUT', '--nodata-as', 'wall', '--connectivity', '6', '--json'], (i) => i.holes],
  ['runoff-json', ['runoff', '--depth', '40mm', '--json'], () => true],
  ['runoff-out', ['runoff', '--depth', '40mm', '-o', 'OUT', '--stage-volume', '1'], (i) => i.big],
  ['runoff-wall', ['runoff', '--depth', '2in', '-o', 'OUT', '--nodata-as', 'wall'], (i) => i.holes],
  ['ponds-report', ['ponds', '-o', 'OUT', '--report', '--min-depth', '0.05'], (i) => i.demo],
  ['runoff-report', ['runoff', '--depth', '40mm', '-o', 'OUT', '--report'], (i) => i.demo],
];

async function makeInputs(dir, size, skipLarge) {
  const { writeGeoTiff } = await import(pathToFileURL(join(ROOT, 'dist', 'io', 'index.js')).href);
  const { larkmoorDem } = await import(pathToFileURL(join(ROOT, 'dist', 'demo', 'generate.js')).href);
  mkdirSync(dir, { recursive: true });
  const inputs = [];
  for (const f of readdirSync(join(ROOT, 'fixtures', 'io')).sort()) {
    if (!/\.(tif|npy)$/.test(f)) continue;
    inputs.push({ name: `fixture-${f}`, path: join(ROOT, 'fixtures', 'io', f) });
  }
  const utm = { epsg: 32633, geographic: false };
  const put = async (name, n, values, extra = {}, tiff = {}) => {
    const path = join(dir, `${name}.tif`);
    await writeGeoTiff(path, { width: n, height: n, values, transform: [512000, 10, 0, 5874000 + n * 10, 0, -10], crs: utm, nodata: -9999, ...tiff });
    inputs.push({ name, path, big: true, epsg: true, ...extra });
  };
  if (!skipLarge) await put(`fractal-${size}`, size, fractalTerrain(size, { seed: 17 }));
  await put('fractal-400-cm', 400, fractalTerrain(400, { seed: 5, quantum: 0.5, relief: 60 }));
  {
    const n = 300, z = fractalTerrain(n, { seed: 9, relief: 80 });
    const rnd = makeRandom(3);
    for (let h = 0; h < 12; h++) {
      const cx = Math.floor((rnd() + 1) * n / 2), cy = Math.floor((rnd() + 1) * n / 2), r = 3 + Math.floor((rnd() + 1) * 6);
      for (let y = Math.max(0, cy - r); y < Math.min(n, cy + r); y++) for (let x = Math.max(0, cx - r); x < Math.min(n, cx + r); x++) if ((x - cx) ** 2 + (y - cy) ** 2 < r * r) z[y * n + x] = NaN;
    }
    await put('fractal-300-holes', n, z, { holes: true });
  }
  {
    const n = 200, z = new Float64Array(n * n), rnd = makeRandom(11);
    for (let i = 0; i < z.length; i++) z[i] = 100 + rnd() * 3 + Math.sin(i / 37) * 0.5;
    const path = join(dir, 'noise-200-deg.tif');
    await writeGeoTiff(path, { width: n, height: n, values: z, transform: [12.5, 0.001, 0, 47.3, 0, -0.001], crs: { epsg: 4326, geographic: true }, nodata: NaN });
    inputs.push({ name: 'noise-200-deg', path, big: true });
  }
  if (spawnSync('/usr/bin/python3', ['-c', 'import numpy'], { stdio: 'ignore' }).status === 0) {
    const n = 500, raw = join(dir, 'spectral.f32');
    const p = spawnSync('/usr/bin/python3', [join(HERE, 'lib', 'spectral-terrain.py'), String(n), '7', raw]);
    if (p.status === 0) {
      const buf = readFileSync(raw);
      await put('spectral-500', n, new Float32Array(buf.buffer, buf.byteOffset, n * n));
      rmSync(raw);
    }
  }
  {
    const dem = larkmoorDem();
    const path = join(dir, 'larkmoor-dem.tif');
    await writeGeoTiff(path, { ...dem.grid, values: dem.grid.values, nodata: -9999 });
    inputs.push({ name: 'demo', path, big: true, epsg: !!dem.grid.crs?.epsg, demo: true });
  }
  return inputs;
}

function listFiles(dir, base = dir, out = []) {
  if (!existsSync(dir)) return out;
  for (const f of readdirSync(dir).sort()) {
    const p = join(dir, f);
    if (statSync(p).isDirectory()) listFiles(p, base, out);
    else out.push(relative(base, p));
  }
  return out;
}

if (mode === 'save') {
  const dir = a;
  if (!dir) throw new Error('usage: node bench/hydro-outputs.mjs save DIR [--size N] [--skip-large]');
  const size = rest.includes('--size') ? Number(rest[rest.indexOf('--size') + 1]) : b === '--size' ? Number(rest[0]) : 1000;
  const skipLarge = [b, ...rest].includes('--skip-large');
  const inputs = await makeInputs(join(dir, 'inputs'), size, skipLarge);
  for (const inp of inputs) {
    for (const [run, args, applies] of RUNS) {
      if (!applies(inp)) continue;
      const target = join(dir, 'runs', inp.name, run);
      mkdirSync(target, { recursive: true });
      // paths are relative to the run folder so that summaries do not hold the save folder's name
      const argv = args.map((s) => (s === 'OUT' ? 'out' : s));
      const p = spawnSync(process.execPath, ['--max-old-space-size=8192', MAIN, argv[0], inp.path, ...argv.slice(1)], { cwd: target, maxBuffer: 1 << 30 });
      writeFileSync(join(target, 'stdout'), p.stdout);
      writeFileSync(join(target, 'stderr'), p.stderr);
      writeFileSync(join(target, 'status'), String(p.status) + '\n');
      process.stdout.write(`${inp.name} ${run}: exit ${p.status}\n`);
    }
  }
} else if (mode === 'compare') {
  if (!a || !b) throw new Error('usage: node bench/hydro-outputs.mjs compare BEFORE AFTER');
  const A = listFiles(join(a, 'runs')), B = listFiles(join(b, 'runs'));
  const all = [...new Set([...A, ...B])].sort();
  let bad = 0, same = 0, negZero = 0;
  for (const f of all) {
    const pa = join(a, 'runs', f), pb = join(b, 'runs', f);
    if (!existsSync(pa) || !existsSync(pb)) { console.log(`only in ${existsSync(pa) ? 'before' : 'after'}: ${f}`); bad++; continue; }
    // the two save folders' own paths appear in reports and summaries: put a placeholder for them
    // and the report page's time of making
    const norm = (buf, root) => Buffer.from(buf.toString('latin1').split(resolve(root)).join('<save folder>').replace(/\d{4}-\d\d-\d\dT\d\d:\d\d:\d\d\.\d{3}Z/g, '<time>'), 'latin1');
    const x = norm(readFileSync(pa), a), y = norm(readFileSync(pb), b);
    if (x.equals(y)) { same++; continue; }
    let k = 0;
    while (k < x.length && k < y.length && x[k] === y[k]) k++;
    const ctx = (buf) => JSON.stringify(buf.subarray(Math.max(0, k - 60), k + 60).toString('utf8'));
    const z = y.toString('utf8');
    if (/[\[,:]-0[,\]}\n]/.test(z)) negZero++;
    console.log(`differs: ${f} (${x.length} vs ${y.length} bytes, first at byte ${k})\n  before ${ctx(x)}\n  after  ${ctx(y)}`);
    bad++;
  }
  console.log(`${same} files identical, ${bad} differ or are missing${negZero ? `; ${negZero} of the differing files hold a "-0"` : ''}`);
  process.exit(bad ? 1 : 0);
} else {
  console.error('usage: node bench/hydro-outputs.mjs save DIR [--size N] [--skip-large] | compare BEFORE AFTER');
  process.exit(2);
}
