/**
 * Free energies from raw samples: the per-frame values of two or three variables (collective
 * variables of a simulation), optionally weighted, binned on a regular grid as a probability density
 * p — by a histogram or a Gaussian kernel density — and turned into F = −kT ln p, shifted so that its
 * lowest value is 0. Bins no frame reaches are masked (NaN), never given a made-up high value.
 *
 *  - The frames stream through in chunks (two passes over the file: the first finds the number of
 *    frames, the ranges and the largest log-weight, the second bins); nothing per frame is kept.
 *  - The series is cut into `blocks` consecutive blocks of (nearly) equal length and each block's
 *    binned mass is kept apart, so a block bootstrap (src/chem/bootstrap.ts) resamples densities by
 *    adding block grids — without reading the frames again.
 *  - Periodic variables (angles) are wrapped into one period; on a periodic axis the kernel is the
 *    Gaussian summed over the periodic images (a wrapped Gaussian, truncated like the plain one).
 *
 * Histogram: p = Σ w over the frames in a bin / (Σ w · bin volume), the normalisation of a density
 * histogram (frames outside a given range are left out of both sums, and counted). Kernel density:
 * p(g) = Σᵢ wᵢ Πₐ φ((gₐ − xᵢₐ)/σₐ)/σₐ / Σ w at the bin centres g, φ the standard normal density,
 * σ the bandwidth of each axis in the variable's unit, each kernel cut at KDE_CUTOFF bandwidths, the
 * sums over every frame (a frame outside a given range still reaches into it); a bin centre no
 * frame's kernel reaches is masked.
 */
import { InputError } from '../errors.js';
import { Grid, gridValues } from '../surface/grid.js';
import { Grid3 } from '../surface/grid3.js';
import { readFrames, type FrameChunk, type FrameSourceInfo } from '../io/frames.js';

/** Kernels are cut at this many bandwidths (the Gaussian there is e^−12.5 ≈ 4·10⁻⁶ of its peak). */
export const KDE_CUTOFF = 5;
/** Default number of blocks of the block bootstrap. */
export const DEFAULT_BLOCKS = 10;
/** Most blocks: each keeps a grid of its own. */
export const MAX_BLOCKS = 1000;
/** Most grid values kept (bins × (blocks + 1)): 400 MB of float64. */
export const MAX_SAMPLE_VALUES = 50_000_000;
/** Bins per axis: at least 3 (a stationary point needs neighbours on both sides), at most 10 000. */
export const BIN_LIMITS: [number, number] = [3, 10000];

export interface SampleOptions {
  /** Bins along each variable: 2 or 3 numbers (this sets the number of variables). */
  bins: readonly number[];
  /** 1-based columns of the variables; default 1, 2 (, 3). */
  variables?: readonly number[];
  /** 1-based column of per-frame weights (≥ 0), e.g. from a reweighted biased run. */
  weights?: number;
  /** 1-based column of per-frame log-weights ln w (for large biases: w = exp(bias/kT) overflows). */
  logWeights?: number;
  /** Which axes are periodic; default none. */
  periodic?: readonly boolean[];
  /** Period of each periodic axis (null: the span of its range, else 2π or 360 from the data). */
  period?: readonly (number | null)[];
  /** Range [lo, hi] of each axis (null: from the data; a periodic axis: one period). */
  range?: readonly ([number, number] | null)[];
  /** Kernel bandwidth per axis (variable units): a Gaussian kernel density instead of the histogram. */
  bandwidth?: readonly number[] | null;
  /** Blocks for the block bootstrap; default 10. */
  blocks?: number;
}

