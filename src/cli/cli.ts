/**
 * The `sill` command line: a thin layer over the library. Exit 0 ok, 1 runtime failure, 2 bad usage or input.
 * Every error is one line starting with `sill:`. main.ts runs this file as a child process (see there).
 */
import { realpathSync } from 'node:fs';
import { Worker } from 'node:worker_threads';
import { pathToFileURL } from 'node:url';
import { Command, CommanderError } from 'commander';
import { InputError } from '../errors.js';
import { SILL_VERSION } from '../report/common.js';
import { registerSurvey } from './survey.js';
import { registerDemo } from './demo.js';
import { registerBarriers } from './barriers.js';
import { registerPonds } from './ponds.js';
import { registerRunoff } from './runoff.js';
import { registerBatch } from './batch.js';
import { registerTileStage } from './staged.js';

export function buildProgram(): Command {
  const program = new Command();
  program
    .name('sill')
    .description('Morse-theoretic analysis of terrain and energy landscapes: pits, passes, peaks, merge trees and persistence')
    .version(SILL_VERSION)
    .exitOverride()
    .configureOutput(errorOutput('sill'));
  registerSurvey(program);
  registerBarriers(program);
  registerPonds(program);
  registerRunoff(program);
  registerDemo(program);
  registerBatch(program);
  registerTileStage(program);
  for (const c of program.commands) c.exitOverride().configureOutput(errorOutput(`sill ${c.name()}`));
  return program;
}

/** Commander's own messages ("error: unknown option '--x'", a suggestion on the next line) as one `sill:` line with a hint. */
function errorOutput(command: string): { writeErr: (s: string) => void; outputError: (s: string, write: (s: string) => void) => void } {
  return {
    writeErr: (s) => process.stderr.write(s),
    outputError: (s, write) => {
      const text = s.replace(/^error:\s*/i, '').split('\n').map((l) => l.trim()).filter(Boolean).join(' ').replace(/[.\s]+$/, '');
      write(`sill: ${text}; see '${command} --help'\n`);
    },
  };
}

/** The line and exit status for an error that is not an InputError: allocation failures get a plain explanation. */
export function runtimeFailure(e: unknown): string {
  const msg = e instanceof Error ? e.message : String(e);
  if (e instanceof RangeError && /Invalid string length/.test(msg)) {
    return 'out of memory: a text output grew beyond the longest string JavaScript can hold; keep fewer features (--min-persistence, --min-depth), write files with -o instead of --json, or cut the DEM into tiles';
  }
  if (e instanceof RangeError && /Array buffer allocation failed|Invalid typed array length|Invalid array length|allocation failed/i.test(msg)) {
    return `out of memory (${msg}); keep fewer features (--min-persistence, --min-depth), or cut the DEM into tiles`;
  }
  const line = (msg || (e instanceof Error ? e.name : 'unknown error')).split('\n').map((l) => l.trim()).filter(Boolean).join(' ');
  return line || 'unknown error';
}

export async function main(argv: string[]): Promise<number> {
  const program = buildProgram();
  try {
    await program.parseAsync(argv);
    return 0;
  } catch (e) {
    if (e instanceof CommanderError) {
      if (e.code === 'commander.helpDisplayed' || e.code === 'commander.version' || e.code === 'commander.help') return 0;
      return 2; // commander already printed its one-line message
    }
    if (e instanceof InputError) {
      process.stderr.write(`sill: ${e.message}\n`);
      return 2;
    }
    if (isBrokenPipe(e)) return BROKEN_PIPE;
    process.stderr.write(`sill: ${runtimeFailure(e)}\n`);
    if (process.env.SILL_DEBUG) process.stderr.write(`${(e as Error).stack}\n`);
    return 1;
  }
}

/**
 * The reader of stdout went away (`sill … --json | head`): stop quietly with the status a program
 * killed by SIGPIPE has in a shell (128 + 13), as command-line tools do (common practice); the
 * output folder of `-o`, if any, is not committed.
 */
export const BROKEN_PIPE = 141;
export function isBrokenPipe(e: unknown): boolean {
  return (e as NodeJS.ErrnoException | null)?.code === 'EPIPE';
}

/** Last resort: anything thrown outside main's try (a stray callback, a failed stream) is one line and exit 1. */
function lastResort(e: unknown): void {
  if (isBrokenPipe(e)) process.exit(BROKEN_PIPE);
  process.stderr.write(`sill: ${runtimeFailure(e)}\n`);
  if (process.env.SILL_DEBUG) process.stderr.write(`${(e as Error)?.stack}\n`);
  process.exit(1);
}
/**
 * A thread that checks every 25 ms that the supervisor is still this process's parent, and kills the
 * run (SIGKILL, as the supervisor was) when it is gone — the main thread may be deep in a synchronous
 * analysis for minutes and could not notice. Costs about 10 MB; unref'd, so it never keeps a run alive.
 */
function watchSupervisor(): void {
  const code = `const { workerData } = require('node:worker_threads');
setInterval(() => { if (process.ppid !== workerData) process.kill(process.pid, 'SIGKILL'); }, 25);`;
  const w = new Worker(code, { eval: true, workerData: process.ppid });
  w.unref();
}

/** Run the command line when this file is the program (under the supervisor, or `node dist/cli/cli.js`), not when a test imports it. */
export function runProgram(): void {
  process.on('uncaughtException', lastResort);
  process.on('unhandledRejection', lastResort);
  // Run under the supervisor (main.ts): if it is killed outright, this run dies with it (no orphan keeps writing).
  if (process.env.SILL_SUPERVISED === '1') watchSupervisor();
  main(process.argv).then((code) => {
    process.exitCode = code;
  });
}

const isProgram = process.env.SILL_SUPERVISED === '1' || (process.argv[1] !== undefined && import.meta.url === pathToFileURL(realpathSync(process.argv[1])).href);
if (isProgram) runProgram();
