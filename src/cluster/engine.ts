/**
 * Engines run the stages of a run folder (run-folder.ts) in order. `local` (the default) is a pool
 * of child processes on this machine; `slurm` (slurm.ts) submits each stage as a job array. Both
 * start the same task runner (task.ts) for each task, so they leave the same status files, logs and
 * results.
 */
import { RunFolder, type StageSpec, type TaskStatus } from './run-folder.js';
import { spawnTied } from './spawn.js';
import { taskMain } from './task.js';
import { hostname } from 'node:os';

/** Where a run stands, for a progress line. */
export interface RunProgress {
  stage: string;
  tasks: number;
  done: number;
  failed: number;
  running: number;
}

export interface Engine {
  readonly name: string;
  /** Run every task that has not reported yet, stage by stage; resolves when the run has ended. */
  run(folder: RunFolder, onProgress?: (p: RunProgress) => void): Promise<void>;
}

/** The status of a task that never reported (a stage it needed failed, or its process was lost). */
export function lostStatus(stage: StageSpec, index: number, error: string): TaskStatus {
  return {
    schema: 'sill/task@1', stage: stage.name, index, label: stage.tasks[index].label, ok: false, exit: null, signal: null,
    error, seconds: 0, host: hostname(), outputRun: null,
  };
}

/** The first stage a needed (`ok`) dependency of `stage` failed in, or null. */
export function failedDependency(folder: RunFolder, stage: StageSpec): string | null {
  return folder.dependenciesMet(stage) ? null : stage.after.find((d) => d.when === 'ok')!.stage;
}

export function countStage(folder: RunFolder, stage: StageSpec, running: number): RunProgress {
  let done = 0, failed = 0;
  for (let i = 0; i < stage.tasks.length; i++) {
    const s = folder.status(stage.name, i);
    if (s) { done++; if (!s.ok) failed++; }
  }
  return { stage: stage.name, tasks: stage.tasks.length, done, failed, running };
}

/** A pool of `workers` child processes on this machine, one task runner each. */
export class LocalEngine implements Engine {
  readonly name = 'local';
  /**
   * `workers` tasks at a time. `kept`: what the line printed when a signal stops the run says is kept
   * and how to go on (a batch's wording by default).
   */
  constructor(private readonly workers: number, private readonly kept = 'the inputs finished so far are kept (rerun with --resume to do the rest)') {}

  async run(folder: RunFolder, onProgress?: (p: RunProgress) => void): Promise<void> {
    const spec = folder.run();
    if (!spec) throw new Error(`${folder.dir} is not a run folder (no run.json)`);
    const running = new Set<ReturnType<typeof spawnTied>>();
    let stopping: NodeJS.Signals | null = null;
    const onSignal = (sig: NodeJS.Signals) => {
      stopping = sig;
      for (const c of running) c.kill(sig);
    };
    const handlers = (['SIGINT', 'SIGTERM', 'SIGHUP'] as const).map((s) => [s, () => onSignal(s)] as const);
    for (const [s, h] of handlers) process.on(s, h);
    try {
      for (const name of spec.stages) {
        const stage = folder.stage(name);
        const pending = folder.pending(stage);
        const blocked = failedDependency(folder, stage);
        if (blocked !== null) {
          for (const i of pending) folder.writeStatus(lostStatus(stage, i, `not run: a task of stage ${blocked} failed`));
          continue;
        }
        let next = 0;
        const report = () => onProgress?.(countStage(folder, stage, running.size));
        report();
        const worker = async (): Promise<void> => {
          while (next < pending.length && stopping === null) {
            const i = pending[next++];
            const child = spawnTied(process.execPath, [taskMain(), folder.dir, name, String(i)], { stdio: ['ignore', 'ignore', 'pipe'] });
            running.add(child);
            report();
            let err = '';
            child.stderr!.on('data', (d: Buffer) => { if (err.length < 4096) err += d.toString('utf8'); });
            const [code, sig] = await new Promise<[number | null, NodeJS.Signals | null]>((res) => {
              child.on('error', () => res([null, null]));
              child.on('close', (c, s) => res([c, s]));
            });
            running.delete(child);
            if (folder.status(name, i) === null && stopping === null) {
              // the runner itself failed before it could report: record why, so the task is not lost
              const why = err.trim().split('\n').pop()?.replace(/^sill task:\s*/, '') || (sig ? `the task runner ended by ${sig}` : `the task runner ended with status ${code}`);
              folder.writeStatus(lostStatus(stage, i, why));
            }
            report();
          }
        };
        await Promise.all(Array.from({ length: Math.max(1, Math.min(this.workers, pending.length)) }, worker));
        if (stopping !== null) break;
      }
    } finally {
      for (const [s, h] of handlers) process.off(s, h);
    }
    if (stopping !== null) {
      const sig: NodeJS.Signals = stopping;
      process.stderr.write(`sill: stopped by ${sig}; ${this.kept}\n`);
      process.exit(sig === 'SIGINT' ? 130 : sig === 'SIGHUP' ? 129 : 143);
    }
  }
}
