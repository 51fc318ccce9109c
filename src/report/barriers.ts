/** The `barriers` report object (schema sill/barriers@1): energies in the output unit. */
import type { Grid } from '../surface/grid.js';
import type { Mesh } from '../surface/mesh.js';
import { barriers, type BarriersOptions, type BarriersResult, type StationaryRecord, type PathRecord } from '../chem/barriers.js';
import { layoutDisconnectivity } from '../chem/disconnectivity.js';
import { CODATA_EDITION, conversionFactor, eyringPrefactor, eyringRate, kTIn, type EnergyUnit } from '../chem/units.js';
import { surfaceInfo, eulerInfo, SILL_VERSION, type SurfaceInfo, type EulerInfo } from './common.js';

export interface BarriersReportOptions extends BarriersOptions {
  /** Unit of the reported energies; default the input unit. */
  to?: EnergyUnit;
}

export interface PointXYE {
  x: number;
  y: number;
  energy: number;
}

export interface StationaryEntry {
  id: string;
  /** Sampled location (cell centre or sample point) and value. */
  x: number;
  y: number;
  energy: number;
  index: number;
  col: number | null;
  row: number | null;
  onEdge: boolean;
  /** Refined stationary point; null when refinement failed (see `refinement`). */
  refined: PointXYE | null;
  /** Energy used in barriers: 'refined' or 'sampled'. */
  energyBasis: 'refined' | 'sampled';
  /** Hessian of the fit at the converged point (energy / coordinate²); null when Newton did not converge. */
  hessian: [[number, number], [number, number]] | null;
  hessianEigenvalues: [number, number] | null;
  hessianEigenvectors: [[number, number], [number, number]] | null;
  refinement: { status: string; message: string | null; iterations: number; shift: number; at: PointXYE | null };
  /** Persistence of the feature on the samples (output unit); null when it never dies. */
  persistence: number | null;
  /** Sampled critical points folded into this state, each with the rule that merged it. */
  merged: { index: number; x: number; y: number; energy: number; refinement: string; rule: string }[];
}

export interface MinimumEntry extends StationaryEntry {
  basin: {
    samples: number; area: number; freeEnergy: number | null; relativeFreeEnergy: number | null; population: number | null;
    /** Surfaces from samples: the block bootstrap of relativeFreeEnergy (src/report/samples.ts). */
    uncertainty?: SampleUncertainty;
  };
}

/** Mean, standard error and percentile interval of a value over the bootstrap resamples (output unit). */
export interface SpreadEntry {
  mean: number;
  se: number;
  low: number;
  high: number;
}

/** A value's block bootstrap: in how many of the resamples its state(s) were found, and the spread of the value(s). */
export interface SampleUncertainty {
  found: number;
  resamples: number;
  forward?: SpreadEntry | null;
  backward?: SpreadEntry | null;
  relativeFreeEnergy?: SpreadEntry | null;
}

export interface PathEntry {
  file: string;
  status: string;
  message: string | null;
  images: number;
  iterations: number;
  length: number;
  maximum: { s: number; x: number; y: number; energy: number };
  maximumMinusTs: number;
  maximumOffset: number;
  agrees: boolean;
  ends: [string | null, string | null];
}

export interface TransitionStateEntry extends StationaryEntry {
  multiplicity: number;
  connects: [string, string];
  connectsPairs: [string, string][];
  inTree: boolean;
  path: PathEntry | null;
  pathNote: string | null;
  /** Surfaces from samples: frames (unweighted) in the bin of the sampled transition state. */
  binFrames?: number;
}

export interface BarrierEntry {
  from: string;
  to: string;
  via: string;
  forward: number | null;
  backward: number | null;
  energyBasis: 'refined' | 'sampled';
  /** Eyring rate constants in 1/s — order-of-magnitude estimates; null without a known unit. */
  rateForward: number | null;
  rateBackward: number | null;
  /** Surfaces from samples: the block bootstrap of forward and backward (src/report/samples.ts). */
  uncertainty?: SampleUncertainty;
}

export interface BarriersReport {
  schema: 'sill/barriers@1';
  sill: string;
  input: string | null;
  surface: SurfaceInfo;
  connectivity: number | null;
  boundary: string;
  euler: EulerInfo;
  periodic: { x: number | null; y: number | null };
  units: { input: EnergyUnit; output: EnergyUnit; temperature: number; kT: number | null; constants: string; factor: number };
  minPersistence: { value: number; source: string };
  /** The noise floor estimated from the samples (output unit) and whether it set minPersistence. */
  noiseFloor: { value: number; used: boolean; estimator: string; scale: number | null; samples: number };
  /** Features left out or merged, by rule (counts; merged points are listed on their states). */
  removed: BarriersResult['removed'];
  fit: { kind: 'bicubic' | 'mls'; description: string; spacing: number };
  counts: { minima: number; transitionStates: number; onEdge: { minima: number; transitionStates: number }; barriers: number };
  minima: MinimumEntry[];
  transitionStates: TransitionStateEntry[];
  barriers: BarrierEntry[];
  lowestBarriers: { a: string; b: string; via: string; energy: number; fromA: number; fromB: number }[] | null;
  rates: { method: string; temperature: number; prefactor: number; caution: string } | null;
  thermodynamics: { method: string; kT: number; note: string } | null;
  disconnectivity: {
    description: string;
    nodes: { id: number; kind: string; ref: string | null; energy: number | null; parent: number | null; children: number[]; x: number }[];
    leafOrder: string[];
  };
  notes: string[];
  /** Surfaces built from samples: how (src/report/samples.ts). */
  samples?: SamplesEntry;
}

