/** Child processes that end when their parent ends, however it ends. */
import { spawn, type ChildProcess, type SpawnOptions } from 'node:child_process';
import { existsSync } from 'node:fs';

const SETPRIV = '/usr/bin/setpriv';

/**
 * spawn(), with the child tied to this process: on Linux, util-linux's setpriv asks the kernel to
 * SIGKILL the child the instant this process dies (PR_SET_PDEATHSIG), so a batch killed outright
 * (SIGKILL, an out-of-memory kill) leaves no task running on. Elsewhere a plain spawn: `sill`'s own
 * supervisor watchdog then ends each run (src/cli/cli.ts).
 */
export function spawnTied(cmd: string, args: string[], opts: SpawnOptions): ChildProcess {
  if (process.platform === 'linux' && existsSync(SETPRIV)) return spawn(SETPRIV, ['--pdeathsig', 'KILL', '--', cmd, ...args], opts);
  return spawn(cmd, args, opts);
}
