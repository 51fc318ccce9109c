/** Run the built `sill` binary (npm test builds it first). */
import { it, expect } from 'vitest';
import { spawnSync } from 'node:child_process';
import { fileURLToPath } from 'node:url';
import { existsSync, mkdtempSync, readdirSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';

export const BIN = fileURLToPath(new URL('../../dist/cli/main.js', import.meta.url));

export function sill(args: string[], opts: { cwd?: string; env?: Record<string, string>; timeout?: number } = {}): { code: number; stdout: string; stderr: string } {
  if (!existsSync(BIN)) throw new Error('dist/cli/main.js is missing: run `npm run build` first (npm test does)');
  const r = spawnSync(process.execPath, [BIN, ...args], { encoding: 'utf8', cwd: opts.cwd, env: { ...process.env, FORCE_COLOR: '0', ...opts.env }, timeout: opts.timeout });
  return { code: r.status ?? -1, stdout: r.stdout, stderr: r.stderr };
}

/** A little float32 .npy DEM (w × h): smooth hills and hollows plus seeded noise of ± `noise`/2 — invented test data. */
export function writeTerrainNpy(path: string, w: number, h: number, noise = 0.05): void {
  const v = new Float32Array(w * h);
  let s = 12345;
  const rnd = () => ((s = (Math.imul(s, 1103515245) + 12345) >>> 0) / 4294967296);
  for (let r = 0; r < h; r++) {
    for (let c = 0; c < w; c++) v[r * w + c] = 50 + 10 * Math.sin(c / 37) * Math.cos(r / 53) + 3 * Math.sin(c / 11 + r / 17) + noise * rnd();
  }
  const header = `{'descr': '<f4', 'fortran_order': False, 'shape': (${h}, ${w}), }`.padEnd(117) + '\n';
  writeFileSync(path, Buffer.concat([Buffer.from([0x93]), Buffer.from('NUMPY'), Buffer.from([1, 0, header.length & 255, header.length >> 8]), Buffer.from(header), Buffer.from(v.buffer)]));
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

/** Every file under `dir` (relative names, sorted), folders left out. */
export function listFiles(dir: string, rel = ''): string[] {
  const out: string[] = [];
  for (const e of readdirSync(join(dir, rel), { withFileTypes: true })) {
    const r = rel ? `${rel}/${e.name}` : e.name;
    if (e.isDirectory()) out.push(...listFiles(dir, r));
    else out.push(r);
  }
  return out.sort();
}
