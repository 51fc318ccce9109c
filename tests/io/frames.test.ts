/**
 * Frames of a sampled run (src/io/frames.ts): text columns and `.npy` arrays (C and Fortran order,
 * several dtypes) give the same values chunk by chunk; bad frames stop with one line. The .npy
 * layout is NumPy's format specification (numpy.lib.format, versions 1.0–3.0).
 */
import { describe, it, expect, beforeAll } from 'vitest';
import { writeFileSync, mkdtempSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { readFrames, FRAME_CHUNK } from '../../src/io/frames.js';
import { InputError } from '../../src/errors.js';

function npy(path: string, descr: string, shape: [number, number], fortran: boolean, body: ArrayBufferView): void {
  const header = `{'descr': '${descr}', 'fortran_order': ${fortran ? 'True' : 'False'}, 'shape': (${shape[0]}, ${shape[1]}), }`.padEnd(117) + '\n';
  writeFileSync(path, Buffer.concat([Buffer.from([0x93]), Buffer.from('NUMPY'), Buffer.from([1, 0, header.length & 255, header.length >> 8]), Buffer.from(header), Buffer.from(body.buffer, body.byteOffset, body.byteLength)]));
}

async function collect(path: string, cols: number[]) {
  const out: number[] = [];
  let chunks = 0;
  const info = await readFrames(path, cols, (c) => { chunks++; for (let i = 0; i < c.frames * cols.length; i++) out.push(c.data[i]); });
  return { values: out, chunks, info };
}

let dir = '';
const N = FRAME_CHUNK + 123; // more than one chunk
const frame = (i: number) => [Math.sin(i) * 100, (i % 17) - 8, i / 7, i % 5];
beforeAll(() => {
  dir = mkdtempSync(join(tmpdir(), 'sill-frames-'));
  const rows = Array.from({ length: N }, (_, i) => frame(i));
  writeFileSync(join(dir, 'f.txt'), `# a comment\nphi psi d w\n${rows.map((r, i) => (i % 2 ? r.join(' ') : r.join(',\t'))).join('\n')}\n`);
  const c = new Float64Array(N * 4), f = new Float64Array(N * 4), i4 = new Int32Array(N * 4);
  rows.forEach((r, i) => r.forEach((v, j) => { c[i * 4 + j] = v; f[j * N + i] = v; i4[i * 4 + j] = Math.round(v); }));
  npy(join(dir, 'c.npy'), '<f8', [N, 4], false, c);
  npy(join(dir, 'f.npy'), '<f8', [N, 4], true, f);
  npy(join(dir, 'i.npy'), '<i4', [N, 4], false, i4);
  writeFileSync(join(dir, 'bad-inf.txt'), 'x y\n1 2\n3 inf\n');
  writeFileSync(join(dir, 'bad-fields.txt'), '1 2 3\n4 5\n');
  writeFileSync(join(dir, 'bad-word.txt'), '1 2\n3 four\n');
  npy(join(dir, 'nan.npy'), '<f4', [3, 2], false, new Float32Array([1, 2, 3, NaN, 5, 6]));
});

describe('readFrames', () => {
  it('text columns (header, comment, spaces, tabs and commas) and .npy in C and Fortran order give the same frames', async () => {
    const want = Array.from({ length: N }, (_, i) => { const r = frame(i); return [r[2], r[0], r[3]]; }).flat();
    for (const f of ['f.txt', 'c.npy', 'f.npy']) {
      const r = await collect(join(dir, f), [3, 1, 4]);
      expect(r.chunks).toBe(2);
      expect(r.values).toEqual(want);
    }
    const t = await collect(join(dir, 'f.txt'), [1, 2]);
    expect(t.info.names).toEqual(['phi', 'psi', 'd', 'w']);
    const i = await collect(join(dir, 'i.npy'), [2]);
    expect(i.values).toEqual(Array.from({ length: N }, (_, k) => Math.round(frame(k)[1])));
  });

  it('bad frames: one line naming the line or frame and column', async () => {
    const bad: [string, number[], RegExp][] = [
      ['bad-inf.txt', [1, 2], /line 3, column 2: 'inf' is not a finite number/],
      ['bad-fields.txt', [1, 2], /line 2: the row has 2 fields but line 1 has 3/],
      ['bad-word.txt', [1, 2], /line 2, column 2: 'four' is not a finite number/],
      ['nan.npy', [1, 2], /frame 2 \(row 1 of the array\), column 2/],
      ['c.npy', [1, 5], /column 5 was asked for but the array has 4 columns/],
      ['f.txt', [7], /column 7 was asked for but line 3 has 4 fields/],
      ['missing.txt', [1], /cannot read .*missing\.txt: no such file/],
    ];
    for (const [f, cols, msg] of bad) {
      const err = await readFrames(join(dir, f), cols, () => undefined).then(() => null, (e) => e);
      expect(err).toBeInstanceOf(InputError);
      expect(err.message).toMatch(msg);
      expect(err.message).not.toContain('\n');
    }
  });
});
