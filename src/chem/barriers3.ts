/**
 * `barriers` on a 3-D grid (src/surface/grid3.ts): the 3-D twin of src/chem/barriers.ts.
 *
 *  - The complex, critical points, join tree and persistence pairs come from survey3
 *    (src/morse/survey3.ts; Freudenthal triangulation by default, 14 neighbours).
 *  - Minima are the pits that survive persistence simplification; transition states are the
 *    index-1 saddles at which basins merge (inner nodes of the simplified join tree), each joining
 *    the basins its lower-link pieces drain to. Unlike 2-D, index-1 saddles that close a loop (a
 *    second channel, a way round a periodic axis, a dip on a ridge) are not reported, only counted
 *    (`removed.loops`): without dimension-1 persistence a real second channel cannot be told from a
 *    wrinkle on a ridge.
 *  - Each point is refined on the tricubic fit (src/chem/field3.ts, src/chem/refine3.ts); two
 *    refined points closer than MERGE_TOLERANCE sample spacings are one state (as in 2-D; the 2-D
 *    rule for failed minima inside another's basin is not applied in 3-D).
 *  - Basins are steepest-descent regions on the lattice; their free energies are
 *    F_b = −kT ln Σ_{i∈b} exp(−E_i/kT)·dV with dV the volume of one lattice cell.
 *  - The basin hierarchy is built over the states by joining their basins at the transition states
 *    in order of sampled energy (the join tree's order); minimum-energy paths by the string method
 *    in 3-D (src/chem/mep3.ts).
 *
 * Everything here is in the input's energy unit.
 */
import { InputError } from '../errors.js';
import { Grid3 } from '../surface/grid3.js';
import { componentOfLowest, type Connectivity3, type Boundary3, type Complex3 } from '../surface/complex3.js';
import { survey3, SADDLE1, type Survey3Result } from '../morse/survey3.js';
import { simplifyMergeTree } from '../morse/mergetree.js';
import { GridField3 } from './field3.js';
import { refineStationary3, type Refined3 } from './refine3.js';
import { minimumEnergyPath3, type Path3 } from './mep3.js';
import { pitRepresentatives, labelByDescent, OUTSIDE, NO_LABEL } from './basins.js';
import { valueQuantum, type NoiseFloor } from './noise.js';
import { checkTemperature, kTIn, type EnergyUnit } from './units.js';
import {
  MAX_IMAGES, IMAGES_WHY, MAX_PATHS, PATHS_WHY, MINIMAX_LIMIT, MERGE_TOLERANCE,
  hierarchyOverStates, minimaxBarriers, type BarrierRow, type BasinInfo, type EnergyBasis, type HierarchyNode, type MinimaxRow,
} from './barriers.js';

export interface Barriers3Options {
  /** 14 (Freudenthal triangulation, default) or 26. */
  connectivity?: Connectivity3;
  /** 'closed' (default), 'open' or 'periodic' (all axes wrap). */
  boundary?: Boundary3;
  /** Axes that wrap, [x, y, z], with 'open' or 'closed' for the others. */
  periodicAxes?: readonly [boolean, boolean, boolean];
  units?: EnergyUnit;
  temperature?: number;
  minPersistence?: number;
  cap?: number;
  images?: number;
  maxPaths?: number;
}

export interface Location3 {
  index: number;
  i: number;
  j: number;
  k: number;
  x: number;
  y: number;
  z: number;
}

export interface MergedPoint3 {
  index: number;
  x: number;
  y: number;
  z: number;
  energy: number;
  refinement: string;
  rule: 'same-minimum' | 'same-saddle' | 'saddle-inside-minimum';
}

export interface Stationary3Record {
  id: string;
  vertex: number;
  location: Location3;
  energy: number;
  /** On a face of the box that does not wrap, or next to nodata. */
  onEdge: boolean;
  refined: Refined3;
  bestEnergy: number;
  bestX: number;
  bestY: number;
  bestZ: number;
  basis: EnergyBasis;
  merged: MergedPoint3[];
  persistence: number | null;
}

export interface Minimum3Record extends Stationary3Record {
  /** `area` is the volume of the basin's lattice cells (map units³). */
  basin: BasinInfo;
}

export interface Path3Record extends Path3 {
  ends: [string | null, string | null];
  maximumMinusTs: number;
  maximumOffset: number;
  agrees: boolean;
}

export interface TransitionState3Record extends Stationary3Record {
  multiplicity: number;
  connects: [string, string];
  connectsPairs: [string, string][];
  inTree: boolean;
  path: Path3Record | null;
  pathNote: string | null;
}

