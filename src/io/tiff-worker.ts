/**
 * A GeoTIFF decoding worker: opens the file itself, decodes the blocks it takes from the shared
 * counter into the shared values (tiff-decode.ts) and reports the first failure it met, or null.
 */
import { closeSync, openSync } from 'node:fs';
import { parentPort, workerData } from 'node:worker_threads';
import { decodeShare, type BlockFailure, type BlockLayout } from './tiff-decode.js';

interface Job {
  path: string;
  layout: BlockLayout;
  offsets: Float64Array;
  counts: Float64Array;
  out: Float32Array | Float64Array;
  next: Int32Array;
  grab: number;
}

const job = workerData as Job;
let result: BlockFailure | null;
try {
  const fd = openSync(job.path, 'r');
  try {
    result = decodeShare(fd, job.layout, job.offsets, job.counts, job.out, job.next, job.grab);
  } finally {
    closeSync(fd);
  }
} catch (err) {
  result = { block: -1, reason: (err as Error).message };
}
parentPort!.postMessage(result);
