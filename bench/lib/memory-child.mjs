/**
 * Child process for one peak-memory measurement:
 *   node --expose-gc bench/lib/memory-child.mjs --module <case file> --job <name> --size N --seed S [--quantum Q] [--float64]
 * Generates the terrain, builds the Grid, collects garbage, takes the baseline, runs the
 * job exported as `memoryJobs[name]` by the case module, and prints one JSON line.
 */
import { pathToFileURL } from 'node:url';
import { resolve } from 'node:path';
import { parseArgs } from 'node:util';
import { fractalTerrain } from './terrain.mjs';
import { MemoryProbe } from './memory-probe.mjs';
import { collect, importDist } from './util.mjs';

const { values: a } = parseArgs({
  options: {
    module: { type: 'string' }, job: { type: 'string' },
    size: { type: 'string', default: '4000' }, seed: { type: 'string', default: '17' },
    quantum: { type: 'string', default: '0' },
    float64: { type: 'boolean', default: false },
  },
});
if (typeof globalThis.gc !== 'function') throw new Error('run the memory child with node --expose-gc');
const size = Number(a.size);
const mod = await import(pathToFileURL(resolve(a.module)).href);
const job = mod.memoryJobs?.[a.job];
if (!job) throw new Error(`${a.module} has no memory job '${a.job}'`);
const { Grid, gridValues } = await importDist('surface/grid.js');

const probe = new MemoryProbe();
await probe.start();
const f32 = fractalTerrain(size, { seed: Number(a.seed), quantum: Number(a.quantum) });
let values = a.float64 ? Float64Array.from(f32) : f32;
// on shared memory, as the loaders give them (a worker thread can then read them without a copy)
if (gridValues) { const v = gridValues(values.length, a.float64); v.set(values); values = v; }
const grid = new Grid({ width: size, height: size, values });
// warm the code paths on a small grid so compilation is not charged to the job
await job({ grid: new Grid({ width: 64, height: 64, values: fractalTerrain(64, { seed: 3 }) }), probe: { mark() {} } });
collect();
await new Promise((res) => setTimeout(res, 20));
collect();
probe.baseline();
let keep = await job({ grid, probe });
probe.mark('end');
const mem = await probe.stop();
keep = null;
process.stdout.write(JSON.stringify({ cells: size * size, inputBytes: values.byteLength, ...mem }) + '\n');
