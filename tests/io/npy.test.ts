import { afterAll, describe, expect, it } from 'vitest';
import { writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { readNpy } from '../../src/io/npy.js';
import { InputError } from '../../src/errors.js';
import { expected, fixture, mismatches, sillValue, tempDir } from './helpers.js';

const { dir, cleanup } = tempDir();
afterAll(cleanup);

/**
 * Bytes of a .npy file laid out as the NumPy file-format specification describes it
 * (NEP 1, "A Simple File Format for NumPy Arrays", and numpy.lib.format): the magic
 * string \x93NUMPY, major and minor version bytes, the header length (2 bytes little-endian
 * in version 1.0, 4 bytes in 2.0), then the header — a Python dict literal with 'descr',
 * 'fortran_order' and 'shape', padded with spaces and ended by '\n' so that the data
 * starts at a multiple of 64 bytes — then the raw data.
 */
function npyBytes(descr: string, shape: number[], fortran: boolean, data: Uint8Array, version: 1 | 2 = 1): Uint8Array {
  const dict = `{'descr': '${descr}', 'fortran_order': ${fortran ? 'True' : 'False'}, 'shape': (${shape.join(', ')}${shape.length === 1 ? ',' : ''}), }`;
  const pre = version === 1 ? 10 : 12;
  const total = Math.ceil((pre + dict.length + 1) / 64) * 64;
  const header = dict + ' '.repeat(total - pre - dict.length - 1) + '\n';
  const out = new Uint8Array(total + data.length);
  out.set([0x93, 0x4e, 0x55, 0x4d, 0x50, 0x59, version, 0]);
  const dv = new DataView(out.buffer);
  if (version === 1) dv.setUint16(8, header.length, true);
  else dv.setUint32(8, header.length, true);
  for (let i = 0; i < header.length; i++) out[pre + i] = header.charCodeAt(i);
  out.set(data, total);
  expect(total % 64).toBe(0);
  return out;
}

/** Element values of a rows × cols array, A[r][c]. */
const A = (r: number, c: number) => (r * 10 + c) * (c % 2 ? -1 : 1) + 0.25 * r;

type Ctor = Float32ArrayConstructor | Float64ArrayConstructor | Int16ArrayConstructor | Int32ArrayConstructor | Uint8ArrayConstructor | Uint16ArrayConstructor;

function elements(T: Ctor, rows: number, cols: number, fortran: boolean, value: (r: number, c: number) => number): Uint8Array {
  const a = new T(rows * cols);
  for (let r = 0; r < rows; r++) for (let c = 0; c < cols; c++) a[fortran ? c * rows + r : r * cols + c] = value(r, c);
  return new Uint8Array(a.buffer);
}

function write(name: string, bytes: Uint8Array): string {
  const p = join(dir, name);
  writeFileSync(p, bytes);
  return p;
}

describe('readNpy on arrays laid out per the NumPy format specification', () => {
  const cases: [string, Ctor, (r: number, c: number) => number][] = [
    ['<f4', Float32Array, (r, c) => Math.fround(A(r, c) / 3)],
    ['<f8', Float64Array, (r, c) => A(r, c) / 3],
    ['<i2', Int16Array, (r, c) => Math.round(A(r, c)) * 100],
    ['<i4', Int32Array, (r, c) => Math.round(A(r, c)) * 10_000_000],
    ['|u1', Uint8Array, (r, c) => r * 40 + c],
    ['<u2', Uint16Array, (r, c) => r * 9000 + c * 7],
  ];
  for (const [descr, T, value] of cases) {
    for (const fortran of [false, true]) {
      for (const version of [1, 2] as const) {
        it(`${descr}, ${fortran ? 'Fortran' : 'C'} order, version ${version}.0`, async () => {
          const rows = 4;
          const cols = 5;
          const p = write(`a-${descr.slice(1)}-${fortran}-${version}.npy`, npyBytes(descr, [rows, cols], fortran, elements(T, rows, cols, fortran, value), version));
          const g = await readNpy(p);
          expect([g.width, g.height]).toEqual([cols, rows]); // shape (rows, cols): cols wide, rows high
          const want: number[] = [];
          for (let r = 0; r < rows; r++) for (let c = 0; c < cols; c++) want.push(value(r, c)); // element [r][c] → cell (c, r)
          expect(mismatches(g.values, want)).toEqual([]);
          expect(g.values).toBeInstanceOf(descr === '<f8' || descr === '<i4' ? Float64Array : Float32Array);
        });
      }
    }
  }

  it('big-endian data', async () => {
    const data = new Uint8Array(6 * 8);
    const dv = new DataView(data.buffer);
    for (let i = 0; i < 6; i++) dv.setFloat64(8 * i, i * 1.5 - 2, false);
    const g = await readNpy(write('be.npy', npyBytes('>f8', [2, 3], false, data)));
    expect(Array.from(g.values)).toEqual([-2, -0.5, 1, 2.5, 4, 5.5]);
  });

  it('origin, spacing and nodata', async () => {
    const p = write('geo.npy', npyBytes('<f8', [2, 3], false, new Uint8Array(new Float64Array([1, 2, -9999, 4, NaN, 6]).buffer)));
    const g = await readNpy(p, { origin: [100, 50], spacing: [2, -3], nodata: -9999 });
    expect(g.transform).toEqual([99, 2, 0, 51.5, 0, -3]); // [X − DX/2, DX, 0, Y − DY/2, 0, DY]
    expect([g.x(0, 0), g.y(0, 0)]).toEqual([100, 50]);
    expect(Array.from(g.values)).toEqual([1, 2, NaN, 4, NaN, 6]);
    const d = await readNpy(p);
    expect(d.transform).toEqual([-0.5, 1, 0, -0.5, 0, 1]);
  });

  it('infinities: the first cell in row order is named, unless nodata is that infinity', async () => {
    // Fortran order stores column 0 first, so the infinity at [1][0] comes before [0][2] in the file
    const vals = (r: number, c: number) => (r === 0 && c === 2 ? Infinity : r === 1 && c === 0 ? Infinity : r + c);
    const p = write('inf.npy', npyBytes('<f4', [2, 3], true, elements(Float32Array, 2, 3, true, vals)));
    await expect(readNpy(p)).rejects.toThrow(/cell \(col 2, row 0\) is \+Infinity/);
    const g = await readNpy(p, { nodata: Infinity });
    expect(g.validCount()).toBe(4);
  });
});

describe('readNpy refuses', () => {
  const good = () => npyBytes('<f8', [3, 4], false, new Uint8Array(new Float64Array(12).fill(1).buffer));

  it('truncated data, naming what is missing', async () => {
    const b = good();
    const p = write('cut.npy', b.subarray(0, b.length - 5));
    const err = await readNpy(p).catch((e) => e);
    expect(err).toBeInstanceOf(InputError);
    expect(err.message).toMatch(/is truncated: its header declares a 3×4 'f8' array \(96 bytes of data\) but only 91 bytes follow/);
    await expect(readNpy(write('cut-header.npy', b.subarray(0, 40)))).rejects.toThrow(/truncated inside the \.npy header/);
  });

  it('unsupported dtypes', async () => {
    await expect(readNpy(write('c8.npy', npyBytes('<c8', [2, 2], false, new Uint8Array(32))))).rejects.toThrow(/dtype '<c8', which sill does not read/);
    await expect(readNpy(write('i8.npy', npyBytes('<i8', [2, 2], false, new Uint8Array(32))))).rejects.toThrow(/dtype '<i8'/);
    await expect(readNpy(write('str.npy', npyBytes('<U3', [2, 2], false, new Uint8Array(48))))).rejects.toThrow(/dtype '<U3'/);
  });

  it('arrays that are not 2-D', async () => {
    await expect(readNpy(write('1d.npy', npyBytes('<f8', [4], false, new Uint8Array(32))))).rejects.toThrow(/1-D array of shape \(4\); sill needs a 2-D array/);
    await expect(readNpy(write('3d.npy', npyBytes('<f8', [2, 2, 2], false, new Uint8Array(64))))).rejects.toThrow(/3-D array/);
  });

  it('a file that is not .npy', async () => {
    await expect(readNpy(write('not.npy', new TextEncoder().encode('1 2 3\n')))).rejects.toThrow(/is not a \.npy file/);
  });
});

describe(`.npy files written by numpy ${expected.numpyVersion}`, () => {
  for (const [name, info] of Object.entries(expected.npy)) {
    it(`${name} (${info.dtype}, ${info.fortran ? 'Fortran' : 'C'} order)`, async () => {
      const g = await readNpy(fixture(name));
      expect([g.height, g.width]).toEqual(info.shape); // shape as numpy.load reports it
      expect(mismatches(g.values, info.values.map(sillValue))).toEqual([]); // values as numpy.load returns them (C order)
    });
  }
  it('include Fortran order and format version 2.0', () => {
    expect(Object.values(expected.npy).some((i) => i.fortran)).toBe(true);
    expect(Object.keys(expected.npy).some((n) => n.includes('v2'))).toBe(true);
  });
});
