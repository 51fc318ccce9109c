/**
 * Output folders as transactions (src/io/outdir.ts, docs/output-folders.md): named regression tests
 * for each case of issue 14 — leftover files of an earlier run, files sill did not write, inputs
 * inside the output folder, /proc, a file as -o, read-only and full file systems, stale staging
 * folders, the fallbacks. The kill tests are in crash.test.ts.
 */
import { describe, it, expect, beforeAll, afterAll } from 'vitest';
import {
  existsSync, mkdirSync, readFileSync, readdirSync, rmSync, statSync, symlinkSync, writeFileSync, copyFileSync, chmodSync,
} from 'node:fs';
import { spawnSync, execFileSync } from 'node:child_process';
import { hostname } from 'node:os';
import { join } from 'node:path';
import { listFiles, sill, tempDir, writeTerrainNpy } from './run.js';
import { OutputFolder, MANIFEST, JOURNAL, type Manifest } from '../../src/io/outdir.js';

const isRoot = process.getuid?.() === 0;
const HOST = hostname().replace(/[^A-Za-z0-9.]/g, '_') || 'host';

const manifestOf = (dir: string): Manifest => JSON.parse(readFileSync(join(dir, MANIFEST), 'utf8'));
const oneLine = (s: string) => s.trim().split('\n');

/** A pid that is not running: a child that has already ended. */
function deadPid(): number {
  const r = spawnSync(process.execPath, ['-e', 'process.stdout.write(String(process.pid))'], { encoding: 'utf8' });
  return Number(r.stdout);
}

/** Run `fn` with a mount at `dir` (root only); returns false when mounting is not possible here. */
function withMount(args: string[], dir: string, fn: () => void): boolean {
  try {
    execFileSync('mount', [...args, dir], { stdio: 'ignore' });
  } catch {
    return false;
  }
  try {
    fn();
  } finally {
    execFileSync('umount', [dir], { stdio: 'ignore' });
  }
  return true;
}

