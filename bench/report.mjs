#!/usr/bin/env node
/**
 * Report rendering benchmark: a size × size fractal DEM (bench/lib/terrain.mjs), analysed by
 * survey and by ponds, then rendered to report.html + map.svg + tree.svg + persistence.svg
 * (and map.png with --png). Times the rendering separately from the analysis and records
 * the file sizes. A measurement, not a test: targets are printed as met / MISSED.
 *
 *   npm run build && node --expose-gc bench/report.mjs [--size 4000] [--seed 17] [--min-persistence 0] [--png] [--keep DIR]
 */
import { parseArgs } from 'node:util';
import { mkdirSync, mkdtempSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { tmpdir, cpus } from 'node:os';
import { join } from 'node:path';
import { fractalTerrain } from './lib/terrain.mjs';
import { importDist, fmtMs, table, BENCH_DIR } from './lib/util.mjs';

const { values: opt } = parseArgs({
  options: {
    size: { type: 'string', default: '4000' },
    seed: { type: 'string', default: '17' },
    'min-persistence': { type: 'string', default: '0' },
    png: { type: 'boolean', default: false },
    keep: { type: 'string' },
  },
});
const size = Number(opt.size), seed = Number(opt.seed), minP = Number(opt['min-persistence']);

const [grid, surveyRep, pondsRep, htmlSurvey, htmlPonds, write, outdir] = await Promise.all([
  importDist('surface/grid.js'), importDist('report/survey.js'), importDist('report/ponds.js'),
  importDist('render/html/survey.js'), importDist('render/html/ponds.js'), importDist('render/html/write.js'), importDist('io/outdir.js'),
]);
if (!grid || !htmlSurvey) { console.error('bench/report: run npm run build first'); process.exit(2); }

const gc = () => { if (typeof globalThis.gc === 'function') globalThis.gc(); };
const lap = async (fn) => { gc(); const t0 = performance.now(); const r = await fn(); return [r, performance.now() - t0]; };
const mb = (bytes) => `${(bytes / 2 ** 20).toFixed(2)} MiB`;

function dem() {
  const v = fractalTerrain(size, { seed });
  return new grid.Grid({ width: size, height: size, values: v, transform: [512000, 5, 0, 5874000 + 5 * size, 0, -5], crs: { epsg: 32633, name: 'EPSG:32633', geographic: false, linearUnit: 'metre' } });
}

const root = opt.keep ? opt.keep : mkdtempSync(join(tmpdir(), 'sill-bench-report-'));
mkdirSync(root, { recursive: true });
const rows = [['run', 'analysis', 'render (build + write)', 'report.html', 'map.svg', 'tree.svg', 'persistence.svg', opt.png ? 'map.png' : '']];
const results = {};

async function run(name, analyse, build) {
  const g = dem();
  const [res, tA] = await lap(() => analyse(g));
  const dir = join(root, name);
  const [, tR] = await lap(() => {
    const out = new outdir.OutputFolder(dir);
    const built = build(res, { commandLine: `bench ${name}`, files: [] });
    write.writeReportFiles(out, built, { report: true, png: opt.png });
    out.commit();
  });
  const sz = (f) => { try { return statSync(join(dir, f)).size; } catch { return NaN; } };
  const sizes = { html: sz('report.html'), map: sz('map.svg'), tree: sz('tree.svg'), persistence: sz('persistence.svg'), png: sz('map.png') };
  results[name] = { analysisMs: tA, renderMs: tR, bytes: sizes };
  rows.push([name, fmtMs(tA), fmtMs(tR), mb(sizes.html), mb(sizes.map), mb(sizes.tree), mb(sizes.persistence), opt.png ? mb(sizes.png) : '']);
  console.error(`bench/report: ${name}: analysis ${fmtMs(tA)}, render ${fmtMs(tR)}, report.html ${mb(sizes.html)}`);
}

console.log(`sill report benchmark — ${new Date().toISOString().slice(0, 10)}; ${cpus().length} cpus, ${cpus()[0]?.model ?? '?'}, node ${process.version}`);
console.log(`terrain: ${size}×${size} float32 fractal (seed ${seed}), ${(size * size / 1e6).toFixed(1)} M cells\n`);

await run(`survey (min-persistence ${minP})`,
  (g) => surveyRep.surveyReport(g, { connectivity: 8, boundary: 'open', minPersistence: minP }, 'bench-dem'),
  ({ result, report }, ctx) => htmlSurvey.buildSurveyReport(result.complex.surface, result, report, ctx));
await run('ponds',
  (g) => pondsRep.pondsReport(g, { connectivity: 8, boundary: 'open' }, 'bench-dem'),
  ({ result, report }, ctx) => htmlPonds.buildPondsReport(result, report, ctx));

console.log(table(rows));
const targets = Object.entries(results).map(([name, r]) => [name, r.renderMs <= 15000 ? 'met' : 'MISSED', r.bytes.html <= 25 * 2 ** 20 ? 'met' : 'MISSED']);
console.log('\n' + table([['run', 'render ≤ 15 s', 'report.html ≤ 25 MB'], ...targets]));
const outFile = join(BENCH_DIR, 'out', `report-${size}.json`);
mkdirSync(join(BENCH_DIR, 'out'), { recursive: true });
writeFileSync(outFile, JSON.stringify({ date: new Date().toISOString(), size, seed, minPersistence: minP, png: opt.png, results }, null, 2) + '\n');
console.log(`\nfull results: ${outFile}${opt.keep ? `; reports kept in ${root}` : ''}`);
if (!opt.keep) rmSync(root, { recursive: true, force: true });
