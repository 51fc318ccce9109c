#!/usr/bin/env node
/**
 * The `sill` binary: a thin supervisor that runs the command line (cli.js) as a child process.
 *
 * Why a second process: when V8 runs out of JavaScript heap it aborts the process and prints its
 * own multi-line trace (last GCs, native stack); no handler inside the process can catch it. The
 * parent gives the child a heap limit sized to this machine (three quarters of its memory instead
 * of V8's default of about 4 GiB, so typed-array-heavy work never meets a lower ceiling than the
 * machine itself), passes stdout and stdin straight through, forwards stderr, and turns a fatal
 * out-of-memory trace into one `sill:` line with exit status 1.
 *
 * Cost: one more Node process of about 40 MB resident that imports nothing but node:child_process
 * and node:os, and one Node start-up (docs/performance.md). The run is known by this process's id
 * (SILL_RUN_PID: staging folder names, liveness); if this process is killed outright (SIGKILL), a
 * watchdog thread in the run sees it go and kills the run at once, so no orphan keeps writing; a
 * run that ends by a signal makes this process end by the same signal.
 * SILL_NO_SUPERVISOR=1 runs the command line in this process instead (debugging, profiling).
 */
import { spawn } from 'node:child_process';
import { existsSync } from 'node:fs';
import { fileURLToPath } from 'node:url';
import { heapLimitMb } from './heap.js';

const CLI = fileURLToPath(new URL('./cli.js', import.meta.url));
const SETPRIV = '/usr/bin/setpriv';

/** What V8 prints when it gives up on the heap (its first line and its headline). */
const FATAL_MARKERS = ['<--- Last few GCs --->', 'FATAL ERROR:', '# Fatal javascript OOM', '# Fatal process out of memory'];


const FORWARDED = ['SIGINT', 'SIGTERM', 'SIGHUP'] as const;

/** Exit status for a child that ended by a signal (the shell's 128 + n). */
const SIGNAL_STATUS: Record<string, number> = { SIGHUP: 129, SIGINT: 130, SIGKILL: 137, SIGTERM: 143, SIGABRT: 134 };

function supervise(): void {
  const heapMb = heapLimitMb();
  const argv = [`--max-old-space-size=${heapMb}`, CLI, ...process.argv.slice(2)];
  // On Linux, util-linux's setpriv asks the kernel to SIGKILL the run the instant this process dies
  // (PR_SET_PDEATHSIG), so a kill of `sill` is a kill of the run with no delay; elsewhere the run's
  // watchdog thread does it within 25 ms (src/cli/cli.ts).
  const pdeath = process.platform === 'linux' && existsSync(SETPRIV);
  const child = spawn(pdeath ? SETPRIV : process.execPath, pdeath ? ['--pdeathsig', 'KILL', '--', process.execPath, ...argv] : argv, {
    stdio: ['inherit', 'inherit', 'pipe'],
    // SILL_RUN_PID: the run is known by this process's id (staging folders, liveness), so a kill of it is a kill of the run
    env: { ...process.env, SILL_SUPERVISED: '1', SILL_RUN_PID: String(process.pid), ...(process.stderr.isTTY ? { SILL_STDERR_TTY: '1' } : {}) },
  });
  let fatal = false;
  child.stderr!.on('data', (chunk: Buffer) => {
    if (fatal) return;
    const text = chunk.toString('utf8');
    let cut = -1;
    for (const m of FATAL_MARKERS) {
      const k = text.indexOf(m);
      if (k >= 0 && (cut < 0 || k < cut)) cut = k;
    }
    if (cut < 0) {
      process.stderr.write(chunk);
      return;
    }
    fatal = true;
    const before = text.slice(0, cut).replace(/\s+$/, '');
    if (before) process.stderr.write(before + '\n');
  });
  // Signals sent to this process alone (kill PID) reach the run too; the run cleans up and exits 130/143.
  let signalled = false;
  for (const sig of FORWARDED) {
    process.on(sig, () => {
      signalled = true;
      if (child.exitCode === null && child.signalCode === null) child.kill(sig);
    });
  }
  child.on('error', (err) => {
    process.stderr.write(`sill: cannot start the command line (${err.message}); run \`${process.execPath} ${CLI}\` to see why\n`);
    process.exitCode = 1;
  });
  child.on('close', (code, signal) => {
    if (fatal) {
      process.stderr.write(
        `sill: out of memory: the run needed more than the ${heapMb >= 1024 ? `${(heapMb / 1024).toFixed(1)} GiB` : `${heapMb} MiB`} JavaScript heap it was given; ` +
          'keep fewer features (--min-persistence, --min-depth), or cut the DEM into tiles\n',
      );
      process.exitCode = 1;
      return;
    }
    if (signal === 'SIGKILL' && !signalled) {
      process.stderr.write('sill: the run was killed (SIGKILL); if nobody stopped it, the system ran out of memory: keep fewer features (--min-persistence, --min-depth) or cut the DEM into tiles\n');
    }
    if (signal) {
      // end the way the run ended, so whoever started sill sees the signal, as without the supervisor
      for (const sig of FORWARDED) process.removeAllListeners(sig);
      process.kill(process.pid, signal);
      process.exitCode = SIGNAL_STATUS[signal] ?? 1;
      return;
    }
    process.exitCode = code ?? 1;
  });
}

if (process.env.SILL_NO_SUPERVISOR === '1') (await import('./cli.js')).runProgram();
else supervise();
