#!/usr/bin/env node
/**
 * survey3() on an N³ grid against the 2-D survey() on a grid of the same number of cells,
 * measured in the same run (alternating, so both see the same machine load), with the stages of
 * the 3-D survey timed one by one and the peak memory of a 3-D run in a child process.
 *   npm run build && node --expose-gc bench/survey3.mjs [--size 200] [--repeat 2] [--connectivity 14]
 *
 * The field is invented: a sum of 3-D sines with a little high-frequency ripple (float32), so
 * that there are many critical points of every index. Closed boundary (energy surfaces).
 * This is a report, not a test: it always exits 0.
 */
import { parseArgs } from 'node:util';
import { spawnSync } from 'node:child_process';
import { fileURLToPath } from 'node:url';
import { timeIt, median, importDist, fmtMs, lap, collect } from './lib/util.mjs';

const { values: opt } = parseArgs({
  options: {
    size: { type: 'string', default: '200' },
    repeat: { type: 'string', default: '2' },
    connectivity: { type: 'string', default: '14' },
    child: { type: 'boolean', default: false },
  },
});
const n = Number(opt.size), repeat = Number(opt.repeat), conn = Number(opt.connectivity);

const [g3, s3, g2, s2, cx3, ord, mt] = await Promise.all([
  importDist('surface/grid3.js'), importDist('morse/survey3.js'), importDist('surface/grid.js'), importDist('morse/survey.js'),
  importDist('surface/complex3.js'), importDist('morse/order.js'), importDist('morse/mergetree3.js'),
]);
if (!g3 || !s3) {
  console.error('bench/survey3: dist/ is incomplete — run npm run build first');
  process.exit(0);
}

function field3(m) {
  const v = new Float32Array(m * m * m);
  for (let z = 0; z < m; z++) for (let y = 0; y < m; y++) for (let x = 0; x < m; x++) {
    v[x + m * (y + m * z)] = Math.sin(x * 0.21) * Math.sin(y * 0.17 + 1) * Math.sin(z * 0.13 + 2) + 0.3 * Math.sin(0.05 * x + 0.07 * y - 0.09 * z) + 0.001 * Math.sin(x * y + z);
  }
  return v;
}

const grid3 = (v, m) => new g3.Grid3({ nx: m, ny: m, nz: m, values: v.slice() });
const opts = { connectivity: conn, boundary: 'closed' };

if (opt.child) {
  // peak memory of one 3-D survey, the field included
  const v = field3(n);
  collect();
  const s = s3.survey3(grid3(v, n), opts);
  const rss = process.resourceUsage().maxRSS * 1024;
  console.log(JSON.stringify({ rss, holds: s.euler.holds }));
  process.exit(0);
}

const cells = n * n * n, side = Math.round(Math.sqrt(cells));
const v3 = field3(n);
const v2 = new Float32Array(side * side);
for (let r = 0; r < side; r++) for (let c = 0; c < side; c++) v2[r * side + c] = Math.sin(c * 0.021) * Math.sin(r * 0.017 + 1) + 0.001 * Math.sin(c * r);
// warm both on small grids
s3.survey3(grid3(field3(24), 24), opts);
s2.survey(new g2.Grid({ width: 128, height: 128, values: v2.slice(0, 128 * 128) }), { connectivity: 8, boundary: 'closed', threads: 1 });

const t3 = [], t2 = [], ratio = [];
let euler = null;
for (let k = 0; k < repeat; k++) {
  const a = await timeIt((g) => s2.survey(g, { connectivity: 8, boundary: 'closed', threads: 1 }), { setup: () => new g2.Grid({ width: side, height: side, values: v2.slice() }) });
  const b = await timeIt((g) => s3.survey3(g, opts), { setup: () => grid3(v3, n), teardown: (s) => { euler = s.euler; } });
  t2.push(a[0]); t3.push(b[0]); ratio.push(b[0] / a[0]);
}

// the stages of one 3-D run
const g = grid3(v3, n);
const st = {};
const c = lap(() => new cx3.Complex3(g, opts)); st.complex = c.wall;
const o = lap(() => ord.sortOrder(c.out.values)); st.sort = o.wall;
const cp = lap(() => s3.criticalPoints3(c.out)); st.critical = cp.wall;
st.count = lap(() => c.out.countSimplices()).wall;
st.join = lap(() => mt.buildMergeTree3(c.out, o.out, 'join')).wall;
st.split = lap(() => mt.buildMergeTree3(c.out, o.out, 'split')).wall;

const child = spawnSync(process.execPath, ['--expose-gc', fileURLToPath(import.meta.url), '--child', '--size', String(n), '--connectivity', String(conn)], { encoding: 'utf8' });
const mem = child.status === 0 ? JSON.parse(child.stdout) : null;

console.log(`survey3 on ${n}³ = ${(cells / 1e6).toFixed(2)} M points, connectivity ${conn}, closed; reference: 2-D survey (connectivity 8, closed, 1 thread) on ${side}² = ${(side * side / 1e6).toFixed(2)} M cells`);
console.log(`  3-D survey            ${fmtMs(median(t3))}   (runs ${t3.map(fmtMs).join(', ')})`);
console.log(`  2-D survey, same size ${fmtMs(median(t2))}   (runs ${t2.map(fmtMs).join(', ')})`);
console.log(`  ratio 3-D / 2-D       ${median(ratio).toFixed(2)} ×   (run by run ${ratio.map((r) => r.toFixed(2)).join(', ')})`);
console.log(`  stages: ${Object.entries(st).map(([k, ms]) => `${k} ${fmtMs(ms)}`).join(', ')}`);
console.log(`  peak memory of a run (field included): ${mem ? `${(mem.rss / 2 ** 20).toFixed(0)} MiB, ${(mem.rss / cells).toFixed(1)} bytes a point` : 'not measured'}`);
console.log(`  Euler: ${JSON.stringify(euler)}`);
