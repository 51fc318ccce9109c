/**
 * The README's test command (scripts/test.mjs): what it says when a prerequisite is absent. Run in a
 * clean temporary HOME with PATH limited to the system's (no global npm packages); absence is
 * simulated by pointing a prerequisite's path variable at a missing file (the runner never installs
 * over a path the user chose). Common practice: a set-up script is tested as a new user would run it.
 */
import { describe, it, expect } from 'vitest';
import { spawnSync } from 'node:child_process';
import { mkdtempSync, rmSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join, dirname } from 'node:path';
import { fileURLToPath } from 'node:url';

const root = join(dirname(fileURLToPath(import.meta.url)), '..', '..');
const SYSTEM_PATH = '/usr/local/sbin:/usr/local/bin:/usr/sbin:/usr/bin:/sbin:/bin';

function runner(env: Record<string, string>): { code: number | null; lines: string[] } {
  const home = mkdtempSync(join(tmpdir(), 'sill-home-'));
  try {
    const r = spawnSync(process.execPath, [join(root, 'scripts', 'test.mjs'), '--prerequisites-only'], {
      cwd: root, encoding: 'utf8', env: { HOME: home, PATH: SYSTEM_PATH, ...env }, timeout: 120_000,
    });
    return { code: r.status, lines: (r.stdout + r.stderr).trim().split('\n') };
  } finally {
    rmSync(home, { recursive: true, force: true });
  }
}

describe('npm test set-up (scripts/test.mjs)', () => {
  it('names a skipped group, why, and the one command that enables it, in one closing line', () => {
    const r = runner({ SILL_CHROMIUM: '/nonexistent/chromium' });
    expect(r.code).toBe(0);
    const last = r.lines[r.lines.length - 1];
    expect(last).toMatch(/^sill test: skipped \d+ groups?: /);
    expect(last).toContain('browser — browser tests of the HTML reports');
    expect(last).toContain('no Chromium at /nonexistent/chromium');
    expect(last).toMatch(/apt-get install -y [^;]*chromium/);
    // nothing is installed over a path the user chose
    expect(r.lines.some((l) => /installing/.test(l))).toBe(false);
  });

  it('lists every absent group: Python missing takes the GDAL, scikit-image, NumPy and GUDHI checks with it', () => {
    const r = runner({ SILL_CHROMIUM: '/nonexistent/chromium', SILL_PYTHON: '/nonexistent/python3' });
    const last = r.lines[r.lines.length - 1];
    expect(last).toMatch(/^sill test: skipped 5 groups: /);
    expect(last).toContain('gdal — GDAL read-back checks');
    expect(last).toContain('skimage — live scikit-image reference checks');
    expect(last).toContain('numpy — the NumPy example of docs/library.md');
    expect(last).toContain('gudhi — live GUDHI persistence checks of 3-D grids');
    expect(last).toContain('no Python at /nonexistent/python3');
    expect(last).toMatch(/apt-get install -y chromium gdal-bin python3-gdal python3-skimage python3-numpy python3-gudhi/);
  });

  it('in CI a missing prerequisite fails the run instead of skipping', () => {
    const r = runner({ SILL_CHROMIUM: '/nonexistent/chromium', CI: 'true' });
    expect(r.code).toBe(1);
    expect(r.lines[r.lines.length - 1]).toMatch(/^sill test: CI needs every test group, and 1 cannot run: browser/);
  });

  it('with no way to install (SILL_NO_INSTALL=1) and the default places, it still reports rather than fails', () => {
    const r = runner({ SILL_NO_INSTALL: '1', SILL_GDALINFO: '/nonexistent/gdalinfo' });
    expect(r.code).toBe(0);
    const last = r.lines[r.lines.length - 1];
    expect(last).toContain('no gdalinfo at /nonexistent/gdalinfo');
    expect(last).not.toContain('browser —');
  });
});