describe('output folders (-o DIR) as transactions', () => {
  let dir: string;
  let dem: string;
  beforeAll(() => {
    dir = tempDir('sill-outdir-');
    dem = join(dir, 'dem.npy');
    writeTerrainNpy(dem, 120, 100, 0.5);
  });
  afterAll(() => rmSync(dir, { recursive: true, force: true }));

  it('leftover files: a second run with other options removes the first run\'s report.html, SVGs and stage-volume CSV, and keeps files sill did not write (same inode, same content)', () => {
    const out = join(dir, 'leftover');
    expect(sill(['ponds', dem, '-o', out, '--report', '--stage-volume', '1', '--quiet']).code).toBe(0);
    const first = manifestOf(out);
    expect(first.files.map((f) => f.name)).toEqual(expect.arrayContaining(['report.html', 'map.svg', 'stage-volume-1.csv', 'filled.tif']));
    writeFileSync(join(out, 'notes.txt'), 'field notes\n');
    mkdirSync(join(out, 'mine'));
    writeFileSync(join(out, 'mine', 'photo.txt'), 'a photo\n');
    const ino = statSync(join(out, 'notes.txt')).ino;
    const inoInner = statSync(join(out, 'mine', 'photo.txt')).ino;

    const r = sill(['ponds', dem, '-o', out, '--min-depth', '0.01', '--quiet']);
    expect(r.code).toBe(0);
    const m = manifestOf(out);
    expect(m.schema).toBe('sill/manifest@1');
    expect(m.command).toBe('ponds');
    expect(m.run).toMatch(/^[0-9a-f]{16}$/);
    expect(m.run).not.toBe(first.run);
    expect(Number.isNaN(Date.parse(m.time))).toBe(false);
    const names = m.files.map((f) => f.name);
    expect([...names].sort()).toEqual(['catchments.geojson', 'catchments.tif', 'depressions.csv', 'depressions.geojson', 'depth.tif', 'filled.tif', 'labels.tif', 'pour-points.geojson', 'report.json', 'results.gpkg', 'spill-paths.geojson']);
    for (const f of m.files) expect(statSync(join(out, f.name)).size).toBe(f.size);
    // exactly the new run's files, the manifest, and what sill did not write
    expect(listFiles(out)).toEqual([MANIFEST, ...names, 'mine/photo.txt', 'notes.txt'].sort());
    expect(statSync(join(out, 'notes.txt')).ino).toBe(ino);
    expect(readFileSync(join(out, 'notes.txt'), 'utf8')).toBe('field notes\n');
    expect(statSync(join(out, 'mine', 'photo.txt')).ino).toBe(inoInner);
    expect(readdirSync(dir).filter((n) => n.startsWith('.sill-'))).toEqual([]);
  });

  it('a folder holding files sill did not write and no manifest is refused (exit 2, one line) unless --force; an empty folder is fine', () => {
    const out = join(dir, 'theirs');
    mkdirSync(out);
    writeFileSync(join(out, 'thesis.tex'), 'chapter 1\n');
    const r = sill(['survey', dem, '-o', out, '--quiet']);
    expect(r.code).toBe(2);
    expect(oneLine(r.stderr)).toHaveLength(1);
    expect(r.stderr).toMatch(/^sill: output folder .*theirs holds files sill did not write \(thesis\.tex\).*--force/);
    expect(readdirSync(out)).toEqual(['thesis.tex']);

    const f = sill(['survey', dem, '-o', out, '--force', '--quiet']);
    expect(f.code).toBe(0);
    expect(readFileSync(join(out, 'thesis.tex'), 'utf8')).toBe('chapter 1\n');
    expect(existsSync(join(out, 'report.json'))).toBe(true);

    const empty = join(dir, 'empty');
    mkdirSync(empty);
    expect(sill(['survey', dem, '-o', empty, '--quiet']).code).toBe(0);
    expect(existsSync(join(empty, MANIFEST))).toBe(true);
  });

  it('a file sill did not write where a result goes is refused unless --force, which replaces it', () => {
    const out = join(dir, 'clash');
    expect(sill(['survey', dem, '-o', out, '--quiet']).code).toBe(0);
    writeFileSync(join(out, 'filled.tif'), 'not a raster of ours');
    const r = sill(['ponds', dem, '-o', out, '--quiet']);
    expect(r.code).toBe(2);
    expect(oneLine(r.stderr)).toHaveLength(1);
    expect(r.stderr).toMatch(/filled\.tif was not written by sill and this run would replace it/);
    expect(readFileSync(join(out, 'filled.tif'), 'utf8')).toBe('not a raster of ours');
    expect(sill(['ponds', dem, '-o', out, '--force', '--quiet']).code).toBe(0);
    expect(statSync(join(out, 'filled.tif')).size).toBeGreaterThan(1000);
    // the survey's files are gone: its manifest listed them
    expect(existsSync(join(out, 'critical-points.csv'))).toBe(false);
  });

  it('an input inside DIR whose name a result takes is refused with exit 2 before any work (real paths: ./ spellings and symbolic links too)', () => {
    const out = join(dir, 'self');
    expect(sill(['ponds', dem, '-o', out, '--quiet']).code).toBe(0);
    const before = readFileSync(join(out, 'filled.tif'));
    symlinkSync(out, join(dir, 'self-link'));
    for (const input of [join(out, 'filled.tif'), `${dir}/./self/../self/filled.tif`, join(dir, 'self-link', 'filled.tif')]) {
      const r = sill(['ponds', input, '-o', out, '--quiet']);
      expect(r.code).toBe(2);
      expect(oneLine(r.stderr)).toHaveLength(1);
      expect(r.stderr).toMatch(/^sill: input .*filled\.tif is inside the output folder .*where this run writes its filled\.tif/);
    }
    // runoff reading a result of the earlier ponds run, which it would remove
    const rr = sill(['runoff', join(out, 'filled.tif'), '--depth', '1mm', '-o', out, '--quiet']);
    expect(rr.code).toBe(2);
    expect(rr.stderr).toMatch(/is a result of the earlier run in .*which this run removes/);
    expect(readFileSync(join(out, 'filled.tif')).equals(before)).toBe(true);

    // runoff's water-level.tif, survey's report.json
    const out2 = join(dir, 'self2');
    expect(sill(['runoff', dem, '--depth', '5mm', '-o', out2, '--quiet']).code).toBe(0);
    const wl = sill(['runoff', join(out2, 'water-level.tif'), '--depth', '5mm', '-o', out2, '--quiet']);
    expect(wl.code).toBe(2);
    expect(wl.stderr).toMatch(/where this run writes its water-level\.tif/);
    const out3 = join(dir, 'self3');
    mkdirSync(out3);
    copyFileSync(dem, join(out3, 'report.json'));
    const rj = sill(['survey', join(out3, 'report.json'), '-o', out3, '--force', '--quiet']);
    expect(rj.code).toBe(2);
    expect(rj.stderr).toMatch(/where this run writes its report\.json/);
    expect(readFileSync(join(out3, 'report.json')).equals(readFileSync(dem))).toBe(true);
  });

  it('-o /proc/x ends at once with exit 1 and one line (it looped for ever on failing mkdir calls), for ponds and demo', () => {
    for (const args of [['ponds', dem, '-o', '/proc/x'], ['demo', '-o', '/proc/x']]) {
      const t0 = Date.now();
      const r = sill([...args, '--quiet'], { timeout: 30_000 });
      expect(Date.now() - t0).toBeLessThan(20_000);
      expect(r.code).toBe(1);
      expect(oneLine(r.stderr)).toHaveLength(1);
      expect(r.stderr).toMatch(/^sill: cannot create output folder \/proc\/x: /);
    }
  });

  it('a file as -o (ENOTDIR) is refused with exit 2 and one line, for demo and the commands', () => {
    const file = join(dir, 'a-file.txt');
    writeFileSync(file, 'x');
    for (const args of [['demo', '-o', file], ['ponds', dem, '-o', file], ['survey', dem, '-o', join(file, 'sub')]]) {
      const r = sill([...args, '--quiet']);
      expect(r.code).toBe(2);
      expect(oneLine(r.stderr)).toHaveLength(1);
      expect(r.stderr).toMatch(/^sill: .*a-file\.txt is a file, not a folder/);
      expect(r.stderr).not.toMatch(/ENOTDIR|staging/);
    }
  });

  it('a read-only file system: exit 1 and one line that says read-only and names the folder as given', (ctx) => {
    const ro = join(dir, 'ro');
    mkdirSync(join(ro, 'old'), { recursive: true });
    const check = (want: RegExp) => {
      for (const out of [join(ro, 'new'), join(ro, 'old')]) {
        const r = sill(['ponds', dem, '-o', out, '--quiet']);
        expect(r.code).toBe(1);
        expect(oneLine(r.stderr)).toHaveLength(1);
        expect(r.stderr).toMatch(want);
        expect(r.stderr).toContain(out);
        expect(r.stderr).not.toMatch(/staging/);
      }
    };
    if (isRoot) {
      // a read-only bind mount of the folder onto itself
      const ok = withMount(['--bind', ro], ro, () => {
        execFileSync('mount', ['-o', 'remount,ro,bind', ro], { stdio: 'ignore' });
        check(/the file system is read-only \(EROFS\)/);
      });
      if (!ok) ctx.skip(true, 'running as root without permission to mount (needed to make a read-only file system)');
    } else {
      chmodSync(ro, 0o555);
      chmodSync(join(ro, 'old'), 0o555);
      try {
        check(/permission denied \(EACCES\)/);
      } finally {
        chmodSync(join(ro, 'old'), 0o755);
        chmodSync(ro, 0o755);
      }
    }
  });

  it('disk full: exit 1, one line with the folder as given (never the staging path), nothing left behind', (ctx) => {
    if (!isRoot) return ctx.skip(true, 'needs root to mount a small tmpfs');
    const small = join(dir, 'small');
    mkdirSync(small);
    const ok = withMount(['-t', 'tmpfs', '-o', 'size=64k', 'tmpfs'], small, () => {
      const out = join(small, 'out');
      const r = sill(['ponds', dem, '-o', out, '--quiet']);
      expect(r.code).toBe(1);
      expect(oneLine(r.stderr)).toHaveLength(1);
      expect(r.stderr).toMatch(new RegExp(`^sill: cannot write the output folder ${out}: the disk is full \\(ENOSPC\\); nothing in it was changed`));
      expect(readdirSync(small)).toEqual([]);
      // a full disk under an earlier result: that result stays as it was
      mkdirSync(out);
      writeFileSync(join(out, MANIFEST), JSON.stringify({ schema: 'sill/manifest@1', run: '0', command: 'ponds', sillVersion: '0', time: '', files: [{ name: 'keep.csv', size: 2 }], folders: [] }));
      writeFileSync(join(out, 'keep.csv'), 'a\n');
      const again = sill(['ponds', dem, '-o', out, '--quiet']);
      expect(again.code).toBe(1);
      expect(again.stderr).toMatch(/disk is full/);
      expect(readdirSync(small)).toEqual(['out']);
      expect(readdirSync(out).sort()).toEqual([MANIFEST, 'keep.csv']);
    });
    if (!ok) ctx.skip(true, 'running as root without permission to mount a tmpfs');
  });

  it('stale staging folders of dead runs, beside and inside DIR, are removed by the next run; those of live runs are kept', () => {
    const out = join(dir, 'stale');
    expect(sill(['survey', dem, '-o', out, '--quiet']).code).toBe(0);
    const dead = deadPid();
    const staleBeside = join(dir, `.sill-staging-${HOST}-${dead}-abc123`);
    const staleInside = join(out, `.sill-staging-${HOST}-${dead}-def456`);
    const oldStyle = join(out, `.sill-staging-${dead}-1733000000000`);
    const live = join(out, `.sill-staging-${HOST}-${process.pid}-0aa`);
    const otherHost = join(out, `.sill-staging-elsewhere-${dead}-0bb`);
    for (const d of [staleBeside, staleInside, oldStyle, live, otherHost]) {
      mkdirSync(d);
      writeFileSync(join(d, 'filled.tif'), 'half-written');
    }
    const journalTmp = join(out, `${JOURNAL}.${dead}.tmp`);
    writeFileSync(journalTmp, '{"schema": "sill/jou');
    expect(sill(['survey', dem, '-o', out, '--quiet']).code).toBe(0);
    for (const d of [staleBeside, staleInside, oldStyle, journalTmp]) expect(existsSync(d)).toBe(false);
    for (const d of [live, otherHost]) expect(existsSync(d)).toBe(true);
  });

  it('the fallbacks give the same files: the exchange through Python (SILL_EXCHANGE=python), and the journal (SILL_EXCHANGE=none)', () => {
    const ref = join(dir, 'way-addon');
    expect(sill(['ponds', dem, '-o', ref, '--quiet']).code).toBe(0);
    for (const way of ['python', 'none']) {
      const out = join(dir, `way-${way}`);
      expect(sill(['ponds', dem, '-o', out, '--report', '--quiet'], { env: { SILL_EXCHANGE: way } }).code).toBe(0);
      writeFileSync(join(out, 'notes.txt'), 'mine\n');
      const ino = statSync(join(out, 'notes.txt')).ino;
      const folderIno = statSync(out).ino;
      const r = sill(['ponds', dem, '-o', out, '--quiet'], { env: { SILL_EXCHANGE: way } });
      expect(r.code).toBe(0);
      // exchanged: DIR is a new folder (the old one was swapped out); journal: the same folder, files moved in
      if (way === 'none' || existsSync('/usr/bin/python3')) expect(statSync(out).ino !== folderIno).toBe(way === 'python');
      expect(listFiles(out)).toEqual([...listFiles(ref), 'notes.txt'].sort());
      for (const f of listFiles(ref)) if (f !== MANIFEST) expect(readFileSync(join(out, f)).equals(readFileSync(join(ref, f)))).toBe(true);
      expect(statSync(join(out, 'notes.txt')).ino).toBe(ino);
      expect(readdirSync(dir).filter((n) => n.startsWith('.sill-'))).toEqual([]);
    }
  });

  it('DIR as a mount point, and DIR as the working folder, commit through the journal', (ctx) => {
    const ref = join(dir, 'way-addon');
    if (!existsSync(ref)) expect(sill(['ponds', dem, '-o', ref, '--quiet']).code).toBe(0);
    const cwdOut = join(dir, 'cwd-out');
    mkdirSync(cwdOut);
    expect(sill(['ponds', dem, '-o', '.', '--report', '--quiet'], { cwd: cwdOut }).code).toBe(0);
    const ino = statSync(cwdOut).ino;
    expect(sill(['ponds', dem, '-o', '.', '--quiet'], { cwd: cwdOut }).code).toBe(0);
    expect(statSync(cwdOut).ino).toBe(ino); // the folder itself stayed: a shell inside it still sees the results
    expect(listFiles(cwdOut)).toEqual(listFiles(ref));
    if (!isRoot) return ctx.skip(true, 'needs root to mount a tmpfs as the output folder');
    const mnt = join(dir, 'mnt');
    mkdirSync(mnt);
    const ok = withMount(['-t', 'tmpfs', '-o', 'size=16m', 'tmpfs'], mnt, () => {
      expect(sill(['ponds', dem, '-o', mnt, '--report', '--quiet']).code).toBe(0);
      const r = sill(['ponds', dem, '-o', mnt, '--quiet']);
      expect(r.code).toBe(0);
      expect(listFiles(mnt)).toEqual(listFiles(ref));
    });
    if (!ok) ctx.skip(true, 'running as root without permission to mount a tmpfs');
  });

  it('the folder that holds DIR is not writable (a read-only mount around a writable DIR): the journal commits in DIR itself', (ctx) => {
    if (!isRoot) return ctx.skip(true, 'needs root to mount (chmod does not stop root)');
    const ref = join(dir, 'way-addon');
    if (!existsSync(ref)) expect(sill(['ponds', dem, '-o', ref, '--quiet']).code).toBe(0);
    const p = join(dir, 'ro-parent');
    mkdirSync(p);
    const out = join(p, 'out');
    const ok = withMount(['-t', 'tmpfs', '-o', 'size=16m', 'tmpfs'], p, () => {
      mkdirSync(out);
      withMount(['--bind', out], out, () => {
        execFileSync('mount', ['-o', 'remount,bind,ro', p], { stdio: 'ignore' });
        expect(() => writeFileSync(join(p, 'probe'), 'x')).toThrow(/EROFS/);
        expect(sill(['ponds', dem, '-o', out, '--report', '--quiet']).code).toBe(0);
        writeFileSync(join(out, 'notes.txt'), 'mine\n');
        const r = sill(['ponds', dem, '-o', out, '--quiet']);
        expect(r.code).toBe(0);
        expect(listFiles(out)).toEqual([...listFiles(ref), 'notes.txt'].sort());
      });
    });
    if (!ok) ctx.skip(true, 'running as root without permission to mount a tmpfs');
  });

  it('an interrupted journal commit (some files moved, some not) is completed by the next run before anything else', () => {
    const out = join(dir, 'journal');
    mkdirSync(out);
    const dead = deadPid();
    const staging = `.sill-staging-${HOST}-${dead}-j1`;
    mkdirSync(join(out, staging, 'paths'), { recursive: true });
    // the previous run: a.csv, old.csv; the new run: a.csv (new), b.csv, paths/T1.csv — a.csv already moved
    writeFileSync(join(out, MANIFEST), JSON.stringify({ schema: 'sill/manifest@1', run: 'old', command: 'barriers', sillVersion: '0', time: '', files: [{ name: 'a.csv', size: 4 }, { name: 'old.csv', size: 4 }], folders: [] }));
    writeFileSync(join(out, 'a.csv'), 'new\n');
    writeFileSync(join(out, 'old.csv'), 'old\n');
    writeFileSync(join(out, staging, 'b.csv'), 'new\n');
    writeFileSync(join(out, staging, 'paths', 'T1.csv'), 'new\n');
    writeFileSync(join(out, 'mine.txt'), 'mine\n');
    const next: Manifest = { schema: 'sill/manifest@1', run: 'new', command: 'barriers', sillVersion: '0', time: '', files: [{ name: 'a.csv', size: 4 }, { name: 'b.csv', size: 4 }, { name: 'paths/T1.csv', size: 4 }], folders: ['paths'] };
    writeFileSync(join(out, staging, MANIFEST), JSON.stringify(next));
    writeFileSync(join(out, JOURNAL), JSON.stringify({ schema: 'sill/journal@1', staging, remove: ['old.csv'], folders: [] }));

    // the next run's first step (before its own work) rolls the commit forward
    new OutputFolder(out, { command: 'barriers', version: '0', names: ['report.json'] });
    expect(listFiles(out)).toEqual([MANIFEST, 'a.csv', 'b.csv', 'mine.txt', 'paths/T1.csv']);
    expect(manifestOf(out).run).toBe('new');
    for (const f of ['a.csv', 'b.csv', 'paths/T1.csv']) expect(readFileSync(join(out, f), 'utf8')).toBe('new\n');
  });

  it('a damaged manifest is refused unless --force', () => {
    const out = join(dir, 'damaged');
    expect(sill(['survey', dem, '-o', out, '--quiet']).code).toBe(0);
    writeFileSync(join(out, MANIFEST), '{"schema": "sill/manifest@1", "files": [');
    const r = sill(['survey', dem, '-o', out, '--quiet']);
    expect(r.code).toBe(2);
    expect(oneLine(r.stderr)).toHaveLength(1);
    expect(r.stderr).toMatch(/\.sill-manifest\.json is damaged/);
    expect(sill(['survey', dem, '-o', out, '--force', '--quiet']).code).toBe(0);
  });
});
