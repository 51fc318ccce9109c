/**
 * The `barriers` report object on a 3-D grid (schema sill/barriers@1): the keys of the 2-D report,
 * with `z` beside every `x` and `y` (sampled points, `refined`, refinement `at`, merged points, path
 * maxima), `layer` (the z index) beside `col` and `row`, `surface.depth` beside width and height,
 * 3 × 3 Hessians with three eigenvalues, and `periodic.z`. `basin.area` is the basin's volume
 * (map units³) in 3-D.
 */
import type { Grid3 } from '../surface/grid3.js';
import { barriers3, type Barriers3Options, type Barriers3Result, type Stationary3Record, type Path3Record } from '../chem/barriers3.js';
import { layoutDisconnectivity } from '../chem/disconnectivity.js';
import { CODATA_EDITION, conversionFactor, eyringPrefactor, eyringRate, kTIn, type EnergyUnit } from '../chem/units.js';
import { SILL_VERSION } from './common.js';
import { sliceChoices } from '../render/landscape3.js';
import type { BarriersReport, BarrierEntry } from './barriers.js';

export interface Barriers3ReportOptions extends Barriers3Options {
  to?: EnergyUnit;
}

export interface PointXYZE {
  x: number;
  y: number;
  z: number;
  energy: number;
}

type M3 = [[number, number, number], [number, number, number], [number, number, number]];

export interface Stationary3Entry {
  id: string;
  x: number;
  y: number;
  z: number;
  energy: number;
  index: number;
  col: number;
  row: number;
  layer: number;
  onEdge: boolean;
  refined: PointXYZE | null;
  energyBasis: 'refined' | 'sampled';
  hessian: M3 | null;
  hessianEigenvalues: [number, number, number] | null;
  hessianEigenvectors: M3 | null;
  refinement: { status: string; message: string | null; iterations: number; shift: number; at: PointXYZE | null };
  persistence: number | null;
  merged: { index: number; x: number; y: number; z: number; energy: number; refinement: string; rule: string }[];
}

export interface Minimum3Entry extends Stationary3Entry {
  basin: { samples: number; area: number; freeEnergy: number | null; relativeFreeEnergy: number | null; population: number | null };
}

export interface Path3Entry {
  file: string;
  status: string;
  message: string | null;
  images: number;
  iterations: number;
  length: number;
  maximum: { s: number; x: number; y: number; z: number; energy: number };
  maximumMinusTs: number;
  maximumOffset: number;
  agrees: boolean;
  ends: [string | null, string | null];
}

export interface TransitionState3Entry extends Stationary3Entry {
  multiplicity: number;
  connects: [string, string];
  connectsPairs: [string, string][];
  inTree: boolean;
  path: Path3Entry | null;
  pathNote: string | null;
}

export interface Surface3Info {
  kind: 'grid3';
  width: number;
  height: number;
  depth: number;
  points: number;
  validCells: number;
  crs: null;
  /** Spacing along x, y, z. */
  cellSize: [number, number, number];
  transform: null;
  origin: [number, number, number];
  names: [string, string, string] | null;
}

export interface Euler3Info {
  characteristic: number;
  minima: number;
  saddles1: number;
  saddles2: number;
  maxima: number;
  holds: boolean;
  outsideMinimum: boolean;
  simplices: number[];
}

export interface Barriers3Report extends Omit<BarriersReport, 'surface' | 'euler' | 'periodic' | 'fit' | 'minima' | 'transitionStates' | 'removed'> {
  /** As in 2-D, plus `loops`: index-1 saddles that close a loop, not reported in 3-D. */
  removed: Barriers3Result['removed'];
  surface: Surface3Info;
  euler: Euler3Info;
  periodic: { x: number | null; y: number | null; z: number | null };
  fit: { kind: 'tricubic'; description: string; spacing: number };
  /** The x–y planes slices.svg draws: for each state (at most 12), the lattice layer nearest its z. */
  slices: { id: string; layer: number; z: number }[];
  minima: Minimum3Entry[];
  transitionStates: TransitionState3Entry[];
}

