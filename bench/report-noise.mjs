#!/usr/bin/env node
/**
 * `--report` on rough surfaces: white noise (float32, uniform on [0, 10), seeded) written as .npy
 * at each size, and for each command the same command line with and without `--report`, each run
 * in a child process of its own (so its peak memory is its alone), the two alternating so both see
 * the same load from other work on the machine. Prints wall and CPU time, peak RSS and the size of
 * report.html; the ratios (with / without) should stay flat as the grid grows: the report's cost
 * grows like the analysis (linear in cells and features), not faster.
 *
 *   npm run build && node bench/report-noise.mjs [--sizes 1000,2000,4000] [--commands survey,ponds] [--repeat 1] [--png] [--seed 7] [--mode command|library]
 *
 * --mode library runs the library instead of the command line: loadSurface + surveyReport /
 * pondsReport (the analysis and its report object), against the same plus building the page and
 * writing report.html and the SVG figures through an output folder — no JSON, CSV or GeoJSON
 * files, so it measures the report where the command's own writers do not (yet) cope with a grid.
 *
 * A run that fails (e.g. out of memory) is recorded with its exit code and first error line. A
 * report, not a test: it exits 0 unless the script itself breaks. Results: bench/out/report-noise-<mode>.json.
 */
import { parseArgs } from 'node:util';
import { spawnSync } from 'node:child_process';
import { writeFileSync, readFileSync, mkdtempSync, rmSync, mkdirSync, statSync, existsSync, openSync, writeSync, closeSync } from 'node:fs';
import { tmpdir, cpus, totalmem, loadavg } from 'node:os';
import { join, dirname } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';
import { timeProcess } from './lib/util.mjs';

const HERE = dirname(fileURLToPath(import.meta.url));
const DIST = join(HERE, '..', 'dist');

const { values: opt } = parseArgs({
  options: {
    sizes: { type: 'string', default: '1000,2000,4000' },
    commands: { type: 'string', default: 'survey,ponds' },
    repeat: { type: 'string', default: '1' },
    seed: { type: 'string', default: '7' },
    png: { type: 'boolean', default: false },
    'max-old-space': { type: 'string', default: '16384' },
    mode: { type: 'string', default: 'command' },
    lib: { type: 'string' },
    result: { type: 'string' },
  },
  allowPositionals: true,
});

