/**
 * Block bootstrap of the barriers and basin free energies of a free-energy surface built from
 * samples (src/chem/samples.ts).
 *
 * The frame series is cut into B consecutive blocks (consecutive frames of a simulation are
 * correlated; blocks much longer than the correlation time are nearly independent). A resample
 * draws B blocks with replacement (seeded, so a run is repeatable), builds the density of those
 * frames from the kept block grids, and runs the same analysis on its free-energy surface (without
 * minimum-energy paths). Each minimum of the full-series analysis is matched to a minimum of the
 * resample by position: pairs closer than MATCH_RADIUS bins (the distance in bin widths, across a
 * period on periodic axes) are matched one to one, the closest pair first. A barrier is found in a
 * resample when both its minima are matched and the resample has a barrier between the matched
 * minima — the one whose transition state lies nearest the original transition state when there are
 * several (transition states on a flat ridge wander along it between resamples while the barrier
 * stays put, so they are not matched by a radius). A basin is found when its minimum is matched.
 * What is not found is counted (`found` of `resamples`), never filled in.
 *
 * For each value: the mean and standard deviation of the resampled values (the bootstrap standard
 * error) and the 2.5 and 97.5 percentiles (the percentile interval at 95 %; linear interpolation
 * between order statistics).
 */
import { InputError } from '../errors.js';
import { barriers, type BarriersOptions, type BarriersResult, type StationaryRecord } from './barriers.js';
import { freeEnergyGrid, type SampleDensity } from './samples.js';

/** Default number of bootstrap resamples. */
export const DEFAULT_RESAMPLES = 200;
export const MAX_RESAMPLES = 100000;
/** Default seed of the resampling. */
export const DEFAULT_SEED = 1;
/** Minima closer than this many bin widths are one state across resamples. */
export const MATCH_RADIUS = 3;
/** Level of the percentile interval. */
export const INTERVAL_LEVEL = 0.95;

export interface Spread {
  mean: number;
  /** Standard deviation of the resampled values (n − 1): the bootstrap standard error. */
  se: number;
  /** Percentile interval at INTERVAL_LEVEL. */
  low: number;
  high: number;
}

export interface BarrierUncertainty {
  /** Resamples in which the barrier was found. */
  found: number;
  forward: Spread | null;
  backward: Spread | null;
}

export interface BasinUncertainty {
  found: number;
  /** Free energy of the basin relative to the lowest basin of the same resample. */
  relativeFreeEnergy: Spread | null;
}

export interface BootstrapResult {
  resamples: number;
  seed: number;
  blocks: number;
  level: number;
  radius: number;
  /** One per row of `base.barriers`, one per minimum of `base.minima`. */
  barriers: BarrierUncertainty[];
  basins: BasinUncertainty[];
  /** Resamples in which each transition state's barrier(s) were found, one per `base.transitionStates`. */
  transitionStatesFound: number[];
  /** Resamples whose analysis refused (e.g. no minimum left): every state counts as missing there. */
  failed: number;
}

export interface BootstrapOptions {
  resamples?: number;
  seed?: number;
}

/** mulberry32: a small seeded 32-bit generator of uniform [0, 1). */
function random(seed: number): () => number {
  let s = seed >>> 0;
  return () => {
    s = (s + 0x6d2b79f5) >>> 0;
    let t = s;
    t = Math.imul(t ^ (t >>> 15), t | 1);
    t ^= t + Math.imul(t ^ (t >>> 7), t | 61);
    return ((t ^ (t >>> 14)) >>> 0) / 4294967296;
  };
}

/** a − b along `axis` in bin widths, the shorter way round on a periodic axis. */
function binDelta(d: SampleDensity, a: number, b: number, axis: number): number {
  let t = (a - b) / d.width[axis];
  const n = d.periods[axis] === null ? 0 : d.bins[axis];
  if (n) t -= n * Math.round(t / n);
  return t;
}

/** Match `from` states to `to` states by position (bin units, periodic axes wrapped): index into `to` or -1. */
export function matchStates(from: readonly StationaryRecord[], to: readonly StationaryRecord[], d: SampleDensity, radius = MATCH_RADIUS): Int32Array {
  const pairs: [number, number, number][] = [];
  const delta = (a: number, b: number, axis: number) => binDelta(d, a, b, axis);
  for (let i = 0; i < from.length; i++) {
    for (let j = 0; j < to.length; j++) {
      const dx = delta(from[i].bestX, to[j].bestX, 0), dy = delta(from[i].bestY, to[j].bestY, 1);
      const r = Math.hypot(dx, dy);
      if (r <= radius) pairs.push([r, i, j]);
    }
  }
  pairs.sort((p, q) => p[0] - q[0] || p[1] - q[1] || p[2] - q[2]);
  const out = new Int32Array(from.length).fill(-1);
  const taken = new Uint8Array(to.length);
  for (const [, i, j] of pairs) {
    if (out[i] >= 0 || taken[j]) continue;
    out[i] = j;
    taken[j] = 1;
  }
  return out;
}