export interface SampleDensity {
  dims: 2 | 3;
  estimator: 'histogram' | 'kde';
  bins: number[];
  /** Lower and upper edge of each axis' range, bin width, and period (null: not periodic). */
  lo: number[];
  hi: number[];
  width: number[];
  periods: (number | null)[];
  bandwidth: number[] | null;
  /** Frames read, frames inside the range, frames outside a given range (left out of a histogram; a kernel density keeps their tails). */
  frames: number;
  used: number;
  outside: number;
  weighted: boolean;
  /** Sum of weights of the binned frames (relative to the largest weight with log-weights). */
  totalWeight: number;
  /** Kish's effective number of frames (Σw)²/Σw²: the frames' worth of the weights. */
  effectiveFrames: number;
  blocks: number;
  /** Weighted mass per block and bin (`blocks × cells`): Σw in the bin (histogram) or Σw·kernel (density). */
  blockMass: Float64Array;
  /** Σw of the binned frames per block. */
  blockWeight: Float64Array;
  /** Frames per block (binned ones). */
  blockFrames: Float64Array;
  /** Frames (unweighted) whose position falls in each bin. */
  counts: Float64Array;
  /** Where the ranges and periods came from (notes for the report). */
  notes: string[];
  source: FrameSourceInfo | null;
}

/** A source of frames: calls `onChunk` for every chunk, in order. */
export type FrameFeeder = (columns: readonly number[], onChunk: (c: FrameChunk) => void) => Promise<FrameSourceInfo | null>;

/** Frames held in memory, `fields` values per frame (frame-major), as a FrameFeeder. */
export function framesInMemory(data: Float64Array, fields: number): FrameFeeder {
  return async (columns, onChunk) => {
    const n = Math.floor(data.length / fields), k = columns.length, chunk = 65536;
    const out = new Float64Array(chunk * k);
    for (let start = 0; start < n; start += chunk) {
      const count = Math.min(chunk, n - start);
      for (let i = 0; i < count; i++) {
        for (let j = 0; j < k; j++) {
          const v = data[(start + i) * fields + columns[j] - 1];
          if (!Number.isFinite(v)) throw new InputError(`frame ${start + i + 1}, column ${columns[j]}: ${v} is not a finite number; every frame needs finite values`);
          out[i * k + j] = v;
        }
      }
      onChunk({ start, frames: count, data: out.subarray(0, count * k) });
    }
    return null;
  };
}

/** The frames of a text or `.npy` file as a FrameFeeder. */
export function framesFromFile(path: string): FrameFeeder {
  return (columns, onChunk) => readFrames(path, columns, onChunk);
}

const AXIS = ['x', 'y', 'z'];
const TWO_PI = 2 * Math.PI;