export interface Barriers3Result {
  surface: Grid3;
  survey: Survey3Result;
  field: GridField3;
  connectivity: Connectivity3;
  boundary: Boundary3;
  wrap: readonly [boolean, boolean, boolean];
  units: EnergyUnit;
  temperature: number;
  kT: number | null;
  minPersistence: { value: number; source: string };
  noiseFloor: NoiseFloor & { used: boolean };
  removed: {
    belowThreshold: { minima: number; transitionStates: number; threshold: number; rule: string };
    edge: { transitionStates: number; rule: string };
    merged: { minima: number; transitionStates: number; rule: string };
    /** Index-1 saddles that close a loop rather than merge basins (3-D only; see the module comment). */
    loops: { saddles: number; rule: string };
  };
  minima: Minimum3Record[];
  transitionStates: TransitionState3Record[];
  barriers: BarrierRow[];
  minimax: MinimaxRow[] | null;
  hierarchy: HierarchyNode[];
  /** Steepest-descent basin of every lattice point: index into `minima`, −2 outside, −1 nodata. */
  basinOf: Int32Array;
  /** Periods of the wrapped axes (n · spacing), null for the others. */
  period: [number | null, number | null, number | null];
  notes: string[];
}

/** All 26 offsets (x fastest) and those of the Freudenthal graph (all components ≥ 0 or all ≤ 0). */
const OFFSETS26: [number, number, number][] = [];
for (let dz = -1; dz <= 1; dz++) for (let dy = -1; dy <= 1; dy++) for (let dx = -1; dx <= 1; dx++) {
  if (dx !== 0 || dy !== 0 || dz !== 0) OFFSETS26.push([dx, dy, dz]);
}
const OFFSETS14 = OFFSETS26.filter(([a, b, c]) => (a >= 0 && b >= 0 && c >= 0) || (a <= 0 && b <= 0 && c <= 0));

function offsetsOf(conn: Connectivity3): [number, number, number][] {
  return conn === 14 ? OFFSETS14 : OFFSETS26;
}

function isEdge(conn: Connectivity3, a: readonly number[], b: readonly number[]): boolean {
  const d0 = a[0] - b[0], d1 = a[1] - b[1], d2 = a[2] - b[2];
  if (Math.max(Math.abs(d0), Math.abs(d1), Math.abs(d2)) !== 1) return false;
  return conn === 26 || (d0 >= 0 && d1 >= 0 && d2 >= 0) || (d0 <= 0 && d1 <= 0 && d2 <= 0);
}

/** Link adjacency of each connectivity's offsets, as bit masks. */
const LINK_ADJ = new Map<Connectivity3, Int32Array>();
for (const conn of [14, 26] as const) {
  const offs = offsetsOf(conn);
  const adj = new Int32Array(offs.length);
  for (let a = 0; a < offs.length; a++) for (let b = 0; b < offs.length; b++) if (a !== b && isEdge(conn, offs[a], offs[b])) adj[a] |= 1 << b;
  LINK_ADJ.set(conn, adj);
}

const GHOST3 = -2;

/**
 * Components of the lower link of lattice point i in the complex: for each, its lowest point (by
 * the (value, index) order), or GHOST3 when it holds an outlet (open boundary: beyond an open face,
 * or draining nodata). The lower link of a vertex of a flag complex is the flag complex on its
 * lower neighbours, so its components are those of the graph they induce.
 */
export function lowerLinkComponents3(cx: Complex3, i: number): number[] {
  const offs = offsetsOf(cx.connectivity), adj = LINK_ADJ.get(cx.connectivity)!;
  const v = cx.values, nx = cx.nx, ny = cx.ny;
  const x = i % nx, r = (i - x) / nx, y = r % ny, z = (r - y) / ny;
  const open = cx.boundary === 'open';
  const ring = new Int32Array(offs.length);
  let mask = 0;
  for (let q = 0; q < offs.length; q++) {
    const j = cx.locate(x + offs[q][0], y + offs[q][1], z + offs[q][2]);
    if (j < 0) ring[q] = open ? GHOST3 : -1;
    else if (v[j] !== v[j]) ring[q] = cx.ghostNodata ? GHOST3 : -1;
    else ring[q] = j;
    const lower = ring[q] === GHOST3 || (ring[q] >= 0 && (v[ring[q]] < v[i] || (v[ring[q]] === v[i] && ring[q] < i)));
    if (lower) mask |= 1 << q;
  }
  const out: number[] = [];
  let rest = mask;
  while (rest !== 0) {
    const comp = componentOfLowest(adj, rest);
    rest &= ~comp;
    let best = -1;
    for (let g = comp; g !== 0; g &= g - 1) {
      const j = ring[31 - Math.clz32(g & -g)];
      if (j === GHOST3 || best === GHOST3) { best = GHOST3; continue; }
      if (best < 0 || v[j] < v[best] || (v[j] === v[best] && j < best)) best = j;
    }
    out.push(best);
  }
  return out;
}

