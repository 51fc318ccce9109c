#!/usr/bin/env node
/**
 * The whole `sill ponds` and `sill runoff` commands, from a GeoTIFF on disk to every output, against
 * references measured in the same run: scikit-image's reconstruction fill of the same grid and the
 * floor of reading the GeoTIFF plus one radix sort of its values.
 *
 *   npm run build && node bench/hydro-cli.mjs [--size 2000] [--repeat 3] [--terrain fractal|spectral|noise]
 *       [--only ponds-json,ponds-out,runoff-out,floor,skimage] [--dist DIR] [--label NAME] [--keep DIR]
 *
 * Each measurement is one process run under /usr/bin/time: wall-clock time, user + system CPU
 * time and the kernel's peak resident set (Maximum resident set size). The jobs alternate round
 * by round so all see the same load; best wall and CPU of --repeat rounds, and the median of the
 * round-by-round ratios:
 *  - skimage     /usr/bin/python3 bench/compare-fill.py: load the raw float32 grid, reconstruction by
 *                erosion with the frame as seed (the filled DEM alone), Python start and imports included;
 *  - floor       node bench/lib/read-sort.mjs T.tif: read the GeoTIFF and radix-sort its values;
 *  - ponds-json  sill ponds T.tif --json > report (the whole report on stdout);
 *  - ponds-out   sill ponds T.tif -o DIR --quiet (filled, depth, labels, depressions.geojson (top-level outlines, the default),
 *                pour-points.geojson, depressions.csv, report.json);
 *  - runoff-out  sill runoff T.tif --depth 40mm -o DIR --quiet.
 * Terrains: `fractal` (bench/lib/terrain.mjs, seed 17 — the bench's rough terrain), `spectral`
 * (bench/lib/spectral-terrain.py: power-law spectrum k^−2.2, 300 m relief, 0.3 m white noise; needs
 * NumPy), `noise` (uniform white noise, 100 m ± 1 m). --dist runs another build's dist/ (for a
 * before/after table). Targets (issue 10): ponds --json ≥ 4 × faster than skimage, ponds -o ≥ 3 ×,
 * runoff -o ≤ 1.5 × ponds -o, ponds -o ≤ 32 B/cell peak. A report, not a test: exits 0.
 */
import { parseArgs } from 'node:util';
import { spawnSync } from 'node:child_process';
import { writeFileSync, readFileSync, mkdtempSync, rmSync, existsSync, mkdirSync } from 'node:fs';
import { tmpdir, cpus, loadavg } from 'node:os';
import { join, dirname, resolve } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';
import { fractalTerrain, makeRandom } from './lib/terrain.mjs';
import { timeProcess } from './lib/util.mjs';

const HERE = dirname(fileURLToPath(import.meta.url));
const PY = '/usr/bin/python3';
const { values: opt } = parseArgs({
  options: {
    size: { type: 'string', default: '2000' },
    repeat: { type: 'string', default: '3' },
    terrain: { type: 'string', default: 'fractal' },
    only: { type: 'string' },
    dist: { type: 'string' },
    label: { type: 'string' },
    keep: { type: 'string' },
    depth: { type: 'string', default: '40mm' },
    heap: { type: 'string', default: '' },
  },
});
const size = Number(opt.size), repeat = Math.max(1, Number(opt.repeat));
const dist = resolve(opt.dist ?? join(HERE, '..', 'dist'));
const MAIN = join(dist, 'cli', 'main.js');
const only = opt.only ? new Set(opt.only.split(',')) : null;
const want = (j) => !only || only.has(j);
const cells = size * size;

/** One process under /usr/bin/time (bench/lib/util.mjs): wall ms, CPU ms, peak RSS bytes. */
function timed(argv, { stdout = null } = {}) {
  const r = timeProcess(argv[0], argv.slice(1), { stdout });
  if (r.status !== 0) throw new Error(`${argv.join(' ')} failed (${r.status}):\n${r.stderr.slice(-2000)}`);
  return { wall: r.ms, cpu: r.cpuMs, rss: r.maxRss };
}