export interface SamplesEntry {
  file: string | null;
  format: 'text' | 'npy' | null;
  frames: number;
  used: number;
  outside: number;
  /** 1-based columns of the variables and their header names, when the file has them. */
  variables: number[];
  names: string[] | null;
  weights: { column: number; kind: 'weights' | 'log-weights' } | null;
  effectiveFrames: number;
  estimator: 'histogram' | 'kde';
  description: string;
  bins: number[];
  range: [number, number][];
  binWidth: number[];
  periods: (number | null)[];
  bandwidth: number[] | null;
  kernelCutoff: number | null;
  maskedBins: number;
  minCount: number;
  /** Transition states whose bin holds fewer than minCount frames. */
  lowCount: { id: string; frames: number }[];
  /** Minima whose basin holds fewer than minCount frames (sparse outskirts). */
  sparseMinima: string[];
  bootstrap: {
    method: string;
    blocks: number;
    framesPerBlock: number;
    resamples: number;
    seed: number;
    level: number;
    matching: string;
    radius: number;
    failed: number;
  } | null;
}

export interface BarriersRun {
  result: BarriersResult;
  report: BarriersReport;
}

const FIT_DESCRIPTION = {
  bicubic: 'bicubic convolution interpolation of the grid (Keys 1981, a = −1/2; wraps on periodic axes), Newton iteration on the interpolant',
  mls: 'moving least squares: local weighted cubic polynomial over the samples within a fixed radius (Wendland weights), Newton iteration on the fit',
};

export function barriersReport(surface: Grid | Mesh, opts: BarriersReportOptions = {}, input: string | null = null): BarriersRun {
  const result = barriers(surface, opts);
  return { result, report: reportFromResult(result, opts.to, input) };
}