/**
 * Steepest-descent label of every lattice point (as descentLabels in 2-D): each point drains to the
 * lower neighbour in the complex's graph with the steepest drop over distance (ties by the
 * (value, index) order) and takes its label; a point with none is a pit (labelled by the surviving
 * minimum its join-tree component merges into) or, next to an outlet, drains to the outside.
 */
export function descentLabels3(cx: Complex3, rep: Map<number, number>, minima: Int32Array): Int32Array {
  const g = cx.surface, n = cx.n, v = cx.values, nx = cx.nx, ny = cx.ny;
  const offs = offsetsOf(cx.connectivity);
  const inv = Float64Array.from(offs, ([a, b, c]) => 1 / Math.hypot(a * g.spacing[0], b * g.spacing[1], c * g.spacing[2]));
  const minIndex = new Map<number, number>();
  minima.forEach((p, k) => minIndex.set(p, k));
  const omega = cx.hasOmega ? cx.omegaAdj : null;
  const pitLabel = (p: number): number => {
    const r = rep.get(p);
    if (r === undefined) throw new Error(`internal: pit ${p} has no representative`);
    if (r < 0) return OUTSIDE;
    const k = minIndex.get(r);
    if (k === undefined) throw new Error(`internal: representative pit ${r} is not a minimum`);
    return k;
  };
  const down = new Int32Array(n);
  for (let i = 0; i < n; i++) {
    const vi = v[i];
    if (vi !== vi) { down[i] = -2; continue; }
    const x = i % nx, r = (i - x) / nx, y = r % ny, z = (r - y) / ny;
    let best = -1, bestSlope = 0;
    for (let q = 0; q < offs.length; q++) {
      const j = cx.locate(x + offs[q][0], y + offs[q][1], z + offs[q][2]);
      if (j < 0) continue;
      const vj = v[j];
      if (!(vj < vi || (vj === vi && j < i))) continue;
      const slope = (vi - vj) * inv[q];
      if (best < 0 || slope > bestSlope || (slope === bestSlope && (vj < v[best] || (vj === v[best] && j < best)))) { best = j; bestSlope = slope; }
    }
    down[i] = best;
  }
  const label = new Int32Array(n);
  labelByDescent(down, label, pitLabel, omega);
  return label;
}

/**
 * Groups of points within `tol` of each other (transitively, periodic distance): the group index of
 * every point. A sweep over x, and across the seam when x wraps with period `periodX`.
 */
function groupPoints3(x: ArrayLike<number>, y: ArrayLike<number>, z: ArrayLike<number>, use: ArrayLike<boolean>, tol: number, field: GridField3, periodX: number | null): Int32Array {
  const n = x.length;
  const parent = Int32Array.from({ length: n }, (_, k) => k);
  const find = (a: number): number => { while (parent[a] !== a) a = parent[a] = parent[parent[a]]; return a; };
  const join = (a: number, b: number) => {
    if (field.distance(x[a], y[a], z[a], x[b], y[b], z[b]) <= tol) parent[find(a)] = find(b);
  };
  const idx: number[] = [];
  for (let k = 0; k < n; k++) if (use[k]) idx.push(k);
  idx.sort((a, b) => x[a] - x[b]);
  for (let p = 0; p < idx.length; p++) {
    for (let q = p + 1; q < idx.length && x[idx[q]] - x[idx[p]] <= tol; q++) join(idx[p], idx[q]);
  }
  if (periodX !== null && idx.length > 1) {
    const lo = x[idx[0]];
    for (let p = 0; p < idx.length && x[idx[p]] - lo <= tol; p++) {
      for (let q = idx.length - 1; q > p && x[idx[p]] + periodX - x[idx[q]] <= tol; q--) join(idx[p], idx[q]);
    }
  }
  const out = new Int32Array(n);
  for (let k = 0; k < n; k++) out[k] = find(k);
  return out;
}

