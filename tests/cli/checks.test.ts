/**
 * Regression tests for issue 14's cases (the built binary unless said otherwise): numeric options
 * with stated limits, values out of float64's safe range, ambiguous text, decoder messages, commander's
 * messages, self-checks that fail loudly, the memory budget and the last-resort handling of
 * out-of-memory. Every failure is exit 1 or 2 with exactly one stderr line starting with `sill:`.
 * Outside sources: the float64 range (IEEE 754: max ≈ 1.8e308, so squares of 1e150 fit and of
 * 1e160 do not); the TIFF 6.0 specification (SamplesPerPixel is a SHORT, so at most 65 535 bands).
 */
import { describe, it, expect, beforeAll, vi } from 'vitest';
import { writeFileSync, readFileSync, existsSync, readdirSync } from 'node:fs';
import { spawn, spawnSync } from 'node:child_process';
import { join } from 'node:path';
import { sill, tempDir, BIN } from './run.js';
import { writeGeoTiff } from '../../src/io/index.js';
import { fixture } from '../io/helpers.js';
import { checkBalance, BALANCE_TOLERANCE } from '../../src/cli/hydro-common.js';
import { SelfCheckError } from '../../src/errors.js';
import { runtimeFailure } from '../../src/cli/cli.js';
import { heapLimitMb } from '../../src/cli/heap.js';

let dir: string;
const p = (name: string) => join(dir, name);

/** A little-endian float32/float64 .npy array (NumPy format 1.0: magic, version, header length, dict, data). */
function npy(path: string, values: Float32Array | Float64Array, rows: number, cols: number): void {
  const descr = values instanceof Float32Array ? '<f4' : '<f8';
  let header = `{'descr': '${descr}', 'fortran_order': False, 'shape': (${rows}, ${cols}), }`;
  header += ' '.repeat(64 - ((10 + header.length + 1) % 64)) + '\n';
  const head = Buffer.concat([Buffer.from([0x93]), Buffer.from('NUMPY'), Buffer.from([1, 0, header.length & 255, header.length >> 8]), Buffer.from(header, 'latin1')]);
  writeFileSync(path, Buffer.concat([head, Buffer.from(values.buffer, values.byteOffset, values.byteLength)]));
}

/** Deterministic noise in [0, 1) (a linear congruential generator). */
function noise(n: number, seed = 7): Float32Array {
  const v = new Float32Array(n);
  let s = seed;
  for (let i = 0; i < n; i++) {
    s = (Math.imul(s, 1103515245) + 12345) >>> 0;
    v[i] = s / 2 ** 32;
  }
  return v;
}

/** A classic TIFF's first strip or tile (offset, byte count) and the entry of a tag, read from its first directory. */
function tiffLayout(b: Buffer): { offset: number; count: number; entry: (tag: number) => number } {
  const le = b[0] === 0x49;
  const u16 = (o: number) => (le ? b.readUInt16LE(o) : b.readUInt16BE(o));
  const u32 = (o: number) => (le ? b.readUInt32LE(o) : b.readUInt32BE(o));
  const ifd = u32(4);
  const entries = new Map<number, number>();
  for (let k = 0; k < u16(ifd); k++) entries.set(u16(ifd + 2 + 12 * k), ifd + 2 + 12 * k);
  const first = (tag: number) => {
    const e = entries.get(tag)!;
    const type = u16(e + 2), n = u32(e + 4);
    if (n === 1) return type === 3 ? u16(e + 8) : u32(e + 8);
    return type === 3 ? u16(u32(e + 8)) : u32(u32(e + 8));
  };
  const offset = entries.has(273) ? first(273) : first(324);
  const count = entries.has(279) ? first(279) : first(325);
  return { offset, count, entry: (tag) => entries.get(tag)! };
}

/** exit `code`, nothing on stdout, exactly one stderr line starting with `sill:` and matching `msg`. */
function fails(r: { code: number; stdout: string; stderr: string }, code: number, msg: RegExp): void {
  expect(r.code, r.stderr).toBe(code);
  expect(r.stdout).toBe('');
  const lines = r.stderr.split('\n').filter((l) => l !== '');
  expect(lines, r.stderr).toHaveLength(1);
  expect(lines[0]).toMatch(/^sill: /);
  expect(lines[0]).toMatch(msg);
}

