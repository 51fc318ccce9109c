/**
 * survey(): the whole call on an in-memory grid, its stages one by one, the same with
 * GeoTIFF loading included, and its peak memory (in a child process).
 */
import { existsSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { timeIt, lap, median, collect, importDist, distPath } from '../lib/util.mjs';
import { runMemoryChild } from '../lib/memory.mjs';

const OPTS = { connectivity: 8, boundary: 'open' };
const THIS_FILE = fileURLToPath(import.meta.url);

async function lib() {
  const [survey, complex, order, critical, mergetree, grid] = await Promise.all([
    importDist('morse/survey.js'), importDist('surface/complex.js'), importDist('morse/order.js'),
    importDist('morse/critical.js'), importDist('morse/mergetree.js'), importDist('surface/grid.js'),
  ]);
  if (!survey) throw new Error('dist/morse/survey.js is missing: run npm run build first');
  return {
    survey: survey.survey, buildComplex: complex.buildComplex, sortOrder: order.sortOrder,
    findCriticalPoints: critical.findCriticalPoints, buildMergeTree: mergetree.buildMergeTree, Grid: grid.Grid,
  };
}

/** A fresh Grid over a copy of the terrain (the Grid constructor may normalise values in place). */
function freshGrid(L, ctx) {
  const v = ctx.terrain();
  return new L.Grid({ width: ctx.size, height: ctx.size, values: ctx.float64 ? Float64Array.from(v) : v.slice() });
}

/** Run survey on a small grid so the timed runs measure compiled code. */
function warmUp(L) {
  const n = 128, v = new Float32Array(n * n);
  for (let i = 0; i < v.length; i++) v[i] = Math.sin(i * 0.37) * 10 + ((i * 2654435761) >>> 0) / 2 ** 32;
  L.survey(new L.Grid({ width: n, height: n, values: v }), OPTS);
}

function checkEuler(ctx, res) {
  if (!res.euler.holds) ctx.warn(`Euler relation FAILED: ${JSON.stringify(res.euler)}`);
}

export const surveyCase = {
  name: 'survey',
  about: `survey(grid, ${JSON.stringify(OPTS)}) on an in-memory grid (load excluded), alternating with the reference sort`,
  async run(ctx) {
    const L = await lib();
    warmUp(L);
    // sort and survey alternate, so both see the same load from other work on the machine;
    // the ratio is taken run by run and its median reported
    const values = ctx.terrain();
    const sortMs = [], surveyMs = [], ratio = [], ratioCpu = [];
    sortMs.cpu = []; surveyMs.cpu = [];
    for (let k = 0; k < ctx.repeat; k++) {
      const a = await timeIt((f) => f.sort(), { setup: () => Float64Array.from(values) });
      const b = await timeIt((g) => L.survey(g, OPTS), {
        setup: () => freshGrid(L, ctx),
        warm: () => warmUp(L),
        teardown: (res) => {
          checkEuler(ctx, res);
          ctx.note('survey.euler', res.euler);
        },
      });
      sortMs.push(a[0]); sortMs.cpu.push(a.cpu[0]);
      surveyMs.push(b[0]); surveyMs.cpu.push(b.cpu[0]);
      ratio.push(b[0] / a[0]); ratioCpu.push(b.cpu[0] / a.cpu[0]);
    }
    ctx.record('survey.sortPaired.ms', median(sortMs), { label: 'Float64Array sort, alternating with survey', unit: 'ms', samples: sortMs, cpu: sortMs.cpu });
    ctx.record('survey.ms', median(surveyMs), { label: 'survey (load excluded)', unit: 'ms', samples: surveyMs, cpu: surveyMs.cpu });
    ctx.note('survey.ratio.runs', ratio);
    ctx.note('survey.ratioCpu.runs', ratioCpu);
    ctx.record('survey.ratio', median(ratio), { label: 'survey / sort, median of the run-by-run ratios', unit: '×' });
    ctx.record('survey.ratioCpu', median(ratioCpu), { label: '  same in CPU time', unit: '×' });
  },
  targets: [
    { key: 'survey.ratio', label: 'survey time / sort time', limit: 4, compute: (r) => r['survey.ratio'] },
    { key: 'survey.ratioCpu', label: '  same in CPU time', limit: null, compute: (r) => r['survey.ratioCpu'] },
  ],
};

export const stagesCase = {
  name: 'stages',
  about: 'the stages of survey timed one by one: complex, order, critical points, χ count, join and split sweeps',
  async run(ctx) {
    const L = await lib();
    warmUp(L);
    const stages = {
      complex: [], order: [], critical: [], simplices: [], join: [], split: [],
    };
    const cpu = Object.fromEntries(Object.keys(stages).map((k) => [k, []]));
    for (let k = 0; k < ctx.repeat; k++) {
      const g = freshGrid(L, ctx);
      collect();
      warmUp(L);
      const step = (name, fn) => {
        const t = lap(fn);
        stages[name].push(t.wall);
        cpu[name].push(t.cpu);
        return t.out;
      };
      // the same sequence as survey(), which shares one union-find buffer between the sweeps
      const cx = step('complex', () => L.buildComplex(g, OPTS));
      const order = step('order', () => L.sortOrder(cx.values));
      step('critical', () => L.findCriticalPoints(cx));
      step('simplices', () => cx.countSimplices());
      const scratch = new Int32Array(cx.n + 1);
      step('join', () => L.buildMergeTree(cx, order, 'join', scratch));
      step('split', () => L.buildMergeTree(cx, order, 'split', scratch));
    }
    const labels = {
      complex: 'buildComplex', order: 'sortOrder', critical: 'findCriticalPoints',
      simplices: 'countSimplices', join: 'buildMergeTree join', split: 'buildMergeTree split',
    };
    for (const [name, ms] of Object.entries(stages)) {
      ctx.record(`stage.${name}.ms`, median(ms), { label: `  stage: ${labels[name]}`, unit: 'ms', samples: ms, cpu: cpu[name] });
    }
  },
};

export const loadCase = {
  name: 'load',
  about: 'readGeoTiff + survey, from a temporary GeoTIFF of the same terrain (needs the GeoTIFF reader/writer in dist/io)',
  skip() {
    if (!existsSync(distPath('io/geotiff-write.js')) && !existsSync(distPath('io/index.js'))) {
      return 'dist/io/geotiff-write.js and dist/io/index.js not built yet (GeoTIFF reader/writer pending)';
    }
    return null;
  },
  async run(ctx) {
    const L = await lib();
    warmUp(L);
    const io = (await importDist('io/index.js')) ?? {};
    const writer = io.writeGeoTiff ?? (await importDist('io/geotiff-write.js'))?.writeGeoTiff;
    const reader = io.readGeoTiff ?? (await importDist('io/geotiff-read.js'))?.readGeoTiff;
    if (!writer || !reader) {
      ctx.warn('load: writeGeoTiff / readGeoTiff not exported yet; skipped');
      return;
    }
    const path = join(tmpdir(), `sill-bench-${process.pid}-${ctx.size}.tif`);
    try {
      await writer(path, {
        width: ctx.size, height: ctx.size, values: ctx.float64 ? Float64Array.from(ctx.terrain()) : ctx.terrain(),
        transform: [500000, 10, 0, 6000000, 0, -10], crs: { epsg: 32633 }, nodata: null,
      });
      const readMs = [];
      const ms = await timeIt(async () => {
        const t0 = performance.now();
        const g = await reader(path);
        readMs.push(performance.now() - t0);
        return L.survey(g, OPTS);
      }, { repeat: ctx.repeat, warm: () => warmUp(L), teardown: (res) => checkEuler(ctx, res) });
      ctx.record('load.read.ms', median(readMs), { label: '  readGeoTiff', unit: 'ms', samples: readMs });
      ctx.record('load.total.ms', median(ms), { label: 'readGeoTiff + survey', unit: 'ms', samples: ms, cpu: ms.cpu });
    } finally {
      rmSync(path, { force: true });
    }
  },
  targets: [
    { key: 'load.total.ms / sort.ms', label: '(load + survey) time / sort time', limit: null, compute: (r) => r['load.total.ms'] / (r['survey.sortPaired.ms'] ?? r['sort.ms']) },
  ],
};

export const memoryCase = {
  name: 'memory',
  about: 'peak memory of survey in a child process, above the baseline taken after the input grid exists',
  async run(ctx) {
    const whole = await runMemoryChild(ctx, THIS_FILE, 'survey');
    const cells = whole.cells;
    ctx.record('mem.survey.rss', whole.peakRssAbove / cells, {
      label: 'survey peak RSS above baseline', unit: 'B/cell', detail: whole,
    });
    ctx.record('mem.survey.rss.total', (whole.peakRssAbove + whole.inputBytes) / cells, {
      label: '  same, including the input values', unit: 'B/cell',
    });
    const staged = await runMemoryChild(ctx, THIS_FILE, 'stages');
    ctx.record('mem.stages.js', staged.peakJsAbove / cells, {
      label: 'heap+arrayBuffers peak at stage boundaries', unit: 'B/cell', detail: staged,
    });
    for (const m of staged.marks) {
      ctx.record(`mem.stages.${m.label}`, m.js / cells, { label: `  after ${m.label} (heap+arrayBuffers)`, unit: 'B/cell' });
    }
  },
  targets: [
    { key: 'mem.survey.rss', label: 'peak bytes per cell (above input)', limit: 40, compute: (r) => r['mem.survey.rss'] },
  ],
};

/** Jobs run inside bench/lib/memory-child.mjs (input grid already built, baseline taken). */
export const memoryJobs = {
  async survey({ grid }) {
    const L = await lib();
    return L.survey(grid, OPTS);
  },
  async stages({ grid, probe }) {
    const L = await lib();
    const cx = L.buildComplex(grid, OPTS);
    probe.mark('buildComplex');
    const order = L.sortOrder(cx.values);
    probe.mark('sortOrder');
    const critical = L.findCriticalPoints(cx);
    probe.mark('findCriticalPoints');
    const simplices = cx.countSimplices();
    probe.mark('countSimplices');
    const scratch = new Int32Array(cx.n + 1);
    const join = L.buildMergeTree(cx, order, 'join', scratch);
    probe.mark('join');
    const split = L.buildMergeTree(cx, order, 'split', scratch);
    probe.mark('split');
    return { cx, order, critical, simplices, join, split };
  },
};
