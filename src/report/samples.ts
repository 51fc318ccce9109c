/**
 * The `barriers` report of a free-energy surface built from samples: the `samples` key (how the
 * surface was made), the frames in each transition state's bin, and the block bootstrap of every
 * barrier and basin free energy (`uncertainty`), in the output unit.
 */
import type { BarriersResult } from '../chem/barriers.js';
import { InputError } from '../errors.js';
import { KDE_CUTOFF, binOf, maskedBins, sampleDensity, framesFromFile, freeEnergyGrid, type SampleDensity, type SampleOptions, type FrameFeeder } from '../chem/samples.js';
import { bootstrapBarriers, type BootstrapResult, type BootstrapOptions, type Spread } from '../chem/bootstrap.js';
import { kTIn } from '../chem/units.js';
import { eulerFailure } from './common.js';
import { barriersReport, type BarriersReport, type BarriersReportOptions, type SamplesEntry, type SpreadEntry } from './barriers.js';

/** Default least number of frames in a transition state's bin before a warning. */
export const DEFAULT_MIN_COUNT = 20;

export const BOOTSTRAP_METHOD =
  'block bootstrap: the frame series is cut into consecutive blocks of equal length; each resample draws as many blocks with replacement (seeded), ' +
  'rebuilds the free-energy surface from them and repeats the analysis (without paths); mean, standard deviation (the standard error) and percentile interval of each value over the resamples in which its states were found';
export const MATCHING =
  'minima of the full-series analysis are matched to resample minima closer than `radius` bin widths (across the period on periodic axes), one to one, closest pair first; ' +
  'a barrier is found when both its minima are matched and the resample has a barrier between them (the one whose transition state is nearest the original when there are several); a basin when its minimum is matched';

export interface SamplesReportInput {
  file: string | null;
  variables: number[];
  weights: { column: number; kind: 'weights' | 'log-weights' } | null;
  minCount: number;
}

/** Add the samples keys to `report` (in place) and return the warnings (one line each). */
export function addSamplesReport(report: BarriersReport, result: BarriersResult, d: SampleDensity, boot: BootstrapResult | null, input: SamplesReportInput): string[] {
  const f = report.units.factor;
  const sp = (s: Spread | null): SpreadEntry | null => (s === null ? null : { mean: s.mean * f, se: s.se * f, low: s.low * f, high: s.high * f });
  const warnings: string[] = [];
  const lowCount: { id: string; frames: number }[] = [];
  result.transitionStates.forEach((t, i) => {
    const cell = binOf(d, [t.location.x, t.location.y]);
    const frames = cell < 0 ? 0 : d.counts[cell];
    report.transitionStates[i].binFrames = frames;
    if (frames < input.minCount) lowCount.push({ id: t.id, frames });
  });
  if (lowCount.length) {
    warnings.push(`${lowCount.length === 1 ? 'transition state' : 'transition states'} ${lowCount.map((l) => `${l.id} (${l.frames})`).join(', ')} ${lowCount.length === 1 ? 'sits in a bin' : 'sit in bins'} with fewer than ${input.minCount} frames: the barrier rests on few samples — sample more, use fewer bins or a kernel density`);
  }
  // frames per basin: the minima on sparse outskirts (isolated bins, few frames)
  const perBasin = new Float64Array(result.minima.length);
  for (let c = 0; c < result.basinOf.length; c++) if (result.basinOf[c] >= 0) perBasin[result.basinOf[c]] += d.counts[c];
  const sparseMinima = result.minima.filter((_, i) => perBasin[i] < input.minCount).map((m) => m.id);
  if (sparseMinima.length) {
    report.notes.push(`${sparseMinima.length} minim${sparseMinima.length === 1 ? 'um has' : 'a have'} a basin of fewer than ${input.minCount} frames (${sparseMinima.slice(0, 10).join(', ')}${sparseMinima.length > 10 ? ', …' : ''}): sparse outskirts of the samples; --cap drops the high free energies there`);
  }
  if (boot) {
    report.barriers.forEach((b, k) => {
      const u = boot.barriers[k];
      b.uncertainty = { found: u.found, resamples: boot.resamples, forward: sp(u.forward), backward: sp(u.backward) };
    });
    report.minima.forEach((m, i) => {
      const u = boot.basins[i];
      m.basin.uncertainty = { found: u.found, resamples: boot.resamples, relativeFreeEnergy: sp(u.relativeFreeEnergy) };
    });
    const missing = boot.barriers.filter((u) => u.found < boot.resamples).length;
    if (missing) report.notes.push(`${missing} barrier${missing === 1 ? ' was' : 's were'} not found in every bootstrap resample (see uncertainty.found): the states there differ between parts of the series`);
    if (boot.failed) report.notes.push(`${boot.failed} of ${boot.resamples} bootstrap resamples left no analysable surface; their states count as not found`);
  }
  const entry: SamplesEntry = {
    file: input.file,
    format: d.source?.format ?? null,
    frames: d.frames,
    used: d.used,
    outside: d.outside,
    variables: input.variables,
    names: d.source?.names ? input.variables.map((c) => d.source!.names![c - 1] ?? '') : null,
    weights: input.weights,
    effectiveFrames: d.effectiveFrames,
    estimator: d.estimator,
    description: d.estimator === 'histogram'
      ? 'F = −kT ln p, p = Σ weights in the bin / (Σ weights · bin volume); bins with no frame masked; F shifted so its minimum is 0'
      : `F = −kT ln p, p the Gaussian kernel density (bandwidth per axis, wrapped on periodic axes, kernels cut at ${KDE_CUTOFF} bandwidths) at the bin centres; centres no kernel reaches masked; F shifted so its minimum is 0`,
    bins: d.bins,
    range: d.lo.map((l, a) => [l, d.hi[a]] as [number, number]),
    binWidth: d.width,
    periods: d.periods,
    bandwidth: d.bandwidth,
    kernelCutoff: d.bandwidth ? KDE_CUTOFF : null,
    maskedBins: maskedBins(d),
    minCount: input.minCount,
    lowCount,
    sparseMinima,
    bootstrap: boot === null ? null : {
      method: BOOTSTRAP_METHOD,
      blocks: boot.blocks,
      framesPerBlock: d.frames / boot.blocks,
      resamples: boot.resamples,
      seed: boot.seed,
      level: boot.level,
      matching: MATCHING,
      radius: boot.radius,
      failed: boot.failed,
    },
  };
  report.samples = entry;
  report.notes.push(...d.notes);
  return warnings;
}

