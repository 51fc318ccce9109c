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
import { BIN, listFiles, sill, tempDir, writeTerrainNpy } from './run.js';
import { OutputFolder, MANIFEST, JOURNAL, type Manifest } from '../../src/io/outdir.js';

const FOREIGN = 'notes.txt';
const OLD_OPTIONS = ['--min-depth', '0.02', '--stage-volume', '1', '--report'];

/** Hash of every file of a result folder, the manifest left out (its run id and time differ from run to run). */
function digest(dir: string): Map<string, string> {
  const m = new Map<string, string>();
  for (const f of listFiles(dir)) if (f !== MANIFEST) m.set(f, createHash('sha1').update(readFileSync(join(dir, f))).digest('hex'));
  return m;
}

interface Killed { pid: number; code: number | null; signal: NodeJS.Signals | null; stderr: string; stagedAt: number | null; ms: number; sent: boolean }

/** When to signal a run: `ms` after its start, or after a staging folder first appears in `watch` (the writing phase). */
interface Instant { ms: number; watch?: string }

/**
 * Start `sill ARGS`, send `signal` at `at`, and wait for the end. `stagedAt` is when the staging folder
 * was first seen (ms from the start), `sent` whether the signal went out before the run ended.
 */
function runAndKill(args: string[], at: Instant | null, signal: NodeJS.Signals, env: Record<string, string> = {}, watch = at?.watch): Promise<Killed> {
  return new Promise((done) => {
    const t0 = Date.now();
    const child = spawn(process.execPath, [BIN, ...args], { env: { ...process.env, ...env }, stdio: ['ignore', 'ignore', 'pipe'] });
    let stderr = '';
    let stagedAt: number | null = null;
    let sent = false;
    let ended = false;
    child.stderr!.on('data', (d) => { stderr += d; });
    let timer: NodeJS.Timeout | undefined;
    let poll: NodeJS.Timeout | undefined;
    const fire = (): void => { if (!ended) { sent = true; child.kill(signal); } };
    if (at && at.watch === undefined) timer = setTimeout(fire, at.ms);
    if (watch !== undefined) {
      poll = setInterval(() => {
        if (stagedAt !== null || !writingIn(watch)) return;
        stagedAt = Date.now() - t0;
        clearInterval(poll);
        if (at?.watch !== undefined) timer = setTimeout(fire, at.ms);
      }, 2);
    }
    child.on('exit', (code, sig) => {
      ended = true;
      clearTimeout(timer);
      clearInterval(poll);
      done({ pid: child.pid!, code, signal: sig, stderr, stagedAt, ms: Date.now() - t0, sent });
    });
  });
}

/**
 * Whether a run is writing into a staging folder in `where`: one that holds something (the empty
 * folders that check, before any work, that a staging folder can be made there do not count).
 */
function writingIn(where: string): boolean {
  try {
    return readdirSync(where).some((n) => n.startsWith('.sill-staging-') && readdirSync(join(where, n)).length > 0);
  } catch {
    return false; // a folder removed while we looked
  }
}

/** Staging folders (hidden, named after the run's pid) inside and beside `out`. */
function stagingFolders(out: string): string[] {
  const inside = existsSync(out) ? readdirSync(out).filter((n) => n.startsWith('.sill-staging-')) : [];
  const beside = readdirSync(join(out, '..')).filter((n) => n.startsWith('.sill-staging-'));
  return [...inside, ...beside];
}

const median = (xs: number[]): number => [...xs].sort((a, b) => a - b)[xs.length >> 1];

/** Run `fn` over `cases` in `lanes` parallel lanes (each lane has its own folder), keeping the cases' order in the results. */
async function inLanes<C, R>(cases: C[], lanes: number, fn: (c: C, lane: number, i: number) => Promise<R>): Promise<R[]> {
  const out: R[] = new Array(cases.length);
  let next = 0;
  await Promise.all(Array.from({ length: lanes }, async (_, lane) => {
    while (next < cases.length) {
      const i = next++;
      out[i] = await fn(cases[i], lane, i);
    }
  }));
  return out;
}

/** Two lanes: the machine the suite must fit has two cores; each run is one process. */
const LANES = 2;

