/**
 * `sill barriers --samples`: frames of the Müller–Brown potential (Müller & Brown 1979) from the
 * Metropolis chain of bench/lib/metropolis.mjs, through the command line: the report's samples keys,
 * the bootstrap keys, the sparse-bin warning, and bad input refused with one line.
 */
import { describe, it, expect, beforeAll } from 'vitest';
import { writeFileSync, existsSync, readFileSync } from 'node:fs';
import { join } from 'node:path';
import { sill, tempDir, itRejects } from './run.js';
import { runBarriersCommand, type BarriersCliOptions } from '../../src/cli/barriers.js';
import { InputError } from '../../src/errors.js';
import { metropolis } from '../../bench/lib/metropolis.mjs';
import { muellerBrown, mbReference } from '../chem/mb.js';

let dir = '';
const S = 20;
const box = { x: [-1.5, 1.2] as [number, number], y: [-0.5, 2.0] as [number, number] };

beforeAll(() => {
  dir = tempDir('sill-samples-');
  const ch = metropolis({ energy: (x, y) => muellerBrown(x, y) / S, box, start: [-0.55, 1.44], frames: 100000, thin: 10, step: 0.05, seed: 5 });
  const lines = ['# frames of a Metropolis chain on the Müller–Brown potential / 20 kT', 'x y'];
  for (let i = 0; i < ch.data.length; i += 2) lines.push(`${ch.data[i].toFixed(5)} ${ch.data[i + 1].toFixed(5)}`);
  writeFileSync(join(dir, 'frames.txt'), lines.join('\n') + '\n');
  writeFileSync(join(dir, 'negative.txt'), 'x y w\n0 0 1\n1 1 -2\n0.5 0.2 1\n');
  writeFileSync(join(dir, 'grid.txt'), 'x y e\n0 0 1\n1 0 2\n0 1 3\n1 1 1\n');
});

describe('sill barriers --samples', () => {
  it('builds F = −kT ln p, finds the two basins and the saddle, and reports the bootstrap beside each barrier and basin', () => {
    const out = join(dir, 'out');
    const args = ['barriers', '--samples', join(dir, 'frames.txt'), '--bins', '30,30', '--range', '-1.5,1.2,-0.5,2.0', '--units', 'kT', '--cap', '7', '--resamples', '20', '--seed', '3'];
    const r = sill([...args, '-o', out, '--json']);
    expect(r.code).toBe(0);
    const rep = JSON.parse(r.stdout);
    expect(rep.samples).toMatchObject({ frames: 100000, used: 100000, estimator: 'histogram', bins: [30, 30], names: ['x', 'y'], variables: [1, 2], weights: null, minCount: 20 });
    expect(rep.samples.bootstrap).toMatchObject({ blocks: 10, resamples: 20, seed: 3, level: 0.95, radius: 3, framesPerBlock: 10000 });
    expect(rep.samples.range).toEqual([[-1.5, 1.2], [-0.5, 2.0]]);
    // Source: SciPy's saddle of the Müller–Brown potential (fixtures/chem/mueller-brown.json) between the two basins left at 1 kT
    const T = mbReference().stationaryPoints.find((p) => p.kind === 'saddle' && p.x < -0.5)!;
    const inner = rep.transitionStates.filter((t: { binFrames: number }) => t.binFrames >= 20);
    expect(inner).toHaveLength(1);
    expect(Math.hypot(inner[0].refined.x - T.x, inner[0].refined.y - T.y)).toBeLessThan(0.18); // two bins (0.09 × 0.083)
    const row = rep.barriers.find((b: { via: string }) => b.via === inner[0].id);
    expect(row.uncertainty.resamples).toBe(20);
    expect(row.uncertainty.found).toBeGreaterThan(15);
    for (const k of ['forward', 'backward']) {
      const u = row.uncertainty[k];
      expect(u.low).toBeLessThanOrEqual(u.high);
      expect(u.se).toBeGreaterThan(0);
      expect(Math.abs(u.mean - row[k])).toBeLessThan(4 * u.se + 0.1);
    }
    for (const m of rep.minima) expect(m.basin.uncertainty).toMatchObject({ resamples: 20 });
    expect(existsSync(join(out, 'report.json'))).toBe(true);
    expect(JSON.parse(readFileSync(join(out, 'report.json'), 'utf8')).samples.bootstrap.seed).toBe(3);
  }, 60000);

  it('a transition state in a bin with fewer than --min-count frames: one warning line on stderr and samples.lowCount', () => {
    const r = sill(['barriers', '--samples', join(dir, 'frames.txt'), '--bins', '20,20', '--units', 'kT', '--cap', '7', '--resamples', '5', '--min-count', '1000000', '--json']);
    expect(r.code).toBe(0);
    const rep = JSON.parse(r.stdout);
    expect(rep.samples.lowCount.length).toBe(rep.transitionStates.length);
    expect(rep.samples.lowCount.length).toBeGreaterThan(0);
    expect(r.stderr.trim().split('\n')).toHaveLength(1);
    expect(r.stderr).toMatch(/^warning: transition states? T1 \(\d+\).* fewer than 1000000 frames/);
  }, 30000);

  itRejects([
    ['samples without a unit', () => ['barriers', '--samples', join(dir, 'frames.txt'), '--bins', '20,20'], /--samples makes a free energy .* needs an energy unit: add --units/],
    ['three variables', () => ['barriers', '--samples', join(dir, 'frames.txt'), '--bins', '10,10,10', '--units', 'kT'], /--bins with 3 numbers: barriers on 3-variable surfaces is not available/],
    ['negative weight', () => ['barriers', '--samples', join(dir, 'negative.txt'), '--bins', '3,3', '--weights', '3', '--blocks', '2', '--units', 'kT'], /frame 2: the weight -2 \(column 3\) is negative/],
  ], () => dir);

  it('option checks in the command (in process): one line each', async () => {
    const f = join(dir, 'frames.txt'), g = join(dir, 'grid.txt');
    const cases: [string | undefined, Record<string, unknown>, RegExp][] = [
      [undefined, { samples: f, units: 'kT' }, /--samples needs --bins NX,NY/],
      [g, { bins: '10,10' }, /--bins applies to --samples/],
      [g, { samples: f, bins: '10,10', units: 'kT' }, /give either an energy surface .* or --samples/],
      [undefined, { units: 'kT' }, /barriers needs an input/],
      [undefined, { samples: f, bins: '2,20', units: 'kT' }, /--bins must be at least 3/],
      [undefined, { samples: f, bins: '20,20', units: 'kT', weights: '3', logWeights: '4' }, /--weights and --log-weights both name a weight column/],
      [undefined, { samples: f, bins: '20,20', units: 'kT', range: '1,0,0,1' }, /--range: the range of variable 1 must be low,high with low < high/],
      [undefined, { samples: f, bins: '20,20', units: 'kT', periodic: true, period: '6.283185307179586', bandwidth: '1' }, /bandwidth 1 of periodic x is too wide for its period/],
      [undefined, { samples: f, bins: '20,20', units: 'kT', boundary: 'open' }, /--boundary open has no meaning for a surface from samples/],
    ];
    for (const [input, opts, msg] of cases) {
      const err = await runBarriersCommand(input, { quiet: true, boundaryDefault: !opts.boundary, minPersistenceDefault: true, connectivity: '8', ...opts } as BarriersCliOptions).then(() => null, (e) => e);
      expect(err).toBeInstanceOf(InputError);
      expect(err.message).toMatch(msg);
      expect(err.message).not.toContain('\n');
    }
  });
});
