/**
 * TIFF tile encoding: cut one tile out of a band of rows, turn NaN into the nodata value,
 * apply the TIFF predictor and DEFLATE it (node:zlib). The same code runs on the calling
 * thread (`threads: 1`) or in a pool of worker threads that read the rows from shared memory,
 * so the bytes of a tile never depend on where it was encoded.
 *
 * The encoder is kept as JavaScript source text: a worker thread is started from it with
 * `eval: true`, and the calling thread builds the same function from it, so the one
 * implementation runs both from the TypeScript sources (tests) and from dist/.
 */
import { Worker } from 'node:worker_threads';
import { deflateSync } from 'node:zlib';
import { availableParallelism } from 'node:os';

/** One tile to encode. The source rows lie in `buf` from `byteOffset`, `rowStride` samples apart. */
export interface TileJob {
  buf: ArrayBufferLike;
  byteOffset: number;
  /** Samples from one source row to the next. */
  rowStride: number;
  /** Rows and columns of real data in this tile (the rest of the tile is padding, written as 0). */
  rows: number;
  cols: number;
  /** Tile width and height (square tiles). */
  tile: number;
  /** Bytes per sample: 1, 2, 4 or 8. */
  bps: number;
  float: boolean;
  /** TIFF predictor: 1 none, 2 horizontal differencing, 3 floating point (TIFF Technical Note 3). */
  predictor: number;
  /** Float samples only: the value NaN is written as, or null to keep NaN. */
  fill: number | null;
  /** zlib level and strategy (node:zlib constants). */
  level: number;
  strategy: number;
}

/**
 * `encodeTile(job, deflate)` → Uint8Array of the DEFLATE (zlib) stream of the tile, little-endian
 * samples. Predictor 2 differences whole samples along each tile row (mod 2^bits); predictor 3
 * splits each tile row into byte planes, most significant byte first, then differences bytes
 * along the row (the floating-point predictor of Adobe's TIFF Technical Note 3, as libtiff
 * implements it).
 */
export const ENCODER_SOURCE = String.raw`
const LITTLE_HOST = new Uint8Array(new Uint16Array([1]).buffer)[0] === 1;
let scratch = null;
let planes = null;
let rowCopy = null;
function encodeTile(job, deflate) {
  const T = job.tile, bps = job.bps, rowBytes = T * bps, size = T * rowBytes;
  if (scratch === null || scratch.length !== size) { scratch = new Uint8Array(size); planes = new Uint8Array(rowBytes); rowCopy = new Uint32Array(T); }
  const out = scratch;
  out.fill(0);
  const src = new Uint8Array(job.buf);
  const srcRow = job.rowStride * bps, n = job.cols * bps;
  for (let r = 0; r < job.rows; r++) {
    const at = job.byteOffset + r * srcRow;
    out.set(src.subarray(at, at + n), r * rowBytes);
  }
  if (job.float && job.fill !== null) {
    const v = bps === 4 ? new Float32Array(out.buffer, 0, T * T) : new Float64Array(out.buffer, 0, T * T);
    const fill = job.fill;
    for (let r = 0; r < job.rows; r++) {
      for (let i = r * T, e = i + job.cols; i < e; i++) if (v[i] !== v[i]) v[i] = fill;
    }
  }
  if (job.predictor === 2) {
    const s = bps === 1 ? out : bps === 2 ? new Uint16Array(out.buffer, 0, T * T) : new Uint32Array(out.buffer, 0, T * T);
    for (let r = 0; r < job.rows; r++) {
      const o = r * T;
      for (let i = o + T - 1; i > o; i--) s[i] -= s[i - 1];
    }
    if (!LITTLE_HOST) swapToLittle(out, bps);
  } else if (job.predictor === 3) {
    const u = new Uint32Array(out.buffer, 0, (T * T * bps) >> 2);
    for (let r = 0; r < job.rows; r++) {
      const o = r * rowBytes;
      // byte planes, most significant first
      if (LITTLE_HOST && bps === 4) {
        // float32 in one pass: each plane's byte minus the byte before it in the row of planes
        rowCopy.set(u.subarray(r * T, r * T + T));
        const last = rowCopy[T - 1];
        let p3 = 0, p2 = last >>> 24, p1 = (last >>> 16) & 255, p0 = (last >>> 8) & 255;
        for (let i = 0; i < T; i++) {
          const v = rowCopy[i], b3 = v >>> 24, b2 = (v >>> 16) & 255, b1 = (v >>> 8) & 255, b0 = v & 255;
          out[o + i] = b3 - p3; out[o + T + i] = b2 - p2; out[o + 2 * T + i] = b1 - p1; out[o + 3 * T + i] = b0 - p0;
          p3 = b3; p2 = b2; p1 = b1; p0 = b0;
        }
        continue;
      } else if (LITTLE_HOST && bps === 8) {
        for (let i = 0, s = 2 * r * T; i < T; i++) {
          const lo = u[s + 2 * i], hi = u[s + 2 * i + 1];
          planes[i] = hi >>> 24; planes[T + i] = hi >>> 16; planes[2 * T + i] = hi >>> 8; planes[3 * T + i] = hi;
          planes[4 * T + i] = lo >>> 24; planes[5 * T + i] = lo >>> 16; planes[6 * T + i] = lo >>> 8; planes[7 * T + i] = lo;
        }
      } else {
        for (let i = 0; i < T; i++) {
          for (let b = 0; b < bps; b++) planes[(LITTLE_HOST ? bps - 1 - b : b) * T + i] = out[o + i * bps + b];
        }
      }
      // then each byte minus the one before it, along the whole row
      out[o] = planes[0];
      for (let i = 1; i < rowBytes; i++) out[o + i] = planes[i] - planes[i - 1];
    }
  } else if (!LITTLE_HOST) {
    swapToLittle(out, bps);
  }
  const z = deflate(out, { level: job.level, strategy: job.strategy });
  const bytes = new Uint8Array(z.length);
  bytes.set(z);
  return bytes;
}
function swapToLittle(b, bps) {
  for (let i = 0; i < b.length; i += bps) {
    for (let lo = i, hi = i + bps - 1; lo < hi; lo++, hi--) { const t = b[lo]; b[lo] = b[hi]; b[hi] = t; }
  }
}
`;

