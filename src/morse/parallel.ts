/**
 * The second core: work that does not depend on the main thread's, run at the same time in one
 * worker thread (src/morse/sweep-worker.ts) over shared memory.
 *
 * The worker gets the grid's definition — its values, size, connectivity, boundary and the
 * outlet / wall flags, all on SharedArrayBuffers — and rebuilds the complex's small tables
 * itself; nothing grid-sized is copied. The calls stay synchronous: the main thread does its
 * share, then blocks on a shared flag (Atomics.wait) until the worker has posted its result,
 * and takes the message off the port at once (receiveMessageOnPort). The result's arrays are
 * transferred, not copied.
 *
 * One worker serves the process at a time (it does not keep the process alive); after a large
 * task it is ended so that its memory goes back at once (RETIRE_MIN_CELLS). Small grids stay on
 * one thread: starting a worker costs tens of milliseconds. The work splits in two, so a thread
 * count above 2 uses 2.
 */
import { existsSync } from 'node:fs';
import { availableParallelism } from 'node:os';
import { fileURLToPath } from 'node:url';
import { MessageChannel, receiveMessageOnPort, Worker, type MessagePort } from 'node:worker_threads';
import { InputError } from '../errors.js';
import type { GridComplex, SimplexCounts, Connectivity, Boundary, GridFlags } from '../surface/complex.js';
import type { GridValues } from '../surface/grid.js';
import type { MergeTree } from './mergetree.js';
import type { CriticalCounts } from './critical.js';

/** Grids with fewer cells than this stay on one thread unless told otherwise. */
export const PARALLEL_MIN_CELLS = 1_000_000;

export interface ThreadOptions {
  /** Threads for the analysis: 1 keeps everything on the calling thread; default the number of cores. */
  threads?: number;
  /** Grids with fewer cells stay on one thread (default PARALLEL_MIN_CELLS); for tests and benchmarks. */
  parallelMinCells?: number;
}

/** The thread count asked for, checked (a whole number ≥ 1), or the number of cores. */
export function threadCount(threads: number | undefined): number {
  if (threads === undefined) return availableParallelism();
  if (!Number.isInteger(threads) || threads < 1) throw new InputError(`--threads must be a whole number ≥ 1, got ${threads}`);
  return threads;
}

/**
 * True when work on a grid of `cells` cells should use the worker. The size threshold is
 * `parallelMinCells`, else the environment variable SILL_PARALLEL_MIN_CELLS (so that tests can
 * run small inputs through the whole command on two threads), else PARALLEL_MIN_CELLS.
 */
export function useWorker(opts: ThreadOptions, cells: number): boolean {
  if (threadCount(opts.threads) < 2) return false;
  const env = Number(process.env.SILL_PARALLEL_MIN_CELLS);
  const min = opts.parallelMinCells ?? (process.env.SILL_PARALLEL_MIN_CELLS !== undefined && Number.isFinite(env) ? env : PARALLEL_MIN_CELLS);
  return cells >= min && workerFile() !== null;
}

/** A typed array on shared memory: `a` itself when it is, else a copy. */
export function onSharedMemory<T extends GridValues | Uint8Array | Uint32Array | Int32Array>(a: T): T {
  if (a.buffer instanceof SharedArrayBuffer) return a;
  const Ctor = a.constructor as new (b: SharedArrayBuffer) => T;
  const copy = new Ctor(new SharedArrayBuffer(a.byteLength));
  copy.set(a as never);
  return copy;
}

/** The definition of a grid complex that the worker rebuilds (every array on shared memory). */
export interface GridTask {
  values: GridValues;
  width: number;
  height: number;
  connectivity: Connectivity;
  boundary: Boundary;
  nodataOutlet: boolean;
  flags: GridFlags;
}

/** What the main thread tells the worker about the order (control word 0). */
export const ORDER_PENDING = 0, ORDER_READY = 1, ORDER_ABANDONED = 2;

/** The grid task of a complex (its flags are on shared memory already; `values` must be). */
export function gridTask(cx: GridComplex, values: GridValues = cx.values): GridTask {
  const flags = cx.flags;
  return {
    values, width: cx.w, height: cx.h, connectivity: cx.connectivity, boundary: cx.boundary,
    nodataOutlet: cx.ghostNodata,
    flags: { omegaAdj: flags.omegaAdj && onSharedMemory(flags.omegaAdj), topAdj: flags.topAdj && onSharedMemory(flags.topAdj), hasNodata: flags.hasNodata },
  };
}

/**
 * A worker that has worked on a grid of this many cells or more is ended once its result is
 * taken: its isolate would otherwise hold the task's garbage (the union-find forest, the tree
 * builders' lists: several bytes per cell) until its next collection, which an idle worker never
 * starts. Ending it returns that memory at once; the next call starts a new worker. Smaller tasks
 * keep the worker for the next call.
 */
const RETIRE_MIN_CELLS = 1 << 18;

/** How long a caller waits for a new worker's module to load before giving up. */
const START_TIMEOUT_MS = 60_000;

/** A task running in the worker; result() blocks until it is done. */
export class WorkerJob<T> {
  private finished = false;

  constructor(private readonly ctrl: Int32Array, private readonly port: MessagePort, private readonly owner: Worker, private readonly started: Int32Array, private readonly cells: number) {}

  /** The main thread has written the order: the worker may read it. */
  orderReady(): void {
    Atomics.store(this.ctrl, 0, ORDER_READY);
    Atomics.notify(this.ctrl, 0);
  }

