/**
 * The GeoPackage writing thread (gpkg-thread.ts): its own SQLite connection, the single-thread
 * writer's code, rows from the batches it is handed, in the order they were made.
 */
import { parentPort, workerData } from 'node:worker_threads';
import { GeoPackageWriter, type GpkgLayer } from './gpkg.js';
import { writeBatch, type GpkgWorkerData, type GpkgWorkerFailure, type GpkgWorkerMessage } from './gpkg-thread.js';

const data = workerData as GpkgWorkerData;
const state = data.state;
let gp: GeoPackageWriter | null = null;
const layers: GpkgLayer[] = [];
let failed: GpkgWorkerFailure | null = null;

function fail(e: unknown): void {
  const err = e as { message?: unknown; code?: unknown };
  failed = { message: String(err?.message ?? e), ...(typeof err?.code === 'string' ? { code: err.code } : {}) };
  try { gp?.abort(); } catch { /* the file is being given up anyway */ }
  gp = null;
  data.errors.postMessage(failed);
  Atomics.store(state, 1, 1);
  Atomics.notify(state, 0);
}

try {
  gp = new GeoPackageWriter(data.path, data.crs, { lastChange: new Date(data.lastChange) });
} catch (e) {
  fail(e);
}

parentPort!.on('message', (m: GpkgWorkerMessage) => {
  if (m.op === 'rows') {
    try {
      if (!failed) writeBatch(layers, m.buf, m.len);
    } catch (e) {
      fail(e);
    } finally {
      Atomics.sub(state, 0, 1);
      Atomics.notify(state, 0);
    }
  } else if (m.op === 'layer') {
    try {
      if (!failed) layers.push(gp!.layer(m.spec));
    } catch (e) {
      fail(e);
    }
  } else if (m.op === 'finish') {
    try {
      if (!failed) gp!.finish();
    } catch (e) {
      fail(e);
    }
    parentPort!.postMessage(failed ? { failed } : { done: true });
  }
});