/** Mean, standard deviation (n − 1) and percentile interval of `v[0..n)`; null below 2 values. */
export function spread(v: Float64Array, n: number, level = INTERVAL_LEVEL): Spread | null {
  if (n < 2) return null;
  const s = v.slice(0, n).sort();
  let mean = 0;
  for (let i = 0; i < n; i++) mean += s[i];
  mean /= n;
  let ss = 0;
  for (let i = 0; i < n; i++) ss += (s[i] - mean) ** 2;
  const q = (p: number) => {
    const h = p * (n - 1), i = Math.floor(h);
    return i + 1 < n ? s[i] + (h - i) * (s[i + 1] - s[i]) : s[n - 1];
  };
  return { mean, se: Math.sqrt(ss / (n - 1)), low: q((1 - level) / 2), high: q((1 + level) / 2) };
}

/**
 * The block bootstrap of `base` (the analysis of the full series, on the 2-D surface of `d` at kT
 * in the input unit, with options `opts`).
 */
export function bootstrapBarriers(d: SampleDensity, kT: number, base: BarriersResult, opts: BarriersOptions, boot: BootstrapOptions = {}): BootstrapResult {
  const R = boot.resamples ?? DEFAULT_RESAMPLES;
  const seed = boot.seed ?? DEFAULT_SEED;
  if (!Number.isInteger(R) || R < 2 || R > MAX_RESAMPLES) throw new InputError(`resamples must be a whole number from 2 to ${MAX_RESAMPLES}, got ${R}`);
  if (!Number.isInteger(seed) || seed < 0 || seed > 0xffffffff) throw new InputError(`the seed must be a whole number from 0 to 4294967295, got ${seed}`);
  if (d.dims !== 2) throw new InputError('the bootstrap of barriers needs a 2-variable surface');
  const B = d.blocks;
  const rand = random(seed);
  const mult = new Float64Array(B);
  const nb = base.barriers.length, nm = base.minima.length;
  const fwd = Array.from({ length: nb }, () => new Float64Array(R));
  const bwd = Array.from({ length: nb }, () => new Float64Array(R));
  const nF = new Int32Array(nb), nBk = new Int32Array(nb), found = new Int32Array(nb);
  const rel = Array.from({ length: nm }, () => new Float64Array(R));
  const nRel = new Int32Array(nm);
  const tsFound = new Array<number>(base.transitionStates.length).fill(0);
  const minIndex = new Map(base.minima.map((m, i) => [m.id, i]));
  const tsIndex = new Map(base.transitionStates.map((t, i) => [t.id, i]));
  const delta = (a: number, b: number, axis: number) => binDelta(d, a, b, axis);
  let failed = 0;
  for (let r = 0; r < R; r++) {
    mult.fill(0);
    for (let b = 0; b < B; b++) mult[Math.floor(rand() * B)]++;
    let res: BarriersResult;
    try {
      res = barriers(freeEnergyGrid(d, kT, mult), { ...opts, maxPaths: 0, threads: 1 });
    } catch (e) {
      if (e instanceof InputError) { failed++; continue; }
      throw e;
    }
    const mm = matchStates(base.minima, res.minima, d);
    let Fmin = Infinity;
    for (const m of res.minima) if (m.basin.freeEnergy !== null && m.basin.freeEnergy < Fmin) Fmin = m.basin.freeEnergy;
    for (let i = 0; i < nm; i++) {
      const F = mm[i] >= 0 ? res.minima[mm[i]].basin.freeEnergy : null;
      if (F !== null && Number.isFinite(Fmin)) rel[i][nRel[i]++] = F - Fmin;
    }
    const resTs = new Map(res.transitionStates.map((t) => [t.id, t]));
    const matchedId = (id: string): string | null => {
      if (id === 'outside') return 'outside';
      const i = minIndex.get(id);
      return i === undefined || mm[i] < 0 ? null : res.minima[mm[i]].id;
    };
    for (let k = 0; k < nb; k++) {
      const row = base.barriers[k];
      const from = matchedId(row.from), to = matchedId(row.to);
      if (from === null || to === null) continue;
      // the resample's barriers between the matched minima; the one whose transition state is nearest the original's
      const ts = base.transitionStates[tsIndex.get(row.via)!];
      let best = -1, bestR = Infinity, swapped = false;
      for (let q = 0; q < res.barriers.length; q++) {
        const o = res.barriers[q];
        const same = o.from === from && o.to === to, reverse = o.from === to && o.to === from;
        if (!same && !reverse) continue;
        const t = resTs.get(o.via)!;
        const r = Math.hypot(delta(ts.bestX, t.bestX, 0), delta(ts.bestY, t.bestY, 1));
        if (r < bestR) { bestR = r; best = q; swapped = !same; }
      }
      if (best < 0) continue;
      const o = res.barriers[best];
      const [f, b] = swapped ? [o.backward, o.forward] : [o.forward, o.backward];
      found[k]++;
      tsFound[tsIndex.get(row.via)!]++;
      if (f !== null) fwd[k][nF[k]++] = f;
      if (b !== null) bwd[k][nBk[k]++] = b;
    }
  }
  return {
    resamples: R, seed, blocks: B, level: INTERVAL_LEVEL, radius: MATCH_RADIUS,
    barriers: Array.from({ length: nb }, (_, k) => ({ found: found[k], forward: spread(fwd[k], nF[k]), backward: spread(bwd[k], nBk[k]) })),
    basins: Array.from({ length: nm }, (_, i) => ({ found: nRel[i], relativeFreeEnergy: spread(rel[i], nRel[i]) })),
    transitionStatesFound: tsFound,
    failed,
  };
}
