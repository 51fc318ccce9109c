/**
 * One thread against two (`threads: 1` / `threads: 2`, `--threads 1` / `--threads 2`): survey and
 * ponds as library calls on an in-memory grid (values on shared memory, as the loaders give them),
 * and as whole processes from a GeoTIFF on disk (survey --json to /dev/null, ponds -o DIR with
 * every file), alternating run by run so both see the same load from other work on the machine.
 *
 * Besides wall-clock time, each library run records the calling thread's CPU time (from
 * /proc/self/task/<pid>/schedstat) and the process's (getrusage), so the rest is the worker's and
 * V8's helper threads'. On a busy machine the wall clock mostly measures the queue for the cores;
 * the larger of the two CPU times is about what the call takes on two free cores (when neither
 * thread waits for the other).
 * Whole processes are measured by /usr/bin/time (wall, user + system, peak RSS = VmHWM).
 */
import { spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, readFileSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { collect, importDist, median, distPath } from '../lib/util.mjs';
import { runMemoryChild } from '../lib/memory.mjs';

const THIS_FILE = fileURLToPath(import.meta.url);

const SURVEY_OPTS = { connectivity: 8, boundary: 'open' };

async function lib() {
  const [survey, ponds, grid, io] = await Promise.all([
    importDist('morse/survey.js'), importDist('hydro/ponds.js'), importDist('surface/grid.js'), importDist('io/index.js'),
  ]);
  if (!survey || !ponds) throw new Error('dist/ is missing: run npm run build first');
  return { survey: survey.survey, ponds: ponds.ponds, Grid: grid.Grid, gridValues: grid.gridValues, writeGeoTiff: io.writeGeoTiff };
}

/** A Grid over a fresh copy of the terrain on shared memory. */
function sharedGrid(L, ctx) {
  const t = ctx.terrain();
  const v = L.gridValues(t.length, ctx.float64);
  v.set(t);
  return new L.Grid({ width: ctx.size, height: ctx.size, values: v });
}

function warmUp(L) {
  const n = 128, v = L.gridValues(n * n, false);
  for (let i = 0; i < v.length; i++) v[i] = Math.sin(i * 0.37) * 10 + ((i * 2654435761) >>> 0) / 2 ** 32;
  const g = new L.Grid({ width: n, height: n, values: v });
  for (const threads of [1, 2]) {
    L.survey(g, { ...SURVEY_OPTS, threads, parallelMinCells: 0 });
    L.ponds(g, { threads, parallelMinCells: 0 });
  }
}

/** CPU time so far of this process's main thread, in ms (/proc/self/task/<pid>/schedstat, nanoseconds). */
function mainThreadCpu() {
  return Number(readFileSync(`/proc/self/task/${process.pid}/schedstat`, 'utf8').split(' ')[0]) / 1e6;
}

/**
 * One timed library call: wall, process CPU (getrusage: every thread, ended ones included), the
 * calling thread's CPU, and the rest (the worker, which has ended by then, and V8's helper threads).
 */
function timed(fn) {
  collect();
  const m0 = mainThreadCpu(), c0 = process.cpuUsage(), t0 = performance.now();
  const out = fn();
  const wall = performance.now() - t0, c = process.cpuUsage(c0);
  const main = mainThreadCpu() - m0, cpu = (c.user + c.system) / 1000;
  return { out, wall, cpu, main, others: Math.max(0, cpu - main) };
}

export const threadsCase = {
  name: 'threads',
  about: 'survey and ponds (library calls) with threads 1 and 2, alternating; CPU time per thread',
  async run(ctx) {
    const L = await lib();
    warmUp(L);
    const jobs = {
      survey: (g, threads) => L.survey(g, { ...SURVEY_OPTS, threads }),
      ponds: (g, threads) => L.ponds(g, { threads }),
    };
    for (const [name, job] of Object.entries(jobs)) {
      const s = { 1: [], 2: [] };
      for (let k = 0; k < ctx.repeat; k++) {
        for (const threads of [1, 2]) {
          const g = sharedGrid(L, ctx);
          const t = timed(() => job(g, threads));
          if (name === 'survey' && t.out.threads !== threads) ctx.warn(`survey ran on ${t.out.threads} thread(s), asked for ${threads}`);
          s[threads].push(t);
        }
      }
      for (const threads of [1, 2]) {
        const xs = s[threads];
        const wall = xs.map((x) => x.wall), cpu = xs.map((x) => x.cpu);
        ctx.record(`threads.${name}.${threads}.ms`, median(wall), { label: `${name} library call, threads ${threads}`, unit: 'ms', samples: wall, cpu });
        ctx.record(`threads.${name}.${threads}.main`, median(xs.map((x) => x.main)), { label: `  calling thread CPU`, unit: 'ms' });
        ctx.record(`threads.${name}.${threads}.others`, median(xs.map((x) => x.others)), { label: `  other threads CPU (worker, V8 helpers)`, unit: 'ms' });
        ctx.record(`threads.${name}.${threads}.busiest`, median(xs.map((x) => Math.max(x.main, x.others))), { label: `  busiest thread CPU (the call on two free cores)`, unit: 'ms' });
      }
      ctx.record(`threads.${name}.speedup`, median(s[1].map((x, k) => x.wall / s[2][k].wall)), { label: `${name}: wall threads 1 / threads 2, run by run`, unit: '×' });
      ctx.record(`threads.${name}.speedupBusiest`, median(s[1].map((x, k) => Math.max(x.main, x.others) / Math.max(s[2][k].main, s[2][k].others))), { label: `${name}: busiest-thread CPU, threads 1 / threads 2`, unit: '×' });
    }
    // peak memory of each call in a fresh process (bench/lib/memory-child.mjs: VmHWM above the baseline)
    for (const name of ['survey', 'ponds']) {
      for (const threads of [1, 2]) {
        const m = await runMemoryChild(ctx, THIS_FILE, `${name}${threads}`);
        ctx.record(`threads.${name}.${threads}.rss`, m.peakRssAbove / m.cells, { label: `${name} library call, threads ${threads}: peak RSS above the input`, unit: 'B/cell', detail: m });
      }
    }
  },
  targets: [
    { key: 'threads.survey.speedup', label: 'survey library: threads 1 / threads 2 (wall)', limit: null, compute: (r) => r['threads.survey.speedup'] },
    { key: 'threads.ponds.speedup', label: 'ponds library: threads 1 / threads 2 (wall)', limit: null, compute: (r) => r['threads.ponds.speedup'] },
  ],
};

/** Run the built CLI under /usr/bin/time; wall and CPU in ms, peak RSS in bytes. */
function timeCli(args, stdoutToNull) {
  const r = spawnSync('/usr/bin/time', ['-f', 'TIME %e %U %S %M', process.execPath, distPath('cli/main.js'), ...args], {
    encoding: 'utf8', stdio: ['ignore', stdoutToNull ? 'ignore' : 'pipe', 'pipe'], maxBuffer: 1 << 20,
  });
  const m = /TIME (\S+) (\S+) (\S+) (\d+)/.exec(r.stderr ?? '');
  if (r.status !== 0 || !m) return { ok: false, message: (r.stderr ?? '').trim().split('\n').slice(-2).join(' ') };
  return { ok: true, wall: 1000 * Number(m[1]), cpu: 1000 * (Number(m[2]) + Number(m[3])), rss: 1024 * Number(m[4]) };
}

export const threadsCliCase = {
  name: 'threads-cli',
  about: 'whole processes from a GeoTIFF: survey --json and ponds -o DIR, --threads 1 and 2, alternating (needs /usr/bin/time)',
  skip() {
    return existsSync('/usr/bin/time') ? null : '/usr/bin/time is not installed (apt-get install time)';
  },
  async run(ctx) {
    const L = await lib();
    const dir = mkdtempSync(join(tmpdir(), 'sill-bench-threads-'));
    try {
      const tif = join(dir, 'dem.tif');
      await L.writeGeoTiff(tif, {
        width: ctx.size, height: ctx.size, values: ctx.float64 ? Float64Array.from(ctx.terrain()) : ctx.terrain(),
        transform: [500000, 10, 0, 6000000, 0, -10], crs: { epsg: 32633 }, nodata: null,
      });
      const cells = ctx.size * ctx.size;
      const commands = {
        'survey --json': (t) => ['survey', tif, '--json', '--threads', String(t)],
        'ponds -o': (t) => ['ponds', tif, '-o', join(dir, `ponds-${t}`), '--quiet', '--threads', String(t)],
      };
      for (const [name, args] of Object.entries(commands)) {
        const s = { 1: [], 2: [] };
        let failed = null;
        for (let k = 0; k < ctx.repeat && failed === null; k++) {
          for (const t of [1, 2]) {
            rmSync(join(dir, `ponds-${t}`), { recursive: true, force: true });
            const r = timeCli(args(t), name.startsWith('survey'));
            if (!r.ok) { failed = r.message; break; }
            s[t].push(r);
          }
        }
        if (failed !== null) { ctx.warn(`${name} failed at ${ctx.size}²: ${failed}`); continue; }
        const key = name.split(' ')[0];
        for (const t of [1, 2]) {
          const xs = s[t];
          ctx.record(`cli.${key}.${t}.ms`, median(xs.map((x) => x.wall)), { label: `sill ${name} --threads ${t} (whole process)`, unit: 'ms', samples: xs.map((x) => x.wall), cpu: xs.map((x) => x.cpu) });
          ctx.record(`cli.${key}.${t}.rss`, median(xs.map((x) => x.rss)) / cells, { label: `  peak RSS (VmHWM)`, unit: 'B/cell' });
        }
        ctx.record(`cli.${key}.speedup`, median(s[1].map((x, k) => x.wall / s[2][k].wall)), { label: `sill ${name}: wall --threads 1 / --threads 2, run by run`, unit: '×' });
      }
    } finally {
      rmSync(dir, { recursive: true, force: true });
    }
  },
};

/** Jobs run inside bench/lib/memory-child.mjs (input grid on shared memory, baseline taken). */
export const memoryJobs = {
  async survey1({ grid }) { return (await lib()).survey(grid, { ...SURVEY_OPTS, threads: 1 }); },
  async survey2({ grid }) { return (await lib()).survey(grid, { ...SURVEY_OPTS, threads: 2 }); },
  async ponds1({ grid }) { return (await lib()).ponds(grid, { threads: 1 }); },
  async ponds2({ grid }) { return (await lib()).ponds(grid, { threads: 2 }); },
};