export function barriers3(input: Grid3, opts: Barriers3Options = {}): Barriers3Result {
  const units = opts.units ?? 'none';
  const T = checkTemperature(opts.temperature ?? 300);
  if (opts.images !== undefined && !(Number.isInteger(opts.images) && opts.images >= 5 && opts.images <= MAX_IMAGES)) {
    throw new InputError(`images must be a whole number from 5 to ${MAX_IMAGES}, got ${opts.images}: ${IMAGES_WHY}`);
  }
  if (opts.maxPaths !== undefined && !(Number.isInteger(opts.maxPaths) && opts.maxPaths >= 0 && opts.maxPaths <= MAX_PATHS)) {
    throw new InputError(`maxPaths must be a whole number from 0 to ${MAX_PATHS}, got ${opts.maxPaths}: ${PATHS_WHY}`);
  }
  if (opts.minPersistence !== undefined && (!(opts.minPersistence >= 0) || !Number.isFinite(opts.minPersistence))) {
    throw new InputError(`minimum persistence must be a number ≥ 0, got ${opts.minPersistence}`);
  }
  const kT = kTIn(units, T);
  const connectivity = opts.connectivity ?? 14;
  const boundary = opts.boundary ?? 'closed';
  const notes: string[] = [];

  let grid = input;
  if (opts.cap !== undefined) {
    if (!Number.isFinite(opts.cap)) throw new InputError(`the energy cap must be a finite number, got ${opts.cap}`);
    const values = Float64Array.from(input.values);
    let capped = 0;
    for (let i = 0; i < values.length; i++) if (values[i] > opts.cap) { values[i] = NaN; capped++; }
    grid = new Grid3({ nx: input.nx, ny: input.ny, nz: input.nz, values, origin: input.origin, spacing: input.spacing, periods: input.periods, names: input.names ?? undefined, normalised: true });
    if (capped > 0) notes.push(`${capped} sample${capped === 1 ? '' : 's'} above the cap ${opts.cap} treated as unsampled`);
    if (grid.validCount() === 0) throw new InputError(`every sample is above the cap ${opts.cap}; raise --cap`);
  }

  // threshold: given, else 1 kT, else the value quantum of a quantised grid (as in 2-D)
  const q = valueQuantum(grid.values);
  const valid = grid.validCount();
  const floor: NoiseFloor = q === null
    ? { value: 0, estimator: 'grid: the values are not quantised (not whole steps of one size), so no noise floor is derived (0); give --min-persistence to remove shallow features', scale: null, samples: valid }
    : { value: q, estimator: `grid: the value quantum ${Number(q.toPrecision(4))} (every value is the lowest plus whole steps of it): rounding alone makes features this deep`, scale: q, samples: valid };
  let minP: number, minPSource: string, threshold: number;
  if (opts.minPersistence !== undefined) {
    minP = opts.minPersistence; minPSource = 'given'; threshold = minP;
  } else if (kT !== null) {
    minP = kT; minPSource = `default: 1 kT at ${T} K`; threshold = minP;
  } else {
    minP = floor.value;
    minPSource = `default: the noise floor of the samples (${floor.estimator})`;
    threshold = floor.value > 0 ? floor.value * (1 + 1e-6) : floor.value;
  }
  const floorUsed = opts.minPersistence === undefined && kT === null;

  const res = survey3(grid, { connectivity, boundary, periodicAxes: opts.periodicAxes, minPersistence: 0 });
  const cx = res.complex;
  const values = cx.values;
  threshold = Math.max(threshold, Number.MIN_VALUE);
  const tree = simplifyMergeTree(res.join, values, threshold);
  const rep = pitRepresentatives(res.join, values, threshold);

  const minimaVerts: number[] = [];
  for (let k = 0; k < tree.vertex.length; k++) if (tree.childCount[k] === 0 && tree.vertex[k] >= 0) minimaVerts.push(tree.vertex[k]);
  if (minimaVerts.length === 0) {
    throw new InputError(`no minimum is left after simplification (minimum persistence ${minP}${cx.hasOmega ? ', open boundary: every basin spills off the grid' : ''}); lower --min-persistence${cx.hasOmega ? ' or use --boundary closed' : ''}`);
  }
  const minimaArr = Int32Array.from(minimaVerts);
  const basinOf = descentLabels3(cx, rep, minimaArr);

  // dimension-0 pairs: cancelled below the threshold, persistence of the survivors
  const cancelled = new Map<number, number>();
  const persOf = new Map<number, number>();
  const removed = { minima: 0, transitionStates: 0 };
  const P = res.pairs;
  for (let k = 0; k < P.dim.length; k++) {
    if (P.dim[k] !== 0) continue;
    const passV = P.deathVertex[k];
    if (!(P.persistence[k] < threshold)) {
      persOf.set(P.birthVertex[k], P.persistence[k]);
      persOf.set(passV, Math.max(persOf.get(passV) ?? 0, P.persistence[k]));
      continue;
    }
    cancelled.set(passV, (cancelled.get(passV) ?? 0) + 1);
    if (P.persistence[k] > 0) { removed.transitionStates++; removed.minima++; }
  }
  // transition states: the index-1 saddles at which basins merge (inner nodes of the simplified join
  // tree). Index-1 saddles that close a loop (a second channel between basins already joined, a way
  // round a periodic axis, or a dip on a ridge) are left out and counted: telling a real second
  // channel from a wrinkle of a ridge needs dimension-1 persistence, which the 3-D survey does not compute.
  const treeVerts = new Set<number>();
  for (let k = 0; k < tree.vertex.length; k++) if (tree.childCount[k] > 0 && tree.vertex[k] >= 0) treeVerts.add(tree.vertex[k]);
  const passVerts: number[] = [], passMult: number[] = [];
  let loopSaddles = 0;
  const cp = res.critical;
  for (let k = 0; k < cp.vertex.length; k++) {
    if (cp.kind[k] !== SADDLE1) continue;
    const m = cp.multiplicity[k] - (cancelled.get(cp.vertex[k]) ?? 0);
    if (m <= 0) continue;
    if (!treeVerts.has(cp.vertex[k])) { loopSaddles += m; continue; }
    passVerts.push(cp.vertex[k]); passMult.push(m);
  }

  const wrap = cx.wrap;
  const field = new GridField3(grid, wrap);
  const period: [number | null, number | null, number | null] = [0, 1, 2].map((d) => (wrap[d] ? [grid.nx, grid.ny, grid.nz][d] * grid.spacing[d] : null)) as [number | null, number | null, number | null];
  for (let d = 0; d < 3; d++) {
    const stated = grid.periods[d];
    if (wrap[d] && stated !== null && Math.abs(stated - period[d]!) > 1e-6 * stated) {
      notes.push(`axis ${'xyz'[d]} wraps with period ${period[d]} (points × spacing), not the stated ${stated}`);
    }
  }
  const locate3 = (i: number): Location3 => {
    const x = i % grid.nx, r = (i - x) / grid.nx, y = r % grid.ny, z = (r - y) / grid.ny;
    return { index: i, i: x, j: y, k: z, x: grid.x(x), y: grid.y(y), z: grid.z(z) };
  };
  const onEdge = (i: number): boolean => {
    const L = locate3(i);
    const n = [grid.nx, grid.ny, grid.nz], c = [L.i, L.j, L.k];
    for (let d = 0; d < 3; d++) if (!wrap[d] && (c[d] === 0 || c[d] === n[d] - 1)) return true;
    if (!cx.hasNodata) return false;
    for (const [a, b, e] of offsetsOf(connectivity)) {
      const j = cx.locate(L.i + a, L.j + b, L.k + e);
      if (j >= 0 && values[j] !== values[j]) return true;
    }
    return false;
  };
  type Raw = Omit<Stationary3Record, 'id' | 'merged' | 'persistence'>;
  const base = (vertex: number, kind: 'minimum' | 'transition-state'): Raw => {
    const location = locate3(vertex);
    const refined = refineStationary3(field, location.x, location.y, location.z, kind);
    const good = refined.status === 'converged';
    return {
      vertex, location, energy: values[vertex], onEdge: onEdge(vertex), refined,
      bestEnergy: good ? refined.energy : values[vertex],
      bestX: good ? refined.x : location.x, bestY: good ? refined.y : location.y, bestZ: good ? refined.z : location.z,
      basis: good ? 'refined' : 'sampled',
    };
  };
  const tol = MERGE_TOLERANCE * field.spacing;
  const mergedAway = { minima: 0, transitionStates: 0 };
  const mergedPoint = (r: Raw, rule: MergedPoint3['rule']): MergedPoint3 => ({
    index: r.vertex, x: r.location.x, y: r.location.y, z: r.location.z, energy: r.energy, refinement: r.refined.status, rule,
  });
  const lower = (a: { energy: number; vertex: number }, b: { energy: number; vertex: number }) => a.energy - b.energy || a.vertex - b.vertex;
  const better = (a: Raw, b: Raw) => a.bestEnergy - b.bestEnergy || a.energy - b.energy || a.vertex - b.vertex;

  // minima: refine every surviving pit; pits refined to one point are one state (the lowest sample leads)
  const minRaw = minimaVerts.map((v) => base(v, 'minimum'));
  const nm = minRaw.length;
  const minGroup = groupPoints3(minRaw.map((m) => m.bestX), minRaw.map((m) => m.bestY), minRaw.map((m) => m.bestZ), minRaw.map((m) => m.basis === 'refined'), tol, field, period[0]);
  const leader = Int32Array.from(minGroup);
  for (let k = 0; k < nm; k++) if (lower(minRaw[k], minRaw[leader[minGroup[k]]]) < 0) leader[minGroup[k]] = k;
  const stateOfPit = Int32Array.from({ length: nm }, (_, k) => leader[minGroup[k]]);
  const minMerged: MergedPoint3[][] = minRaw.map(() => []);
  for (let k = 0; k < nm; k++) {
    if (stateOfPit[k] === k) continue;
    minMerged[stateOfPit[k]].push(mergedPoint(minRaw[k], 'same-minimum'));
    mergedAway.minima++;
  }
  const stateIds: number[] = [];
  const compact = new Int32Array(nm).fill(-1);
  for (let k = 0; k < nm; k++) if (stateOfPit[k] === k) { compact[k] = stateIds.length; stateIds.push(k); }
  const labelOf = Int32Array.from({ length: nm }, (_, k) => compact[stateOfPit[k]]);
  const statePers = new Float64Array(nm).fill(-Infinity);
  for (let j = 0; j < nm; j++) statePers[stateOfPit[j]] = Math.max(statePers[stateOfPit[j]], persOf.get(minimaVerts[j]) ?? Infinity);
  const minTmp = stateIds.map((k) => ({ k: compact[k], rec: minRaw[k], merged: minMerged[k], persistence: Number.isFinite(statePers[k]) ? statePers[k] : null }));
  minTmp.sort((a, b) => better(a.rec, b.rec));
  const minId = new Array<string>(stateIds.length);
  minTmp.forEach((m, r) => { minId[m.k] = `M${r + 1}`; });
  const labelName = (label: number): string => (label === OUTSIDE ? 'outside' : minId[label]);
  const energyOfLabel = new Float64Array(stateIds.length);
  for (const m of minTmp) energyOfLabel[m.k] = m.rec.bestEnergy;
  const minEnergyOfLabel = (label: number): number => (label === OUTSIDE ? -Infinity : energyOfLabel[label]);

  // transition states: the basins each surviving index-1 saddle joins
  const pairsOf = (comps: number[]): [number, number][] => {
    comps.sort((a, b) => minEnergyOfLabel(a) - minEnergyOfLabel(b) || a - b);
    const pairs: [number, number][] = [];
    for (let i = 0; i < comps.length; i++) for (let j = i + 1; j < comps.length; j++) {
      if (!pairs.some(([p, q]) => p === comps[i] && q === comps[j])) pairs.push([comps[i], comps[j]]);
    }
    if (pairs.length === 0) pairs.push([comps[0] ?? OUTSIDE, comps[0] ?? OUTSIDE]);
    return pairs;
  };
  const tsRaw = passVerts.map((v, k) => {
    const raw = lowerLinkComponents3(cx, v).map((u) => (u === GHOST3 ? OUTSIDE : basinOf[u]));
    // whether it joined distinct sampled pits before the minima were merged
    const distinct = new Set(raw).size > 1;
    const comps = raw.map((b) => (b >= 0 ? labelOf[b] : b));
    return { k, mult: passMult[k], comps, distinct, rec: base(v, 'transition-state') };
  });
  // every lattice point's basin label in terms of the states
  if (mergedAway.minima > 0) for (let i = 0; i < basinOf.length; i++) if (basinOf[i] >= 0) basinOf[i] = labelOf[basinOf[i]];
  const nt = tsRaw.length;
  const tsGroup = groupPoints3(tsRaw.map((t) => t.rec.bestX), tsRaw.map((t) => t.rec.bestY), tsRaw.map((t) => t.rec.bestZ), tsRaw.map((t) => t.rec.basis === 'refined'), tol, field, period[0]);
  const tsLead = Int32Array.from(tsGroup);
  for (let k = 0; k < nt; k++) if (lower(tsRaw[k].rec, tsRaw[tsLead[tsGroup[k]]].rec) < 0) tsLead[tsGroup[k]] = k;
  const groupMembers = new Map<number, number[]>();
  for (let k = 0; k < nt; k++) {
    const g = tsLead[tsGroup[k]];
    const list = groupMembers.get(g);
    if (list) list.push(k); else groupMembers.set(g, [k]);
  }
  const tsTmp: { rec: Raw; mult: number; pairs: [number, number][]; merged: MergedPoint3[]; persistence: number | null }[] = [];
  for (const [lead, members] of groupMembers) {
    const comps = [...new Set(members.flatMap((k) => tsRaw[k].comps))];
    // a join of two sampled pits that are one minimum joins that minimum to itself: it is part of it
    if (mergedAway.minima > 0 && comps.length === 1 && comps[0] >= 0 && members.some((k) => tsRaw[k].distinct)) {
      for (const k of members) minMerged[stateIds[comps[0]]].push(mergedPoint(tsRaw[k].rec, 'saddle-inside-minimum'));
      mergedAway.transitionStates += members.length;
      continue;
    }
    const merged = members.filter((k) => k !== lead).map((k) => mergedPoint(tsRaw[k].rec, 'same-saddle'));
    mergedAway.transitionStates += merged.length;
    let pers = -Infinity;
    for (const k of members) pers = Math.max(pers, persOf.get(tsRaw[k].rec.vertex) ?? Infinity);
    tsTmp.push({ rec: tsRaw[lead].rec, mult: Math.max(...members.map((k) => tsRaw[k].mult)), pairs: pairsOf(comps), merged, persistence: Number.isFinite(pers) ? pers : null });
  }
  tsTmp.sort((a, b) => better(a.rec, b.rec));

  const minima: Minimum3Record[] = minTmp.map((m) => ({
    id: minId[m.k], ...m.rec, merged: m.merged, persistence: m.persistence, basin: { samples: 0, area: 0, freeEnergy: null, population: null },
  }));
  const transitionStates: TransitionState3Record[] = tsTmp.map((t, r) => {
    const pairs = t.pairs.map(([a, b]) => [labelName(a), labelName(b)] as [string, string]);
    return {
      id: `T${r + 1}`, ...t.rec, merged: t.merged, persistence: t.persistence, multiplicity: t.mult,
      connects: pairs[0], connectsPairs: pairs, inTree: false, path: null, pathNote: null,
    };
  });
  const minById = new Map(minima.map((m) => [m.id, m]));

  const barrierRows: BarrierRow[] = [];
  for (const t of transitionStates) {
    for (const [a, b] of t.connectsPairs) {
      const ma = minById.get(a), mb = minById.get(b);
      const basis: EnergyBasis = t.basis === 'refined' && (ma?.basis ?? 'refined') === 'refined' && (mb?.basis ?? 'refined') === 'refined' ? 'refined' : 'sampled';
      barrierRows.push({ from: a, to: b, via: t.id, forward: ma ? t.bestEnergy - ma.bestEnergy : null, backward: mb ? t.bestEnergy - mb.bestEnergy : null, basis });
    }
  }
  // the hierarchy over the states (sets inTree on the transition states that join something)
  const hierarchy = hierarchyOverStates(minima, transitionStates);
  let minimax: MinimaxRow[] | null = null;
  if (minima.length <= MINIMAX_LIMIT) minimax = minimaxBarriers(hierarchy, minima);
  else notes.push(`${minima.length} minima: the pairwise lowest-barrier table is left out above ${MINIMAX_LIMIT} minima (the disconnectivity graph holds the same information)`);

  basinThermodynamics3(grid, values, basinOf, minima, minTmp.map((m) => m.k), kT);

  // minimum-energy paths, lowest transition states first
  const maxPaths = opts.maxPaths ?? 200;
  let traced = 0;
  for (const t of transitionStates) {
    if (t.refined.status !== 'converged') { t.pathNote = `no path: the transition state was not refined (${t.refined.status})`; continue; }
    if (traced >= maxPaths) { t.pathNote = `no path: only the ${maxPaths} lowest transition states are traced`; continue; }
    traced++;
    const [vx, vy, vz] = t.refined.eigen.vectors[0];
    const ends: [string | null, string | null] = [null, null];
    let side = 0;
    const target = (x: number, y: number, z: number): [number, number, number] | null => {
      const k = side++;
      const i = field.nearestSample(x, y, z);
      const label = i >= 0 ? basinOf[i] : -1;
      if (label < 0) return null;
      const m = minById.get(minId[label])!;
      ends[k] = m.id;
      const [dx, dy, dz] = field.delta(x, y, z, m.bestX, m.bestY, m.bestZ);
      return [x + dx, y + dy, z + dz];
    };
    const mep = minimumEnergyPath3(field, t.refined.x, t.refined.y, t.refined.z, vx, vy, vz, { images: opts.images }, target);
    const n = mep.x.length;
    const endOf = (k: number): string | null => {
      if (k < 0 || k >= n) return null;
      let best: string | null = null, bestD = 3 * field.spacing;
      for (const m of minima) {
        const d = field.distance(mep.x[k], mep.y[k], mep.z[k], m.bestX, m.bestY, m.bestZ);
        if (d <= bestD) { best = m.id; bestD = d; }
      }
      return best;
    };
    if (ends[0] === null) ends[0] = endOf(0);
    if (ends[1] === null) ends[1] = endOf(n - 1);
    const sides = t.connects.map((id) => minById.get(id)?.bestEnergy).filter((e): e is number => e !== undefined);
    const barrier = sides.length ? t.bestEnergy - Math.max(...sides) : NaN;
    const diff = mep.maximum.energy - t.bestEnergy;
    const offset = field.distance(t.bestX, t.bestY, t.bestZ, mep.maximum.x, mep.maximum.y, mep.maximum.z);
    const tolE = Math.max(0.01 * Math.abs(barrier), 1e-9 * Math.abs(t.bestEnergy));
    const agrees = Number.isFinite(diff) && Math.abs(diff) <= tolE && offset <= 2 * field.spacing;
    t.path = { ...mep, ends, maximumMinusTs: diff, maximumOffset: offset, agrees };
    const here: string[] = [];
    if (mep.status !== 'converged') here.push(mep.message ?? mep.status);
    if (!agrees && n > 0) here.push(`the highest point on the path is ${fmt(diff)} above the transition state and ${fmt(offset)} away from it`);
    const want = [...t.connects].sort().join(' ');
    const got = ends.map((e) => e ?? '?').sort().join(' ');
    if (n > 0 && want !== got) here.push(`the path ends at ${ends.map((e) => e ?? 'no minimum').join(' and ')}, not at ${t.connects.join(' and ')}`);
    t.pathNote = here.length ? here.join('; ') : null;
  }

  const badMin = minima.filter((m) => m.refined.status !== 'converged').length;
  const badTs = transitionStates.filter((t) => t.refined.status !== 'converged').length;
  if (loopSaddles > 0) notes.push(`${loopSaddles} index-1 saddle${loopSaddles === 1 ? '' : 's'} that close${loopSaddles === 1 ? 's' : ''} a loop (a second channel between basins already joined, a way round a periodic axis, or a dip on a ridge) ${loopSaddles === 1 ? 'is' : 'are'} not reported as transition states in 3-D: telling them apart needs dimension-1 persistence, which is not computed`);
  if (badMin + badTs > 0) notes.push(`refinement failed for ${badMin} minim${badMin === 1 ? 'um' : 'a'} and ${badTs} transition state${badTs === 1 ? '' : 's'}: their sampled values are used (see each point's refinement message)`);

  return {
    surface: grid, survey: res, field, connectivity, boundary: cx.boundary, wrap, units, temperature: T, kT,
    minPersistence: { value: minP, source: minPSource },
    noiseFloor: { ...floor, used: floorUsed },
    removed: {
      belowThreshold: {
        minima: removed.minima, transitionStates: removed.transitionStates, threshold: minP,
        rule: floorUsed ? 'persistence below the noise floor' : minPSource === 'given' ? 'persistence below --min-persistence' : 'persistence below 1 kT',
      },
      edge: { transitionStates: 0, rule: 'saddle on the hull of the samples where the surface rises out of the window by more than the threshold within one sample spacing' },
      merged: { minima: mergedAway.minima, transitionStates: mergedAway.transitionStates, rule: `refined to the same point (within ${MERGE_TOLERANCE} sample spacing), or a saddle between two such pits` },
      loops: { saddles: loopSaddles, rule: 'index-1 saddles (with multiplicity) that close a loop instead of merging basins — a second channel between basins already joined, a way round a periodic axis, or a dip on a ridge: not reported in 3-D, where dimension-1 persistence (which would tell them apart) is not computed' },
    },
    minima, transitionStates, barriers: barrierRows, minimax, hierarchy, basinOf, period, notes,
  };
}

