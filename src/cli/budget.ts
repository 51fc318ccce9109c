/**
 * Memory a run will need, estimated before the heavy work and refused (exit 2) when it is more than
 * the machine has. Two checks: on the cells, as soon as the input is loaded; on the features
 * (critical points, depressions), as soon as the analysis has counted them and before their
 * records and output files are built — the part that grows fastest on rough surfaces.
 *
 * The figures are peak resident memory measured with `/usr/bin/time -f %M` on the command line
 * (SILL_NO_SUPERVISOR=1, Node 20, float32 white-noise grids of 1000² and 1500² cells, which are
 * the worst case for features per cell; the per-feature cost is the difference between the two
 * sizes divided by the difference in features), and docs/performance.md for the per-cell cost of
 * the analyses on smooth terrain. See docs/performance.md, "Memory budget".
 */
import { totalmem } from 'node:os';
import { getHeapStatistics } from 'node:v8';
import { InputError } from '../errors.js';

export type BudgetCommand = 'survey' | 'ponds' | 'runoff' | 'barriers';

/** Node itself, the modules and the small records: resident before any grid-sized work (measured: 55–65 MB). */
const BASE_BYTES = 80 * 2 ** 20;

/**
 * Bytes per cell of the analysis (input values included). survey 26.7 and ponds 33.5 (with the
 * Euler self-check) from docs/performance.md, plus 4 for ponds' catchment raster (-o); runoff 39.8 from the same page (library, 4000²);
 * barriers 28, measured on a 2000² smooth grid (173 MB peak).
 */
export const BYTES_PER_CELL: Record<BudgetCommand, number> = { survey: 27, ponds: 38, runoff: 40, barriers: 28 };

/**
 * Bytes per feature with each kind of output, measured on noise as above after the results became
 * typed columns with streamed outputs (2026-12-02, main after the columns work): the difference of
 * the peaks at 1500² and 1000² divided by the difference in features — which also carries the
 * 1.25 M extra cells, so the figures lean high — then a quarter added as a margin:
 * survey per critical point 92 B with --json, 126 B with -o; ponds per depression 377 B with
 * --json, 984 B with -o (outlines and all files); runoff per depression 616 B with --json, 573 B
 * with -o (taken as 616). A run with neither builds no more than --json, so it takes that figure.
 * (Before the columns the same runs measured 1.24 / 1.75 kB, 1.84 / 5.7 kB and 3.1 kB.)
 */
const BYTES_PER_FEATURE: Record<Exclude<BudgetCommand, 'barriers'>, { json: number; out: number }> = {
  survey: { json: 120, out: 160 },
  ponds: { json: 480, out: 1250 },
  runoff: { json: 780, out: 780 },
};

const FEATURE_NAMES: Record<Exclude<BudgetCommand, 'barriers'>, string> = {
  survey: 'critical points', ponds: 'depressions', runoff: 'depressions',
};

const HOW: Record<BudgetCommand, string> = {
  survey: 'keep fewer features with --min-persistence, or cut the surface into tiles',
  ponds: 'keep fewer depressions with --min-depth, --min-area or --min-persistence, or cut the DEM into tiles',
  runoff: 'cut the DEM into tiles, or resample it to a coarser cell size',
  barriers: 'resample the surface to a coarser step or cut it into windows',
};

function gib(bytes: number): string {
  return bytes >= 2 ** 30 ? `${(bytes / 2 ** 30).toFixed(1)} GiB` : `${Math.ceil(bytes / 2 ** 20)} MiB`;
}

/** 1 234 567: digits in groups of three, as docs/performance.md writes them. */
function count(n: number): string {
  return String(Math.round(n)).replace(/\B(?=(\d{3})+(?!\d))/g, ' ');
}

/** What the run has: the machine's memory (SILL_MEMORY_BYTES overrides it, for tests). */
export function machineBytes(): number {
  const asked = Number(process.env.SILL_MEMORY_BYTES);
  return Number.isFinite(asked) && asked > 0 ? asked : totalmem();
}

/**
 * Before the work: refuse when the cells alone need more than the machine has. `how` replaces the
 * advice at the end of the line (a mosaic says that it is assembled in memory).
 */
export function checkCellBudget(command: BudgetCommand, cells: number, source: string, how?: string): void {
  const need = BASE_BYTES + cells * BYTES_PER_CELL[command];
  const have = machineBytes();
  if (need > have) {
    throw new InputError(
      `${source}: ${command} on ${count(cells)} cells needs about ${gib(need)} of memory (${BYTES_PER_CELL[command]} bytes a cell) ` +
        `but this machine has ${gib(have)}; ${how ?? `cut the ${command === 'barriers' || command === 'survey' ? 'surface' : 'DEM'} into tiles or resample it to a coarser cell size`}`,
    );
  }
}

/**
 * After the analysis has counted the features: refuse when building their records and outputs
 * would need more memory than the machine has, or more JavaScript heap than the process may use.
 * `output` is what the run writes: files (-o), JSON on stdout, or only the summary.
 */
export function featureBudget(command: Exclude<BudgetCommand, 'barriers'>, cells: number, output: 'out' | 'json' | 'none', source: string): (features: number) => void {
  return (features: number) => {
    const perFeature = BYTES_PER_FEATURE[command][output === 'out' ? 'out' : 'json'];
    const featureBytes = features * perFeature;
    const need = BASE_BYTES + cells * BYTES_PER_CELL[command] + featureBytes;
    const have = machineBytes();
    const heap = getHeapStatistics().heap_size_limit;
    if (need <= have && featureBytes <= heap) return;
    const limit = need > have ? `this machine has ${gib(have)}` : `the JavaScript heap may grow to ${gib(heap)}`;
    throw new InputError(
      `${source}: ${count(features)} ${FEATURE_NAMES[command]} on ${count(cells)} cells need about ${gib(need)} of memory ` +
        `for their records and ${output === 'out' ? 'files' : output === 'json' ? 'JSON' : 'summary'} (about ${(perFeature / 1000).toFixed(1)} kB each) but ${limit}; ${HOW[command]}`,
    );
  };
}