const WORKER_SOURCE = `${ENCODER_SOURCE}
const { parentPort } = require('node:worker_threads');
const { deflateSync } = require('node:zlib');
parentPort.on('message', (m) => {
  let bytes;
  try {
    bytes = encodeTile(m.job, deflateSync);
  } catch (e) {
    parentPort.postMessage({ id: m.id, error: String(e && e.stack || e) });
    return;
  }
  parentPort.postMessage({ id: m.id, bytes }, [bytes.buffer]);
});
`;

type EncodeFn = (job: TileJob, deflate: typeof deflateSync) => Uint8Array;
const encodeHere = new Function(`${ENCODER_SOURCE}\nreturn encodeTile;`)() as EncodeFn;

/** Encode one tile on the calling thread. */
export function encodeTileSync(job: TileJob): Uint8Array {
  return encodeHere(job, deflateSync);
}

/** Somewhere tiles are encoded: this thread, or a pool of workers. */
export interface TileEncoder {
  /** Worker threads behind it (0: the calling thread). */
  readonly threads: number;
  /** True when jobs must hold their rows in a SharedArrayBuffer. */
  readonly needsShared: boolean;
  encode(job: TileJob): Promise<Uint8Array>;
}

/** Encodes on the calling thread, one tile per turn of the event loop. */
class LocalEncoder implements TileEncoder {
  readonly threads = 0;
  readonly needsShared = false;
  encode(job: TileJob): Promise<Uint8Array> {
    return new Promise((resolve, reject) => {
      setImmediate(() => {
        try {
          resolve(encodeTileSync(job));
        } catch (e) {
          reject(e);
        }
      });
    });
  }
}

interface Pending {
  id: number;
  job: TileJob;
  resolve: (b: Uint8Array) => void;
  reject: (e: Error) => void;
}

interface Slot {
  worker: Worker;
  busy: Pending | null;
}

/**
 * Worker threads that encode tiles first come, first served. Workers start on the first job
 * and are unreferenced while idle, so an idle pool never keeps the process alive.
 */
class WorkerPool implements TileEncoder {
  readonly needsShared = true;
  private readonly slots: Slot[] = [];
  private readonly queue: Pending[] = [];
  private nextId = 0;

  constructor(readonly threads: number) {}

  encode(job: TileJob): Promise<Uint8Array> {
    if (!(job.buf instanceof SharedArrayBuffer)) {
      return Promise.reject(new TypeError('tile rows for a worker must lie in a SharedArrayBuffer'));
    }
    return new Promise((resolve, reject) => {
      this.queue.push({ id: this.nextId++, job, resolve, reject });
      this.dispatch();
    });
  }

  private dispatch(): void {
    while (this.queue.length > 0) {
      let slot = this.slots.find((s) => s.busy === null);
      if (!slot && this.slots.length < this.threads) slot = this.start();
      if (!slot) return;
      const p = this.queue.shift()!;
      slot.busy = p;
      slot.worker.ref();
      slot.worker.postMessage({ id: p.id, job: p.job });
    }
  }

  private start(): Slot {
    const worker = new Worker(WORKER_SOURCE, { eval: true });
    const slot: Slot = { worker, busy: null };
    worker.on('message', (m: { id: number; bytes?: Uint8Array; error?: string }) => {
      const p = slot.busy;
      slot.busy = null;
      worker.unref();
      if (p && p.id === m.id) {
        if (m.error !== undefined) p.reject(new Error(`tile encoding failed in a worker thread: ${m.error}`));
        else p.resolve(m.bytes!);
      }
      this.dispatch();
    });
    const lost = (err: Error) => {
      const i = this.slots.indexOf(slot);
      if (i >= 0) this.slots.splice(i, 1);
      const p = slot.busy;
      slot.busy = null;
      if (p) p.reject(err);
      this.dispatch();
    };
    worker.on('error', lost);
    worker.on('exit', (code) => lost(new Error(`a tile-encoding worker thread stopped (exit code ${code})`)));
    this.slots.push(slot);
    return slot;
  }
}

const pools = new Map<number, WorkerPool>();
const local = new LocalEncoder();

/** The default thread count: the cores Node may use. */
export function defaultThreads(): number {
  return Math.max(1, availableParallelism());
}

/** The encoder for `threads` (1: the calling thread; n > 1: a shared pool of n workers). */
export function tileEncoder(threads: number = defaultThreads()): TileEncoder {
  if (!Number.isInteger(threads) || threads < 1) throw new RangeError(`threads must be a whole number from 1 up, got ${threads}`);
  if (threads === 1) return local;
  let pool = pools.get(threads);
  if (!pool) pools.set(threads, (pool = new WorkerPool(threads)));
  return pool;
}
