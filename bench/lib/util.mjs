/** Shared helpers for the benchmark cases: timing, statistics, formatting, dist imports. */
import { closeSync, existsSync, openSync } from 'node:fs';
import { spawnSync } from 'node:child_process';
import { fileURLToPath, pathToFileURL } from 'node:url';
import { dirname, join } from 'node:path';

export const BENCH_DIR = dirname(dirname(fileURLToPath(import.meta.url)));
export const ROOT_DIR = dirname(BENCH_DIR);
export const DIST_DIR = join(ROOT_DIR, 'dist');

/** Path of a built module, e.g. distPath('morse/survey.js'). */
export function distPath(rel) {
  return join(DIST_DIR, rel);
}

/** Import a built module, or return null when it has not been built (yet). */
export async function importDist(rel) {
  const p = distPath(rel);
  if (!existsSync(p)) return null;
  return import(pathToFileURL(p).href);
}

/** Full garbage collection when node runs with --expose-gc (npm run bench does). */
export function collect() {
  if (typeof globalThis.gc === 'function') { globalThis.gc(); globalThis.gc(); }
}

/**
 * Time fn() `repeat` times (fresh `setup()` input each time, not timed) and return the
 * wall-clock samples in milliseconds; the array also carries `cpu`, the process CPU time
 * (user + system) of each sample, which other work on the machine inflates less.
 * A full GC runs before every sample so one sample's garbage is not charged to the next;
 * a forced full GC can also throw away optimised code, so `warm()` (not timed) runs after it.
 */
export async function timeIt(fn, { repeat = 1, setup = null, teardown = null, warm = null } = {}) {
  const ms = [];
  ms.cpu = [];
  for (let k = 0; k < repeat; k++) {
    const input = setup ? await setup() : undefined;
    collect();
    if (warm) await warm();
    const c0 = process.cpuUsage();
    const t0 = performance.now();
    const out = await fn(input);
    ms.push(performance.now() - t0);
    const c = process.cpuUsage(c0);
    ms.cpu.push((c.user + c.system) / 1000);
    if (teardown) await teardown(out, input);
  }
  return ms;
}

/** Wall-clock and CPU time of a synchronous call, in milliseconds. */
export function lap(fn) {
  const c0 = process.cpuUsage();
  const t0 = performance.now();
  const out = fn();
  const wall = performance.now() - t0;
  const c = process.cpuUsage(c0);
  return { out, wall, cpu: (c.user + c.system) / 1000 };
}

export function median(xs) {
  const s = [...xs].sort((a, b) => a - b);
  const m = s.length >> 1;
  return s.length % 2 ? s[m] : (s[m - 1] + s[m]) / 2;
}

export function fmtMs(ms) {
  return ms >= 10000 ? `${(ms / 1000).toFixed(1)} s` : ms >= 1000 ? `${(ms / 1000).toFixed(2)} s` : `${ms.toFixed(0)} ms`;
}

export function fmtNum(x, digits = 2) {
  return Number.isFinite(x) ? x.toFixed(digits) : String(x);
}

/** Render rows (arrays of strings) as an aligned plain-text table; first row is the header. */
export function table(rows) {
  const widths = rows[0].map((_, c) => Math.max(...rows.map((r) => String(r[c] ?? '').length)));
  const line = (r) => r.map((x, c) => (c === 0 ? String(x ?? '').padEnd(widths[c]) : String(x ?? '').padStart(widths[c]))).join('  ');
  return [line(rows[0]), widths.map((w) => '-'.repeat(w)).join('  '), ...rows.slice(1).map(line)].join('\n');
}

/**
 * Run one process to completion under /usr/bin/time: wall and user + system CPU in ms, the kernel's
 * peak resident set in bytes, the exit status and stderr (the time line taken off). stdout goes to
 * the file `stdout`, or is discarded.
 */
export function timeProcess(cmd, args, { stdout = null } = {}) {
  const fd = stdout ? openSync(stdout, 'w') : 'ignore';
  const p = spawnSync('/usr/bin/time', ['-f', '@@ %e %U %S %M', cmd, ...args], { stdio: ['ignore', fd, 'pipe'], encoding: 'utf8', maxBuffer: 1 << 26 });
  if (typeof fd === 'number') closeSync(fd);
  const err = p.stderr ?? '';
  const m = /@@ ([\d.]+) ([\d.]+) ([\d.]+) (\d+)\s*$/.exec(err);
  if (!m) throw new Error(`${cmd} ${args.join(' ')} could not be timed (${p.status}): ${err.slice(-2000)}`);
  return {
    ms: Number(m[1]) * 1000, cpuMs: (Number(m[2]) + Number(m[3])) * 1000, maxRss: Number(m[4]) * 1024,
    status: p.status, stderr: err.slice(0, m.index),
  };
}