beforeAll(async () => {
  dir = tempDir('sill-checks-');
  const W = 40, H = 30;
  const z = new Float64Array(W * H).map((_, i) => 100 + Math.sin((i % W) / 5) * 3 + Math.cos(Math.floor(i / W) / 4) * 2);
  npy(p('dem.npy'), z, H, W);
  npy(p('big.npy'), z.map((v) => v * 1e157), H, W); // ~1e159: squares overflow
  npy(p('near-limit.npy'), z.map((v) => v * 1e147), H, W); // ~1e149: accepted
  npy(p('noise300.npy'), noise(300 * 300), 300, 300);
  await writeGeoTiff(p('dem.tif'), { width: W, height: H, values: Float32Array.from(z), transform: [500000, 5, 0, 4000000, 0, -5], crs: null, nodata: -9999 });
  await writeGeoTiff(p('tiny-cells.tif'), { width: W, height: H, values: Float32Array.from(z), transform: [0, 1e-160, 0, 0, 0, -1e-160], crs: null, nodata: -9999 });
  writeFileSync(p('decimal-comma.txt'), '0\t0\t1,479\n0\t1\t2,5\n1\t0\t3,1\n1\t1\t4,2\n');
  const rows6x3 = ['1.5 2.25 3.0', '4.5 5.0 6.25', '1.25 2.5 3.75', '4.0 5.5 6.0', '7.25 8.0 9.5', '1.0 1.75 1.5'];
  writeFileSync(p('matrix6x3.txt'), rows6x3.join('\n') + '\n');
  const cols: string[] = [];
  for (let y = 0; y < 5; y++) for (let x = 0; x < 6; x++) cols.push(`${x * 10} ${y * 10} ${100 + x + 2 * y + ((x * y) % 3)}`);
  writeFileSync(p('columns.xyz'), cols.join('\n') + '\n');
  writeFileSync(p('far.xyz'), 'x y v\n0 0 1\n1e300 0 2\n0 1e300 3\n1e300 1e300 0.5\n5e299 3e299 4\n');
  writeFileSync(p('near-150.xyz'), 'x y v\n0 0 1\n2e150 0 2\n0 2e150 3\n2e150 2e150 0.5\n1e150 7e149 4\n');
  writeFileSync(p('denormal.xyz'), 'x y v\n0 0 1\n1e-310 0 2\n0 1e-310 3\n1e-310 1e-310 0.5\n5e-311 3e-311 4\n');
  const lzw = readFileSync(fixture('float32-strip-lzw.tif'));
  const bad = Buffer.from(lzw);
  const L = tiffLayout(bad);
  for (let i = 0; i < L.count; i++) bad[L.offset + i] = (i * 37 + 11) & 255;
  writeFileSync(p('corrupt-lzw.tif'), bad);
  const defl = Buffer.from(readFileSync(fixture('float32-strip-deflate.tif')));
  const D = tiffLayout(defl);
  for (let i = 0; i < D.count; i++) defl[D.offset + i] = (i * 37 + 11) & 255;
  writeFileSync(p('corrupt-deflate.tif'), defl);
  const spp = Buffer.from(readFileSync(fixture('float32-strip-deflate.tif')));
  const e = tiffLayout(spp).entry(277); // SamplesPerPixel, a SHORT stored in the entry
  spp.writeUInt16LE(0, e + 8);
  writeFileSync(p('spp0.tif'), spp);
});

