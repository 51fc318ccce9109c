/**
 * A run folder: the stages of a piece of work as files, so that any engine — the local pool of
 * child processes or a cluster scheduler — runs the same tasks and leaves the same record.
 *
 *   run.json                 what the run is (its stages in order, and what the caller needs, e.g. the batch)
 *   stages/<stage>.json      one stage: its tasks (each one `sill` invocation) and the stages it waits for
 *   status/<stage>/<i>.json  written by the task runner when task i ends (exit status, seconds, error line)
 *   logs/<stage>/<i>.log     the task's stdout and stderr
 *   slurm/                   the sbatch scripts and the submitted job ids (slurm engine)
 *
 * A stage is an array of N independent tasks; a stage may wait for earlier ones, either until
 * they have all ended (`any`: e.g. the catalogue of a batch, which records the failures too) or
 * until they have all succeeded (`ok`: e.g. a seam merge, which needs every tile's summary). The
 * tile-by-tile method plugs in as stages of this kind: pass 1 per tile (array), seam merge (one
 * task, after ok), pass 2 per tile (array, after ok), reduce (one task, after ok).
 *
 * The folder must be on a file system every node sees when a cluster runs it.
 */
import { mkdirSync, readdirSync, renameSync, rmSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { hostname } from 'node:os';
import { randomBytes } from 'node:crypto';
import { readJson as readJsonFile } from '../io/outdir.js';

export interface TaskSpec {
  /** What the task is, for messages and the catalogue (e.g. the input path). */
  label: string;
  /** The arguments of one `sill` invocation (without `sill` itself). */
  argv: string[];
  /** The output folder the task commits (an OutputFolder transaction), if any: its manifest's run id is recorded when the task succeeds. */
  output?: string;
  /** Memory the task may need, MiB (a scheduler's request per task). */
  memoryMb: number;
}

export interface StageSpec {
  schema: 'sill/stage@1';
  name: string;
  /** Stages this one waits for: until all their tasks ended (`any`) or all succeeded (`ok`). */
  after: { stage: string; when: 'ok' | 'any' }[];
  /** Cores each task uses. */
  cpus: number;
  tasks: TaskSpec[];
}

export interface RunSpec<Extra = unknown> {
  schema: 'sill/run@1';
  /** Stage names, dependencies before dependants. */
  stages: string[];
  /** What the caller keeps with the run (the batch's command, inputs and options). */
  extra: Extra;
}

/** How a task ended (the task runner writes it; an engine writes one for a task that never reported, e.g. killed by the scheduler). */
export interface TaskStatus {
  schema: 'sill/task@1';
  stage: string;
  index: number;
  label: string;
  ok: boolean;
  /** The exit status of the `sill` invocation, or null when it ended by a signal or never ran. */
  exit: number | null;
  signal: string | null;
  /** The one-line reason when it failed (the `sill:` line it printed, or how it ended). */
  error: string | null;
  seconds: number;
  host: string;
  /** The run id in the task's output folder manifest, when it succeeded and declared an output. */
  outputRun: string | null;
}

/** Write a small file whole: a temporary beside it, then a rename. */
export function writeWhole(path: string, text: string): void {
  const tmp = `${path}.${hostname().replace(/[^A-Za-z0-9.]/g, '_')}-${process.pid}-${randomBytes(3).toString('hex')}.tmp`;
  writeFileSync(tmp, text);
  renameSync(tmp, path);
}

function readJson<T>(path: string): T | null {
  try {
    return readJsonFile<T>(path);
  } catch (e) {
    if (e instanceof SyntaxError) return null; // cut short (a kill while it was written without the rename, by an older writer): as if absent
    throw e;
  }
}

export class RunFolder {
  constructor(readonly dir: string) {}

  get specPath(): string { return join(this.dir, 'run.json'); }
  stagePath(stage: string): string { return join(this.dir, 'stages', `${stage}.json`); }
  statusPath(stage: string, i: number): string { return join(this.dir, 'status', stage, `${i}.json`); }
  logPath(stage: string, i: number): string { return join(this.dir, 'logs', stage, `${i}.log`); }
  get slurmDir(): string { return join(this.dir, 'slurm'); }

  /** Create the folder (and its parents) and write the run and its stages. */
  create<E>(run: RunSpec<E>, stages: StageSpec[]): void {
    for (const d of ['stages', 'status', 'logs']) mkdirSync(join(this.dir, d), { recursive: true });
    for (const s of stages) {
      mkdirSync(join(this.dir, 'status', s.name), { recursive: true });
      mkdirSync(join(this.dir, 'logs', s.name), { recursive: true });
      writeWhole(this.stagePath(s.name), JSON.stringify(s) + '\n');
    }
    writeWhole(this.specPath, JSON.stringify(run, null, 1) + '\n');
  }

  run<E>(): RunSpec<E> | null {
    const r = readJson<RunSpec<E>>(this.specPath);
    return r && r.schema === 'sill/run@1' && Array.isArray(r.stages) ? r : null;
  }

  stage(name: string): StageSpec {
    const s = readJson<StageSpec>(this.stagePath(name));
    if (!s || s.schema !== 'sill/stage@1') throw new Error(`the run folder ${this.dir} has no readable stage ${name}`);
    return s;
  }

  status(stage: string, i: number): TaskStatus | null {
    const s = readJson<TaskStatus>(this.statusPath(stage, i));
    return s && s.schema === 'sill/task@1' ? s : null;
  }

  writeStatus(s: TaskStatus): void {
    writeWhole(this.statusPath(s.stage, s.index), JSON.stringify(s) + '\n');
  }

  /** Forget how task i ended (it will run again). */
  clearStatus(stage: string, i: number): void {
    rmSync(this.statusPath(stage, i), { force: true });
  }

  /** Indices of the tasks of `stage` that have not reported (not run yet, running, or lost). */
  pending(stage: StageSpec): number[] {
    const have = new Set<number>();
    try {
      for (const n of readdirSync(join(this.dir, 'status', stage.name))) {
        const m = /^(\d+)\.json$/.exec(n);
        if (m) have.add(Number(m[1]));
      }
    } catch { /* no status folder yet */ }
    const out: number[] = [];
    for (let i = 0; i < stage.tasks.length; i++) if (!have.has(i) || this.status(stage.name, i) === null) out.push(i);
    return out;
  }

  /** True when every task of the stages `stage` waits for allows it to start now (false: it never will — a needed task failed). */
  dependenciesMet(stage: StageSpec): boolean {
    for (const dep of stage.after) {
      if (dep.when !== 'ok') continue;
      const d = this.stage(dep.stage);
      for (let i = 0; i < d.tasks.length; i++) if (!this.status(dep.stage, i)?.ok) return false;
    }
    return true;
  }
}

/** Run length list of indices for Slurm's --array: 0-4,7,9-11. */
export function indexRanges(indices: readonly number[]): string {
  const parts: string[] = [];
  for (let k = 0; k < indices.length;) {
    let j = k;
    while (j + 1 < indices.length && indices[j + 1] === indices[j] + 1) j++;
    parts.push(j === k ? `${indices[k]}` : `${indices[k]}-${indices[j]}`);
    k = j + 1;
  }
  return parts.join(',');
}