const dir = mkdtempSync(join(tmpdir(), 'sill-hydro-cli-'));
try {
  // the terrain, as raw float32 (for Python) and as a GeoTIFF (for sill)
  let z;
  if (opt.terrain === 'fractal') z = fractalTerrain(size, { seed: 17 });
  else if (opt.terrain === 'noise') { const r = makeRandom(23); z = new Float32Array(cells); for (let i = 0; i < cells; i++) z[i] = 100 + r(); }
  else if (opt.terrain === 'spectral') {
    const raw = join(dir, 'spectral.f32');
    const p = spawnSync(PY, [join(HERE, 'lib', 'spectral-terrain.py'), String(size), '7', raw], { stdio: 'inherit' });
    if (p.status !== 0) throw new Error('spectral-terrain.py failed (NumPy needed)');
    const buf = readFileSync(raw);
    z = new Float32Array(buf.buffer, buf.byteOffset, cells);
  } else throw new Error(`--terrain must be fractal, spectral or noise, got ${opt.terrain}`);
  const raw = join(dir, 'terrain.f32');
  writeFileSync(raw, Buffer.from(z.buffer, z.byteOffset, z.byteLength));
  const tif = join(dir, 'terrain.tif');
  const { writeGeoTiff } = await import(pathToFileURL(join(HERE, '..', 'dist', 'io', 'index.js')).href);
  await writeGeoTiff(tif, { width: size, height: size, values: z, transform: [512000, 10, 0, 5874000 + size * 10, 0, -10], crs: { epsg: 32633, geographic: false }, nodata: -9999 });
  z = null;

  const node = [process.execPath, ...(opt.heap ? [`--max-old-space-size=${opt.heap}`] : [])];
  const out = (name) => { const d = join(dir, name); rmSync(d, { recursive: true, force: true }); return d; };
  const hasSk = existsSync(PY) && spawnSync(PY, ['-c', 'import skimage'], { stdio: 'ignore' }).status === 0;
  const jobs = [
    ['skimage', () => timed([PY, join(HERE, 'compare-fill.py'), raw, String(size), join(dir, 'sk.f32'), '1']), hasSk],
    ['floor', () => timed([...node, join(HERE, 'lib', 'read-sort.mjs'), tif, dist]), true],
    ['ponds-json', () => timed([...node, MAIN, 'ponds', tif, '--json'], { stdout: join(dir, 'ponds.json') }), true],
    ['ponds-out', () => timed([...node, MAIN, 'ponds', tif, '-o', out('ponds-out'), '--quiet']), true],
    ['runoff-out', () => timed([...node, MAIN, 'runoff', tif, '--depth', opt.depth, '-o', out('runoff-out'), '--quiet']), true],
  ].filter(([name, , ok]) => ok && want(name));

  console.log(`terrain   ${size} × ${size} ${opt.terrain}, float32 GeoTIFF; build ${dist}${opt.label ? ` (${opt.label})` : ''}; ${cpus().length} cores, load average ${loadavg()[0].toFixed(1)}`);
  const res = Object.fromEntries(jobs.map(([n]) => [n, []]));
  for (let k = 0; k < repeat; k++) for (const [name, run] of jobs) res[name].push(run());
  const best = (n, key) => Math.min(...res[n].map((r) => r[key]));
  const median = (xs) => { const s = [...xs].sort((a, b) => a - b); return s.length % 2 ? s[s.length >> 1] : (s[s.length / 2 - 1] + s[s.length / 2]) / 2; };
  const ratio = (a, b, key = 'wall') => (res[a] && res[b] ? median(res[a].map((r, i) => r[key] / res[b][i][key])) : null);
  const f = (ms) => `${(ms / 1000).toFixed(2)} s`;
  const summary = {};
  for (const [name] of jobs) {
    const peak = Math.max(...res[name].map((r) => r.rss));
    summary[name] = { wallMs: best(name, 'wall'), cpuMs: best(name, 'cpu'), peakRss: peak, bytesPerCell: peak / cells };
    console.log(`${name.padEnd(11)} ${f(best(name, 'wall')).padStart(8)} wall ${f(best(name, 'cpu')).padStart(8)} CPU   peak RSS ${(peak / 2 ** 20).toFixed(0).padStart(6)} MiB = ${(peak / cells).toFixed(1)} B/cell`);
  }
  const line = (label, a, b, target) => {
    const w = ratio(a, b), c = ratio(a, b, 'cpu');
    if (w === null) return;
    summary[`${a}/${b}`] = { wall: w, cpu: c };
    console.log(`${label.padEnd(34)} ${w.toFixed(2)} × wall, ${c.toFixed(2)} × CPU${target ? `   (target ${target})` : ''}`);
  };
  line('skimage / ponds --json', 'skimage', 'ponds-json', '≥ 4');
  line('skimage / ponds -o', 'skimage', 'ponds-out', '≥ 3');
  line('runoff -o / ponds -o', 'runoff-out', 'ponds-out', '≤ 1.5');
  for (const n of ['ponds-json', 'ponds-out', 'runoff-out', 'skimage']) line(`${n} / floor (read + sort)`, n, 'floor');
  if (opt.keep) {
    mkdirSync(opt.keep, { recursive: true });
    writeFileSync(join(opt.keep, `hydro-cli-${opt.terrain}-${size}${opt.label ? `-${opt.label}` : ''}.json`), JSON.stringify({ size, terrain: opt.terrain, dist, repeat, loadavg: loadavg(), summary, runs: res }, null, 1));
  }
} finally {
  rmSync(dir, { recursive: true, force: true });
}
