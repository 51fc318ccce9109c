/** Stage files of a tiled run: typed arrays and numbers round-trip bit for bit; a foreign file is refused. */
import { describe, it, expect } from 'vitest';
import { mkdtempSync, rmSync, writeFileSync, readdirSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';
import { writeRunFile, readRunFile } from '../../src/tiles/runfile.js';

describe('run files', () => {
  it('round-trip typed arrays (odd lengths, NaN, −0, ±∞) and numbers', async () => {
    const dir = mkdtempSync(join(tmpdir(), 'sill-runfile-'));
    try {
      const rec = {
        a: Int32Array.of(-1, 2 ** 31 - 1, 0), b: Uint8Array.of(1, 0, 255, 7, 9), c: Float64Array.of(NaN, -0, Infinity, -Infinity, 1e-300),
        d: new Float32Array(0), n: 42, z: -Infinity, m: -0, q: NaN,
      };
      await writeRunFile(join(dir, 'x.run'), rec);
      expect(readdirSync(dir)).toEqual(['x.run']);
      const back = await readRunFile<typeof rec>(join(dir, 'x.run'));
      expect(back.a).toEqual(rec.a); expect(back.b).toEqual(rec.b); expect(back.d).toEqual(rec.d);
      expect(Buffer.from(back.c.buffer, back.c.byteOffset, back.c.byteLength).equals(Buffer.from(rec.c.buffer))).toBe(true);
      expect(back.n).toBe(42);
      expect(back.z).toBe(-Infinity); expect(Object.is(back.m, -0)).toBe(true); expect(back.q).toBeNaN();
      writeFileSync(join(dir, 'y.run'), 'not a run file');
      await expect(readRunFile(join(dir, 'y.run'))).rejects.toThrow(/not a sill run file/);
    } finally { rmSync(dir, { recursive: true, force: true }); }
  });
});