/** Check the options that do not need the data. */
function checkOptions(o: SampleOptions): { dims: 2 | 3; vars: number[]; blocks: number } {
  const dims = o.bins?.length;
  if (dims !== 2 && dims !== 3) throw new InputError(`bins must give 2 or 3 numbers (one per variable), got ${JSON.stringify(o.bins)}`);
  for (const b of o.bins) {
    if (!Number.isInteger(b) || b < BIN_LIMITS[0] || b > BIN_LIMITS[1]) {
      throw new InputError(`bins must be whole numbers from ${BIN_LIMITS[0]} to ${BIN_LIMITS[1]} per variable, got ${o.bins.join(',')}`);
    }
  }
  const vars = o.variables ? [...o.variables] : Array.from({ length: dims }, (_, i) => i + 1);
  if (vars.length !== dims || vars.some((c) => !Number.isInteger(c) || c < 1) || new Set(vars).size !== dims) {
    throw new InputError(`variables must be ${dims} different column numbers from 1 up (as many as --bins has numbers), got ${vars.join(',')}`);
  }
  if (o.weights !== undefined && o.logWeights !== undefined) throw new InputError('give weights or log-weights, not both');
  const wc = o.weights ?? o.logWeights;
  if (wc !== undefined && (!Number.isInteger(wc) || wc < 1)) throw new InputError(`the weight column must be a whole number from 1 up, got ${wc}`);
  if (wc !== undefined && vars.includes(wc)) throw new InputError(`column ${wc} is both a variable and the weight column; give different columns`);
  const blocks = o.blocks ?? DEFAULT_BLOCKS;
  if (!Number.isInteger(blocks) || blocks < 2 || blocks > MAX_BLOCKS) throw new InputError(`blocks must be a whole number from 2 to ${MAX_BLOCKS}, got ${blocks}`);
  const cells = o.bins.reduce((a, b) => a * b, 1);
  if (cells * (blocks + 1) > MAX_SAMPLE_VALUES) {
    throw new InputError(`${o.bins.join('×')} bins with ${blocks} blocks keep ${cells * (blocks + 1)} values, more than the limit of ${MAX_SAMPLE_VALUES}; use fewer bins or blocks`);
  }
  for (const [name, arr] of [['periodic', o.periodic], ['period', o.period], ['range', o.range], ['bandwidth', o.bandwidth]] as const) {
    if (arr && arr.length !== dims) throw new InputError(`${name} must give one entry per variable (${dims}), got ${arr.length}`);
  }
  if (o.bandwidth) {
    for (const s of o.bandwidth) if (!(s > 0) || !Number.isFinite(s)) throw new InputError(`the bandwidth must be positive and finite on every axis, got ${o.bandwidth.join(',')}`);
  }
  for (let a = 0; a < dims; a++) {
    const p = o.period?.[a];
    if (p !== null && p !== undefined && (!(p > 0) || !Number.isFinite(p))) throw new InputError(`the period of ${AXIS[a]} must be positive and finite, got ${p}`);
    const r = o.range?.[a];
    if (r && !(Number.isFinite(r[0]) && Number.isFinite(r[1]) && r[1] > r[0])) throw new InputError(`the range of ${AXIS[a]} must be two finite numbers, low < high, got ${r.join(',')}`);
  }
  return { dims, vars, blocks };
}

/**
 * Bin the frames of `feed` into a SampleDensity (two passes over the frames). InputError for
 * bad options or frames: each message names the frame or line and the fix.
 */
