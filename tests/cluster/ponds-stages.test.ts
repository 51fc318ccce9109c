/**
 * `sill ponds MOSAIC -o DIR --scheduler local`: the tile passes as run-folder stages run by the
 * local pool of child processes. Its per-tile rasters and VRTs equal, byte for byte, those of the
 * same command without --scheduler (the mosaic assembled into one grid: the single-grid method,
 * whose filled DEM is checked against scikit-image in tests/hydro/reference.test.ts, an outside
 * source). A damaged tile ends the run with exit 1 and one line naming it, leaving no DIR; the
 * rerun with the same run folder does only what is missing and finishes.
 */
import { describe, it, expect, beforeAll, afterAll } from 'vitest';
import { existsSync, readFileSync, rmSync } from 'node:fs';
import { join } from 'node:path';
import { sill, tempDir } from '../cli/run.js';
import { RunFolder } from '../../src/cluster/run-folder.js';
import { writeMosaic, damageTile, sameRasters } from './mosaic.js';

let dir: string;
beforeAll(async () => {
  dir = tempDir('sill-ponds-stages-');
  await writeMosaic(join(dir, 'tiles'));
});
afterAll(() => { if (dir) rmSync(dir, { recursive: true, force: true }); });

describe('sill ponds on a mosaic with --scheduler local', () => {
  it('a damaged tile: exit 1 naming it, no DIR; repaired, the rerun resumes and writes the rasters of the in-memory run', () => {
    const tiles = join(dir, 'tiles'), out = join(dir, 'out'), run = join(dir, 'run'), ref = join(dir, 'ref');
    const r0 = sill(['ponds', tiles, '-o', ref, '--min-depth', '0.2', '--quiet']);
    expect(r0.stderr).toBe('');
    const restore = damageTile(join(tiles, 'd.tif'), join(dir, 'd.good'));
    const args = ['ponds', tiles, '-o', out, '--min-depth', '0.2', '--scheduler', 'local', '--workers', '2', '--run-dir', run];
    const bad = sill(args, { timeout: 120_000 });
    expect(bad.code).toBe(1);
    const lines = bad.stderr.trim().split('\n');
    expect(lines).toHaveLength(1);
    expect(lines[0]).toMatch(/^sill: tile [a-d] \(stage pass1\) failed: .*d\.tif is truncated or damaged.*; its log is .*; fix it and run the same command again \(same --run-dir\) to resume$/);
    expect(existsSync(out)).toBe(false);
    const folder = new RunFolder(run);
    const okBefore = [0, 1, 2].filter((t) => folder.status('pass1', t)?.ok);
    expect(okBefore).toEqual([0, 1]); // a and b do not touch d
    const statusBefore = okBefore.map((t) => readFileSync(folder.statusPath('pass1', t), 'utf8'));
    restore();
    const good = sill(args, { timeout: 120_000 });
    expect(good.stderr).toMatch(/^sill ponds: .*analysed tile by tile \(as stages of a run folder, --scheduler\); not computed: [^\n]*\n$/);
    expect(good.code).toBe(0);
    expect(good.stdout).toMatch(/\ndepressions +\d+ [^]*\nran by the local pool of processes; the run folder .* is kept\n?$/);
    // the tasks that had finished were not run again
    expect(okBefore.map((t) => readFileSync(folder.statusPath('pass1', t), 'utf8'))).toEqual(statusBefore);
    sameRasters(out, ref);
    // the catalogue is the tile-by-tile run's on worker threads (same driver; that run is checked against the in-memory one in tests/cli/tiled.test.ts)
    const threads = join(dir, 'threads');
    expect(sill(['ponds', tiles, '-o', threads, '--min-depth', '0.2', '--tiled', '--quiet']).code).toBe(0);
    expect(readFileSync(join(out, 'depressions.csv'), 'utf8')).toBe(readFileSync(join(threads, 'depressions.csv'), 'utf8'));
  }, 240_000);

  it('bad combinations are one line, exit 2, before any work', () => {
    const tiles = join(dir, 'tiles');
    const cases: [string[], RegExp][] = [
      [['--scheduler', 'local', '--dry-run'], /--dry-run writes the sbatch scripts of --scheduler slurm/],
      [['--scheduler', 'local', '--partition', 'x'], /--partition is for --scheduler slurm/],
      [['--scheduler', 'local', '--json'], /--json is not available with --scheduler/],
    ];
    for (const [more, re] of cases) {
      const r = sill(['ponds', tiles, '-o', join(dir, 'never'), ...more]);
      expect(r.code).toBe(2);
      expect(r.stderr).toMatch(re);
      expect(r.stderr.trim().split('\n')).toHaveLength(1);
    }
    const single = sill(['ponds', join(tiles, 'a.tif'), '-o', join(dir, 'never'), '--scheduler', 'local']);
    expect(single.code).toBe(2);
    expect(single.stderr).toMatch(/--scheduler runs the tile passes of a mosaic/);
    expect(existsSync(join(dir, 'never'))).toBe(false);
  });
});