function fmt(x: number): string {
  return Number(x.toPrecision(3)).toString();
}

/** Basin sizes (lattice points and their cells' volume), free energies and populations (in place on `minima`). */
function basinThermodynamics3(grid: Grid3, values: ArrayLike<number>, basinOf: Int32Array, minima: Minimum3Record[], labelOfRank: number[], kT: number | null): void {
  const nb = minima.length;
  const dV = grid.spacing[0] * grid.spacing[1] * grid.spacing[2];
  const count = new Float64Array(nb), emin = new Float64Array(nb).fill(Infinity);
  const n = basinOf.length;
  for (let i = 0; i < n; i++) {
    const b = basinOf[i];
    if (b < 0) continue;
    count[b]++;
    if (values[i] < emin[b]) emin[b] = values[i];
  }
  const rankOfLabel = new Int32Array(nb);
  labelOfRank.forEach((label, r) => { rankOfLabel[label] = r; });
  for (let b = 0; b < nb; b++) {
    const m = minima[rankOfLabel[b]];
    m.basin.samples = count[b];
    m.basin.area = count[b] * dV;
  }
  if (kT === null) return;
  const sum = new Float64Array(nb);
  for (let i = 0; i < n; i++) {
    const b = basinOf[i];
    if (b < 0) continue;
    sum[b] += Math.exp(-(values[i] - emin[b]) / kT) * dV;
  }
  const F = new Float64Array(nb);
  let Fmin = Infinity;
  for (let b = 0; b < nb; b++) { F[b] = emin[b] - kT * Math.log(sum[b]); if (F[b] < Fmin) Fmin = F[b]; }
  let Z = 0;
  for (let b = 0; b < nb; b++) Z += Math.exp(-(F[b] - Fmin) / kT);
  for (let b = 0; b < nb; b++) {
    const m = minima[rankOfLabel[b]];
    m.basin.freeEnergy = F[b];
    m.basin.population = Math.exp(-(F[b] - Fmin) / kT) / Z;
  }
}
