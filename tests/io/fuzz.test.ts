/**
 * Fuzz job: seeded fast-check byte mutations of valid GeoTIFF, .npy and text fixtures (fixtures/io).
 * In-process, a few thousand cases: loadSurface either returns a usable surface or throws an
 * InputError with one line naming the file — never another error, never a hang. Through the
 * command line, a smaller number: exit 0, 1 or 2, at most one stderr line, within a time limit,
 * no staging folder left in -o. The longer run is bench/fuzz.mjs.
 * Outside source: none needed — the property is the command-line contract (DESIGN §4: exit 0, 1 or 2
 * with one clear line); the inputs are mutations of fixtures that GDAL and NumPy wrote.
 */
import { describe, it, expect, beforeAll } from 'vitest';
import fc from 'fast-check';
import { readFileSync, writeFileSync, readdirSync, existsSync } from 'node:fs';
import { join } from 'node:path';
import { spawnSync } from 'node:child_process';
import { loadSurface } from '../../src/io/index.js';
import { InputError } from '../../src/errors.js';
import { fixture } from './helpers.js';
import { BIN, tempDir } from '../cli/run.js';
import { caseArb, applyEdits, extensionOf, FUZZ_FIXTURES } from '../../bench/lib/mutate.mjs';

let dir: string;
const originals = new Map<string, Uint8Array>();

beforeAll(() => {
  dir = tempDir('sill-fuzz-');
  for (const f of FUZZ_FIXTURES) originals.set(f, readFileSync(fixture(f)));
});

describe('fuzzed inputs (in-process loaders)', () => {
  it('every fixture loads unchanged (the mutations start from valid files)', async () => {
    for (const f of FUZZ_FIXTURES) {
      const s = await loadSurface(fixture(f));
      expect(s.size, f).toBeGreaterThan(0);
    }
  });

  it('3000 mutated files: a surface or one InputError line, nothing else', async () => {
    let k = 0;
    const outcomes = { ok: 0, refused: 0 };
    await fc.assert(
      fc.asyncProperty(caseArb, async (c) => {
        const path = join(dir, `case-${k++}${extensionOf(c.fixture)}`);
        writeFileSync(path, applyEdits(originals.get(c.fixture)!, c.edits));
        const t0 = Date.now();
        try {
          const s = await loadSurface(path);
          expect(s.size).toBeGreaterThan(0);
          outcomes.ok++;
        } catch (e) {
          if (!(e instanceof InputError)) throw new Error(`${c.fixture} ${JSON.stringify(c.edits)}: ${(e as Error)?.name}: ${(e as Error)?.message ?? e}`);
          expect(e.message).not.toMatch(/\n/);
          expect(e.message).not.toMatch(/undefined/);
          outcomes.refused++;
        }
        expect(Date.now() - t0).toBeLessThan(5000);
      }),
      { seed: 20261202, numRuns: 3000 },
    );
    // both outcomes occur: the mutations neither always break nor never break the files
    expect(outcomes.ok).toBeGreaterThan(100);
    expect(outcomes.refused).toBeGreaterThan(100);
  }, 300000);
});

describe('what the fuzz job found (named regressions)', () => {
  const found: [string, string, Parameters<typeof applyEdits>[1], RegExp][] = [
    // geotiff's LZW decoder followed a broken dictionary chain and grew an array until V8 aborted the process
    ['an LZW tile whose codes break the dictionary chain (was a V8 abort)', 'bigtiff-float32.tif',
      [{ kind: 'insert', pos: 293745, bytes: new Uint8Array([190, 171, 131]) }], /truncated or damaged: .*LZW data is damaged \(a code refers to a string not yet defined\)/],
    // a control character of a damaged GDAL_NODATA tag broke the one-line message
    ['a GDAL_NODATA tag running into binary data (the message had a newline)', 'float32-strip-none.tif',
      [{ kind: 'flip', pos: 195, bit: 0 }], /GDAL_NODATA tag '-9999\?\?\?.*\.\.\.' is not a number/],
    // more samples per pixel than BitsPerSample/SampleFormat values ("sample format undefined (undefined-bit)")
    ['SamplesPerPixel beyond the BitsPerSample values (said "undefined")', 'float32-strip-packbits.tif',
      [{ kind: 'repeat', pos: 192, len: 9, times: 3 }, { kind: 'repeat', pos: 159, len: 42, times: 4 }, { kind: 'char', pos: 621010, ch: ',' }], /truncated or damaged/],
  ];
  for (const [name, fixtureName, edits, msg] of found) {
    it(name, async () => {
      const path = join(dir, `found-${fixtureName}`);
      writeFileSync(path, applyEdits(originals.get(fixtureName)!, edits));
      const err = await loadSurface(path).then(() => null, (e: unknown) => e);
      expect(err).toBeInstanceOf(InputError);
      expect((err as Error).message).not.toMatch(/\n|undefined/);
      expect((err as Error).message).toMatch(msg);
    });
  }
});

describe('fuzzed inputs (the command line)', () => {
  it('20 mutated files through `sill survey -o`: exit 0, 1 or 2, at most one stderr line, no staging left', () => {
    let k = 0;
    fc.assert(
      fc.property(caseArb, (c) => {
        const path = join(dir, `cli-${k}${extensionOf(c.fixture)}`);
        const out = join(dir, `cli-out-${k++}`);
        writeFileSync(path, applyEdits(originals.get(c.fixture)!, c.edits));
        const r = spawnSync(process.execPath, [BIN, 'survey', path, '-o', out, '--quiet'], { encoding: 'utf8', timeout: 30000 });
        expect(r.error, `timed out: ${c.fixture} ${JSON.stringify(c.edits)}`).toBeUndefined();
        expect([0, 1, 2], r.stderr).toContain(r.status);
        const lines = r.stderr.split('\n').filter((l) => l !== '');
        expect(lines.length, r.stderr).toBeLessThanOrEqual(1);
        if (lines.length) expect(lines[0]).toMatch(/^sill: /);
        if (existsSync(out)) expect(readdirSync(out).filter((f) => f.startsWith('.sill-staging'))).toEqual([]);
      }),
      { seed: 14, numRuns: 20 },
    );
  }, 300000);
});
