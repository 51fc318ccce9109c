/**
 * results.gpkg written on a worker thread: this thread makes each row's geometry blob (the same
 * GpkgLayer code) and packs the row into a batch buffer; the batches are handed over (transferred,
 * not copied) to a thread that owns its own SQLite connection and runs the very statements the
 * single-thread writer runs, in the same order — so the file is byte for byte the same.
 *
 * A batch row: layer u16, flags u8 (1 geometry, 2 indexed), fid f64, [x0 y0 x1 y1 f64 when
 * indexed], [blob length u32 and bytes when a geometry], value count u16, then per value a tag u8
 * (0 NULL, 1 number f64, 2 text: UTF-8 length u32 and bytes). At most MAX_IN_FLIGHT batches wait
 * for the thread: the writer blocks until it catches up, so memory stays bounded.
 */
import { Worker, MessageChannel, receiveMessageOnPort, type MessagePort } from 'node:worker_threads';
import { existsSync, rmSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { GeoPackageWriter, GpkgLayer, bindValue, loadSqlite, srsFor, type GpkgLayerSpec, type GpkgLayers, type GpkgRowOut, type GpkgValue } from './gpkg.js';
import type { Crs } from '../surface/grid.js';

/** Bytes of a batch (a row larger than this gets a batch of its own size). */
const BATCH_BYTES = 1 << 20;
/** Batches handed over and not yet written before the writer waits. */
const MAX_IN_FLIGHT = 8;
/** How long the writer waits for the thread to take one batch before it gives up. */
const STALL_MS = 5 * 60_000;

/** Indexes into the shared state. */
const IN_FLIGHT = 0, FAILED = 1;

/** A GeoPackage being written, as the commands use it: layers, then finish or abort (both may wait for a thread). */
export interface GeoPackageOutput extends GpkgLayers {
  finish(): Promise<void>;
  abort(): Promise<void>;
}

/** The writing thread's script: next to this module in the build; from the sources (the tests), the built one; null when there is none. */
export function gpkgWorkerScript(): URL | null {
  for (const rel of ['./gpkg-worker.js', '../../dist/io/gpkg-worker.js']) {
    const url = new URL(rel, import.meta.url);
    if (existsSync(fileURLToPath(url))) return url;
  }
  return null;
}

/**
 * Open results.gpkg at `path`: with `thread` (and the worker's script built) written on a worker
 * thread, otherwise on this one; the bytes are the same either way.
 */
export function openGeoPackage(path: string, crs: Crs | null, opts: { lastChange?: Date; thread?: boolean } = {}): GeoPackageOutput {
  const script = opts.thread ? gpkgWorkerScript() : null;
  if (script) return new GeoPackageThreadWriter(path, crs, { lastChange: opts.lastChange, script });
  const gp = new GeoPackageWriter(path, crs, { lastChange: opts.lastChange });
  return {
    layer: (spec) => gp.layer(spec),
    finish: async () => gp.finish(),
    abort: async () => gp.abort(),
  };
}

/** What the thread starts with. */
export interface GpkgWorkerData {
  path: string;
  crs: Crs | null;
  lastChange: string;
  state: Int32Array;
  errors: MessagePort;
}

/** A message to the thread. */
export type GpkgWorkerMessage = { op: 'rows'; buf: ArrayBuffer; len: number } | { op: 'layer'; spec: GpkgLayerSpec } | { op: 'finish' };

/** The thread's failure, as it crosses over: the message and the file-system code (ENOSPC …) if any. */
export interface GpkgWorkerFailure { message: string; code?: string }

/** The writer of this thread's side: packs rows into batches for the writing thread. */
export class GeoPackageThreadWriter implements GeoPackageOutput {
  private readonly worker: Worker;
  private readonly state = new Int32Array(new SharedArrayBuffer(8));
  private readonly errors: MessagePort;
  private buf = new ArrayBuffer(BATCH_BYTES);
  private view = new DataView(this.buf);
  private bytes = Buffer.from(this.buf);
  private pos = 0;
  private layers = 0;
  private failure: Error | null = null;
  private closed = false;
  /** Settles when the thread has answered the finish (null: done) or stopped. */
  private readonly ended: Promise<GpkgWorkerFailure | null>;
  private readonly srsId: number;

  constructor(readonly path: string, crs: Crs | null, opts: { lastChange?: Date; script: URL }) {
    loadSqlite(); // its one-line error here, before any work, if better-sqlite3 did not build
    this.srsId = srsFor(crs).srsId;
    const { port1, port2 } = new MessageChannel();
    this.errors = port1;
    const data: GpkgWorkerData = { path, crs, lastChange: (opts.lastChange ?? new Date()).toISOString(), state: this.state, errors: port2 };
    this.worker = new Worker(opts.script, { workerData: data, transferList: [port2] });
    this.ended = new Promise((resolve) => {
      this.worker.once('message', (m: { done: true } | { failed: GpkgWorkerFailure }) => resolve('failed' in m ? m.failed : null));
      this.worker.once('error', (e) => resolve({ message: `the GeoPackage writing thread failed: ${e.message}` }));
      this.worker.once('exit', (code) => resolve({ message: `the GeoPackage writing thread stopped (exit code ${code})` }));
    });
  }

  layer(spec: GpkgLayerSpec): GpkgLayer {
    this.flush();
    this.worker.postMessage({ op: 'layer', spec } satisfies GpkgWorkerMessage);
    return new GpkgLayer(spec, this.srsId, new LayerRows(this, this.layers++));
  }

  /** Pack one row of layer `layer`. */
  putRow(layer: number, fid: number, blob: Uint8Array | null, values: readonly GpkgValue[], x0: number, y0: number, x1: number, y1: number, indexed: boolean): void {
    let need = 2 + 1 + 8 + (indexed ? 32 : 0) + (blob ? 4 + blob.byteLength : 0) + 2;
    for (const v of values) need += typeof v === 'string' ? 5 + 3 * v.length : 9;
    if (this.pos + need > this.buf.byteLength) {
      this.flush();
      if (need > this.buf.byteLength) this.alloc(need);
    }
    const dv = this.view;
    let p = this.pos;
    dv.setUint16(p, layer, true); p += 2;
    dv.setUint8(p, (blob ? 1 : 0) | (indexed ? 2 : 0)); p += 1;
    dv.setFloat64(p, fid, true); p += 8;
    if (indexed) {
      dv.setFloat64(p, x0, true); dv.setFloat64(p + 8, y0, true); dv.setFloat64(p + 16, x1, true); dv.setFloat64(p + 24, y1, true);
      p += 32;
    }
    if (blob) {
      dv.setUint32(p, blob.byteLength, true); p += 4;
      this.bytes.set(blob, p); p += blob.byteLength;
    }
    dv.setUint16(p, values.length, true); p += 2;
    for (let k = 0; k < values.length; k++) {
      const v = bindValue(values[k]);
      if (v === null) dv.setUint8(p++, 0);
      else if (typeof v === 'number') { dv.setUint8(p++, 1); dv.setFloat64(p, v, true); p += 8; }
      else {
        dv.setUint8(p++, 2);
        const n = asciiWrite(this.bytes, v, p + 4);
        dv.setUint32(p, n, true);
        p += 4 + n;
      }
    }
    this.pos = p;
  }

  private alloc(size: number): void {
    this.buf = new ArrayBuffer(size);
    this.view = new DataView(this.buf);
    this.bytes = Buffer.from(this.buf);
    this.pos = 0;
  }

  /** Hand the batch over; wait while the thread is MAX_IN_FLIGHT batches behind; throw its failure. */
  private flush(): void {
    this.check();
    if (this.pos === 0) return;
    Atomics.add(this.state, IN_FLIGHT, 1);
    this.worker.postMessage({ op: 'rows', buf: this.buf, len: this.pos } satisfies GpkgWorkerMessage, [this.buf]);
    this.alloc(BATCH_BYTES);
    let waited = 0;
    for (;;) {
      const n = Atomics.load(this.state, IN_FLIGHT);
      if (n < MAX_IN_FLIGHT || Atomics.load(this.state, FAILED) !== 0) break;
      if (Atomics.wait(this.state, IN_FLIGHT, n, 1000) === 'timed-out' && (waited += 1000) >= STALL_MS) {
        throw new Error(`the GeoPackage writing thread took no rows for ${STALL_MS / 1000} s; pass --no-gpkg to leave results.gpkg out`);
      }
    }
    this.check();
  }

  /** Throw the thread's failure if it has failed. */
  private check(): void {
    if (this.failure) throw this.failure;
    if (Atomics.load(this.state, FAILED) === 0) return;
    const m = receiveMessageOnPort(this.errors)?.message as GpkgWorkerFailure | undefined;
    throw (this.failure = asError(m ?? { message: 'the GeoPackage writing thread failed' }));
  }

  /** Write what is left, let the thread write the extents and triggers and close the file; then the thread ends. */
  async finish(): Promise<void> {
    try {
      this.flush();
      this.worker.postMessage({ op: 'finish' } satisfies GpkgWorkerMessage);
      const failed = await this.ended;
      if (failed) throw asError(failed);
      this.closed = true;
      await this.worker.terminate();
      this.errors.close();
    } catch (e) {
      await this.abort();
      throw e;
    }
  }

  /** Stop the thread and delete the file. */
  async abort(): Promise<void> {
    if (!this.closed) {
      this.closed = true;
      await this.worker.terminate();
      this.errors.close();
    }
    rmSync(this.path, { force: true });
  }
}

/** One layer's rows into the batch. */
class LayerRows implements GpkgRowOut {
  constructor(private readonly w: GeoPackageThreadWriter, private readonly index: number) {}
  put(fid: number, blob: Uint8Array | null, values: readonly GpkgValue[], x0: number, y0: number, x1: number, y1: number, indexed: boolean): void {
    this.w.putRow(this.index, fid, blob, values, x0, y0, x1, y1, indexed);
  }
}

/** Write `s` as UTF-8 at `at`: the short ASCII texts of the attribute columns byte by byte, others through Buffer.write. Returns the bytes written. */
function asciiWrite(b: Buffer, s: string, at: number): number {
  const n = s.length;
  if (n <= 64) {
    let k = 0;
    for (; k < n; k++) {
      const c = s.charCodeAt(k);
      if (c >= 0x80) break;
      b[at + k] = c;
    }
    if (k === n) return n;
  }
  return b.write(s, at, 'utf8');
}

const asError = (m: GpkgWorkerFailure): Error => Object.assign(new Error(m.message), m.code ? { code: m.code } : {});

/** The thread's side: decode a batch into rows of its layers (the single-thread writer's own GpkgLayer.raw). */
export function writeBatch(layers: readonly GpkgLayer[], buf: ArrayBuffer, len: number): void {
  const dv = new DataView(buf, 0, len), bytes = Buffer.from(buf, 0, len);
  const values: (number | string | null)[] = [];
  let p = 0;
  while (p < len) {
    const layer = layers[dv.getUint16(p, true)];
    const flags = dv.getUint8(p + 2);
    const fid = dv.getFloat64(p + 3, true);
    p += 11;
    let x0 = NaN, y0 = NaN, x1 = NaN, y1 = NaN;
    if (flags & 2) {
      x0 = dv.getFloat64(p, true); y0 = dv.getFloat64(p + 8, true); x1 = dv.getFloat64(p + 16, true); y1 = dv.getFloat64(p + 24, true);
      p += 32;
    }
    let blob: Uint8Array | null = null;
    if (flags & 1) {
      const n = dv.getUint32(p, true);
      blob = new Uint8Array(buf, p + 4, n);
      p += 4 + n;
    }
    const count = dv.getUint16(p, true);
    p += 2;
    values.length = count;
    for (let k = 0; k < count; k++) {
      const tag = dv.getUint8(p++);
      if (tag === 0) values[k] = null;
      else if (tag === 1) { values[k] = dv.getFloat64(p, true); p += 8; }
      else {
        const n = dv.getUint32(p, true);
        values[k] = bytes.toString('utf8', p + 4, p + 4 + n);
        p += 4 + n;
      }
    }
    layer.raw(fid, blob, values, x0, y0, x1, y1, (flags & 2) !== 0);
  }
}
