/**
 * `sill batch` on this machine (the local pool): analytic inputs give their analytic answers in the
 * catalogue, the catalogue repeats each input's own report.json, a failing input fails alone, a
 * batch killed outright resumes, stem clashes and bad options are refused before any work.
 */
import { describe, it, expect, beforeAll, afterAll } from 'vitest';
import { spawn } from 'node:child_process';
import { existsSync, mkdirSync, readFileSync, readdirSync, rmSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { BIN, sill, tempDir } from '../cli/run.js';
import { writeTorus, writeBowl, writeDamaged, readCatalogue, leftovers, manifestRun, BOWL_H } from './inputs.js';
import { threeStages } from './stages.js';
import { LocalEngine } from '../../src/cluster/engine.js';

describe('sill batch, local pool', () => {
  let dir: string;
  let bowl: { R: number; volume: number };
  beforeAll(() => {
    dir = tempDir('sill-batch-');
    mkdirSync(join(dir, 'in'));
    for (let k = 0; k < 3; k++) writeTorus(join(dir, 'in', `torus${k}.npy`), 32, k);
    bowl = writeBowl(join(dir, 'in', 'bowl.npy'));
    writeBowl(join(dir, 'in', 'bowl-small.npy'), 60);
    writeDamaged(join(dir, 'in', 'damaged.tif'));
  });
  afterAll(() => rmSync(dir, { recursive: true, force: true }));
  const input = (n: string) => join(dir, 'in', n);

  it('survey of torus surfaces: χ = 0 and 2 pits, 4 passes, 2 peaks for each, one row per input equal to its report.json', () => {
    const out = join(dir, 'tori');
    const files = ['torus0.npy', 'torus1.npy', 'torus2.npy'].map(input);
    const r = sill(['batch', 'survey', ...files, '-o', out, '--boundary', 'periodic', '--min-persistence', '1e-9', '--workers', '2']);
    expect(r.stderr).toBe('');
    expect(r.code).toBe(0);
    expect(r.stdout).toMatch(/3 of 3 inputs ok/);
    const cat = readCatalogue(out);
    expect(cat).toMatchObject({ command: 'survey', inputs: 3, ok: 3, failed: 0 });
    for (const [k, row] of cat.rows.entries()) {
      expect(row.input).toBe(files[k]);
      expect(row.folder).toBe(`torus${k}`);
      // Source: analytic — sin(x)sin(y) on the torus [0,2π)²: minima at (π/2,3π/2),(3π/2,π/2), maxima at
      // (π/2,π/2),(3π/2,3π/2), saddles at (0,0),(0,π),(π,0),(π,π); the torus has χ = 0 (common published fact)
      expect(row).toMatchObject({ status: 'ok', error: null, eulerCharacteristic: 0, eulerHolds: true, keptPits: 2, keptPasses: 4, keptPeaks: 2, cells: 32 * 32 });
      // the row repeats the input's own report.json
      const rep = JSON.parse(readFileSync(join(out, row.folder, 'report.json'), 'utf8'));
      expect(row).toMatchObject({
        width: rep.surface.width, height: rep.surface.height, cells: rep.surface.validCells,
        eulerCharacteristic: rep.euler.characteristic, eulerHolds: rep.euler.holds,
        eulerPits: rep.euler.pits, eulerPasses: rep.euler.passes, eulerPeaks: rep.euler.peaks,
        keptPits: rep.counts.pits, keptPasses: rep.counts.passes, keptPeaks: rep.counts.peaks,
      });
      expect(rep.input).toBe(files[k]);
      expect(row.seconds).toBeGreaterThan(0);
    }
    const csv = readFileSync(join(out, 'catalogue.csv'), 'utf8').trim().split('\n');
    expect(csv[0]).toBe('input,folder,status,error,width,height,cells,euler_characteristic,euler_holds,euler_pits,euler_passes,euler_peaks,kept_pits,kept_passes,kept_peaks,seconds');
    expect(csv).toHaveLength(4);
    expect(csv[1].startsWith(`${files[0]},torus0,ok,,32,32,1024,0,true,`)).toBe(true);
    expect(leftovers(out)).toEqual([]);
  });

  it('ponds with one damaged input: the others finish, its row says why, exit 1 naming it, no folder for it', () => {
    const out = join(dir, 'bowls');
    const r = sill(['batch', 'ponds', input('bowl.npy'), input('damaged.tif'), input('bowl-small.npy'), '-o', out, '--workers', '2']);
    expect(r.code).toBe(1);
    const lines = r.stderr.trim().split('\n');
    expect(lines).toHaveLength(2);
    expect(lines[0]).toMatch(new RegExp(`^sill: ${input('damaged.tif').replace(/[.]/g, '\\.')}: `));
    expect(lines[1]).toMatch(/^sill: 1 of 3 inputs failed/);
    const cat = readCatalogue(out);
    expect(cat).toMatchObject({ inputs: 3, ok: 2, failed: 1 });
    const [b, d, s] = cat.rows;
    expect(d).toMatchObject({ status: 'failed', folder: 'damaged', depressions: null, cells: null });
    expect(d.error).toMatch(/damaged\.tif/);
    expect(existsSync(join(out, 'damaged'))).toBe(false);
    // Source: analytic — one paraboloid bowl holds one depression whose volume is πR²H/2 (Archimedes),
    // within 1/N² on an N × N grid (the convergence shown in tests/hydro/analytic.test.ts)
    expect(b).toMatchObject({ status: 'ok', depressions: 1, eulerCharacteristic: 2, eulerHolds: true });
    expect(Math.abs((b.volume as number) - bowl.volume) / bowl.volume).toBeLessThanOrEqual(1 / 100 ** 2);
    expect(s).toMatchObject({ status: 'ok', depressions: 1 });
    for (const row of [b, s]) {
      const rep = JSON.parse(readFileSync(join(out, row.folder, 'report.json'), 'utf8'));
      expect(row).toMatchObject({ depressions: rep.counts.depressions, volume: rep.totals.volume, area: rep.totals.area, volumeUnit: rep.units.volume, cells: rep.surface.validCells });
      expect(rep.depressions[0].spillValue).toBe(BOWL_H);
    }
  });

  it('resume after SIGKILL mid-batch: the finished inputs are kept as they were, the rest are done, nothing is left behind', async () => {
    const out = join(dir, 'killed');
    const files: string[] = [];
    for (let k = 0; k < 4; k++) {
      files.push(join(dir, 'in', `k${k}.npy`));
      writeTorus(files[k], 32, k);
    }
    const args = ['batch', 'survey', ...files, '-o', out, '--boundary', 'periodic', '--workers', '1'];
    const child = spawn(process.execPath, [BIN, ...args], { stdio: 'ignore' });
    const statusDir = join(out, '.sill-run', 'status', 'analyse');
    const reported = () => readdirSync(statusDir).filter((n) => n.endsWith('.json')).length;
    // kill it outright once two inputs have finished and the third is under way
    const t0 = Date.now();
    while (Date.now() - t0 < 60000) {
      if (existsSync(statusDir) && reported() >= 2) break;
      await new Promise((r) => setTimeout(r, 20));
    }
    child.kill('SIGKILL');
    await new Promise((r) => child.on('close', r));
    const done = reported();
    expect(done).toBeGreaterThanOrEqual(2);
    expect(done).toBeLessThan(4);
    expect(existsSync(join(out, 'catalogue.csv'))).toBe(false);
    // the inputs whose run had reported success when the kill came (a folder committed just before
    // the kill, whose report the kill cut off, is redone: it counts as not finished)
    const before = new Map<string, string>();
    for (let k = 0; k < 4; k++) {
      const st = join(statusDir, `${k}.json`);
      if (existsSync(st) && JSON.parse(readFileSync(st, 'utf8')).ok) before.set(`k${k}`, manifestRun(join(out, `k${k}`)));
    }
    expect(before.size).toBeGreaterThanOrEqual(2);
    // let the killed runs go (their parents died; the kernel ends them)
    await new Promise((r) => setTimeout(r, 500));

    const r = sill([...args, '--resume']);
    expect(r.stderr).toBe('');
    expect(r.code).toBe(0);
    expect(r.stdout).toMatch(/4 of 4 inputs ok \(\d finished before\)/);
    const cat = readCatalogue(out);
    expect(cat.rows.map((x) => x.status)).toEqual(Array(4).fill('ok'));
    // what was finished is kept as it was (not redone)
    for (const [stem, run] of before) expect(manifestRun(join(out, stem))).toBe(run);
    expect(r.stdout).toContain(`(${before.size} finished before)`);
    for (const row of cat.rows) expect(row).toMatchObject({ eulerCharacteristic: 0, eulerHolds: true });
    expect(leftovers(out)).toEqual([]);
  });

  it('a second batch into the same folder without --resume redoes every input; files sill did not write need --force', () => {
    const out = join(dir, 'again');
    const files = ['torus0.npy', 'torus1.npy'].map(input);
    expect(sill(['batch', 'survey', ...files, '-o', out, '--boundary', 'periodic']).code).toBe(0);
    const first = manifestRun(join(out, 'torus0'));
    expect(sill(['batch', 'survey', files[0], '-o', out, '--boundary', 'periodic']).code).toBe(0);
    expect(manifestRun(join(out, 'torus0'))).not.toBe(first);
    // the earlier batch's folder that this one does not write is gone with the new catalogue
    expect(existsSync(join(out, 'torus1'))).toBe(false);
    expect(readCatalogue(out).inputs).toBe(1);
    // an input that fails this time loses the earlier batch's folder: DIR holds only what the catalogue describes
    const failing = sill(['batch', 'survey', files[0], '-o', out, '--boundary', 'periodic', '--min-persistence', '-1']);
    expect(failing.code).toBe(1);
    expect(readCatalogue(out).rows[0]).toMatchObject({ status: 'failed', folder: 'torus0' });
    expect(readCatalogue(out).rows[0].error).toMatch(/--min-persistence must be at least 0/);
    expect(existsSync(join(out, 'torus0'))).toBe(false);
    writeFileSync(join(out, 'notes.txt'), 'mine\n');
    const r = sill(['batch', 'survey', files[0], '-o', out, '--boundary', 'periodic']);
    expect(r.code).toBe(2);
    expect(r.stderr).toMatch(/^sill: batch folder .* holds files sill did not write \(notes\.txt\); .*--force/);
    expect(sill(['batch', 'survey', files[0], '-o', out, '--boundary', 'periodic', '--force']).code).toBe(0);
    expect(readFileSync(join(out, 'notes.txt'), 'utf8')).toBe('mine\n');
    // --resume with other options is refused
    const o = sill(['batch', 'survey', files[0], '-o', out, '--boundary', 'closed', '--force', '--resume']);
    expect(o.code).toBe(2);
    expect(o.stderr).toMatch(/other inputs or options/);
  });

  it('the stage runner: a stage after `any` runs when a task before it failed, one after `ok` does not and says why', async () => {
    const run = threeStages(join(dir, 'stages'), input('torus0.npy'), input('damaged.tif'));
    await new LocalEngine(2).run(run);
    expect(run.status('first', 0)).toMatchObject({ ok: true, exit: 0, label: input('torus0.npy') });
    expect(run.status('first', 1)).toMatchObject({ ok: false, exit: 2 });
    expect(run.status('first', 1)!.error).toMatch(/damaged\.tif/);
    expect(run.status('first', 0)!.outputRun).toBe(manifestRun(join(dir, 'stages', 'a')));
    expect(run.status('anyway', 0)).toMatchObject({ ok: true });
    expect(run.status('needs-all', 0)).toMatchObject({ ok: false, exit: null, error: 'not run: a task of stage first failed' });
    expect(existsSync(join(dir, 'stages', 'd'))).toBe(false);
  });

  const refuses: [string, () => string[], RegExp][] = [
    ['two inputs with one stem', () => {
      mkdirSync(join(dir, 'a'), { recursive: true });
      mkdirSync(join(dir, 'b'), { recursive: true });
      writeTorus(join(dir, 'a', 'x.npy'));
      writeTorus(join(dir, 'b', 'x.npy'));
      return ['survey', join(dir, 'a', 'x.npy'), join(dir, 'b', 'x.npy')];
    }, /inputs .*a\/x\.npy and .*b\/x\.npy would both write into .*\/x\/; rename one/],
    ['an unknown option', () => ['survey', input('torus0.npy'), '--min-depht', '1'], /--min-depht is not an option of sill survey/],
    ['--json', () => ['ponds', input('bowl.npy'), '--json'], /--json prints one report/],
    ['an unknown command', () => ['fill', input('bowl.npy')], /sill batch runs one of survey, ponds, runoff, barriers/],
    ['a missing input', () => ['ponds', input('nothing.npy')], /input .*nothing\.npy does not exist/],
    ['--dry-run without Slurm', () => ['ponds', input('bowl.npy'), '--dry-run'], /--dry-run writes the sbatch scripts of --scheduler slurm/],
  ];
  for (const [name, args, msg] of refuses) {
    it(`refuses ${name} before any work: exit 2, one line, no folder`, () => {
      const out = join(dir, `bad-${name.replace(/\W+/g, '-')}`);
      const r = sill(['batch', ...args(), '-o', out]);
      expect(r.code).toBe(2);
      expect(r.stdout).toBe('');
      expect(r.stderr.trim().split('\n')).toHaveLength(1);
      expect(r.stderr).toMatch(msg);
      expect(existsSync(out)).toBe(false);
    });
  }
});
