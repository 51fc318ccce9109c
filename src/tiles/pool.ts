/**
 * A pool of worker threads for the tile passes (src/tiles/worker.ts, run from its compiled
 * module in dist/). Tasks are answered in any order; callers keep results by window index, so
 * what they build does not depend on the number of workers.
 */
import { Worker } from 'node:worker_threads';
import { existsSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { InputError } from '../errors.js';

/** The buffers of the typed arrays in `x` (one level of object) that can be transferred. */
export function transferList(x: unknown): ArrayBuffer[] {
  const out = new Set<ArrayBuffer>();
  const add = (v: unknown): void => { if (ArrayBuffer.isView(v) && v.buffer instanceof ArrayBuffer && v.buffer.byteLength > 0) out.add(v.buffer); };
  if (x !== null && typeof x === 'object') {
    if (ArrayBuffer.isView(x)) add(x);
    else for (const v of Object.values(x)) { add(v); if (v !== null && typeof v === 'object' && !ArrayBuffer.isView(v)) for (const u of Object.values(v)) add(u); }
  }
  return [...out];
}

/** The compiled worker module: next to this one in dist/, or dist/tiles/worker.js of the same checkout when running from the sources. */
export function tileWorkerFile(): string | null {
  const urls = import.meta.url.endsWith('.ts') ? [new URL('../../dist/tiles/worker.js', import.meta.url)] : [new URL('./worker.js', import.meta.url)];
  for (const u of urls) { const p = fileURLToPath(u); if (existsSync(p)) return p; }
  return null;
}

interface Pending { resolve: (v: unknown) => void; reject: (e: Error) => void }

export class TilePool {
  private readonly workers: Worker[] = [];
  private readonly idle: Worker[] = [];
  private readonly waiting: (() => void)[] = [];
  private readonly pending = new Map<number, Pending>();
  private nextId = 1;
  private failed: Error | null = null;

  constructor(readonly size: number) {
    const file = tileWorkerFile();
    if (file === null) throw new Error('internal: the tile worker module dist/tiles/worker.js is missing; run `npm run build`');
    for (let i = 0; i < size; i++) {
      const w = new Worker(file);
      w.on('message', (m: { id: number; ok: boolean; result?: unknown; error?: { name: string; message: string; stack?: string } }) => {
        const p = this.pending.get(m.id);
        this.pending.delete(m.id);
        this.release(w);
        if (!p) return;
        if (m.ok) p.resolve(m.result);
        else {
          const e = m.error!.name === 'InputError' ? new InputError(m.error!.message) : new Error(m.error!.message);
          if (m.error!.stack) e.stack = m.error!.stack;
          p.reject(e);
        }
      });
      w.on('error', (e) => { this.failed = e; for (const p of this.pending.values()) p.reject(e); this.pending.clear(); });
      this.workers.push(w);
      this.idle.push(w);
    }
  }

  private release(w: Worker): void {
    const next = this.waiting.shift();
    this.idle.push(w);
    if (next) next();
  }

  /** Send a message to every worker (set-up data they all keep), and wait until each has it. */
  async broadcast(kind: string, data: Record<string, unknown>): Promise<void> {
    await Promise.all(this.workers.map((w) => this.send(w, kind, data)));
  }

  /** Wait for an idle worker, then run the task on it; the promise of its result. `transfer`: the buffers handed over (default: every typed array in `data`). */
  async run<T>(kind: string, data: Record<string, unknown>, transfer: ArrayBuffer[] = transferList(data)): Promise<T> {
    while (this.idle.length === 0) await new Promise<void>((res) => this.waiting.push(res));
    const w = this.idle.pop()!;
    return this.send(w, kind, data, transfer) as Promise<T>;
  }

  /** Resolves when a worker is idle (to bound the windows in flight). */
  async ready(): Promise<void> {
    while (this.idle.length === 0) await new Promise<void>((res) => this.waiting.push(res));
  }

  private send(w: Worker, kind: string, data: Record<string, unknown>, transfer: ArrayBuffer[] = []): Promise<unknown> {
    if (this.failed) return Promise.reject(this.failed);
    const id = this.nextId++;
    const i = this.idle.indexOf(w);
    if (i >= 0) this.idle.splice(i, 1);
    return new Promise((resolve, reject) => {
      this.pending.set(id, { resolve, reject });
      w.postMessage({ id, kind, ...data }, transfer);
    });
  }

  async close(): Promise<void> {
    await Promise.all(this.workers.map((w) => w.terminate()));
  }
}
