/** The JavaScript heap the supervisor (main.ts) gives the command line: no imports beyond node:os, so the supervisor starts fast. */
import { totalmem } from 'node:os';

/** The child's heap limit in MiB: SILL_MAX_HEAP_MB when set (tests force a small heap), else ¾ of the machine's memory (at least 2 GiB). */
export function heapLimitMb(env: NodeJS.ProcessEnv = process.env, total = totalmem()): number {
  const asked = Number(env.SILL_MAX_HEAP_MB);
  if (Number.isFinite(asked) && asked >= 16) return Math.floor(asked);
  return Math.max(2048, Math.floor((total * 0.75) / 2 ** 20));
}
