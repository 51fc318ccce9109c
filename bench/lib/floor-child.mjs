/**
 * One whole-process run of the floor: `node floor-child.mjs DIST FILE THREADS` reads FILE with
 * readGeoTiff from the build in DIST, sorts its values once with sortOrder, and prints one JSON
 * line: the time to read, to sort, from process start to the end (wall clock), the CPU time of
 * reading and of sorting (every thread of the process), and of the whole process.
 * `node floor-child.mjs --reference RAW` instead reads the raw float32 values of RAW and sorts a
 * Float32Array copy with the engine's own sort (the reference).
 */
import { readFileSync } from 'node:fs';
import { pathToFileURL } from 'node:url';
import { join } from 'node:path';

const [mode, a, b] = process.argv.slice(2);
const cpuMs = (c) => (c.user + c.system) / 1000;
const t0 = performance.now();
const report = {};
if (mode === '--reference') {
  const c0 = process.cpuUsage();
  const raw = readFileSync(a);
  const values = new Float32Array(raw.buffer, raw.byteOffset, raw.byteLength / 4).slice();
  const t1 = performance.now();
  const c1 = process.cpuUsage();
  values.sort();
  report.read = t1 - t0;
  report.sort = performance.now() - t1;
  report.readCpu = (c1.user - c0.user + c1.system - c0.system) / 1000;
  report.sortCpu = cpuMs(process.cpuUsage(c1));
} else {
  const { readGeoTiff } = await import(pathToFileURL(join(mode, 'io', 'geotiff-read.js')).href);
  const { sortOrder } = await import(pathToFileURL(join(mode, 'morse', 'order.js')).href);
  const t1 = performance.now();
  const c1 = process.cpuUsage();
  const grid = await readGeoTiff(a, b === 'default' ? {} : { threads: Number(b) });
  const t2 = performance.now();
  const c2 = process.cpuUsage();
  const order = sortOrder(grid.values);
  report.read = t2 - t1;
  report.sort = performance.now() - t2;
  report.readCpu = (c2.user - c1.user + c2.system - c1.system) / 1000;
  report.sortCpu = cpuMs(process.cpuUsage(c2));
  report.sorted = order.length;
}
// time since the process started (node's own start-up included)
report.process = performance.now();
const u = process.resourceUsage();
report.cpu = (u.userCPUTime + u.systemCPUTime) / 1000;
report.maxRssMiB = u.maxRSS / 1024;
console.log(JSON.stringify(report));
