/**
 * The worker thread of src/morse/parallel.ts: rebuilds a grid complex over the shared values
 * and flags, does its share, posts the result on the task's port (arrays transferred), then
 * raises the task's done flag. Every error is caught and posted, so the waiting thread always
 * wakes up.
 *
 * Tasks: 'split' — simplex counts, then (once the main thread has written the order) the split
 * tree; 'euler' — the Euler self-check's counts (critical points by lower links, simplices);
 * 'perimeter' — the depressions' shoreline lengths over a share of the rows (src/hydro/shape.ts).
 */
import { parentPort, workerData, type MessagePort } from 'node:worker_threads';
import { Grid } from '../surface/grid.js';
import { GridComplex } from '../surface/complex.js';
import { countCriticalPoints } from './critical.js';
import { buildMergeTree } from './mergetree.js';
import { ORDER_ABANDONED, ORDER_PENDING, type GridTask } from './parallel.js';
// the one task of another layer: the depressions' shoreline lengths, for the second core
import { perimeterRows, type PerimeterTask } from '../hydro/shape.js';

interface Task {
  kind: 'split' | 'euler' | 'perimeter';
  perimeter?: PerimeterTask;
  grid: GridTask;
  order?: Uint32Array;
  forest?: Int32Array;
  ctrl: Int32Array;
  port: MessagePort;
}

function complexOf(t: GridTask): GridComplex {
  const grid = new Grid({ width: t.width, height: t.height, values: t.values, normalised: true });
  return new GridComplex(grid, t.connectivity, t.boundary, t.nodataOutlet, t.flags);
}

function run(task: Task): { result: unknown; transfer: ArrayBuffer[] } | null {
  if (task.kind === 'perimeter' && task.perimeter) {
    const p = perimeterRows(task.perimeter);
    return { result: p, transfer: [p.buffer as ArrayBuffer] };
  }
  const cx = complexOf(task.grid);
  if (task.kind === 'euler') {
    return { result: { critical: countCriticalPoints(cx), simplices: cx.countSimplices() }, transfer: [] };
  }
  if (task.kind !== 'split' || task.order === undefined || task.forest === undefined) throw new Error(`internal: unknown worker task '${task.kind}'`);
  // while the main thread sorts (counting the peaks here too, to size the tree's lists, would
  // make this thread the slower one: the lists grow instead)
  const simplices = cx.countSimplices();
  while (Atomics.load(task.ctrl, 0) === ORDER_PENDING) Atomics.wait(task.ctrl, 0, ORDER_PENDING);
  if (Atomics.load(task.ctrl, 0) === ORDER_ABANDONED) return null;
  const split = buildMergeTree(cx, task.order, 'split', task.forest);
  const transfer = [split.vertex, split.parent, split.birth, split.childCount, split.pairBirth, split.pairDeath].map((a) => a.buffer as ArrayBuffer);
  return { result: { split, simplices }, transfer };
}

// the module is running: a caller waiting for a result now knows the worker started
Atomics.store((workerData as { started: Int32Array }).started, 0, 1);

parentPort!.on('message', (task: Task) => {
  try {
    const out = run(task);
    if (out !== null) task.port.postMessage({ result: out.result }, out.transfer);
  } catch (err) {
    const e = err instanceof Error ? err : new Error(String(err));
    try { task.port.postMessage({ error: { name: e.name, message: e.message } }); } catch { /* port closed: nobody waits */ }
  } finally {
    // the main thread closes the port once it has the message
    Atomics.store(task.ctrl, 1, 1);
    Atomics.notify(task.ctrl, 1);
  }
});
