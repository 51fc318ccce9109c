/**
 * Worker thread of the tile passes: pass 1 and pass 2 of one window per message. The window's
 * cells come in (transferred); the summary or the labels and shares go back (transferred). The
 * global tree arrives once, before the pass-2 windows.
 */
import { parentPort } from 'node:worker_threads';
import type { Connectivity } from '../surface/complex.js';
import { classifyWindow, type HaloRead } from './windows.js';
import type { CellWindow } from './mosaic.js';
import { pass1 } from './pass1.js';
import { pass2, type TreeWalk } from './pass2.js';
import { transferList } from './pool.js';

interface Setup { conn: Connectivity; nodataOutlet: boolean; rowArea: Float64Array; uniform: boolean; owns?: CellWindow[] }

let setup: Setup | null = null;
let tree: TreeWalk | null = null;

parentPort!.on('message', (m: { id: number; kind: string; [k: string]: unknown }) => {
  try {
    let result: unknown = null;
    if (m.kind === 'setup') setup = m.setup as Setup;
    else if (m.kind === 'tree') tree = m.tree as TreeWalk;
    else if (m.kind === 'pass1') {
      const cells = classifyWindow(m.read as HaloRead, setup!.conn, setup!.nodataOutlet, setup!.owns);
      result = { summary: pass1(cells, setup!.conn, setup!.nodataOutlet), euler: cells.euler };
    } else if (m.kind === 'pass2') {
      const cells = classifyWindow(m.read as HaloRead, setup!.conn, setup!.nodataOutlet);
      result = pass2(cells, setup!.conn, setup!.nodataOutlet, m.prov as Uint8Array, m.map as Int32Array, tree!, setup!.rowArea, setup!.uniform);
    }
    else throw new Error(`internal: unknown tile task '${m.kind}'`);
    parentPort!.postMessage({ id: m.id, ok: true, result }, transferList(result));
  } catch (e) {
    parentPort!.postMessage({ id: m.id, ok: false, error: e instanceof Error ? { name: e.name, message: e.message, stack: e.stack } : { name: 'Error', message: String(e) } });
  }
});
