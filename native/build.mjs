#!/usr/bin/env node
/**
 * Build native/build/exchange.node (src/io/exchange.ts loads it) from exchange.c with the C
 * compiler and Node's own headers. Offline by design: it never downloads anything. When it
 * cannot build (not Linux, no compiler, no headers) it says so in one line and exits 0 — sill
 * then swaps folders through Debian's Python or, failing that, commits through a journal
 * (docs/output-folders.md).
 */
import { spawnSync } from 'node:child_process';
import { existsSync, mkdirSync, statSync, renameSync, rmSync } from 'node:fs';
import { dirname, join } from 'node:path';
import { fileURLToPath } from 'node:url';

const here = dirname(fileURLToPath(import.meta.url));
const src = join(here, 'exchange.c');
const out = join(here, 'build', 'exchange.node');
const quiet = process.argv.includes('--quiet');
const note = (s) => { if (!quiet) process.stderr.write(`sill native: ${s}\n`); };

function main() {
  if (process.platform !== 'linux') return note(`no folder exchange on ${process.platform}; sill will commit output folders through a journal`);
  if (existsSync(out) && statSync(out).mtimeMs >= statSync(src).mtimeMs) return;
  const candidates = [
    process.env.npm_config_nodedir && join(process.env.npm_config_nodedir, 'include', 'node'),
    join(dirname(dirname(process.execPath)), 'include', 'node'),
    '/usr/include/node',
  ].filter(Boolean);
  const include = candidates.find((d) => existsSync(join(d, 'node_api.h')));
  if (!include) return note(`Node's headers (node_api.h) not found in ${candidates.join(', ')}; skipping the folder-exchange addon`);
  const cc = process.env.CC || 'cc';
  mkdirSync(dirname(out), { recursive: true });
  const tmp = `${out}.${process.pid}.tmp`;
  const r = spawnSync(cc, ['-shared', '-fPIC', '-O2', '-Wall', '-I', include, '-o', tmp, src], { encoding: 'utf8' });
  if (r.error || r.status !== 0) {
    rmSync(tmp, { force: true });
    return note(`could not compile ${src} with ${cc} (${r.error ? r.error.message : (r.stderr || '').trim().split('\n')[0] || `exit status ${r.status}`}); skipping the folder-exchange addon`);
  }
  renameSync(tmp, out);
}

main();
