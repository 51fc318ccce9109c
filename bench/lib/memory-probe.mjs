/**
 * Peak-memory probe, used inside the child process that runs one measured job.
 *
 * Three views of memory are kept:
 *  - the kernel's high-water mark of resident memory (VmHWM in /proc/self/status), reset
 *    just before the job by writing 5 to /proc/self/clear_refs (Linux); this is the true peak;
 *  - a sampler thread reading the process RSS every millisecond (fallback where the reset is
 *    not available, and a cross-check);
 *  - process.memoryUsage() heapUsed + arrayBuffers at the points the job marks (stage
 *    boundaries), without forcing a GC, so garbage not yet collected is counted as it is held.
 */
import { readFileSync, writeFileSync } from 'node:fs';
import { Worker } from 'node:worker_threads';

const SAMPLER = `
const { workerData } = require('node:worker_threads');
const flag = new Int32Array(workerData.flag);
const peak = new Float64Array(workerData.peak);
while (Atomics.load(flag, 0) === 0) {
  const r = process.memoryUsage.rss();
  if (r > peak[0]) peak[0] = r;
  Atomics.wait(flag, 0, 0, 1);
}
`;

function statusKb(field) {
  try {
    const m = readFileSync('/proc/self/status', 'utf8').match(new RegExp(`^${field}:\\s+(\\d+) kB`, 'm'));
    return m ? Number(m[1]) * 1024 : null;
  } catch {
    return null;
  }
}

export class MemoryProbe {
  constructor() {
    this.flag = new SharedArrayBuffer(4);
    this.peakBuf = new SharedArrayBuffer(8);
    this.marks = [];
    this.worker = null;
    this.hwmReset = false;
  }

  /** Start the sampler (before the baseline, so its own memory is part of it). */
  async start() {
    this.worker = new Worker(SAMPLER, { eval: true, workerData: { flag: this.flag, peak: this.peakBuf } });
    await new Promise((res) => setTimeout(res, 50));
  }

  /** Take the baseline: call after the input exists and a full GC has run. */
  baseline() {
    try { writeFileSync('/proc/self/clear_refs', '5'); this.hwmReset = true; } catch { this.hwmReset = false; }
    const mu = process.memoryUsage();
    this.base = { rss: mu.rss, js: mu.heapUsed + mu.arrayBuffers, heap: mu.heapUsed, buffers: mu.arrayBuffers };
    new Float64Array(this.peakBuf)[0] = mu.rss;
    this.marks = [];
  }

  /** Record process.memoryUsage() at a named point (no GC). */
  mark(label) {
    const mu = process.memoryUsage();
    this.marks.push({
      label, rss: mu.rss - this.base.rss, js: mu.heapUsed + mu.arrayBuffers - this.base.js,
      heap: mu.heapUsed - this.base.heap, buffers: mu.arrayBuffers - this.base.buffers,
    });
  }

  async stop() {
    Atomics.store(new Int32Array(this.flag), 0, 1);
    Atomics.notify(new Int32Array(this.flag), 0);
    if (this.worker) await this.worker.terminate();
    const sampled = new Float64Array(this.peakBuf)[0];
    const hwm = this.hwmReset ? statusKb('VmHWM') : null;
    const peakRss = Math.max(sampled, hwm ?? 0, ...this.marks.map((m) => m.rss + this.base.rss));
    return {
      baseRss: this.base.rss,
      peakRssAbove: peakRss - this.base.rss,
      sampledRssAbove: sampled - this.base.rss,
      hwmAbove: hwm === null ? null : hwm - this.base.rss,
      hwmSource: this.hwmReset ? 'VmHWM after clear_refs reset' : 'sampler only',
      peakJsAbove: Math.max(0, ...this.marks.map((m) => m.js)),
      marks: this.marks,
    };
  }
}