describe('crash consistency of -o DIR (kills at many instants)', () => {
  let dir: string;
  let dem: string;
  let oldRef: Map<string, string>;
  let newRef: Map<string, string>;
  let oldDir: string;
  // The run's phases, measured on the runs themselves (never fixed times): from the start until the
  // staging folder appears (start-up, input, computing), and from then until the end (writing, commit).
  // Every run that ends by itself adds a sample, so the instants follow the machine's load as it changes.
  const toStaging: number[] = [];
  const writing: number[] = [];
  const work = (lane = 0) => join(dir, `lane-${lane}`, 'out');
  const PONDS = () => ['ponds', dem, '-o', work(), '--quiet'];
  const ponds = (lane: number) => ['ponds', dem, '-o', work(lane), '--quiet'];

  /** Learn the phases from a run that was not cut short by the test's signal. */
  function learn(k: Killed): void {
    if (k.sent || k.code !== 0 || k.stagedAt === null) return;
    toStaging.push(k.stagedAt);
    writing.push(k.ms - k.stagedAt);
  }
  /** An instant at `frac` of the whole run, counted from its start. */
  const overRun = (frac: number): Instant => ({ ms: Math.round(frac * (median(toStaging) + median(writing))) });
  /** An instant at `frac` of the writing phase, counted from the moment the staging folder appears in `watch`. */
  const overWriting = (frac: number, watch: string): Instant => ({ ms: Math.round(frac * median(writing)), watch });

  beforeAll(async () => {
    dir = tempDir('sill-crash-');
    dem = join(dir, 'dem.npy');
    writeTerrainNpy(dem, 256, 256);
    oldDir = join(dir, 'ref-old');
    expect(sill(['ponds', dem, '-o', oldDir, ...OLD_OPTIONS, '--quiet']).code).toBe(0);
    oldRef = digest(oldDir);
    // the phases first measured as the killed runs will run: into the older result, in parallel lanes
    const full = await inLanes(Array.from({ length: LANES }, (_, i) => i), LANES, async (_, lane) => {
      reset(lane);
      const k = await runAndKill(ponds(lane), null, 'SIGKILL', {}, join(work(lane), '..'));
      expect(k.code).toBe(0);
      learn(k);
      return lane;
    });
    newRef = digest(work(full[0]));
    newRef.delete(FOREIGN);
    // the two results differ in their file sets, so a mix could not pass for either
    expect(oldRef.has('report.html') && oldRef.has('stage-volume-1.csv') && !newRef.has('report.html')).toBe(true);
  }, 300_000);
  afterAll(() => rmSync(dir, { recursive: true, force: true }));

  /** DIR := the older result plus a file sill did not write; returns that file's inode. */
  function reset(lane = 0): number {
    rmSync(join(work(lane), '..'), { recursive: true, force: true });
    cpSync(oldDir, work(lane), { recursive: true });
    writeFileSync(join(work(lane), FOREIGN), 'kept by the user\n');
    return statSync(join(work(lane), FOREIGN)).ino;
  }

  /**
   * DIR holds exactly one complete result (old or new) as its manifest lists it, and the foreign file
   * untouched; besides, at most staging folders (hidden, the next run removes them) — nothing else.
   */
  function checkConsistent(foreignIno: number, lane = 0): 'old' | 'new' {
    const out = work(lane);
    const manifest = JSON.parse(readFileSync(join(out, MANIFEST), 'utf8')) as Manifest;
    const files = listFiles(out).filter((f) => f !== FOREIGN && !f.startsWith('.sill-staging-'));
    // compared as text, so that a failure shows every name (an array diff is cut short)
    expect(files.join('\n')).toBe([MANIFEST, ...manifest.files.map((f) => f.name)].sort().join('\n'));
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
  function nextRunCleans(lane = 0): void {
    new OutputFolder(work(lane), { command: 'ponds', version: 'test', names: ['report.json'] });
    expect(stagingFolders(work(lane))).toEqual([]);
  }

  it('SIGKILL at 30 instants (15 spread over the run, 15 over its writing phase): DIR holds the complete old or the complete new result, never a mix; the next run removes the staging folder', async () => {
    const states = await inLanes(Array.from({ length: 30 }, (_, i) => i), LANES, async (i, lane) => {
      const ino = reset(lane);
      // instants are counted from the start, or (the second half) from the moment the staging folder appears
      const at = i < 15 ? overRun((i + 0.5) / 15) : overWriting((i - 15 + 0.5) / 15, join(work(lane), '..'));
      const k = await runAndKill(ponds(lane), at, 'SIGKILL');
      learn(k);
      const state = checkConsistent(ino, lane);
      // at most the killed run's staging folder (before the swap: the new set; after: the old tree)
      const left = stagingFolders(work(lane));
      if (process.env.CRASH_DEBUG) console.log(i, at, k.stagedAt, k.ms, k.signal, state, left);
      expect(left.length).toBeLessThanOrEqual(1);
      for (const n of left) expect(n).toContain(`-${k.pid}-`);
      nextRunCleans(lane);
      return state;
    });
    // the first instant (1/30 of the run, in the start-up) always leaves the old result
    expect(states[0]).toBe('old');
  }, 300_000);

  it('SIGKILL at each step of a commit (fault injection, SILL_CRASH_AT): before the swap the old result, after it the new one; the journal fallback completes on the next run', async () => {
    const steps: [string, 'old' | 'new', Record<string, string>][] = [
      ['staged', 'old', {}], ['manifest', 'old', {}], ['carried', 'old', {}], ['exchanged', 'new', {}], ['old-tree', 'new', {}],
      ['journal-temp', 'old', { SILL_EXCHANGE: 'none' }],
      ['journal', 'new', { SILL_EXCHANGE: 'none' }], ['journal-moves', 'new', { SILL_EXCHANGE: 'none' }],
    ];
    await inLanes(steps, LANES, async ([at, want, env], lane) => {
      const ino = reset(lane);
      const k = await runAndKill(ponds(lane), null, 'SIGKILL', { ...env, SILL_CRASH_AT: at });
      expect(k.signal).toBe('SIGKILL');
      if (at === 'journal-temp') {
        // the intent record not yet in place: DIR is as it was, plus the one staging folder (with the
        // record's temporary inside it), which the next run removes
        expect(existsSync(join(work(lane), JOURNAL))).toBe(false);
        expect(checkConsistent(ino, lane)).toBe(want);
        expect(stagingFolders(work(lane))).toHaveLength(1);
        nextRunCleans(lane);
      } else if (env.SILL_EXCHANGE === 'none') {
        // the journal window: a mix is possible until the next run completes the commit
        expect(existsSync(join(work(lane), JOURNAL))).toBe(true);
        nextRunCleans(lane);
        expect(existsSync(join(work(lane), JOURNAL))).toBe(false);
        expect(checkConsistent(ino, lane)).toBe(want);
      } else {
        expect(checkConsistent(ino, lane)).toBe(want);
        expect(stagingFolders(work(lane))).toHaveLength(1);
        nextRunCleans(lane);
      }
      expect(readdirSync(work(lane)).filter((n) => n.endsWith('.tmp'))).toEqual([]);
    });
  }, 300_000);

  it('SIGTERM at 10 instants and SIGINT at 2 (half of them while files are written): exit 143/130 with one line (or death by the signal before any staging), the staging folder removed, DIR complete', async () => {
    // [signal, fraction, counted from]: from the start over the run, or from the staging folder's appearance over the writing phase
    const kills: [NodeJS.Signals, number, 'start' | 'writing'][] = [
      ...Array.from({ length: 5 }, (_, i): [NodeJS.Signals, number, 'start'] => ['SIGTERM', (i + 0.5) / 5, 'start']),
      ...Array.from({ length: 5 }, (_, i): [NodeJS.Signals, number, 'writing'] => ['SIGTERM', (i + 0.5) / 5, 'writing']),
      ['SIGINT', 0.3, 'writing'], ['SIGINT', 0.7, 'writing'],
    ];
    let handled = 0;
    const one = async ([sig, frac, from]: [NodeJS.Signals, number, 'start' | 'writing'], lane: number): Promise<void> => {
      const ino = reset(lane);
      const at = from === 'start' ? overRun(frac) : overWriting(frac, join(work(lane), '..'));
      const k = await runAndKill(ponds(lane), at, sig);
      learn(k);
      const want = sig === 'SIGTERM' ? 143 : 130;
      if (process.env.CRASH_DEBUG) console.log(sig, frac, from, at, k.code, k.signal, k.stagedAt, k.ms, k.stderr);
      if (k.signal === null && k.code !== 0) {
        expect(k.code).toBe(want);
        expect(k.stderr.trim().split('\n')).toHaveLength(1);
        expect(k.stderr).toMatch(new RegExp(`^sill: stopped by ${sig}`));
        handled++;
      } else if (k.signal !== null) {
        expect(k.signal).toBe(sig);
      }
      checkConsistent(ino, lane);
      expect(stagingFolders(work(lane))).toEqual([]);
    };
    await inLanes(kills, LANES, one);
    // the handler must have run at least once; on a machine so loaded that every instant above fell
    // outside the run's signal-handling part, signal again right as the staging folder appears
    for (let extra = 0; handled === 0 && extra < 10; extra++) await one(['SIGTERM', 0, 'writing'], 0);
    expect(handled).toBeGreaterThan(0);
  }, 300_000);

  it('journal fallback (SILL_EXCHANGE=none): a kill may leave the move half done, with the journal; the next run completes it to the new result', async () => {
    const outcomes = await inLanes([0, 1, 2, 3], LANES, async (i, lane) => {
      const ino = reset(lane);
      // late in the writing phase, near the commit (the staging folder is inside DIR here)
      const k = await runAndKill(ponds(lane), overWriting(0.6 + (i + 0.5) / 10, work(lane)), 'SIGKILL', { SILL_EXCHANGE: 'none' });
      if (process.env.CRASH_DEBUG) console.log('journal', i, k.stagedAt, k.ms, k.signal, k.code, k.stderr, existsSync(join(work(lane), JOURNAL)), listFiles(work(lane)));
      if (!existsSync(join(work(lane), JOURNAL))) {
        // no journal: the old or the new result complete, and at most the staging folder beside it
        const state = checkConsistent(ino, lane);
        nextRunCleans(lane);
        return state;
      }
      nextRunCleans(lane);
      expect(existsSync(join(work(lane), JOURNAL))).toBe(false);
      expect(checkConsistent(ino, lane)).toBe('new');
      return 'journal';
    });
    expect(outcomes.length).toBe(4);
  }, 300_000);

  it('after the kills, a full run into the folder leaves the new result and no staging folder anywhere', () => {
    const ino = reset();
    expect(sill(PONDS()).code).toBe(0);
    expect(checkConsistent(ino)).toBe('new');
    expect(stagingFolders(work())).toEqual([]);
  });
});