if (opt.lib) {
  // library mode, one process per run: the analysis, then (with --result ending in .report) the page
  const [load, surveyRep, pondsRep, htmlSurvey, htmlPonds, write, outdir] = await Promise.all(
    ['io/load.js', 'report/survey.js', 'report/ponds.js', 'render/html/survey.js', 'render/html/ponds.js', 'render/html/write.js', 'io/outdir.js']
      .map((m) => import(pathToFileURL(join(DIST, m)).href)));
  const [cmd, file, target, withReport] = opt.lib.split('|');
  const cpu0 = process.cpuUsage();
  const t0 = performance.now();
  const g = await load.loadSurface(file);
  const run = cmd === 'survey' ? surveyRep.surveyReport(g, { boundary: 'open' }, file) : pondsRep.pondsReport(g, {}, file);
  const tA = performance.now() - t0;
  let html = null;
  if (withReport === '1') {
    const out = new outdir.OutputFolder(target);
    const ctx = { commandLine: `bench ${cmd}`, files: [] };
    const built = cmd === 'survey' ? htmlSurvey.buildSurveyReport(g, run.result, run.report, ctx) : htmlPonds.buildPondsReport(run.result, run.report, ctx);
    write.writeReportFiles(out, built, { report: true, png: opt.png });
    out.commit();
    html = statSync(join(target, 'report.html')).size;
  }
  const cpu = process.cpuUsage(cpu0);
  writeFileSync(opt.result, JSON.stringify({ code: 0, ms: performance.now() - t0, analysisMs: tA, cpuMs: (cpu.user + cpu.system) / 1000, maxRss: process.resourceUsage().maxRSS * 1024, html }));
  process.exit(0);
} else {
  if (!existsSync(join(DIST, 'cli/main.js'))) { console.error('bench/report-noise: run npm run build first'); process.exit(2); }
  const sizes = opt.sizes.split(',').map(Number), commands = opt.commands.split(','), repeat = Math.max(1, Number(opt.repeat));
  const fmt = (ms) => (ms >= 1000 ? `${(ms / 1000).toFixed(1)} s` : `${ms.toFixed(0)} ms`);
  const gib = (b) => `${(b / 2 ** 30).toFixed(2)} GiB`;
  const self = fileURLToPath(import.meta.url);
  const dir = mkdtempSync(join(tmpdir(), 'sill-bench-report-noise-'));
  const out = { date: new Date().toISOString(), mode: opt.mode, seed: Number(opt.seed), png: opt.png, cores: cpus().length, memory: totalmem(), loadStart: loadavg()[0], runs: [] };
  console.log(`sill --report on white noise — ${out.date.slice(0, 10)}; ${cpus().length} cores, ${(totalmem() / 2 ** 30).toFixed(0)} GiB, load average ${loadavg()[0].toFixed(1)}`);
  console.log(opt.mode === 'library'
    ? `each line (library): loadSurface + ${'<command>'}Report, without and with building and writing the page${opt.png ? ' and map.png' : ''}, best of ${repeat}; node --max-old-space-size=${opt['max-old-space']}\n`
    : `each line: the command without and with --report${opt.png ? ' --png' : ''}, best of ${repeat}; node --max-old-space-size=${opt['max-old-space']}\n`);
  const rows = [['size', 'command', 'without --report', 'with --report', 'ratio (wall)', 'ratio (CPU)', 'peak RSS without', 'peak RSS with', 'report.html']];
  try {
    for (const size of sizes) {
      // white noise, uniform on [0, 10): xorshift32, written row by row as a float32 .npy
      const npy = join(dir, `noise-${size}.npy`);
      let header = `{'descr': '<f4', 'fortran_order': False, 'shape': (${size}, ${size}), }`;
      header += ' '.repeat((64 - ((10 + header.length + 1) % 64)) % 64) + '\n';
      const pre = Buffer.alloc(10); pre.write('\x93NUMPY', 0, 'latin1'); pre[6] = 1; pre.writeUInt16LE(header.length, 8);
      const fd = openSync(npy, 'w');
      writeSync(fd, Buffer.concat([pre, Buffer.from(header, 'latin1')]));
      let s = Number(opt.seed) >>> 0 || 1;
      const row = new Float32Array(size);
      for (let r = 0; r < size; r++) {
        for (let c = 0; c < size; c++) { s ^= s << 13; s >>>= 0; s ^= s >>> 17; s ^= s << 5; s >>>= 0; row[c] = (s / 2 ** 32) * 10; }
        writeSync(fd, new Uint8Array(row.buffer));
      }
      closeSync(fd);
      for (const cmd of commands) {
        const run = (report) => {
          const res = join(dir, 'run.json'), target = join(dir, 'out');
          rmSync(target, { recursive: true, force: true });
          rmSync(res, { force: true });
          const extra = cmd === 'runoff' ? ['--depth', '50mm'] : [];
          const flags = report ? ['--report', ...(opt.png ? ['--png'] : [])] : [];
          const args = opt.mode === 'library'
            ? ['--lib', `${cmd}|${npy}|${target}|${report ? 1 : 0}`, '--result', res, ...(opt.png ? ['--png'] : [])]
            : [cmd, npy, ...extra, '-o', target, '--quiet', ...flags];
          let r;
          if (opt.mode === 'library') {
            const p = spawnSync(process.execPath, [`--max-old-space-size=${opt['max-old-space']}`, self, ...args], { encoding: 'utf8', maxBuffer: 1 << 26 });
            r = existsSync(res) ? JSON.parse(readFileSync(res, 'utf8')) : { code: p.status ?? p.signal, ms: NaN, cpuMs: NaN, maxRss: NaN };
            r.code = p.status ?? p.signal;
            if (p.status !== 0) r.error = (p.stderr || '').split('\n').find((l) => l.trim()) ?? `exit ${p.status ?? p.signal}`;
          } else {
            // the command as a user runs it (sill's launcher and the process it starts), under
            // /usr/bin/time: the peak is the kernel's high-water mark of the largest of them
            const t = timeProcess(process.execPath, [join(DIST, 'cli/main.js'), ...args]);
            r = { code: t.status, ms: t.ms, cpuMs: t.cpuMs, maxRss: t.maxRss };
            if (t.status !== 0) r.error = t.stderr.split('\n').find((l) => l.trim()) ?? `exit ${t.status}`;
          }
          if (opt.mode !== 'library') r.html = report && existsSync(join(target, 'report.html')) ? statSync(join(target, 'report.html')).size : null;
          r.png = report && opt.png && existsSync(join(target, 'map.png')) ? statSync(join(target, 'map.png')).size : null;
          rmSync(target, { recursive: true, force: true });
          console.error(`bench/report-noise: ${size}² ${cmd}${report ? ' --report' : ''}: ${r.code === 0 ? `${fmt(r.ms)}, peak ${gib(r.maxRss)}` : `FAILED (${r.error})`}`);
          return r;
        };
        const plain = [], withReport = [];
        for (let k = 0; k < repeat; k++) { plain.push(run(false)); withReport.push(run(true)); }
        const best = (rs) => rs.filter((r) => r.code === 0).reduce((b, r) => (b === null || r.ms < b.ms ? r : b), null);
        const a = best(plain), b = best(withReport);
        out.runs.push({ size, command: cmd, plain, report: withReport });
        const cell = (r, all) => (r ? `${fmt(r.ms)} (CPU ${fmt(r.cpuMs)})` : `failed: ${all[0].error}`);
        rows.push([`${size}²`, cmd, cell(a, plain), cell(b, withReport),
          a && b ? `${(b.ms / a.ms).toFixed(2)} ×` : '—', a && b ? `${(b.cpuMs / a.cpuMs).toFixed(2)} ×` : '—',
          a ? gib(a.maxRss) : '—', b ? gib(b.maxRss) : '—', b?.html ? `${(b.html / 2 ** 20).toFixed(1)} MiB` : '—']);
      }
      rmSync(npy, { force: true });
    }
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
  const widths = rows[0].map((_, j) => Math.max(...rows.map((r) => String(r[j]).length)));
  for (const r of rows) console.log(r.map((c, j) => String(c).padEnd(widths[j])).join('  '));
  out.loadEnd = loadavg()[0];
  console.log(`\nload average now ${loadavg()[0].toFixed(1)}`);
  mkdirSync(join(HERE, 'out'), { recursive: true });
  const outFile = join(HERE, 'out', `report-noise-${opt.mode}.json`);
  writeFileSync(outFile, JSON.stringify(out, null, 1) + '\n');
  console.log(`full results: ${outFile}`);
}