export interface Barriers3Run {
  result: Barriers3Result;
  report: Barriers3Report;
}

export const FIT3_DESCRIPTION = 'tricubic interpolation of the grid: along each axis the cubic Hermite interpolant with fourth-order central-difference slopes (exact for cubics; wraps on periodic axes), Newton iteration on the interpolant with its 3 × 3 Hessian';

export function barriers3Report(grid: Grid3, opts: Barriers3ReportOptions = {}, input: string | null = null): Barriers3Run {
  const result = barriers3(grid, opts);
  return { result, report: reportFromResult3(result, opts.to, input) };
}

const m3 = (h: M3, E: (x: number) => number): M3 => h.map((r) => r.map(E)) as M3;

export function reportFromResult3(r: Barriers3Result, to: EnergyUnit | undefined, input: string | null): Barriers3Report {
  const out = to ?? r.units;
  const f = conversionFactor(r.units, out, r.temperature);
  const E = (x: number) => x * f;
  const En = (x: number | null) => (x === null || !Number.isFinite(x) ? null : x * f);
  const kTout = kTIn(out, r.temperature);
  const kTin = r.kT;
  const g = r.surface;

  const stationary = (s: Stationary3Record): Stationary3Entry => {
    const rf = s.refined;
    const newton = rf.status === 'converged' || rf.status === 'wrong-signature';
    const ev = rf.eigen;
    return {
      id: s.id, x: s.location.x, y: s.location.y, z: s.location.z, energy: E(s.energy), index: s.location.index,
      col: s.location.i, row: s.location.j, layer: s.location.k, onEdge: s.onEdge,
      refined: rf.status === 'converged' ? { x: rf.x, y: rf.y, z: rf.z, energy: E(rf.energy) } : null,
      energyBasis: s.basis,
      hessian: newton ? m3(rf.hessian, E) : null,
      hessianEigenvalues: newton ? [E(ev.values[0]), E(ev.values[1]), E(ev.values[2])] : null,
      hessianEigenvectors: newton ? ev.vectors : null,
      refinement: {
        status: rf.status, message: rf.message, iterations: rf.iterations, shift: rf.shift,
        at: rf.status === 'converged' || !Number.isFinite(rf.energy) ? null : { x: rf.x, y: rf.y, z: rf.z, energy: E(rf.energy) },
      },
      persistence: s.persistence === null ? null : E(s.persistence),
      merged: s.merged.map((q) => ({ ...q, energy: E(q.energy) })),
    };
  };
  const Fmin = r.minima.reduce((a, m) => Math.min(a, m.basin.freeEnergy ?? Infinity), Infinity);
  const minima: Minimum3Entry[] = r.minima.map((m) => ({
    ...stationary(m),
    basin: {
      samples: m.basin.samples, area: m.basin.area, freeEnergy: En(m.basin.freeEnergy),
      relativeFreeEnergy: m.basin.freeEnergy === null ? null : E(m.basin.freeEnergy - Fmin),
      population: m.basin.population,
    },
  }));
  const pathEntry = (id: string, p: Path3Record): Path3Entry => {
    const [x, y, z] = r.field.wrapPoint(p.maximum.x, p.maximum.y, p.maximum.z);
    return {
      file: `paths/${id}.csv`, status: p.status, message: p.message, images: p.x.length, iterations: p.iterations,
      length: p.length, maximum: { s: p.maximum.s, x, y, z, energy: E(p.maximum.energy) },
      maximumMinusTs: E(p.maximumMinusTs), maximumOffset: p.maximumOffset, agrees: p.agrees, ends: p.ends,
    };
  };
  const transitionStates: TransitionState3Entry[] = r.transitionStates.map((t) => ({
    ...stationary(t), multiplicity: t.multiplicity, connects: t.connects, connectsPairs: t.connectsPairs, inTree: t.inTree,
    path: t.path ? pathEntry(t.id, t.path) : null, pathNote: t.pathNote,
  }));
  const rate = (b: number | null) => (b === null || kTin === null ? null : eyringRate(b / kTin, r.temperature));
  const barrierEntries: BarrierEntry[] = r.barriers.map((b) => ({
    from: b.from, to: b.to, via: b.via, forward: En(b.forward), backward: En(b.backward), energyBasis: b.basis,
    rateForward: rate(b.forward), rateBackward: rate(b.backward),
  }));
  const layout = layoutDisconnectivity(r.hierarchy);
  const eu = r.survey.euler;
  return {
    schema: 'sill/barriers@1',
    sill: SILL_VERSION,
    input,
    surface: {
      kind: 'grid3', width: g.nx, height: g.ny, depth: g.nz, points: g.size, validCells: g.validCount(), crs: null,
      cellSize: [g.spacing[0], g.spacing[1], g.spacing[2]], transform: null,
      origin: [g.origin[0], g.origin[1], g.origin[2]], names: g.names ? [g.names[0], g.names[1], g.names[2]] : null,
    },
    connectivity: r.connectivity,
    boundary: r.wrap.every(Boolean) ? 'periodic' : r.wrap.some(Boolean) ? `${r.boundary}, periodic ${['x', 'y', 'z'].filter((_, d) => r.wrap[d]).join(',')}` : r.boundary,
    euler: {
      characteristic: eu.characteristic, minima: eu.minima, saddles1: eu.saddles1, saddles2: eu.saddles2, maxima: eu.maxima,
      holds: eu.holds, outsideMinimum: r.survey.critical.outsideMinimum, simplices: r.survey.simplices.byDimension,
    },
    periodic: { x: r.period[0], y: r.period[1], z: r.period[2] },
    units: { input: r.units, output: out, temperature: r.temperature, kT: kTout, constants: CODATA_EDITION, factor: f },
    minPersistence: { value: E(r.minPersistence.value), source: r.minPersistence.source },
    noiseFloor: {
      value: E(r.noiseFloor.value), used: r.noiseFloor.used, estimator: r.noiseFloor.estimator,
      scale: r.noiseFloor.scale === null ? null : E(r.noiseFloor.scale), samples: r.noiseFloor.samples,
    },
    removed: { ...r.removed, belowThreshold: { ...r.removed.belowThreshold, threshold: E(r.removed.belowThreshold.threshold) } },
    fit: { kind: 'tricubic', description: FIT3_DESCRIPTION, spacing: r.field.spacing },
    slices: sliceChoices(r),
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
      method: 'basin free energy F = −kT ln Σ exp(−E/kT)·dV over the lattice points draining to each minimum by steepest descent (dV: the volume of one lattice cell); population ∝ exp(−F/kT)',
      kT: kTout,
      note: 'F depends on the volume unit of the coordinates by an additive constant; relativeFreeEnergy and population do not; basin.area is the basin volume in 3-D',
    },
    disconnectivity: {
      description: 'Becker–Karplus disconnectivity graph of the basin hierarchy (simplified join tree): leaves are minima, joins are transition states at which basins merge; energies in the output unit',
      nodes: layout.nodes.map((n) => ({ id: n.id, kind: n.kind, ref: n.ref, energy: En(n.energy), parent: n.parent, children: n.children, x: n.x })),
      leafOrder: layout.leafOrder.map((k) => layout.nodes[k].ref ?? 'outside'),
    },
    notes: [...r.notes, `minimum persistence ${Number(E(r.minPersistence.value).toPrecision(4))}${out === 'none' ? '' : ` ${out}`} (${r.minPersistence.source})`],
  };
}

/** Rows of a path CSV: arc length, wrapped x, y, z and energy in the output unit. */
export function path3Rows(r: Barriers3Result, p: Path3Record, factor: number): { s: number; x: number; y: number; z: number; energy: number }[] {
  const rows = [];
  for (let k = 0; k < p.x.length; k++) {
    const [x, y, z] = r.field.wrapPoint(p.x[k], p.y[k], p.z[k]);
    rows.push({ s: p.s[k], x, y, z, energy: p.energy[k] * factor });
  }
  return rows;
}