export async function sampleDensity(feed: FrameFeeder, o: SampleOptions, sourceName = 'samples'): Promise<SampleDensity> {
  const { dims, vars, blocks } = checkOptions(o);
  const wcol = o.weights ?? o.logWeights;
  const logW = o.logWeights !== undefined;
  const cols = wcol === undefined ? vars : [...vars, wcol];
  const k = cols.length;

  // pass 1: frames, data ranges, largest log-weight; weights checked
  let frames = 0, maxLw = -Infinity;
  const min = new Array<number>(dims).fill(Infinity), max = new Array<number>(dims).fill(-Infinity);
  const source = await feed(cols, (c) => {
    const d = c.data;
    for (let i = 0; i < c.frames; i++) {
      for (let a = 0; a < dims; a++) {
        const v = d[i * k + a];
        if (v < min[a]) min[a] = v;
        if (v > max[a]) max[a] = v;
      }
      if (wcol !== undefined) {
        const w = d[i * k + dims];
        if (!logW && !(w >= 0)) throw new InputError(`${sourceName} frame ${c.start + i + 1}: the weight ${w} (column ${wcol}) is negative; weights must be ≥ 0 (for log-weights use the log-weight column option)`);
        if (logW && w > maxLw) maxLw = w;
      }
    }
    frames += c.frames;
  });
  if (frames < blocks) throw new InputError(`${sourceName} has ${frames} frame${frames === 1 ? '' : 's'}, fewer than the ${blocks} blocks of the bootstrap; give more frames or fewer blocks`);

  // the axes: range, bin width, period
  const notes: string[] = [];
  const lo: number[] = [], hi: number[] = [], width: number[] = [], periods: (number | null)[] = [];
  for (let a = 0; a < dims; a++) {
    const n = o.bins[a];
    const given = o.range?.[a] ?? null;
    if (o.periodic?.[a]) {
      let P = o.period?.[a] ?? null;
      if (P === null && given) P = given[1] - given[0];
      if (P === null) {
        P = Math.max(Math.abs(min[a]), Math.abs(max[a])) <= TWO_PI * (1 + 1e-9) ? TWO_PI : 360;
        notes.push(`${AXIS[a]} is periodic with period ${P === 360 ? '360' : '2π'} (from the values; set it with the period option)`);
      }
      let l: number;
      if (given) {
        if (Math.abs(given[1] - given[0] - P) > 1e-9 * P) throw new InputError(`the range of periodic ${AXIS[a]} spans ${given[1] - given[0]}, not one period (${P}); give a range of exactly one period`);
        l = given[0];
      } else if (min[a] >= -P / 2 * (1 + 1e-12) && max[a] <= P / 2 * (1 + 1e-12)) {
        l = -P / 2;
      } else if (min[a] >= 0 && max[a] <= P * (1 + 1e-12)) {
        l = 0;
      } else {
        throw new InputError(`periodic ${AXIS[a]} has values from ${min[a]} to ${max[a]}, in neither [−P/2, P/2] nor [0, P] for the period ${P}; give its range (one period) explicitly`);
      }
      lo.push(l);
      hi.push(l + P);
      width.push(P / n);
      periods.push(P);
    } else {
      const l = given ? given[0] : min[a], h = given ? given[1] : max[a];
      if (!(h > l)) throw new InputError(`every frame has the same ${AXIS[a]} (${l}); give a range for it, or leave the variable out`);
      lo.push(l);
      hi.push(h);
      width.push((h - l) / n);
      periods.push(null);
    }
  }

  const bw = o.bandwidth ? [...o.bandwidth] : null;
  if (bw) {
    for (let a = 0; a < dims; a++) {
      const P = periods[a];
      if (P !== null && 2 * (KDE_CUTOFF * bw[a] + width[a]) > P) {
        throw new InputError(`the bandwidth ${bw[a]} of periodic ${AXIS[a]} is too wide for its period ${P}: a kernel cut at ${KDE_CUTOFF} bandwidths must fit in half a period; use a bandwidth below ${((P / 2 - width[a]) / KDE_CUTOFF).toPrecision(3)}`);
      }
    }
  }

  // pass 2: bin every frame into its block's grid
  const cells = o.bins.reduce((s, b) => s * b, 1);
  const blockMass = new Float64Array(blocks * cells);
  const blockWeight = new Float64Array(blocks);
  const blockFrames = new Float64Array(blocks);
  const counts = new Float64Array(cells);
  const bins = [...o.bins];
  const stride = [1, bins[0], bins[0] * bins[1]];
  let used = 0, outside = 0, sumW = 0, sumW2 = 0;
  // kernel scratch: window indices and 1-D kernel values per axis
  const win = bw ? bw.map((s, a) => 2 * Math.ceil((KDE_CUTOFF * s) / width[a]) + 3) : [];
  const kIdx = win.map((m) => new Int32Array(m));
  const kVal = win.map((m) => new Float64Array(m));
  const kLen = new Int32Array(dims);
  const norm = bw ? bw.map((s) => 1 / (s * Math.sqrt(TWO_PI))) : [];
  const pos = new Float64Array(dims);
  let seen = 0;
  await feed(cols, (c) => {
    const d = c.data;
    for (let i = 0; i < c.frames; i++) {
      const frame = c.start + i;
      const block = Math.floor((frame * blocks) / frames);
      let cell = 0, inside = true;
      for (let a = 0; a < dims; a++) {
        let t = (d[i * k + a] - lo[a]) / width[a];
        const n = bins[a];
        let b: number;
        if (periods[a] !== null) {
          t -= n * Math.floor(t / n);
          b = Math.floor(t);
          if (b >= n) { b = 0; t = 0; }
        } else {
          if (!(t >= 0 && t <= n)) inside = false;
          b = Math.min(Math.floor(t), n - 1);
        }
        pos[a] = t; // position in bin units from the low edge (wrapped)
        cell += b * stride[a];
      }
      // a frame outside the range: left out of a histogram; its kernel still reaches into the range
      if (!inside) {
        outside++;
        if (!bw) continue;
      }
      let w = 1;
      if (wcol !== undefined) w = logW ? Math.exp(d[i * k + dims] - maxLw) : d[i * k + dims];
      if (inside) {
        used++;
        counts[cell]++;
      }
      sumW += w;
      sumW2 += w * w;
      blockWeight[block] += w;
      blockFrames[block]++;
      if (w === 0) continue;
      const base = block * cells;
      if (!bw) {
        blockMass[base + cell] += w;
        continue;
      }
      // kernel: 1-D weights on each axis within the cutoff, then their outer product
      for (let a = 0; a < dims; a++) {
        const n = bins[a], h = width[a], s = bw[a], t = pos[a];
        const reach = (KDE_CUTOFF * s) / h;
        const g0 = Math.ceil(t - reach - 0.5), g1 = Math.floor(t + reach - 0.5);
        let m = 0;
        for (let g = g0; g <= g1; g++) {
          let gi = g;
          if (periods[a] !== null) gi = ((g % n) + n) % n;
          else if (g < 0 || g >= n) continue;
          const z = ((g + 0.5 - t) * h) / s;
          kIdx[a][m] = gi * stride[a];
          kVal[a][m++] = norm[a] * Math.exp(-0.5 * z * z);
        }
        kLen[a] = m;
      }
      if (dims === 2) {
        for (let q = 0; q < kLen[1]; q++) {
          const wy = w * kVal[1][q], oy = base + kIdx[1][q];
          for (let p = 0; p < kLen[0]; p++) blockMass[oy + kIdx[0][p]] += wy * kVal[0][p];
        }
      } else {
        for (let r = 0; r < kLen[2]; r++) {
          const wz = w * kVal[2][r], oz = base + kIdx[2][r];
          for (let q = 0; q < kLen[1]; q++) {
            const wy = wz * kVal[1][q], oy = oz + kIdx[1][q];
            for (let p = 0; p < kLen[0]; p++) blockMass[oy + kIdx[0][p]] += wy * kVal[0][p];
          }
        }
      }
    }
    seen += c.frames;
  });
  if (seen !== frames) throw new Error(`the frames changed between the two passes (${frames}, then ${seen})`);
  if (!(sumW > 0)) {
    throw new InputError(used === 0
      ? `no frame of ${sourceName} lies inside the range given; widen the range or leave it out`
      : `every binned frame of ${sourceName} has weight 0; check the weight column`);
  }
  for (let b = 0; b < blocks; b++) {
    if (blockWeight[b] === 0) throw new InputError(`block ${b + 1} of ${blocks} holds no frame with weight inside the range; use fewer blocks, or widen the range`);
  }
  if (outside > 0) notes.push(`${outside} frame${outside === 1 ? '' : 's'} outside the range ${bw ? 'reach into it only by their kernels' : 'left out'}`);
  return {
    dims, estimator: bw ? 'kde' : 'histogram', bins, lo, hi, width, periods, bandwidth: bw,
    frames, used, outside, weighted: wcol !== undefined, totalWeight: sumW, effectiveFrames: (sumW * sumW) / sumW2,
    blocks, blockMass, blockWeight, blockFrames, counts, notes, source,
  };
}

