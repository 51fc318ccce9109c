#!/usr/bin/env node
/**
 * sill benchmarks. Run with `npm run bench` (builds first), or after a build:
 *   node --expose-gc bench/run.mjs [--size N] [--only a,b] [--repeat R] [--seed S] [--quantum Q] [--float64] [--before DIST] [--list]
 *
 * --quantum Q rounds the terrain to steps of Q (ties and flats, as in DEMs stored in whole
 * centimetres); --float64 analyses float64 values (energy surfaces usually are) instead of float32.
 * --before DIST times an older build (its dist/ folder) beside this one in the cases that support it (floor).
 *
 * Every entry of CASES is one benchmark case: { name, about, skip?(ctx), run(ctx), targets? }.
 * A case records measurements with ctx.record(key, value, { label, unit }); a target is a
 * ratio or figure computed from the recorded measurements and compared with a limit.
 * This is a report, not a test: it always exits 0 unless the script itself breaks.
 */
import { parseArgs } from 'node:util';
import { mkdirSync, writeFileSync, readFileSync } from 'node:fs';
import { cpus, loadavg } from 'node:os';
import { join } from 'node:path';
import { fractalTerrain } from './lib/terrain.mjs';
import { BENCH_DIR, fmtMs, fmtNum, median as medianOf, table } from './lib/util.mjs';
import { sortCase } from './cases/sort.mjs';
import { surveyCase, stagesCase, loadCase, memoryCase } from './cases/survey.mjs';
import { floorCase } from './cases/floor.mjs';

/**
 * The registry, run in this order. To add a case (ponds, runoff, barriers, …): write
 * bench/cases/<name>.mjs exporting the case object (and `memoryJobs` if it measures
 * memory through bench/lib/memory.mjs), import it above and list it here.
 */
const CASES = [sortCase, surveyCase, stagesCase, loadCase, memoryCase, floorCase];

const { values: opt } = parseArgs({
  options: {
    size: { type: 'string', default: '4000' },
    seed: { type: 'string', default: '17' },
    quantum: { type: 'string', default: '0' },
    float64: { type: 'boolean', default: false },
    repeat: { type: 'string', default: '3' },
    only: { type: 'string' },
    skip: { type: 'string' },
    json: { type: 'string' },
    before: { type: 'string' },
    list: { type: 'boolean', default: false },
    help: { type: 'boolean', short: 'h', default: false },
  },
});

if (opt.help || opt.list) {
  if (opt.help) {
    console.log('usage: node --expose-gc bench/run.mjs [--size N] [--only a,b] [--skip a,b] [--repeat R] [--seed S] [--quantum Q] [--float64] [--before DIST] [--json FILE] [--list]\n');
  }
  console.log('cases:');
  for (const c of CASES) console.log(`  ${c.name.padEnd(10)} ${c.about}`);
  process.exit(0);
}

const size = Number(opt.size), repeat = Number(opt.repeat), seed = Number(opt.seed), quantum = Number(opt.quantum);
if (!Number.isInteger(size) || size < 8 || !Number.isInteger(repeat) || repeat < 1) {
  console.error('bench: --size must be a whole number ≥ 8 and --repeat ≥ 1');
  process.exit(2);
}
const pick = (s) => (s ? new Set(s.split(',').map((x) => x.trim()).filter(Boolean)) : null);
const only = pick(opt.only), skipSet = pick(opt.skip);
for (const name of [...(only ?? []), ...(skipSet ?? [])]) {
  if (!CASES.some((c) => c.name === name)) {
    console.error(`bench: no case '${name}' (cases: ${CASES.map((c) => c.name).join(', ')})`);
    process.exit(2);
  }
}
if (typeof globalThis.gc !== 'function') {
  console.error('bench: note — run with node --expose-gc (npm run bench does) so garbage is collected between samples');
}

function machine() {
  let model = cpus()[0]?.model ?? 'unknown';
  try {
    const m = readFileSync('/proc/cpuinfo', 'utf8').match(/^model name\s*:\s*(.*)$/m);
    if (m) model = m[1];
  } catch { /* not Linux */ }
  return { cpus: cpus().length, model, node: process.version, platform: `${process.platform}-${process.arch}` };
}