  /** Wait for the worker's result; an error thrown there is thrown here, as the same kind of error. */
  result(): T {
    if (this.finished) throw new Error('internal: a worker result was taken twice');
    this.finished = true;
    // a worker that never got its module running (it cannot post anything) is given up after a while
    for (let waited = 0; Atomics.load(this.ctrl, 1) === 0;) {
      if (Atomics.wait(this.ctrl, 1, 0, 1000) !== 'timed-out' || Atomics.load(this.started, 0) !== 0) continue;
      waited += 1000;
      if (waited >= START_TIMEOUT_MS) {
        this.port.close();
        retire(this.owner);
        throw new Error(`the worker thread did not start within ${START_TIMEOUT_MS / 1000} s; run with --threads 1`);
      }
    }
    const got = receiveMessageOnPort(this.port);
    this.port.close();
    if (this.cells >= RETIRE_MIN_CELLS) retire(this.owner);
    if (got === undefined) throw new Error('internal: the worker thread finished without a result; this is a bug in sill, please report it');
    const msg = got.message as { result?: T; error?: { name: string; message: string } };
    if (msg.error !== undefined) throw rebuildError(msg.error);
    return msg.result as T;
  }

  /** The caller failed before taking the result: release the worker (it stops waiting for the order). */
  abandon(): void {
    if (this.finished) return;
    this.finished = true;
    Atomics.store(this.ctrl, 0, ORDER_ABANDONED);
    Atomics.notify(this.ctrl, 0);
    this.port.close();
    if (this.cells >= RETIRE_MIN_CELLS) retire(this.owner);
  }
}

/** An error as the worker reported it, rebuilt with the same class and message. */
function rebuildError(e: { name: string; message: string }): Error {
  switch (e.name) {
    case 'InputError': return new InputError(e.message);
    case 'RangeError': return new RangeError(e.message);
    case 'TypeError': return new TypeError(e.message);
    default: {
      const err = new Error(e.message);
      if (e.name !== 'Error') err.name = e.name;
      return err;
    }
  }
}

/** The split tree and the simplex counts of a grid, from the worker; the order arrives later (orderReady). */
export interface SplitResult {
  split: MergeTree;
  simplices: SimplexCounts;
}

/** The Euler self-check's counts of a grid, from the worker. */
export interface EulerCounts {
  critical: CriticalCounts;
  simplices: SimplexCounts;
}

/**
 * Start the simplex count and the split sweep over `order` (shared, written by the caller, then
 * orderReady()); `forest` (shared, at least cells + 1 entries) is the sweep's union-find buffer.
 */
export function startSplitJob(task: GridTask, order: Uint32Array, forest: Int32Array): WorkerJob<SplitResult> {
  if (!(order.buffer instanceof SharedArrayBuffer) || !(forest.buffer instanceof SharedArrayBuffer)) throw new Error('internal: the order or forest given to the worker is not on shared memory');
  return post<SplitResult>({ kind: 'split', grid: task, order, forest });
}

/** Start the Euler self-check's counts (critical points by lower links, simplices). */
export function startEulerJob(task: GridTask): WorkerJob<EulerCounts> {
  return post<EulerCounts>({ kind: 'euler', grid: task });
}

/**
 * Start the shoreline lengths of a share of the 2 × 2 blocks (src/hydro/shape.ts, perimeterRows);
 * `values` and `labels` on shared memory, the depression tables copied.
 */
export function startPerimeterJob(task: { width: number; height: number; values: GridValues; labels: Int32Array } & Record<string, unknown>): WorkerJob<Float64Array> {
  if (!(task.labels.buffer instanceof SharedArrayBuffer)) throw new Error('internal: the labels given to the worker are not on shared memory');
  return post<Float64Array>({ kind: 'perimeter', grid: { values: task.values, width: task.width, height: task.height }, perimeter: task });
}

let worker: Worker | null = null;
/** Raised by the current worker once its module is running. */
let workerStarted: Int32Array = new Int32Array(new SharedArrayBuffer(4));

/** End a worker (it finishes nothing more; its memory goes back to the system). */
function retire(w: Worker): void {
  if (worker === w) worker = null;
  void w.terminate();
}

function post<T>(task: Record<string, unknown>): WorkerJob<T> {
  const g = task.grid as GridTask;
  if (!(g.values.buffer instanceof SharedArrayBuffer)) throw new Error('internal: grid values given to the worker are not on shared memory');
  const file = workerFile();
  if (file === null) throw new Error('internal: the worker module sweep-worker.js is missing; run npm run build');
  if (worker === null) {
    workerStarted = new Int32Array(new SharedArrayBuffer(4));
    const w = new Worker(file, { workerData: { started: workerStarted } });
    w.unref();
    // a worker that stopped (it should not) is replaced on the next call
    w.on('exit', () => { if (worker === w) worker = null; });
    w.on('error', () => { if (worker === w) worker = null; });
    worker = w;
  }
  const ctrl = new Int32Array(new SharedArrayBuffer(8));
  const { port1, port2 } = new MessageChannel();
  port1.unref();
  worker.postMessage({ ...task, ctrl, port: port2 }, [port2]);
  return new WorkerJob<T>(ctrl, port1, worker, workerStarted, g.width * g.height);
}

let resolved: string | null | undefined;

/**
 * The compiled worker module: next to this one in dist/, or — when this module runs from the
 * TypeScript sources (vitest) — dist/morse/sweep-worker.js of the same checkout (npm test builds first).
 */
export function workerFile(): string | null {
  if (resolved !== undefined) return resolved;
  const here = new URL('./sweep-worker.js', import.meta.url);
  const built = new URL('../../dist/morse/sweep-worker.js', import.meta.url);
  resolved = null;
  for (const u of import.meta.url.endsWith('.ts') ? [built] : [here]) {
    const p = fileURLToPath(u);
    if (existsSync(p)) { resolved = p; break; }
  }
  return resolved;
}
