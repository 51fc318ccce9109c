/** Run the built `sill` binary (npm test builds it first). */
import { it, expect } from 'vitest';
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

/**
 * One test per case: `sill ARGS -o OUT` fails as bad input — exit 2, nothing on stdout, one line
 * on stderr matching the pattern, and no output folder (OUT is a folder named after the case in `dir()`).
 */
export function itRejects(cases: [string, () => string[], RegExp][], dir: () => string): void {
  for (const [name, args, msg] of cases) {
    it(name, () => {
      const out = join(dir(), `bad-${name.replace(/\W+/g, '-')}`);
      const r = sill([...args(), '-o', out]);
      expect(r.code).toBe(2);
      expect(r.stdout).toBe('');
      expect(r.stderr.trim().split('\n')).toHaveLength(1);
      expect(r.stderr).toMatch(msg);
      expect(existsSync(out)).toBe(false);
    });
  }
}
