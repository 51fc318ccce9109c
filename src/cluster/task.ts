/**
 * The task runner: runs task i of a stage (one `sill` invocation as a child process), writes its
 * stdout and stderr to the run folder's log, and when it ends writes the task's status file. The
 * same runner serves every engine: the local pool starts it as a child process, a Slurm array task
 * runs it from its sbatch script (`node dist/cluster/task.js RUN STAGE` with the index from
 * SLURM_ARRAY_TASK_ID). Its own exit status is the invocation's, so a scheduler sees a failed task
 * as failed. A signal (SIGTERM from `scancel` or a time limit, SIGINT) is passed on to the
 * invocation, which leaves its output folder as it was.
 */
import { closeSync, existsSync, openSync, readFileSync, readSync, fstatSync } from 'node:fs';
import { hostname } from 'node:os';
import { resolve } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';
import { realpathSync } from 'node:fs';
import { RunFolder, type TaskStatus } from './run-folder.js';
import { spawnTied } from './spawn.js';

/** A built module of this checkout: beside this file when it runs built, in dist/ when it runs from the sources (tests). */
export function builtModule(fromDist: string): string {
  for (const u of [new URL(`../${fromDist}`, import.meta.url), new URL(`../../dist/${fromDist}`, import.meta.url)]) {
    const p = fileURLToPath(u);
    if (existsSync(p)) return p;
  }
  throw new Error(`internal: dist/${fromDist} is missing; run npm run build`);
}

/** The `sill` binary of this checkout (the supervisor: an out-of-memory abort becomes one line). */
export const sillMain = (): string => builtModule('cli/main.js');
/** This runner, built. */
export const taskMain = (): string => builtModule('cluster/task.js');

const HOST = hostname();

/** The last `sill:` line of a log (its one-line error), reading only the log's end. */
export function lastErrorLine(path: string): string | null {
  let fd: number;
  try {
    fd = openSync(path, 'r');
  } catch {
    return null;
  }
  try {
    const size = fstatSync(fd).size;
    const n = Math.min(size, 64 * 1024);
    const buf = Buffer.alloc(n);
    readSync(fd, buf, 0, n, size - n);
    const lines = buf.toString('utf8').split('\n').map((l) => l.trim()).filter(Boolean);
    for (let k = lines.length - 1; k >= 0; k--) if (lines[k].startsWith('sill:')) return lines[k].slice(5).trim();
    return lines.length ? lines[lines.length - 1] : null;
  } finally {
    closeSync(fd);
  }
}

function manifestRun(folder: string | undefined): string | null {
  if (!folder) return null;
  try {
    const m = JSON.parse(readFileSync(resolve(folder, '.sill-manifest.json'), 'utf8')) as { run?: unknown };
    return typeof m.run === 'string' ? m.run : null;
  } catch {
    return null;
  }
}

/** Run task `index` of `stageName` in the run folder `dir`; resolves to its exit status (128 + n for a signal). */
export async function runTask(dir: string, stageName: string, index: number): Promise<number> {
  const run = new RunFolder(dir);
  const stage = run.stage(stageName);
  const task = stage.tasks[index];
  if (!task) throw new Error(`stage ${stageName} of ${dir} has no task ${index} (it has ${stage.tasks.length})`);
  const log = openSync(run.logPath(stageName, index), 'w');
  const t0 = process.hrtime.bigint();
  const child = spawnTied(process.execPath, [sillMain(), ...task.argv], { stdio: ['ignore', log, log] });
  closeSync(log);
  const passOn = (sig: NodeJS.Signals) => () => { if (child.exitCode === null) child.kill(sig); };
  const handlers = (['SIGINT', 'SIGTERM', 'SIGHUP'] as const).map((s) => [s, passOn(s)] as const);
  for (const [s, h] of handlers) process.on(s, h);
  const [code, signal] = await new Promise<[number | null, NodeJS.Signals | null]>((res) => {
    child.on('error', () => res([null, null]));
    child.on('close', (c, s) => res([c, s]));
  });
  for (const [s, h] of handlers) process.off(s, h);
  const seconds = Number(process.hrtime.bigint() - t0) / 1e9;
  const ok = code === 0;
  let error: string | null = null;
  if (!ok) {
    const line = lastErrorLine(run.logPath(stageName, index));
    error = line ?? (signal ? `ended by ${signal}` : code === null ? 'could not start sill' : `exit status ${code}`);
  }
  const status: TaskStatus = {
    schema: 'sill/task@1', stage: stageName, index, label: task.label, ok, exit: code, signal, error,
    seconds: Math.round(seconds * 1000) / 1000, host: HOST, outputRun: ok ? manifestRun(task.output) : null,
  };
  run.writeStatus(status);
  return code ?? (signal === 'SIGKILL' ? 137 : signal === 'SIGINT' ? 130 : 143);
}

/** `node dist/cluster/task.js RUN STAGE [INDEX]` (INDEX defaults to SLURM_ARRAY_TASK_ID, then 0). */
async function cli(): Promise<void> {
  const [dir, stage, idx] = process.argv.slice(2);
  const index = Number(idx ?? process.env.SLURM_ARRAY_TASK_ID ?? 0);
  if (!dir || !stage || !Number.isSafeInteger(index) || index < 0) {
    process.stderr.write('usage: node task.js RUN_FOLDER STAGE [INDEX]\n');
    process.exitCode = 2;
    return;
  }
  try {
    process.exitCode = await runTask(dir, stage, index);
  } catch (e) {
    process.stderr.write(`sill task: ${(e as Error).message}\n`);
    process.exitCode = 1;
  }
}

if (process.argv[1] && import.meta.url === pathToFileURL(realpathSync(process.argv[1])).href) await cli();