describe('limits on numeric options (the reason in the message)', () => {
  const cases: [string, () => string[], RegExp][] = [
    ['barriers --images 1000000000', () => ['barriers', p('dem.npy'), '--images', '1000000000'], /--images must be at most 10 000.*resolved by the samples/],
    ['barriers --max-paths 1e7', () => ['barriers', p('dem.npy'), '--max-paths', '10000000'], /--max-paths must be at most 10 000.*string-method run/],
    ['barriers --temperature 1e9', () => ['barriers', p('dem.npy'), '--temperature', '1e9'], /--temperature must lie between 0\.001 and 100 000 K.*overflow/],
    ['barriers --temperature 1e-300', () => ['barriers', p('dem.npy'), '--temperature', '1e-300'], /--temperature must lie between/],
    ['barriers --period 1e-200', () => ['barriers', p('dem.npy'), '--periodic', '--period', '1e-200'], /--period must be 0 or at least 1e-150/],
    ['barriers --cap 1e200', () => ['barriers', p('dem.npy'), '--cap', '1e200'], /--cap must be at most 1e150.*overflow float64/],
    ['survey --band 70000', () => ['survey', p('dem.tif'), '--band', '70000'], /--band must be at most 65 535.*16-bit/],
    ['survey --columns 1,2,100000', () => ['survey', p('columns.xyz'), '--columns', '1,2,100000'], /--columns must be at most 10 000/],
    ['survey --min-persistence 1e200', () => ['survey', p('dem.npy'), '--min-persistence', '1e200'], /--min-persistence must be at most 1e150/],
    ['survey --spacing 1e-310,1', () => ['survey', p('matrix6x3.txt'), '--layout', 'matrix', '--spacing', '1e-310,1'], /--spacing steps must be at least 1e-150/],
    ['survey --origin 1e200,0', () => ['survey', p('matrix6x3.txt'), '--layout', 'matrix', '--origin', '1e200,0'], /--origin must be at most 1e150/],
    ['ponds --z-factor 1e9', () => ['ponds', p('dem.npy'), '--z-factor', '1e9'], /--z-factor must be at most 1 000 000.*metres per vertical unit/],
    ['ponds --stage-volume 1e12', () => ['ponds', p('dem.npy'), '--stage-volume', '1000000000000', '-o', p('out-stage')], /--stage-volume must be at most 2 147 483 647.*32-bit/],
    ['ponds --min-area 1e305', () => ['ponds', p('dem.npy'), '--min-area', '1e305'], /--min-area must be at most 1e300/],
    ['runoff --depth 1e-300m', () => ['runoff', p('dem.npy'), '--depth', '1e-300m'], /--depth 1e-300m is below 1e-9 m/],
    ['runoff --depth 1e9m', () => ['runoff', p('dem.npy'), '--depth', '1e9m'], /more than 10000 m of runoff/],
  ];
  for (const [name, args, msg] of cases) it(name, () => fails(sill(args()), 2, msg));
});