/**
 * The probability density p on the bins (at the bin centres for the kernel density; 0 where no
 * frame's mass is). `multiplicity`: how many times each block is taken (a bootstrap resample);
 * default once each (the full series).
 */
export function densityValues(d: SampleDensity, multiplicity?: ArrayLike<number>, out?: Float64Array): Float64Array {
  const cells = d.counts.length;
  const p = out ?? new Float64Array(cells);
  p.fill(0);
  let W = 0;
  for (let b = 0; b < d.blocks; b++) {
    const m = multiplicity ? multiplicity[b] : 1;
    if (m === 0) continue;
    W += m * d.blockWeight[b];
    const base = b * cells;
    for (let c = 0; c < cells; c++) p[c] += m * d.blockMass[base + c];
  }
  const vol = d.estimator === 'histogram' ? d.width.reduce((a, w) => a * w, 1) : 1;
  const scale = 1 / (W * vol);
  for (let c = 0; c < cells; c++) p[c] *= scale;
  return p;
}

/** F = −kT ln p on the bins (NaN where p = 0), shifted so its minimum is 0; `multiplicity` as for densityValues. */
export function freeEnergyValues(d: SampleDensity, kT: number, multiplicity?: ArrayLike<number>, out?: Float64Array): Float64Array {
  if (!(kT > 0) || !Number.isFinite(kT)) throw new InputError(`free energies from samples need kT > 0 (a known energy unit and a temperature), got ${kT}`);
  const F = densityValues(d, multiplicity, out);
  let lowest = Infinity;
  for (let c = 0; c < F.length; c++) {
    const f = F[c] > 0 ? -kT * Math.log(F[c]) : NaN;
    F[c] = f;
    if (f < lowest) lowest = f;
  }
  if (lowest === Infinity) throw new InputError('no bin holds any frame; check the ranges and weights');
  for (let c = 0; c < F.length; c++) F[c] -= lowest;
  return F;
}