const results = {}, meta = {}, notes = {}, warnings = [];
let terrain = null;
const ctx = {
  size, seed, quantum, repeat, float64: opt.float64,
  /** --before DIST: an older build's dist/ folder, timed beside this one where a case supports it (floor). */
  before: opt.before ?? null,
  /** The benchmark terrain (generated once, shared; do not modify it — copy first). */
  terrain() {
    if (terrain === null) {
      const t0 = performance.now();
      terrain = fractalTerrain(size, { seed, quantum });
      console.error(`bench: terrain ${size}×${size} generated in ${fmtMs(performance.now() - t0)}`);
    }
    return terrain;
  },
  record(key, value, m = {}) {
    results[key] = value;
    meta[key] = m;
    // timings recorded with their CPU-time samples also get a '<prefix>.cpu' entry (median)
    if (m.cpu && key.endsWith('.ms')) results[key.replace(/\.ms$/, '.cpu')] = medianOf(m.cpu);
    const shown = m.unit === 'ms' ? fmtMs(value) : `${fmtNum(value)} ${m.unit ?? ''}`;
    console.error(`bench:   ${m.label ?? key}: ${shown}`);
  },
  note(key, value) { notes[key] = value; },
  warn(msg) { warnings.push(msg); console.error(`bench: WARNING ${msg}`); },
};

const mach = machine();
console.log(`sill benchmark — ${new Date().toISOString().slice(0, 10)}`);
console.log(`machine: ${mach.cpus} cpus, ${mach.model}, node ${mach.node} (${mach.platform})`);
console.log(`terrain: ${size}×${size} ${opt.float64 ? 'float64' : 'float32'} fractal (seed ${seed}${quantum > 0 ? `, quantum ${quantum}` : ''}), ${(size * size / 1e6).toFixed(1)} M cells; ${repeat} run(s) per timing, median shown\n`);
console.log(`load average at start: ${loadavg().map((x) => x.toFixed(2)).join(' ')} (other work on the machine inflates wall-clock times; CPU times are shown too)\n`);

const ran = [], skipped = [];
for (const c of CASES) {
  if ((only && !only.has(c.name)) || (skipSet && skipSet.has(c.name))) continue;
  const why = c.skip ? c.skip(ctx) : null;
  if (why) { skipped.push([c.name, why]); console.error(`bench: skip ${c.name}: ${why}`); continue; }
  console.error(`bench: ${c.name} — ${c.about}`);
  try {
    await c.run(ctx);
    ran.push(c.name);
  } catch (err) {
    ctx.warn(`case ${c.name} failed: ${err?.stack ?? err}`);
  }
}

const rows = [['measurement', 'value', 'cpu time', 'runs (wall)']];
for (const [key, value] of Object.entries(results)) {
  const m = meta[key];
  if (!m) continue; // derived entries (.cpu)
  const shown = m.unit === 'ms' ? fmtMs(value) : `${fmtNum(value, 1)} ${m.unit ?? ''}`;
  const cpuShown = m.cpu ? fmtMs(medianOf(m.cpu)) : '';
  const runs = m.samples ? m.samples.map((x) => fmtMs(x)).join(' / ') : '';
  rows.push([m.label ?? key, shown, cpuShown, runs]);
}
console.log(table(rows));

const trows = [['target', 'measured', 'limit', 'status']];
const targets = [];
for (const c of CASES) {
  for (const t of c.targets ?? []) {
    const v = t.compute(results);
    if (!Number.isFinite(v)) continue;
    const status = t.limit === null ? 'info' : v <= t.limit ? 'met' : 'MISSED';
    targets.push({ ...t, value: v, status });
    trows.push([t.label, fmtNum(v), t.limit === null ? '—' : `≤ ${t.limit}`, status]);
  }
}
if (trows.length > 1) console.log('\n' + table(trows));
for (const [name, why] of skipped) console.log(`\nskipped ${name}: ${why}`);
if (notes['survey.euler']) console.log(`\nEuler check on the terrain: ${JSON.stringify(notes['survey.euler'])}`);
for (const w of warnings) console.log(`WARNING: ${w}`);

const outFile = opt.json ?? join(BENCH_DIR, 'out', `last-run-${size}${opt.float64 ? '-f64' : ''}.json`);
try {
  mkdirSync(join(outFile, '..'), { recursive: true });
  writeFileSync(outFile, JSON.stringify({
    date: new Date().toISOString(), machine: mach, size, seed, quantum, float64: opt.float64, repeat, ran, skipped,
    results, meta, notes, warnings,
    targets: targets.map(({ key, label, limit, value, status }) => ({ key, label, limit, value, status })),
  }, null, 2) + '\n');
  console.log(`\nfull results: ${outFile}`);
} catch (err) {
  console.error(`bench: could not write ${outFile}: ${err.message}`);
}