describe('values and coordinates outside the float64-safe range are refused (exit 2, a hint to rescale)', () => {
  it('a DEM with values of 1e159 (their squares overflow float64)', () => {
    fails(sill(['ponds', p('big.npy')]), 2, /holds 1\.\d+e\+159, out of range.*rescale/);
  });
  it('runoff on values ~1e159 is refused before routing (it reported balance errors of 0.78–0.92 with exit 0)', () => {
    fails(sill(['runoff', p('big.npy'), '--depth', '40mm']), 2, /out of range.*rescale/);
  });
  it('values up to 1e149 are analysed', () => {
    const r = sill(['survey', p('near-limit.npy'), '--json']);
    expect(r.code, r.stderr).toBe(0);
    expect(JSON.parse(r.stdout).euler.holds).toBe(true);
  });
  it('cell sizes of 1e-160 (areas underflow)', () => {
    fails(sill(['ponds', p('tiny-cells.tif')]), 2, /cell size 1\.000e-160 is out of range/);
  });
  for (const name of ['far.xyz', 'near-150.xyz', 'denormal.xyz']) {
    it(`scattered coordinates in ${name} are "out of range", not "all on one line"`, () => {
      const r = sill(['barriers', p(name)]);
      fails(r, 2, /coordinate .* is out of range.*another unit/);
      expect(r.stderr).not.toMatch(/one line/);
    });
  }
  it('a runoff depth too thin for the elevations is refused with a hint to subtract a base elevation', () => {
    const z = new Float64Array(30 * 30).map((_, i) => 8800 + ((i * 7919) % 101) / 10);
    npy(p('high.npy'), z, 30, 30);
    fails(sill(['runoff', p('high.npy'), '--depth', '0.001mm']), 2, /too thin for this DEM.*subtract a base elevation/);
    // the same for a depth raster: too thin, and (unit mistake) too deep
    npy(p('rain-thin.npy'), new Float64Array(30 * 30).fill(1e-6), 30, 30);
    fails(sill(['runoff', p('high.npy'), '--depth-raster', p('rain-thin.npy')]), 2, /--depth-raster .*too thin for this DEM/);
    npy(p('rain-deep.npy'), new Float64Array(30 * 30).fill(20000), 30, 30);
    fails(sill(['runoff', p('high.npy'), '--depth-raster', p('rain-deep.npy')]), 2, /--depth-raster .*m of runoff, more than 10000 m; check the raster's unit/);
    const ok = sill(['runoff', p('high.npy'), '--depth', '1mm', '--json']);
    expect(ok.code, ok.stderr).toBe(0);
    expect(JSON.parse(ok.stdout).water.balanceError).toBeLessThanOrEqual(BALANCE_TOLERANCE);
  });
});

describe('text that could be read two ways is refused', () => {
  it('tab-separated decimal commas (0⇥0⇥1,479 was read as a matrix with peaks of 4e16)', () => {
    fails(sill(['survey', p('decimal-comma.txt')]), 2, /line 1: '1,479' is a number with a decimal comma/);
  });
  it('a 6 × 3 matrix without --origin (was read as 6 scattered samples): refused, --layout as the fix', () => {
    fails(sill(['survey', p('matrix6x3.txt')]), 2, /could be a 3 × 6 matrix of values or 6 scattered x y value samples.*--layout matrix/);
    const r = sill(['survey', p('matrix6x3.txt'), '--layout', 'matrix', '--json']);
    expect(r.code, r.stderr).toBe(0);
    expect(JSON.parse(r.stdout).surface).toMatchObject({ width: 3, height: 6, validCells: 18 });
  });
  it('--origin/--spacing on x y value columns (was a matrix of their numbers)', () => {
    fails(sill(['survey', p('columns.xyz'), '--origin', '0,0']), 2, /reads as x y value columns.*leave --origin\/--spacing out/);
    fails(sill(['survey', p('columns.xyz'), '--layout', 'columns', '--spacing', '1,1']), 2, /layout is columns/);
    const r = sill(['survey', p('columns.xyz'), '--json']);
    expect(r.code).toBe(0);
    expect(JSON.parse(r.stdout).surface).toMatchObject({ width: 6, height: 5 });
  });
  it('--layout on a GeoTIFF and an unknown layout', () => {
    fails(sill(['survey', p('dem.tif'), '--layout', 'matrix']), 2, /layout applies only to text input/);
    fails(sill(['survey', p('columns.xyz'), '--layout', 'grid']), 2, /--layout must be matrix or columns/);
  });
});

describe('messages: one line, starting with sill:', () => {
  it('a corrupt LZW strip: no decoder line before sill\'s', () => {
    const r = sill(['survey', p('corrupt-lzw.tif')]);
    fails(r, 2, /corrupt-lzw\.tif is truncated or damaged: strip \d+ of \d+ cannot be decoded \(LZW data is damaged \([a-z]/);
  });
  it('a corrupt deflate strip says what the decoder said, not "(undefined)"', () => {
    const r = sill(['survey', p('corrupt-deflate.tif')]);
    fails(r, 2, /strip \d+ of \d+ cannot be decoded \(DEFLATE data is damaged \([a-z]/);
    expect(r.stderr).not.toMatch(/undefined/);
  });
  it('SamplesPerPixel = 0 is damage, not "choose a band from 1 to 0"', () => {
    const r = sill(['survey', p('spp0.tif')]);
    fails(r, 2, /declares 0 samples per pixel/);
    expect(r.stderr).not.toMatch(/from 1 to 0/);
  });
  it('commander: unknown option, unknown command, missing argument — with the prefix and a --help hint', () => {
    fails(sill(['survey', p('dem.npy'), '--bogus']), 2, /^sill: unknown option '--bogus'; see 'sill survey --help'$/);
    fails(sill(['survey', p('dem.npy'), '--jsn']), 2, /unknown option '--jsn' \(Did you mean --json\?\); see 'sill survey --help'/);
    fails(sill(['surve']), 2, /unknown command 'surve'.*see 'sill --help'/);
    fails(sill(['ponds']), 2, /missing required argument 'input'; see 'sill ponds --help'/);
  });
});

describe('self-checks fail loudly (exit 1, the figures in one line)', () => {
  it('a water balance off by 0.85 relative is an error naming the figures', () => {
    const w = { input: 100, ponded: 10, outflow: 5, balanceError: 0.85 };
    expect(() => checkBalance(w)).toThrow(SelfCheckError);
    expect(() => checkBalance(w)).toThrow(/self-check failed: the water balance is off by 8\.50e-1 relative, more than 1e-9 \(input 100\.0000000, ponded 10\.00000000, outflow 5\.000000000\)/);
    expect(() => checkBalance({ ...w, balanceError: NaN })).toThrow(SelfCheckError);
    expect(() => checkBalance({ ...w, ponded: 95, balanceError: 1e-12 })).not.toThrow();
  });
  it('the command line turns a failed balance into exit 1 with one line (result forced off balance in-process)', async () => {
    vi.resetModules();
    vi.doMock('../../src/report/runoff.js', async (orig) => {
      const m = await orig<typeof import('../../src/report/runoff.js')>();
      return {
        ...m,
        runoffReport: (...a: Parameters<typeof m.runoffReport>) => {
          const run = m.runoffReport(...a);
          run.report.water.ponded *= 0.5; // what a routing bug would report
          run.report.water.balanceError = Math.abs(run.report.water.input - run.report.water.ponded - run.report.water.outflow) / run.report.water.input;
          return run;
        },
      };
    });
    const { main } = await import('../../src/cli/cli.js');
    const err: string[] = [];
    const spy = vi.spyOn(process.stderr, 'write').mockImplementation((s: string | Uint8Array) => { err.push(String(s)); return true; });
    const out = vi.spyOn(process.stdout, 'write').mockImplementation(() => true);
    let code: number;
    try {
      code = await main(['node', 'sill', 'runoff', p('dem.npy'), '--depth', '40mm', '--quiet']);
    } finally {
      spy.mockRestore();
      out.mockRestore();
      vi.doUnmock('../../src/report/runoff.js');
    }
    expect(code).toBe(1);
    expect(err.join('').trim().split('\n')).toHaveLength(1);
    expect(err.join('')).toMatch(/^sill: self-check failed: the water balance is off by/);
  });
});

describe('last resort: allocation failures are one line and exit 1', () => {
  it('V8\'s fatal heap out-of-memory (forced with a 16 MiB heap) becomes one line, no native stack', () => {
    // barriers on noise: tens of thousands of minima and saddles as records (the feature budget of survey and ponds would refuse first)
    const r = spawnSync(process.execPath, [BIN, 'barriers', p('noise300.npy'), '--json'], { encoding: 'utf8', stdio: ['ignore', 'ignore', 'pipe'], env: { ...process.env, SILL_MAX_HEAP_MB: '16' } });
    expect(r.status, r.stderr).toBe(1);
    const lines = r.stderr.split('\n').filter((l) => l !== '');
    expect(lines).toHaveLength(1);
    expect(lines[0]).toMatch(/^sill: out of memory: the run needed more than the 16 MiB JavaScript heap.*--min-persistence/);
    expect(r.stderr).not.toMatch(/Last few GCs|FATAL|Native stack/);
  });
  it('RangeErrors of allocation read as out of memory with what to do', () => {
    expect(runtimeFailure(new RangeError('Invalid string length'))).toMatch(/^out of memory: a text output grew beyond the longest string.*-o instead of --json/);
    expect(runtimeFailure(new RangeError('Array buffer allocation failed'))).toMatch(/^out of memory \(Array buffer allocation failed\); keep fewer features/);
    expect(runtimeFailure(new Error('first\n  second'))).toBe('first second');
  });
  it('the child\'s heap limit is three quarters of the machine, or SILL_MAX_HEAP_MB', () => {
    expect(heapLimitMb({}, 24 * 2 ** 30)).toBe(18432);
    expect(heapLimitMb({ SILL_MAX_HEAP_MB: '64' }, 24 * 2 ** 30)).toBe(64);
    expect(heapLimitMb({}, 1 * 2 ** 30)).toBe(2048);
  });
  it('a killed supervisor takes its run with it (no orphan keeps writing)', async () => {
    const child = spawn(process.execPath, [BIN, 'ponds', p('noise300.npy'), '-o', p('out-orphan')], { stdio: 'ignore' });
    await new Promise((r) => setTimeout(r, 700));
    const kids = spawnSync('ps', ['-o', 'pid=', '--ppid', String(child.pid)], { encoding: 'utf8' }).stdout.trim().split(/\s+/).filter(Boolean).map(Number);
    expect(kids.length).toBe(1);
    child.kill('SIGKILL');
    const alive = (pid: number) => { try { process.kill(pid, 0); return true; } catch { return false; } };
    const t0 = Date.now();
    while (alive(kids[0]) && Date.now() - t0 < 20000) await new Promise((r) => setTimeout(r, 100));
    expect(alive(kids[0])).toBe(false);
  }, 30000);
});

describe('memory budget: refused before the work with the estimate (exit 2)', () => {
  it('on the cells', () => {
    const r = sill(['ponds', p('noise300.npy'), '-o', p('out-budget')], { env: { SILL_MEMORY_BYTES: String(50 * 2 ** 20) } });
    fails(r, 2, /ponds on 90 000 cells needs about \d+ MiB of memory \(38 bytes a cell\) but this machine has 50 MiB; cut the DEM into tiles/);
    expect(existsSync(p('out-budget'))).toBe(false);
  });
  it('on the features, once counted: fewer with --min-persistence fit', () => {
    // 80 MiB of base and 27 B a cell fit in 86 MiB; ≈ 52 000 critical points at 120 B each do not
    const r = sill(['survey', p('noise300.npy'), '--json'], { env: { SILL_MEMORY_BYTES: String(86 * 2 ** 20) } });
    fails(r, 2, /\d[\d ]* critical points on 90 000 cells need about \d+ MiB .*but this machine has 86 MiB; keep fewer features with --min-persistence/);
    const ok = sill(['survey', p('noise300.npy'), '--json', '--min-persistence', '0.9'], { env: { SILL_MEMORY_BYTES: String(86 * 2 ** 20) } });
    expect(ok.code, ok.stderr).toBe(0);
  });
  it('leaves no output folder behind', () => {
    const out = p('out-feat');
    const r = sill(['ponds', p('noise300.npy'), '-o', out], { env: { SILL_MEMORY_BYTES: String(90 * 2 ** 20) } });
    expect(r.code).toBe(2);
    expect(existsSync(out) ? readdirSync(out) : []).toEqual([]);
  });
});

describe('the reader of stdout goes away', () => {
  it('sill … --json | head stops quietly with 141 (as a program killed by SIGPIPE in a shell: common practice)', () => {
    const dem = p('pipe.npy');
    const v = new Float32Array(300 * 300);
    for (let i = 0; i < v.length; i++) v[i] = Math.sin(i * 0.37) * 5 + (i % 300) * 0.01; // many small hollows: a long report
    npy(dem, v, 300, 300);
    const r = spawnSync('bash', ['-c', `"${process.execPath}" "${BIN}" ponds "${dem}" --json | head -c 20 >/dev/null; echo "status=\${PIPESTATUS[0]}"`], { encoding: 'utf8' });
    expect(r.stdout.trim()).toBe('status=141');
    expect(r.stderr).toBe('');
  });
});
