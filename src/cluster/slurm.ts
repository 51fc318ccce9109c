/**
 * The Slurm engine: each stage becomes one sbatch script in the run folder (slurm/<stage>.sbatch),
 * submitted as a job array of its tasks that have not reported yet (`--array=0-9%W`, W tasks at a
 * time), each stage chained to the stages it waits for (`--dependency=afterany:<job>` or
 * `afterok:<job>`). Every array task runs the same task runner as the local engine, so the status
 * files, logs and results are the same. Then it waits: it polls `squeue` until the jobs have left
 * the queue, and reads each task's end from its status file; a task that never wrote one (killed
 * by Slurm: time limit, memory, cancelled, or never started because a dependency failed) gets a
 * status from `scontrol show job`. (`sbatch --wait` is not used: it returns 0 even when a dependent
 * job was cancelled.)
 *
 * With dryRun the scripts and submit.sh (the same chain for a person to run) are written and
 * nothing is submitted: a site adapts partition, account and time limit there.
 */
import { spawnSync } from 'node:child_process';
import { mkdirSync, writeFileSync, chmodSync } from 'node:fs';
import { join } from 'node:path';
import { RunFolder, indexRanges, writeWhole, type StageSpec } from './run-folder.js';
import { countStage, lostStatus, type Engine, type RunProgress } from './engine.js';
import { taskMain } from './task.js';

export interface SlurmOptions {
  /** Array tasks at a time (`%W`); undefined leaves it to the scheduler. */
  workers?: number;
  partition?: string;
  account?: string;
  /** Time limit per task, in a form sbatch accepts (e.g. 2:00:00). */
  time?: string;
  /** Only write the scripts. */
  dryRun?: boolean;
  /** Seconds between polls of squeue (default 2). */
  pollSeconds?: number;
}

