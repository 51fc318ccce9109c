/** Run the built `sill` binary (npm test builds it first). */
import { spawnSync } from 'node:child_process';
import { fileURLToPath } from 'node:url';
import { existsSync, mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';

export const BIN = fileURLToPath(new URL('../../dist/cli/main.js', import.meta.url));

export function sill(args: string[], opts: { cwd?: string } = {}): { code: number; stdout: string; stderr: string } {
  if (!existsSync(BIN)) throw new Error('dist/cli/main.js is missing: run `npm run build` first (npm test does)');
  const r = spawnSync(process.execPath, [BIN, ...args], { encoding: 'utf8', cwd: opts.cwd, env: { ...process.env, FORCE_COLOR: '0' } });
  return { code: r.status ?? -1, stdout: r.stdout, stderr: r.stderr };
}

export function tempDir(prefix = 'sill-test-'): string {
  return mkdtempSync(join(tmpdir(), prefix));
}
