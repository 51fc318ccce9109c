#!/usr/bin/env node
/**
 * `npm test`: make sure the system programs the suite needs are there, build, run the whole suite,
 * and say in one line which groups did not run.
 *
 *  1. Missing prerequisites (scripts/prerequisites.mjs) are installed with apt-get where this
 *     process may (root or passwordless sudo on a Debian-like system), with one line saying what
 *     and why; set SILL_NO_INSTALL=1 to never install.
 *  2. `tsc` builds dist/, then vitest runs every test; extra arguments go to vitest.
 *  3. The last line names the groups that were skipped and the one command that enables them.
 *     With CI=true nothing may be skipped: a missing prerequisite fails the run.
 *
 * `node scripts/test.mjs --prerequisites-only` does steps 1 and 3 without building or testing.
 */
import { spawnSync } from 'node:child_process';
import { mkdirSync, openSync, closeSync, readFileSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { GROUPS, installer } from './prerequisites.mjs';

const root = join(dirname(fileURLToPath(import.meta.url)), '..');
const args = process.argv.slice(2);
const onlyPrerequisites = args[0] === '--prerequisites-only';
const ci = process.env.CI === 'true' || process.env.CI === '1';
const say = (line) => process.stdout.write(`sill test: ${line}\n`);

// 1. what is missing, and install what may be installed
let missing = GROUPS.filter((g) => g.missing() !== null);
const installable = missing.filter((g) => !g.overridden());
const sudo = process.env.SILL_NO_INSTALL === '1' ? null : installer();
if (installable.length > 0 && sudo !== null) {
  const pkgs = [...new Set(installable.flatMap((g) => g.packages))];
  say(`installing ${pkgs.join(' ')} with apt-get, for the ${installable.map((g) => g.what).join('; ')}`);
  mkdirSync(join(root, 'test-output'), { recursive: true });
  const log = join(root, 'test-output', 'apt.log');
  const fd = openSync(log, 'w');
  const env = { ...process.env, DEBIAN_FRONTEND: 'noninteractive' };
  const run = (argv) => spawnSync(sudo.length ? sudo[0] : argv[0], sudo.length ? [...sudo.slice(1), ...argv] : argv.slice(1), { stdio: ['ignore', fd, fd], env }).status;
  const ok = run(['apt-get', 'update']) === 0 && run(['apt-get', 'install', '-y', ...pkgs]) === 0;
  closeSync(fd);
  if (!ok) {
    const tail = readFileSync(log, 'utf8').trim().split('\n').slice(-3).join(' | ');
    say(`apt-get install ${pkgs.join(' ')} failed (log: test-output/apt.log): ${tail}`);
  }
  missing = GROUPS.filter((g) => g.missing() !== null);
}

/** The closing line: every group ran, or which did not and the command that would enable them. */
function summary() {
  if (missing.length === 0) return { line: 'every test group ran (browser, GDAL, scikit-image, NumPy and Slurm checks included)', ok: true };
  const pkgs = [...new Set(missing.flatMap((g) => g.packages))].join(' ');
  const what = missing.map((g) => `${g.id} — ${g.what} (${g.missing()})`).join('; ');
  const fix = missing.some((g) => g.overridden())
    ? `point ${missing.filter((g) => g.overridden()).map((g) => (g.id === 'browser' ? 'SILL_CHROMIUM' : 'SILL_PYTHON/SILL_GDALINFO')).join(', ')} at an existing program or unset it, or run: apt-get install -y ${pkgs}`
    : `to run them: ${process.getuid?.() === 0 ? '' : 'sudo '}apt-get install -y ${pkgs}`;
  if (ci) return { line: `CI needs every test group, and ${missing.length} cannot run: ${what}; ${fix}`, ok: false };
  return { line: `skipped ${missing.length} group${missing.length > 1 ? 's' : ''}: ${what}; ${fix}`, ok: true };
}

if (onlyPrerequisites) {
  const s = summary();
  say(s.line);
  process.exit(s.ok ? 0 : 1);
}

// 2. build, then the whole suite; the tests read SILL_TEST_SKIP to skip (never in CI, where they fail instead)
const bin = (name) => join(root, 'node_modules', '.bin', name);
const build = spawnSync(bin('tsc'), ['-p', 'tsconfig.build.json'], { cwd: root, stdio: 'inherit' });
if (build.status !== 0) {
  say('the build (tsc -p tsconfig.build.json) failed; no tests ran');
  process.exit(1);
}
// the folder-exchange addon (native/build.mjs: offline, says one line and goes on when it cannot build)
spawnSync(process.execPath, [join(root, 'native', 'build.mjs'), '--quiet'], { cwd: root, stdio: 'inherit' });
const env = { ...process.env, SILL_TEST_SKIP: ci ? '' : missing.map((g) => g.id).join(',') };
const test = spawnSync(bin('vitest'), ['run', ...args], { cwd: root, stdio: 'inherit', env });

// 3. the closing line
const s = summary();
say(s.line);
process.exit(test.status !== 0 ? (test.status ?? 1) : s.ok ? 0 : 1);
