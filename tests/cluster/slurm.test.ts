/**
 * `sill batch --scheduler slurm` end to end against a real single-node Slurm that this file starts
 * and stops (scripts/slurm-local.mjs; group `slurm` of scripts/prerequisites.mjs): a failing input
 * ends the batch with exit 1 naming it, a rerun with --resume does only what is missing, and the
 * batch folder equals the one the local pool makes (catalogues byte for byte but the seconds).
 */
import { describe, it, expect, beforeAll, afterAll } from 'vitest';
import { spawnSync } from 'node:child_process';
import { copyFileSync, existsSync, mkdirSync, readFileSync, rmSync } from 'node:fs';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { runs, skipNote } from '../prereq.js';
import { listFiles, sill, tempDir } from '../cli/run.js';
import { writeBowl, writeDamaged, writeTorus, readCatalogue, csvWithoutSeconds, jsonWithoutSeconds, leftovers, manifestRun } from './inputs.js';
import { threeStages } from './stages.js';
import { SlurmEngine } from '../../src/cluster/slurm.js';
import { RunFolder } from '../../src/cluster/run-folder.js';
import { writeMosaic, damageTile, sameRasters } from './mosaic.js';

const RIG = fileURLToPath(new URL('../../scripts/slurm-local.mjs', import.meta.url));
const SLURM_DIR = process.env.SILL_SLURM_DIR || '/tmp/sill-slurm';
const SLURM_ENV = { SLURM_CONF: join(SLURM_DIR, 'slurm.conf'), SILL_SLURM_DIR: SLURM_DIR, SILL_SLURM_POLL: '0.3' };

const rig = (what: string) => spawnSync(process.execPath, [RIG, what], { encoding: 'utf8', env: { ...process.env, ...SLURM_ENV }, timeout: 300_000 });

