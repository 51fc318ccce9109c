/**
 * Crash consistency of output folders, tested the way SQLite tests its journal: kill a writer at
 * many instants and check what a reader finds. `ponds -o DIR` runs into a folder that holds an older
 * result made with other options (plus a file sill did not write); it is killed with SIGKILL at 30
 * instants spread over one run's measured duration, and with SIGTERM at 10 (SIGINT at 2). After each
 * kill DIR must hold one complete set — every file of the same run, byte for byte the old or the new
 * result, as the manifest lists it — and the next run's first step must leave no staging folder.
 * The journal fallback (SILL_EXCHANGE=none) is checked too: there a kill in the move window may
 * leave a mix, which the next run completes before anything else (docs/output-folders.md).
 */
import { describe, it, expect, beforeAll, afterAll } from 'vitest';
import { spawn } from 'node:child_process';
import { createHash } from 'node:crypto';
import { cpSync, existsSync, readFileSync, readdirSync, rmSync, statSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { BIN, sill, tempDir, writeTerrainNpy } from './run.js';
import { OutputFolder, MANIFEST, JOURNAL, type Manifest } from '../../src/io/outdir.js';

const FOREIGN = 'notes.txt';
const OLD_OPTIONS = ['--min-depth', '0.02', '--stage-volume', '1', '--report'];

function listFiles(dir: string, rel = ''): string[] {
  const out: string[] = [];
  for (const e of readdirSync(join(dir, rel), { withFileTypes: true })) {
    const r = rel ? `${rel}/${e.name}` : e.name;
    if (e.isDirectory()) out.push(...listFiles(dir, r));
    else out.push(r);
  }
  return out.sort();
}

/** Hash of every file of a result folder, the manifest left out (its run id and time differ from run to run). */
function digest(dir: string): Map<string, string> {
  const m = new Map<string, string>();
  for (const f of listFiles(dir)) if (f !== MANIFEST) m.set(f, createHash('sha1').update(readFileSync(join(dir, f))).digest('hex'));
  return m;
}

interface Killed { pid: number; code: number | null; signal: NodeJS.Signals | null; stderr: string }

/**
 * Start `sill ARGS`, send `signal` `ms` after the start — or, with `watch`, `ms` after a staging
 * folder first appears in that folder (the writing phase) — and wait for the end.
 */
function runAndKill(args: string[], ms: number, signal: NodeJS.Signals, env: Record<string, string> = {}, watch?: string): Promise<Killed & { stagedAt: number | null; ms: number }> {
  return new Promise((done) => {
    const t0 = Date.now();
    const child = spawn(process.execPath, [BIN, ...args], { env: { ...process.env, ...env }, stdio: ['ignore', 'ignore', 'pipe'] });
    let stderr = '';
    let stagedAt: number | null = null;
    child.stderr!.on('data', (d) => { stderr += d; });
    let timer: NodeJS.Timeout | undefined;
    let poll: NodeJS.Timeout | undefined;
    if (watch === undefined) {
      timer = setTimeout(() => child.kill(signal), ms);
    } else {
      poll = setInterval(() => {
        if (stagedAt !== null || !existsSync(watch) || !readdirSync(watch).some((n) => n.startsWith('.sill-staging-'))) return;
        stagedAt = Date.now() - t0;
        timer = setTimeout(() => child.kill(signal), ms);
      }, 2);
    }
    child.on('exit', (code, sig) => {
      clearTimeout(timer);
      clearInterval(poll);
      done({ pid: child.pid!, code, signal: sig, stderr, stagedAt, ms: Date.now() - t0 });
    });
  });
}

/** Staging folders (hidden, named after the run's pid) inside and beside `out`. */
function stagingFolders(out: string): string[] {
  const inside = existsSync(out) ? readdirSync(out).filter((n) => n.startsWith('.sill-staging-')) : [];
  const beside = readdirSync(join(out, '..')).filter((n) => n.startsWith('.sill-staging-'));
  return [...inside, ...beside];
}

describe('crash consistency of -o DIR (kills at many instants)', () => {
  let dir: string;
  let dem: string;
  let oldRef: Map<string, string>;
  let newRef: Map<string, string>;
  let oldDir: string;
  let duration = 0;
  let writing = 0;
  const work = () => join(dir, 'work', 'out');

  beforeAll(async () => {
    dir = tempDir('sill-crash-');
    dem = join(dir, 'dem.npy');
    writeTerrainNpy(dem, 256, 256);
    oldDir = join(dir, 'ref-old');
    expect(sill(['ponds', dem, '-o', oldDir, ...OLD_OPTIONS, '--quiet']).code).toBe(0);
    // one run's duration, measured the way the killed runs are started
    oldRef = digest(oldDir);
    // one run's duration and its writing phase, measured as the killed runs will run: into the older result
    reset();
    const full = await runAndKill(['ponds', dem, '-o', work(), '--quiet'], 600_000, 'SIGKILL', {}, join(work(), '..'));
    expect(full.code).toBe(0);
    duration = full.ms;
    writing = full.ms - (full.stagedAt ?? 0);
    newRef = digest(work());
    newRef.delete(FOREIGN);
    // the two results differ in their file sets, so a mix could not pass for either
    expect(oldRef.has('report.html') && oldRef.has('stage-volume-1.csv') && !newRef.has('report.html')).toBe(true);
  }, 120_000);
  afterAll(() => rmSync(dir, { recursive: true, force: true }));

  /** DIR := the older result plus a file sill did not write; returns that file's inode. */
  function reset(): number {
    rmSync(join(dir, 'work'), { recursive: true, force: true });
    cpSync(oldDir, work(), { recursive: true });
    writeFileSync(join(work(), FOREIGN), 'kept by the user\n');
    return statSync(join(work(), FOREIGN)).ino;
  }

  /** DIR holds exactly one complete result (old or new) as its manifest lists it, and the foreign file untouched. */
  function checkConsistent(foreignIno: number): 'old' | 'new' {
    const out = work();
    const manifest = JSON.parse(readFileSync(join(out, MANIFEST), 'utf8')) as Manifest;
    const files = listFiles(out).filter((f) => f !== FOREIGN && !f.startsWith('.sill-staging-'));
    expect(files).toEqual([MANIFEST, ...manifest.files.map((f) => f.name)].sort());
    for (const f of manifest.files) expect(statSync(join(out, f.name)).size).toBe(f.size);
    const got = digest(out);
    got.delete(FOREIGN);
    for (const k of [...got.keys()]) if (k.startsWith('.sill-staging-')) got.delete(k);
    const which = got.get('report.html') ? 'old' : 'new';
    expect(got).toEqual(which === 'old' ? oldRef : newRef);
    expect(statSync(join(out, FOREIGN)).ino).toBe(foreignIno);
    expect(readFileSync(join(out, FOREIGN), 'utf8')).toBe('kept by the user\n');
    return which;
  }

  /** What the next run does first (before its own work): complete a journal commit, remove staging folders of dead runs. */
  function nextRunCleans(): void {
    new OutputFolder(work(), { command: 'ponds', version: 'test', names: ['report.json'] });
    expect(stagingFolders(work())).toEqual([]);
  }

  it('SIGKILL at 30 instants (15 spread over the run, 15 over its writing phase): DIR holds the complete old or the complete new result, never a mix; the next run removes the staging folder', async () => {
    const seen = { old: 0, new: 0 };
    for (let i = 0; i < 30; i++) {
      const ino = reset();
      // instants are counted from the start, or (the second half) from the moment the staging folder appears
      const inWriting = i >= 15;
      const ms = Math.round(inWriting ? (writing * (i - 15 + 0.5)) / 15 : (duration * (i + 0.5)) / 15);
      const k = await runAndKill(['ponds', dem, '-o', work(), '--quiet'], ms, 'SIGKILL', {}, inWriting ? join(work(), '..') : undefined);
      const state = checkConsistent(ino);
      seen[state]++;
      // at most the killed run's staging folder (before the swap: the new set; after: the old tree)
      const left = stagingFolders(work());
      if (process.env.CRASH_DEBUG) console.log(i, ms, duration, writing, k.stagedAt, k.signal, state, left);
      expect(left.length).toBeLessThanOrEqual(1);
      for (const n of left) expect(n).toContain(`-${k.pid}-`);
      nextRunCleans();
    }
    expect(seen.old).toBeGreaterThan(0);
  }, 180_000);

  it('SIGKILL at each step of a commit (fault injection, SILL_CRASH_AT): before the swap the old result, after it the new one; the journal fallback completes on the next run', async () => {
    const steps: [string, 'old' | 'new', Record<string, string>][] = [
      ['staged', 'old', {}], ['manifest', 'old', {}], ['carried', 'old', {}], ['exchanged', 'new', {}], ['old-tree', 'new', {}],
      ['journal', 'new', { SILL_EXCHANGE: 'none' }], ['journal-moves', 'new', { SILL_EXCHANGE: 'none' }],
    ];
    for (const [at, want, env] of steps) {
      const ino = reset();
      const k = await runAndKill(['ponds', dem, '-o', work(), '--quiet'], 600_000, 'SIGKILL', { ...env, SILL_CRASH_AT: at });
      expect(k.signal).toBe('SIGKILL');
      if (env.SILL_EXCHANGE === 'none') {
        // the journal window: a mix is possible until the next run completes the commit
        expect(existsSync(join(work(), JOURNAL))).toBe(true);
        nextRunCleans();
        expect(existsSync(join(work(), JOURNAL))).toBe(false);
        expect(checkConsistent(ino)).toBe(want);
      } else {
        expect(checkConsistent(ino)).toBe(want);
        expect(stagingFolders(work())).toHaveLength(1);
        nextRunCleans();
      }
    }
  }, 120_000);

  it('SIGTERM at 10 instants and SIGINT at 2 (half of them while files are written): exit 143/130 with one line (or death by the signal before any staging), the staging folder removed, DIR complete', async () => {
    // [signal, fraction, counted from]: from the start over the run, or from the staging folder's appearance over the writing phase
    const kills: [NodeJS.Signals, number, 'start' | 'writing'][] = [
      ...Array.from({ length: 5 }, (_, i): [NodeJS.Signals, number, 'start'] => ['SIGTERM', (i + 0.5) / 5, 'start']),
      ...Array.from({ length: 5 }, (_, i): [NodeJS.Signals, number, 'writing'] => ['SIGTERM', (i + 0.5) / 5, 'writing']),
      ['SIGINT', 0.3, 'writing'], ['SIGINT', 0.7, 'writing'],
    ];
    let handled = 0;
    for (const [sig, at, from] of kills) {
      const ino = reset();
      const ms = Math.round((from === 'start' ? duration : writing) * at);
      const k = await runAndKill(['ponds', dem, '-o', work(), '--quiet'], ms, sig, {}, from === 'writing' ? join(work(), '..') : undefined);
      const want = sig === 'SIGTERM' ? 143 : 130;
      if (process.env.CRASH_DEBUG) console.log(sig, at, from, ms, writing, k.code, k.signal, k.stagedAt, k.ms, k.stderr);
      if (k.signal === null && k.code !== 0) {
        expect(k.code).toBe(want);
        expect(k.stderr.trim().split('\n')).toHaveLength(1);
        expect(k.stderr).toMatch(new RegExp(`^sill: stopped by ${sig}`));
        handled++;
      } else if (k.signal !== null) {
        expect(k.signal).toBe(sig);
      }
      checkConsistent(ino);
      expect(stagingFolders(work())).toEqual([]);
    }
    expect(handled).toBeGreaterThan(0);
  }, 180_000);

  it('journal fallback (SILL_EXCHANGE=none): a kill may leave the move half done, with the journal; the next run completes it to the new result', async () => {
    const outcomes: string[] = [];
    for (let i = 0; i < 4; i++) {
      const ino = reset();
      const ms = Math.round(duration * (0.6 + (i + 0.5) / 10));
      await runAndKill(['ponds', dem, '-o', work(), '--quiet'], ms, 'SIGKILL', { SILL_EXCHANGE: 'none' });
      const pending = existsSync(join(work(), JOURNAL));
      if (!pending) {
        outcomes.push(checkConsistent(ino));
        nextRunCleans();
      } else {
        outcomes.push('journal');
        nextRunCleans();
        expect(existsSync(join(work(), JOURNAL))).toBe(false);
        expect(checkConsistent(ino)).toBe('new');
      }
    }
    expect(outcomes.length).toBe(4);
  }, 120_000);

  it('after the kills, a full run into the folder leaves the new result and no staging folder anywhere', () => {
    const ino = reset();
    expect(sill(['ponds', dem, '-o', work(), '--quiet']).code).toBe(0);
    expect(checkConsistent(ino)).toBe('new');
    expect(stagingFolders(work())).toEqual([]);
  });
});
