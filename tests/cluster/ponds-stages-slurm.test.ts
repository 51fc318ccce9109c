/**
 * `sill ponds MOSAIC -o DIR --scheduler slurm` end to end against a real single-node Slurm that
 * this file starts and stops (scripts/slurm-local.mjs; group `slurm` of scripts/prerequisites.mjs):
 * pass 1 as a job array, the seam merge after it (afterok), pass 2 as an array, the hierarchy, the
 * rasters as an array. A damaged tile ends the run with exit 1 and one line naming it; the rerun
 * with the same run folder submits only what is missing and writes the same rasters as the
 * in-memory mosaic run (the single-grid method, checked against scikit-image in
 * tests/hydro/reference.test.ts, an outside source). --dry-run only writes the scripts.
 */
import { describe, it, expect, beforeAll, afterAll } from 'vitest';
import { spawnSync } from 'node:child_process';
import { existsSync, readFileSync, rmSync } from 'node:fs';
import { join } from 'node:path';
import { fileURLToPath } from 'node:url';
import { runs, skipNote } from '../prereq.js';
import { listFiles, sill, tempDir } from '../cli/run.js';
import { RunFolder } from '../../src/cluster/run-folder.js';
import { writeMosaic, damageTile, sameRasters } from './mosaic.js';

const RIG = fileURLToPath(new URL('../../scripts/slurm-local.mjs', import.meta.url));
const SLURM_DIR = process.env.SILL_SLURM_DIR || '/tmp/sill-slurm';
const SLURM_ENV = { SLURM_CONF: join(SLURM_DIR, 'slurm.conf'), SILL_SLURM_DIR: SLURM_DIR, SILL_SLURM_POLL: '0.3' };

const rig = (what: string) => spawnSync(process.execPath, [RIG, what], { encoding: 'utf8', env: { ...process.env, ...SLURM_ENV }, timeout: 300_000 });

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