describe.skipIf(!runs('slurm'))(`sill batch on a local Slurm${skipNote('slurm')}`, () => {
  let dir: string;
  let startedHere = false;
  let inputs: string[];
  beforeAll(() => {
    startedHere = rig('status').status !== 0;
    const r = rig('start');
    if (r.status !== 0) throw new Error(`the local Slurm did not start: ${r.stderr.trim()}`);
    dir = tempDir('sill-slurm-');
    mkdirSync(join(dir, 'in'));
    writeBowl(join(dir, 'in', 'bowl.npy'), 80);
    writeTorus(join(dir, 'in', 'hills.npy'), 40);
    writeDamaged(join(dir, 'in', 'late.npy'));
    inputs = ['bowl.npy', 'hills.npy', 'late.npy'].map((n) => join(dir, 'in', n));
  }, 300_000);
  afterAll(() => {
    if (startedHere) rig('stop');
    if (dir) rmSync(dir, { recursive: true, force: true });
  });

  const args = (out: string, ...more: string[]) => ['batch', 'ponds', ...inputs, '-o', out, '--min-depth', '0.01', ...more];

  it('a batch with one bad input: exit 1 naming it, the others finish; the same folder as the local pool makes', () => {
    const out = join(dir, 'slurm');
    const r = sill(args(out, '--scheduler', 'slurm', '--workers', '2'), { env: SLURM_ENV, timeout: 180_000 });
    expect(r.code).toBe(1);
    const lines = r.stderr.trim().split('\n');
    expect(lines[0]).toBe(`sill: ${inputs[2]}: ${readCatalogue(out).rows[2].error}`);
    expect(lines[0]).toMatch(/late\.npy/);
    expect(lines[1]).toMatch(/^sill: 1 of 3 inputs failed/);
    expect(r.stdout).toMatch(/2 of 3 inputs ok, 1 failed; on Slurm/);
    // Slurm ran it: the scripts are there and the array job was submitted throttled to 2 at a time
    const script = readFileSync(join(out, '.sill-run', 'slurm', 'analyse.sbatch'), 'utf8');
    expect(script).toMatch(/^#SBATCH --job-name=sill-analyse$/m);
    expect(script).toMatch(/SLURM_ARRAY_TASK_ID/);
    const jobs = JSON.parse(readFileSync(join(out, '.sill-run', 'slurm', 'jobs.json'), 'utf8'));
    expect(Object.keys(jobs)).toEqual(['analyse', 'catalogue']);
    const show = spawnSync('scontrol', ['show', 'job', jobs.catalogue], { encoding: 'utf8', env: { ...process.env, ...SLURM_ENV } });
    expect(show.stdout).toMatch(new RegExp(`Dependency=\\(null\\)|afterany:${jobs.analyse}`));
    expect(show.stdout).toMatch(/JobState=COMPLETED/);

    // the local pool on the same inputs gives the same catalogues (but the seconds) and the same files
    const local = join(dir, 'local');
    const l = sill(args(local, '--workers', '2'), { timeout: 180_000 });
    expect(l.code).toBe(1);
    expect(l.stderr.split('\n')[0]).toBe(lines[0]);
    expect(csvWithoutSeconds(out)).toBe(csvWithoutSeconds(local));
    expect(jsonWithoutSeconds(out)).toBe(jsonWithoutSeconds(local));
    for (const stem of ['bowl', 'hills']) {
      const files = listFiles(join(out, stem)).filter((f) => f !== '.sill-manifest.json');
      expect(files).toEqual(listFiles(join(local, stem)).filter((f) => f !== '.sill-manifest.json'));
      for (const f of files) expect(readFileSync(join(out, stem, f)).equals(readFileSync(join(local, stem, f)))).toBe(true);
    }
    expect(existsSync(join(out, 'late'))).toBe(false);
    expect(leftovers(out)).toEqual([]);
  }, 400_000);

  it('--resume after fixing the input does only that input on Slurm', () => {
    const out = join(dir, 'slurm');
    const before = { bowl: manifestRun(join(out, 'bowl')), hills: manifestRun(join(out, 'hills')) };
    copyFileSync(inputs[0], inputs[2]);
    const r = sill(args(out, '--scheduler', 'slurm', '--workers', '2', '--resume'), { env: SLURM_ENV, timeout: 180_000 });
    expect(r.stderr).toBe('');
    expect(r.code).toBe(0);
    expect(r.stdout).toMatch(/3 of 3 inputs ok \(2 finished before\); on Slurm/);
    expect(manifestRun(join(out, 'bowl'))).toBe(before.bowl);
    expect(manifestRun(join(out, 'hills'))).toBe(before.hills);
    const cat = readCatalogue(out);
    expect(cat).toMatchObject({ ok: 3, failed: 0 });
    expect(cat.rows[2]).toMatchObject({ status: 'ok', folder: 'late', depressions: cat.rows[0].depressions, volume: cat.rows[0].volume });
    // only the missing task was submitted: the array of the resumed run is the one index
    const submit = readFileSync(join(out, '.sill-run', 'slurm', 'submit.sh'), 'utf8');
    expect(submit).toMatch(/--array=2%2 /);
  }, 300_000);

  it('the stage runner on Slurm: afterany runs after a failed task, afterok is cancelled by Slurm and recorded so', async () => {
    const damaged = join(dir, 'in', 'damaged.tif');
    writeDamaged(damaged);
    const run = threeStages(join(dir, 'stages'), join(dir, 'in', 'hills.npy'), damaged);
    const saved = process.env.SLURM_CONF;
    process.env.SLURM_CONF = SLURM_ENV.SLURM_CONF;
    try {
      await new SlurmEngine({ workers: 2, pollSeconds: 0.3 }).run(run);
    } finally {
      if (saved === undefined) delete process.env.SLURM_CONF;
      else process.env.SLURM_CONF = saved;
    }
    expect(run.status('first', 0)).toMatchObject({ ok: true, exit: 0 });
    expect(run.status('first', 1)).toMatchObject({ ok: false, exit: 2 });
    expect(run.status('anyway', 0)).toMatchObject({ ok: true });
    // Slurm's own verdict: DependencyParameters=kill_invalid_depend cancels a job whose afterok can never be met
    expect(run.status('needs-all', 0)).toMatchObject({ ok: false, exit: null });
    expect(run.status('needs-all', 0)!.error).toMatch(/^Slurm ended the task: CANCELLED/);
    const submit = readFileSync(join(run.slurmDir, 'submit.sh'), 'utf8');
    expect(submit).toMatch(/--dependency=afterok:\$\{job_first\}/);
  }, 300_000);

  it('--dry-run only writes the scripts and submit.sh, which a site can run as they are', () => {
    const out = join(dir, 'dry');
    const queued = () => spawnSync('squeue', ['-h', '-o', '%i'], { encoding: 'utf8', env: { ...process.env, ...SLURM_ENV } }).stdout.trim();
    const r = sill(args(out, '--scheduler', 'slurm', '--dry-run', '--workers', '3', '--partition', 'sill', '--time', '0:10:00'), { env: SLURM_ENV });
    expect(r.code).toBe(0);
    expect(queued()).toBe('');
    const slurmDir = join(out, '.sill-run', 'slurm');
    expect(listFiles(slurmDir)).toEqual(['analyse.sbatch', 'catalogue.sbatch', 'submit.sh']);
    const submit = readFileSync(join(slurmDir, 'submit.sh'), 'utf8');
    expect(submit).toMatch(/--array=0-2%3 --mem=\d+M /);
    expect(submit).toMatch(/--dependency=afterany:\$\{job_analyse\}/);
    const script = readFileSync(join(slurmDir, 'analyse.sbatch'), 'utf8');
    expect(script).toMatch(/^#SBATCH --partition=sill$/m);
    expect(script).toMatch(/^#SBATCH --time=0:10:00$/m);
    expect(script).toMatch(/^# #SBATCH --account=NAME/m);
    for (const f of ['analyse.sbatch', 'catalogue.sbatch', 'submit.sh']) expect(spawnSync('bash', ['-n', join(slurmDir, f)]).status).toBe(0);
    expect(existsSync(join(out, 'catalogue.csv'))).toBe(false);
    // the written chain runs as it is: submit.sh, then the catalogue appears when the jobs end
    const s = spawnSync('bash', [join(slurmDir, 'submit.sh')], { encoding: 'utf8', env: { ...process.env, ...SLURM_ENV } });
    expect(s.status).toBe(0);
    const t0 = Date.now();
    while (queued() !== '' && Date.now() - t0 < 120_000) spawnSync('sleep', ['0.3']);
    expect(readCatalogue(out)).toMatchObject({ inputs: 3, ok: 3 });
  }, 300_000);
});

/*
 * Second part (one file, so that the one local Slurm is never started by two test files at once):
 * `sill ponds MOSAIC -o DIR --scheduler slurm` end to end against a real single-node Slurm that
 * this file starts and stops (scripts/slurm-local.mjs; group `slurm` of scripts/prerequisites.mjs):
 * pass 1 as a job array, the seam merge after it (afterok), pass 2 as an array, the hierarchy, the
 * rasters as an array. A damaged tile ends the run with exit 1 and one line naming it; the rerun
 * with the same run folder submits only what is missing and writes the same rasters as the
 * in-memory mosaic run (the single-grid method, checked against scikit-image in
 * tests/hydro/reference.test.ts, an outside source). --dry-run only writes the scripts.
 */
describe.skipIf(!runs('slurm'))(`sill ponds --scheduler slurm on a local Slurm${skipNote('slurm')}`, () => {
  let dir: string;
  let startedHere = false;
  beforeAll(async () => {
    startedHere = rig('status').status !== 0;
    const r = rig('start');
    if (r.status !== 0) throw new Error(`the local Slurm did not start: ${r.stderr.trim()}`);
    dir = tempDir('sill-ponds-slurm-');
    await writeMosaic(join(dir, 'tiles'));
  }, 300_000);
  afterAll(() => {
    if (startedHere) rig('stop');
    if (dir) rmSync(dir, { recursive: true, force: true });
  });

  it('a damaged tile: exit 1 naming it; repaired, the rerun submits only what is missing and writes the rasters of the in-memory run', () => {
    const tiles = join(dir, 'tiles'), out = join(dir, 'out'), run = join(dir, 'run'), ref = join(dir, 'ref');
    expect(sill(['ponds', tiles, '-o', ref, '--min-depth', '0.2', '--quiet']).code).toBe(0);
    const restore = damageTile(join(tiles, 'd.tif'), join(dir, 'd.good'));
    const args = ['ponds', tiles, '-o', out, '--min-depth', '0.2', '--scheduler', 'slurm', '--workers', '2', '--run-dir', run];
    const bad = sill(args, { env: SLURM_ENV, timeout: 240_000 });
    expect(bad.code).toBe(1);
    const lines = bad.stderr.trim().split('\n');
    expect(lines).toHaveLength(1);
    expect(lines[0]).toMatch(/^sill: tile [cd] \(stage pass1\) failed: .*d\.tif is truncated or damaged.*run the same command again \(same --run-dir\) to resume$/);
    expect(existsSync(out)).toBe(false);
    const folder = new RunFolder(run);
    expect([0, 1].map((t) => folder.status('pass1', t)?.ok)).toEqual([true, true]);
    // Slurm cancelled the merge (its afterok can never be met) and the engine recorded it so
    expect(folder.status('merge', 0)).toMatchObject({ ok: false, exit: null });
    expect(folder.status('merge', 0)!.error).toMatch(/^Slurm ended the task: CANCELLED/);
    const first = readFileSync(join(run, 'slurm', 'submit.sh'), 'utf8');
    expect(first).toMatch(/--array=0-3%2 /);
    expect(first).toMatch(/--dependency=afterok:\$\{job_pass1\}.* \S+merge\.sbatch/);

    restore();
    const good = sill(args, { env: SLURM_ENV, timeout: 240_000 });
    expect(good.stderr).toMatch(/^sill ponds: .*analysed tile by tile \(as stages of a run folder, --scheduler\); not computed: [^\n]*\n$/);
    expect(good.code).toBe(0);
    expect(good.stdout).toMatch(/\ndepressions +\d+ [^]*\nran on Slurm; the run folder .* is kept\n?$/);
    // only the pass-1 tasks that had failed were submitted again, then every later stage
    const again = readFileSync(join(run, 'slurm', 'submit.sh'), 'utf8');
    expect(again).toMatch(/job_pass1=\$\(sbatch --parsable --array=2-3%2 /);
    expect(JSON.parse(readFileSync(join(run, 'slurm', 'jobs.json'), 'utf8'))).toHaveProperty('rasters');
    sameRasters(out, ref);
  }, 600_000);

  it('--dry-run writes the sbatch scripts (memory per task from the tile size) and submits nothing; submitted by hand, the run then only writes the outputs', () => {
    const run = join(dir, 'dry');
    const queued = () => spawnSync('squeue', ['-h', '-o', '%i'], { encoding: 'utf8', env: { ...process.env, ...SLURM_ENV } }).stdout.trim();
    const r = sill(['ponds', join(dir, 'tiles'), '--min-depth', '0.2', '--run-dir', run, '--scheduler', 'slurm', '--dry-run', '--partition', 'sill', '--time', '0:10:00'], { env: SLURM_ENV });
    expect(r.stderr).toBe('');
    expect(r.code).toBe(0);
    expect(queued()).toBe('');
    const slurmDir = join(run, 'slurm');
    expect(listFiles(slurmDir)).toEqual(['hierarchy.sbatch', 'merge.sbatch', 'pass1.sbatch', 'pass2.sbatch', 'rasters.sbatch', 'submit.sh']);
    const submit = readFileSync(join(slurmDir, 'submit.sh'), 'utf8');
    expect(submit).toMatch(/job_pass1=\$\(sbatch --parsable --array=0-3 --mem=\d+M /);
    for (const [stage, after] of [['merge', 'pass1'], ['pass2', 'merge'], ['hierarchy', 'pass2'], ['rasters', 'hierarchy']]) {
      expect(submit).toMatch(new RegExp(`job_${stage}=.*--dependency=afterok:\\$\\{job_${after}\\}`));
    }
    const script = readFileSync(join(slurmDir, 'pass1.sbatch'), 'utf8');
    expect(script).toMatch(/^#SBATCH --partition=sill$/m);
    expect(script).toMatch(/^#SBATCH --time=0:10:00$/m);
    for (const f of listFiles(slurmDir)) expect(spawnSync('bash', ['-n', join(slurmDir, f)]).status).toBe(0);
    // the written chain runs as it is; then the same command without --dry-run finds every task done and writes the outputs
    const s = spawnSync('bash', [join(slurmDir, 'submit.sh')], { encoding: 'utf8', env: { ...process.env, ...SLURM_ENV } });
    expect(s.status).toBe(0);
    const t0 = Date.now();
    while (queued() !== '' && Date.now() - t0 < 180_000) spawnSync('sleep', ['0.3']);
    const out = join(dir, 'dry-out');
    const w = sill(['ponds', join(dir, 'tiles'), '-o', out, '--min-depth', '0.2', '--run-dir', run, '--scheduler', 'slurm', '--partition', 'sill', '--time', '0:10:00', '--quiet'], { env: SLURM_ENV, timeout: 120_000 });
    expect(w.stderr).toBe('');
    expect(w.code).toBe(0);
    expect(existsSync(join(run, 'slurm', 'jobs.json'))).toBe(false); // sill submitted nothing itself
    expect(sill(['ponds', join(dir, 'tiles'), '-o', join(dir, 'dry-ref'), '--min-depth', '0.2', '--quiet']).code).toBe(0);
    sameRasters(out, join(dir, 'dry-ref'));
  }, 300_000);
});