export function reportFromResult(r: BarriersResult, to: EnergyUnit | undefined, input: string | null): BarriersReport {
  const out = to ?? r.units;
  const f = conversionFactor(r.units, out, r.temperature);
  const E = (x: number) => x * f;
  const En = (x: number | null) => (x === null || !Number.isFinite(x) ? null : x * f);
  const kTout = kTIn(out, r.temperature);
  const kTin = r.kT;

  const stationary = (s: StationaryRecord): StationaryEntry => {
    const rf = s.refined;
    const newton = rf.status === 'converged' || rf.status === 'wrong-signature';
    const ev = rf.eigen;
    return {
      id: s.id, x: s.location.x, y: s.location.y, energy: E(s.energy), index: s.location.index,
      col: s.location.col, row: s.location.row, onEdge: s.onEdge,
      refined: rf.status === 'converged' ? { x: rf.x, y: rf.y, energy: E(rf.energy) } : null,
      energyBasis: s.basis,
      hessian: newton ? [[E(rf.hessian[0][0]), E(rf.hessian[0][1])], [E(rf.hessian[1][0]), E(rf.hessian[1][1])]] : null,
      hessianEigenvalues: newton ? [E(ev.values[0]), E(ev.values[1])] : null,
      hessianEigenvectors: newton ? ev.vectors : null,
      refinement: {
        status: rf.status, message: rf.message, iterations: rf.iterations, shift: rf.shift,
        at: rf.status === 'converged' || !Number.isFinite(rf.energy) ? null : { x: rf.x, y: rf.y, energy: E(rf.energy) },
      },
      persistence: s.persistence === null ? null : E(s.persistence),
      merged: s.merged.map((q) => ({ ...q, energy: E(q.energy) })),
    };
  };
  const Fmin = r.minima.reduce((a, m) => Math.min(a, m.basin.freeEnergy ?? Infinity), Infinity);
  const minima: MinimumEntry[] = r.minima.map((m) => ({
    ...stationary(m),
    basin: {
      samples: m.basin.samples, area: m.basin.area,
      freeEnergy: En(m.basin.freeEnergy),
      relativeFreeEnergy: m.basin.freeEnergy === null ? null : E(m.basin.freeEnergy - Fmin),
      population: m.basin.population,
    },
  }));
  const pathEntry = (id: string, p: PathRecord): PathEntry => ({
    file: `paths/${id}.csv`, status: p.status, message: p.message, images: p.images.length, iterations: p.iterations,
    length: p.length, maximum: { ...p.maximum, ...wrapXY(r, p.maximum.x, p.maximum.y), energy: E(p.maximum.energy) },
    maximumMinusTs: E(p.maximumMinusTs), maximumOffset: p.maximumOffset, agrees: p.agrees, ends: p.ends,
  });
  const transitionStates: TransitionStateEntry[] = r.transitionStates.map((t) => ({
    ...stationary(t), multiplicity: t.multiplicity, connects: t.connects, connectsPairs: t.connectsPairs, inTree: t.inTree,
    path: t.path ? pathEntry(t.id, t.path) : null, pathNote: t.pathNote,
  }));
  const rate = (b: number | null) => (b === null || kTin === null ? null : eyringRate(b / kTin, r.temperature));
  const barrierEntries: BarrierEntry[] = r.barriers.map((b) => ({
    from: b.from, to: b.to, via: b.via, forward: En(b.forward), backward: En(b.backward), energyBasis: b.basis,
    rateForward: rate(b.forward), rateBackward: rate(b.backward),
  }));
  const layout = layoutDisconnectivity(r.hierarchy);
  const report: BarriersReport = {
    schema: 'sill/barriers@1',
    sill: SILL_VERSION,
    input,
    surface: surfaceInfo(r.surface),
    connectivity: r.connectivity,
    boundary: r.boundary,
    euler: eulerInfo(r.survey),
    periodic: { x: r.period[0], y: r.period[1] },
    units: { input: r.units, output: out, temperature: r.temperature, kT: kTout, constants: CODATA_EDITION, factor: f },
    minPersistence: { value: E(r.minPersistence.value), source: r.minPersistence.source },
    noiseFloor: {
      value: E(r.noiseFloor.value), used: r.noiseFloor.used, estimator: r.noiseFloor.estimator,
      scale: r.noiseFloor.scale === null ? null : E(r.noiseFloor.scale), samples: r.noiseFloor.samples,
    },
    removed: {
      ...r.removed,
      belowThreshold: { ...r.removed.belowThreshold, threshold: E(r.removed.belowThreshold.threshold) },
    },
    fit: { kind: r.field.kind, description: FIT_DESCRIPTION[r.field.kind], spacing: r.field.spacing },
    counts: {
      minima: minima.length,
      transitionStates: transitionStates.length,
      onEdge: { minima: minima.filter((m) => m.onEdge).length, transitionStates: transitionStates.filter((t) => t.onEdge).length },
      barriers: barrierEntries.length,
    },
    minima,
    transitionStates,
    barriers: barrierEntries,
    lowestBarriers: r.minimax ? r.minimax.map((m) => ({ ...m, energy: E(m.energy), fromA: E(m.fromA), fromB: E(m.fromB) })) : null,
    rates: kTin === null ? null : {
      method: 'transition-state theory, Eyring equation k = (k_B·T/h)·exp(−ΔE/k_B·T), transmission coefficient 1, the barrier standing in for the free energy of activation',
      temperature: r.temperature,
      prefactor: eyringPrefactor(r.temperature),
      caution: 'order-of-magnitude estimates only',
    },
    thermodynamics: kTout === null ? null : {
      method: 'basin free energy F = −kT ln Σ exp(−E/kT)·dA over the samples draining to each minimum by steepest descent; population ∝ exp(−F/kT)',
      kT: kTout,
      note: 'F depends on the area unit of the coordinates by an additive constant; relativeFreeEnergy and population do not',
    },
    disconnectivity: {
      description: 'Becker–Karplus disconnectivity graph of the basin hierarchy (simplified join tree): leaves are minima, joins are transition states at which basins merge; energies in the output unit',
      nodes: layout.nodes.map((n) => ({ id: n.id, kind: n.kind, ref: n.ref, energy: En(n.energy), parent: n.parent, children: n.children, x: n.x })),
      leafOrder: layout.leafOrder.map((k) => layout.nodes[k].ref ?? 'outside'),
    },
    notes: [...r.notes, `minimum persistence ${Number(E(r.minPersistence.value).toPrecision(4))}${out === 'none' ? '' : ` ${out}`} (${r.minPersistence.source})`],
  };
  return report;
}

/** Wrapped coordinates of a path point, for output. */
export function wrapXY(r: BarriersResult, x: number, y: number): { x: number; y: number } {
  const [wx, wy] = r.field.wrap(x, y);
  return { x: wx, y: wy };
}

/** Rows of a path CSV: arc length, wrapped x and y, energy in the output unit. */
export function pathRows(r: BarriersResult, p: PathRecord, factor: number): { s: number; x: number; y: number; energy: number }[] {
  return p.images.map((q) => ({ s: q.s, ...wrapXY(r, q.x, q.y), energy: q.energy * factor }));
}