/** One line of shell: a word quoted for bash. */
export function shellQuote(s: string): string {
  return /^[A-Za-z0-9_\-./=:,@%+]+$/.test(s) ? s : `'${s.replace(/'/g, `'\\''`)}'`;
}

export class SlurmError extends Error {
  constructor(message: string) {
    super(message);
    this.name = 'SlurmError';
  }
}

/** Null when the Slurm commands answer here, else why not (for a message before any work). */
export function slurmMissing(): string | null {
  for (const cmd of ['sbatch', 'squeue', 'scontrol']) {
    const r = spawnSync(cmd, ['--version'], { encoding: 'utf8', timeout: 15000 });
    const code = (r.error as NodeJS.ErrnoException | undefined)?.code;
    if (code === 'ENOENT') return `${cmd} is not on the PATH`;
    if (r.error) return `${cmd} --version did not answer (${code ?? r.error.message})`;
    if (r.status !== 0) return `${cmd} --version failed: ${(r.stderr || r.stdout).trim().split('\n').pop()}`;
  }
  return null;
}

function command(cmd: string, args: string[]): string {
  const r = spawnSync(cmd, args, { encoding: 'utf8', timeout: 60000 });
  if (r.error) throw new SlurmError(`cannot run ${cmd} (${(r.error as NodeJS.ErrnoException).code ?? r.error.message}); is this a Slurm login node with ${cmd} on PATH?`);
  if (r.status !== 0) throw new SlurmError(`${cmd} ${args.join(' ')} failed: ${(r.stderr || r.stdout).trim().split('\n').pop()}`);
  return r.stdout;
}

/** Final states of a job's array tasks from `scontrol show job` (kept by Slurm for MinJobAge after the end). */
export function arrayStates(text: string): Map<number, { state: string; exit: string; reason: string }> {
  const out = new Map<number, { state: string; exit: string; reason: string }>();
  for (const rec of text.split(/\n\s*\n/)) {
    const task = /ArrayTaskId=(\d+)\b/.exec(rec);
    const state = /JobState=(\S+)/.exec(rec);
    if (!state) continue;
    const idx = task ? Number(task[1]) : 0;
    out.set(idx, { state: state[1], exit: /\bExitCode=(\S+)/.exec(rec)?.[1] ?? '', reason: /\bReason=(\S+)/.exec(rec)?.[1] ?? '' });
  }
  return out;
}

export class SlurmEngine implements Engine {
  readonly name = 'slurm';
  constructor(private readonly opts: SlurmOptions = {}) {}

  /** The sbatch script of a stage. Array, dependency and memory go on the sbatch line (they depend on what is left to do). */
  script(folder: RunFolder, stage: StageSpec): string {
    const o = this.opts;
    const site = (flag: string, value: string | undefined, hint: string) =>
      value === undefined ? `# #SBATCH --${flag}=${hint}    (site: uncomment and set)` : `#SBATCH --${flag}=${shellQuote(value)}`;
    const lines = [
      '#!/bin/bash',
      `# sill: stage ${stage.name} of the run folder ${folder.dir}`,
      `# ${stage.tasks.length} task${stage.tasks.length === 1 ? '' : 's'}; task i runs the sill invocation listed in stages/${stage.name}.json and writes status/${stage.name}/i.json`,
      `#SBATCH --job-name=sill-${stage.name}`,
      `#SBATCH --output=${shellQuote(join(folder.dir, 'logs', stage.name, 'slurm-%a.out'))}`,
      `#SBATCH --chdir=${shellQuote(process.cwd())}`,
      `#SBATCH --cpus-per-task=${stage.cpus}`,
      '#SBATCH --ntasks=1',
      site('partition', o.partition, 'NAME'),
      site('account', o.account, 'NAME'),
      site('time', o.time, 'HH:MM:SS'),
      `# memory per task: ${stageMemory(stage)} MiB for the largest input (given on the sbatch line; --mem-per-task overrides)`,
      // the index comes from Slurm; the runner is the same one the local pool starts
      `exec ${shellQuote(process.execPath)} ${shellQuote(taskMain())} ${shellQuote(folder.dir)} ${shellQuote(stage.name)} "\${SLURM_ARRAY_TASK_ID:-0}"`,
      '',
    ];
    return lines.join('\n');
  }

  /** sbatch arguments for the pending tasks of a stage. */
  private submitArgs(stage: StageSpec, pending: number[], deps: { when: 'ok' | 'any'; job: string }[]): string[] {
    const mem = stageMemory(stage, pending);
    const throttle = this.opts.workers !== undefined ? `%${this.opts.workers}` : '';
    const args = ['--parsable', `--array=${indexRanges(pending)}${throttle}`, `--mem=${mem}M`];
    if (deps.length) args.push(`--dependency=${deps.map((d) => `after${d.when}:${d.job}`).join(',')}`, '--kill-on-invalid-dep=yes');
    return args;
  }

  /** Write the scripts, and submit.sh: the whole chain for a person to submit. Returns the paths. */
  writeScripts(folder: RunFolder): string[] {
    const spec = folder.run()!;
    mkdirSync(folder.slurmDir, { recursive: true });
    const written: string[] = [];
    const submit = ['#!/bin/bash', `# sill: submits the stages of ${folder.dir} in order, each after the ones it waits for`, 'set -euo pipefail'];
    for (const name of spec.stages) {
      const stage = folder.stage(name);
      const path = join(folder.slurmDir, `${name}.sbatch`);
      writeFileSync(path, this.script(folder, stage));
      written.push(path);
      const pending = folder.pending(stage);
      if (pending.length === 0) continue;
      const deps = stage.after.map((d) => ({ when: d.when, job: `\${job_${d.stage.replace(/\W/g, '_')}}` }));
      submit.push(`job_${name.replace(/\W/g, '_')}=$(sbatch ${this.submitArgs(stage, pending, deps).map((a) => (a.includes('${') ? `"${a}"` : shellQuote(a))).join(' ')} ${shellQuote(path)})`);
      submit.push(`echo "stage ${name}: job \${job_${name.replace(/\W/g, '_')}}"`);
    }
    const sp = join(folder.slurmDir, 'submit.sh');
    writeFileSync(sp, submit.join('\n') + '\n');
    chmodSync(sp, 0o755);
    written.push(sp);
    return written;
  }

  async run(folder: RunFolder, onProgress?: (p: RunProgress) => void): Promise<void> {
    const spec = folder.run();
    if (!spec) throw new Error(`${folder.dir} is not a run folder (no run.json)`);
    this.writeScripts(folder);
    if (this.opts.dryRun) return;
    const jobs = new Map<string, { job: string; pending: number[] }>();
    try {
      for (const name of spec.stages) {
        const stage = folder.stage(name);
        const pending = folder.pending(stage);
        if (pending.length === 0) continue;
        const deps = stage.after.filter((d) => jobs.has(d.stage)).map((d) => ({ when: d.when, job: jobs.get(d.stage)!.job }));
        const out = command('sbatch', [...this.submitArgs(stage, pending, deps), join(folder.slurmDir, `${name}.sbatch`)]);
        const job = out.trim().split(';')[0];
        if (!/^\d+$/.test(job)) throw new SlurmError(`sbatch answered '${out.trim()}' instead of a job id`);
        jobs.set(name, { job, pending });
      }
    } catch (e) {
      this.cancel([...jobs.values()].map((j) => j.job));
      throw e;
    }
    writeWhole(join(folder.slurmDir, 'jobs.json'), JSON.stringify(Object.fromEntries([...jobs].map(([k, v]) => [k, v.job]))) + '\n');
    // a stop of this process cancels the jobs: nothing keeps running that nobody waits for
    let stopping: NodeJS.Signals | null = null;
    const handlers = (['SIGINT', 'SIGTERM', 'SIGHUP'] as const).map((s) => [s, () => { stopping = s; }] as const);
    for (const [s, h] of handlers) process.on(s, h);
    try {
      const ids = [...jobs.values()].map((j) => j.job);
      const poll = (this.opts.pollSeconds ?? 2) * 1000;
      while (stopping === null) {
        const r = spawnSync('squeue', ['-h', '-j', ids.join(','), '-o', '%i %T'], { encoding: 'utf8', timeout: 60000 });
        // squeue refuses job ids that have all left the queue ("Invalid job id specified"): nothing is left
        const left = r.status === 0 ? r.stdout.trim().split('\n').filter(Boolean).length : /Invalid job id/i.test(r.stderr) ? 0 : -1;
        if (left === -1) throw new SlurmError(`squeue failed: ${(r.stderr || r.stdout).trim().split('\n').pop()}`);
        for (const name of spec.stages) if (jobs.has(name)) onProgress?.(countStage(folder, folder.stage(name), 0));
        if (left === 0) break;
        await new Promise((res) => setTimeout(res, poll));
      }
    } finally {
      for (const [s, h] of handlers) process.off(s, h);
    }
    if (stopping !== null) {
      this.cancel([...jobs.values()].map((j) => j.job));
      const sig: NodeJS.Signals = stopping;
      process.stderr.write(`sill: stopped by ${sig}; the Slurm jobs were cancelled, the tasks finished so far are kept (rerun with --resume to do the rest)\n`);
      process.exit(sig === 'SIGINT' ? 130 : sig === 'SIGHUP' ? 129 : 143);
    }
    // tasks that never reported: their end as Slurm saw it
    for (const [name, { job, pending }] of jobs) {
      const stage = folder.stage(name);
      const missing = pending.filter((i) => folder.status(name, i) === null);
      if (missing.length === 0) continue;
      let states = new Map<number, { state: string; exit: string; reason: string }>();
      try {
        states = arrayStates(command('scontrol', ['show', 'job', job]));
      } catch { /* gone from the controller's memory (MinJobAge): say so below */ }
      for (const i of missing) {
        const s = states.get(i);
        const why = s ? `Slurm ended the task: ${s.state}${s.reason && s.reason !== 'None' ? ` (${s.reason})` : ''}` : `Slurm job ${job}_${i} ended without a report`;
        folder.writeStatus(lostStatus(stage, i, why));
      }
    }
  }

  private cancel(ids: string[]): void {
    if (ids.length) spawnSync('scancel', ids, { stdio: 'ignore', timeout: 30000 });
  }
}

/** Memory to ask for a stage's tasks (MiB): the largest of those that run. */
export function stageMemory(stage: StageSpec, indices?: number[]): number {
  let m = 0;
  for (const i of indices ?? stage.tasks.keys()) m = Math.max(m, stage.tasks[i].memoryMb);
  return Math.max(1, Math.ceil(m));
}