export interface BarriersFromSamplesOptions extends BarriersReportOptions {
  /** How to bin the frames (bins, variables, weights, ranges, periodic axes, bandwidth, blocks). */
  samples: SampleOptions;
  /** Bootstrap resamples and seed; `false` leaves the bootstrap out. */
  bootstrap?: BootstrapOptions | false;
  /** Least frames in a transition state's bin before a warning; default DEFAULT_MIN_COUNT. */
  minCount?: number;
}

export interface BarriersFromSamplesRun {
  result: BarriersResult;
  report: BarriersReport;
  density: SampleDensity;
  bootstrap: BootstrapResult | null;
  /** One line each (the command line prints them on stderr); also in report.samples. */
  warnings: string[];
}

/**
 * `barriers` on the free energy of sampled frames: a file path (text columns or .npy) or a
 * FrameFeeder; periodic axes of the samples follow `boundary` unless `samples.periodic` is given.
 */
export async function barriersFromSamples(source: string | FrameFeeder, opts: BarriersFromSamplesOptions): Promise<BarriersFromSamplesRun> {
  const units = opts.units ?? 'none';
  const kT = kTIn(units, opts.temperature ?? 300);
  if (kT === null) throw new InputError('a free energy from samples (F = −kT ln p) needs an energy unit: give units (kJ/mol, kcal/mol, eV, hartree, kT or K)');
  const b = opts.boundary ?? 'closed';
  if (b === 'open') throw new InputError('boundary open has no meaning for a surface from samples (the edge of the range is not an outlet); use closed or periodic');
  if (opts.samples.bins?.length === 3) throw new InputError('barriers on 3-variable surfaces is not available yet in this version; give 2 variables (freeEnergyGrid3 builds the 3-D grid)');
  const periodic = opts.samples.periodic ?? [b === 'periodic' || b === 'periodic-x', b === 'periodic' || b === 'periodic-y'];
  const period = opts.samples.period ?? (opts.period ? [periodic[0] ? opts.period[0] : null, periodic[1] ? opts.period[1] : null] : undefined);
  const minCount = opts.minCount ?? DEFAULT_MIN_COUNT;
  if (!Number.isInteger(minCount) || minCount < 0) throw new InputError(`the least count must be a whole number ≥ 0, got ${minCount}`);
  const name = typeof source === 'string' ? source : 'samples';
  const density = await sampleDensity(typeof source === 'string' ? framesFromFile(source) : source, { ...opts.samples, periodic, period }, name);
  const { result, report } = barriersReport(freeEnergyGrid(density, kT), opts, typeof source === 'string' ? source : null);
  if (!report.euler.holds) throw eulerFailure(report.euler);
  const boot = opts.bootstrap === false ? null : bootstrapBarriers(density, kT, result, opts, opts.bootstrap ?? {});
  const wc = opts.samples.weights ?? opts.samples.logWeights;
  const warnings = addSamplesReport(report, result, density, boot, {
    file: typeof source === 'string' ? source : null,
    variables: opts.samples.variables ? [...opts.samples.variables] : density.bins.map((_, i) => i + 1),
    weights: wc === undefined ? null : { column: wc, kind: opts.samples.weights !== undefined ? 'weights' : 'log-weights' },
    minCount,
  });
  return { result, report, density, bootstrap: boot, warnings };
}