/** The free-energy surface of a 2-variable density as a Grid (bin centres; row 0 at the lowest y). */
export function freeEnergyGrid(d: SampleDensity, kT: number, multiplicity?: ArrayLike<number>): Grid {
  if (d.dims !== 2) throw new InputError(`a 2-D grid needs 2 variables, got ${d.dims}`);
  const values = gridValues(d.counts.length, true) as Float64Array;
  freeEnergyValues(d, kT, multiplicity, values);
  const [nx, ny] = d.bins;
  return new Grid({ width: nx, height: ny, values, transform: [d.lo[0], d.width[0], 0, d.lo[1], 0, d.width[1]], crs: null, nodata: null });
}

/** The free-energy surface of a 3-variable density as a Grid3 (bin centres; periods of the periodic axes). */
export function freeEnergyGrid3(d: SampleDensity, kT: number, multiplicity?: ArrayLike<number>): Grid3 {
  if (d.dims !== 3) throw new InputError(`a 3-D grid needs 3 variables, got ${d.dims}`);
  const values = gridValues(d.counts.length, true) as Float64Array;
  freeEnergyValues(d, kT, multiplicity, values);
  const [nx, ny, nz] = d.bins;
  const c = (a: number) => d.lo[a] + d.width[a] / 2;
  return new Grid3({
    nx, ny, nz, values,
    origin: [c(0), c(1), c(2)],
    spacing: [d.width[0], d.width[1], d.width[2]],
    periods: [d.periods[0], d.periods[1], d.periods[2]],
  });
}

/** Bins of the density that hold no frame's mass (masked in F). */
export function maskedBins(d: SampleDensity): number {
  const cells = d.counts.length;
  let n = 0;
  for (let c = 0; c < cells; c++) {
    let m = 0;
    for (let b = 0; b < d.blocks && m === 0; b++) m = d.blockMass[b * cells + c];
    if (m === 0) n++;
  }
  return n;
}

/** Flat bin index of a point (wrapped on periodic axes); -1 outside the range. */
export function binOf(d: SampleDensity, p: readonly number[]): number {
  let cell = 0, stride = 1;
  for (let a = 0; a < d.dims; a++) {
    const n = d.bins[a];
    let t = (p[a] - d.lo[a]) / d.width[a];
    if (d.periods[a] !== null) t -= n * Math.floor(t / n);
    else if (!(t >= 0 && t <= n)) return -1;
    cell += Math.min(Math.floor(t), n - 1) * stride;
    stride *= n;
  }
  return cell;
}
