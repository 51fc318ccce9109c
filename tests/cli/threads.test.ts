/**
 * `--threads`: the whole command (the built binary) writes exactly the same bytes — stdout and
 * every file of -o (the folder manifest's list of files; its run id and time differ by design) —
 * with one thread and with two. The environment variable
 * SILL_PARALLEL_MIN_CELLS=0 sends these small inputs through the two-thread path, which large
 * grids take by default. Inputs: fixture GeoTIFFs and .npy files of several layouts and types, a
 * demo DEM with nodata, and a text grid (values not on shared memory), in several connectivity
 * and boundary modes.
 */
import { describe, it, expect, beforeAll } from 'vitest';
import { spawnSync } from 'node:child_process';
import { readFileSync, readdirSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { BIN, sill, tempDir } from './run.js';
import { larkmoorDem } from '../../src/demo/generate.js';
import { writeGeoTiff } from '../../src/io/index.js';

const IO = fileURLToPath(new URL('../../fixtures/io/', import.meta.url));
let dir: string;

/** Run sill with the two-thread path open to every grid size; stdout, stderr, exit status and the files of -o. */
function run(args: string[], threads: number, out: string | null): { code: number | null; stdout: string; stderr: string; files: Record<string, string> } {
  const r = spawnSync(process.execPath, [BIN, ...args, '--threads', String(threads), ...(out ? ['-o', out] : [])], {
    encoding: 'utf8', env: { ...process.env, FORCE_COLOR: '0', SILL_PARALLEL_MIN_CELLS: '0' },
  });
  const files: Record<string, string> = {};
  if (out && r.status === 0) {
    for (const f of readdirSync(out).sort()) {
      // the output folder's manifest names its run and time; the files it lists must agree
      files[f] = f === '.sill-manifest.json' ? JSON.stringify(JSON.parse(readFileSync(join(out, f), 'utf8')).files) : readFileSync(join(out, f)).toString('base64');
    }
  }
  return { code: r.status, stdout: r.stdout, stderr: r.stderr, files };
}

function same(name: string, args: () => string[], withOut = true): void {
  it(name, () => {
    const a = run(args(), 1, withOut ? join(dir, `${name.replace(/\W+/g, '-')}-1`) : null);
    const b = run(args(), 2, withOut ? join(dir, `${name.replace(/\W+/g, '-')}-2`) : null);
    expect(a.code, a.stderr).toBe(0);
    expect(b.code, b.stderr).toBe(0);
    expect(b.stdout).toBe(a.stdout);
    if (withOut) expect(Object.keys(a.files).length).toBeGreaterThan(0);
    expect(b.files).toEqual(a.files);
  });
}

beforeAll(async () => {
  dir = tempDir('sill-threads-');
  const d = larkmoorDem(160, 120);
  const v = d.grid.values.slice();
  for (const [c, r] of [[0, 60], [0, 61], [80, 30], [81, 30]]) v[r * d.grid.width + c] = NaN;
  await writeGeoTiff(join(dir, 'dem.tif'), { ...d.grid, values: v, nodata: -9999 });
  const rows: string[] = [];
  for (let r = 0; r < 30; r++) rows.push(Array.from({ length: 40 }, (_, c) => (Math.sin(c * 0.7) * Math.cos(r * 0.5) * 10 + ((c * 31 + r * 17) % 7)).toFixed(2)).join(' '));
  writeFileSync(join(dir, 'matrix.txt'), rows.join('\n') + '\n');
});

describe('one thread and two threads write the same bytes', () => {
  same('survey, demo DEM with nodata, open, connectivity 8', () => ['survey', join(dir, 'dem.tif'), '--json']);
  same('survey, float32 strips, closed, connectivity 4', () => ['survey', IO + 'float32-strip-none.tif', '--json', '--boundary', 'closed', '--connectivity', '4']);
  same('survey, big-endian float64, periodic, connectivity 6', () => ['survey', IO + 'float64-bigendian.tif', '--json', '--boundary', 'periodic', '--connectivity', '6']);
  same('survey, int16 LZW predictor 2, periodic-y, connectivity 4, --min-persistence', () => ['survey', IO + 'int16-strip-lzw-predictor2.tif', '--json', '--boundary', 'periodic-y', '--connectivity', '4', '--min-persistence', '3']);
  same('survey, .npy float64, periodic-x', () => ['survey', IO + 'numpy-f8-c.npy', '--json', '--boundary', 'periodic-x']);
  same('survey, text matrix (values not shared), open, connectivity 6', () => ['survey', join(dir, 'matrix.txt'), '--json', '--origin', '0,0', '--spacing', '1,1', '--connectivity', '6']);
  same('ponds, demo DEM with nodata', () => ['ponds', join(dir, 'dem.tif'), '--json']);
  same('ponds, demo DEM, nodata as walls, connectivity 4', () => ['ponds', join(dir, 'dem.tif'), '--json', '--nodata-as', 'wall', '--connectivity', '4']);
  same('ponds, float32 with NaN nodata, connectivity 6', () => ['ponds', IO + 'float32-nan-nodata.tif', '--json', '--connectivity', '6']);
  same('ponds, .npy int16 Fortran order', () => ['ponds', IO + 'numpy-i2-fortran-v2.npy', '--json']);
  same('runoff, demo DEM with nodata, 40 mm', () => ['runoff', join(dir, 'dem.tif'), '--depth', '40mm', '--json']);
  same('barriers, big-endian float64', () => ['barriers', IO + 'float64-bigendian.tif', '--json'], false);
});

describe('--threads is checked', () => {
  for (const bad of ['0', '1.5']) {
    it(`--threads ${bad} is refused (exit 2, one line)`, () => {
      const r = sill(['survey', IO + 'float32-strip-none.tif', '--threads', bad, '--json']);
      expect(r.code).toBe(2);
      expect(r.stdout).toBe('');
      expect(r.stderr.trim().split('\n')).toHaveLength(1);
      expect(r.stderr).toMatch(/--threads/);
    });
  }
});
