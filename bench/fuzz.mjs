#!/usr/bin/env node
/**
 * The long fuzz run: seeded fast-check byte mutations of the fixtures in fixtures/io (see
 * bench/lib/mutate.mjs), many more than the test suite's 3000 (tests/io/fuzz.test.ts).
 *   npm run build && node bench/fuzz.mjs [--runs 50000] [--seed 1] [--cli 200] [--timeout 30]
 *
 * In-process: loadSurface must return a surface or throw an InputError of one line — any other
 * error, or a case slower than --timeout seconds, is a finding. Through the command line (--cli N
 * cases of `sill survey FILE -o DIR`): exit 0, 1 or 2, at most one stderr line starting with
 * `sill:`, within the time limit, no staging folder left. Every finding is printed with the case
 * (fixture and edits) and written under the work folder, so it can be replayed and turned into a
 * named test. Exits 1 when there is a finding (unlike the timing benchmarks, this one is a check).
 * A V8 abort in-process kills this script: the case being run is in last-case.json.
 */
import { parseArgs } from 'node:util';
import { readFileSync, writeFileSync, mkdtempSync, readdirSync, existsSync, rmSync } from 'node:fs';
import { join } from 'node:path';
import { tmpdir } from 'node:os';
import { spawnSync } from 'node:child_process';
import { fileURLToPath } from 'node:url';
import fc from 'fast-check';
import { caseArb, applyEdits, extensionOf, FUZZ_FIXTURES } from './lib/mutate.mjs';
import { importDist } from './lib/util.mjs';

const { values: opt } = parseArgs({
  options: {
    runs: { type: 'string', default: '50000' },
    seed: { type: 'string', default: '1' },
    cli: { type: 'string', default: '200' },
    timeout: { type: 'string', default: '30' },
  },
});
const io = await importDist('io/index.js');
const errors = await importDist('errors.js');
if (!io || !errors) {
  console.error('bench/fuzz: dist/ is incomplete — run npm run build first');
  process.exit(1);
}
const ROOT = fileURLToPath(new URL('..', import.meta.url));
const BIN = join(ROOT, 'dist/cli/main.js');
const limitMs = Number(opt.timeout) * 1000;
const work = mkdtempSync(join(tmpdir(), 'sill-fuzz-'));
const originals = new Map(FUZZ_FIXTURES.map((f) => [f, readFileSync(join(ROOT, 'fixtures/io', f))]));
const findings = [];
const finding = (what, c) => {
  findings.push({ what, case: c });
  console.log(`FINDING ${what}\n  case ${JSON.stringify(c)}`);
};

// in-process loaders
const tally = { ok: 0, refused: 0 };
let k = 0;
const t0 = Date.now();
await fc.assert(
  fc.asyncProperty(caseArb, async (c) => {
    const path = join(work, `case${extensionOf(c.fixture)}`);
    writeFileSync(path, applyEdits(originals.get(c.fixture), c.edits));
    writeFileSync(join(work, 'last-case.json'), JSON.stringify(c));
    const s = Date.now();
    try {
      await io.loadSurface(path);
      tally.ok++;
    } catch (e) {
      if (!(e instanceof errors.InputError)) finding(`${e?.name ?? typeof e}: ${e?.message ?? e}`, c);
      else if (/\n|undefined/.test(e.message)) finding(`message: ${JSON.stringify(e.message)}`, c);
      else tally.refused++;
    }
    if (Date.now() - s > limitMs) finding(`slow: ${Date.now() - s} ms`, c);
    if (++k % 5000 === 0) console.log(`  ${k} cases, ${((Date.now() - t0) / 1000).toFixed(0)} s`);
    return true;
  }),
  { seed: Number(opt.seed), numRuns: Number(opt.runs) },
);
console.log(`loaders   ${k} cases in ${((Date.now() - t0) / 1000).toFixed(1)} s: ${tally.ok} read, ${tally.refused} refused with one line`);

// the command line
const cliRuns = Number(opt.cli);
let j = 0;
const c0 = Date.now();
if (cliRuns > 0) {
  fc.assert(
    fc.property(caseArb, (c) => {
      const path = join(work, `cli-${j}${extensionOf(c.fixture)}`);
      const out = join(work, `cli-out-${j++}`);
      writeFileSync(path, applyEdits(originals.get(c.fixture), c.edits));
      const r = spawnSync(process.execPath, [BIN, 'survey', path, '-o', out, '--quiet'], { encoding: 'utf8', timeout: limitMs });
      const lines = (r.stderr ?? '').split('\n').filter((l) => l !== '');
      if (r.error) finding(`command line: ${r.error.message}`, c);
      else if (![0, 1, 2].includes(r.status)) finding(`command line: exit ${r.status} (signal ${r.signal})`, c);
      if (lines.length > 1 || (lines.length === 1 && !lines[0].startsWith('sill: '))) finding(`command line stderr: ${JSON.stringify(r.stderr)}`, c);
      if (existsSync(out) && readdirSync(out).some((f) => f.startsWith('.sill-staging'))) finding('command line: staging folder left', c);
      rmSync(out, { recursive: true, force: true });
      rmSync(path, { force: true });
      return true;
    }),
    { seed: Number(opt.seed) + 1, numRuns: cliRuns },
  );
  console.log(`command   ${j} cases in ${((Date.now() - c0) / 1000).toFixed(1)} s`);
}

if (findings.length) {
  writeFileSync(join(work, 'findings.json'), JSON.stringify(findings, null, 1));
  console.log(`${findings.length} finding(s): ${join(work, 'findings.json')}`);
  process.exit(1);
}
rmSync(work, { recursive: true, force: true });
console.log('no findings');
