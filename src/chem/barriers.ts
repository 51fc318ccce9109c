/**
 * `barriers`: stable states, transition states, barriers, minimum-energy paths, basin
 * thermodynamics and the basin hierarchy of a sampled energy surface.
 *
 *  - Minima are the pits that survive persistence simplification (the leaves of the simplified join
 *    tree). Transition states are the passes that survive it: each joins the basins its lower-link
 *    pieces drain to (`connects`). Passes where sublevel components merge are the inner nodes of the
 *    join tree (`inTree`), which is the basin hierarchy drawn as the disconnectivity graph; other
 *    passes (a second channel between the same basins, or a way round a periodic surface) are
 *    transition states too, but do not change the hierarchy.
 *  - Each point is refined on a fit of the surface (src/chem/field.ts, src/chem/refine.ts).
 *  - Barriers use the refined energies where refinement succeeded, the sampled values otherwise
 *    (each row says which).
 *  - Basins are steepest-descent regions (src/chem/basins.ts); their free energies are
 *    F_b = −kT ln Σ_{i∈b} exp(−E_i/kT)·dA_i over the samples of the basin (dA: cell area on a grid,
 *    a third of the incident triangles' area on a mesh).
 *
 * Everything here is in the input's energy unit; src/report/barriers.ts converts for output.
 */
import { InputError } from '../errors.js';
import type { Grid } from '../surface/grid.js';
import type { Mesh } from '../surface/mesh.js';
import type { Boundary, Connectivity } from '../surface/complex.js';
import { survey, type SurveyResult } from '../morse/survey.js';
import { simplifyMergeTree, type MergeTree } from '../morse/mergetree.js';
import { PASS } from '../morse/critical.js';
import { locate, type Location } from '../report/common.js';
import { fieldFor, type Field, type MeshFieldOptions } from './field.js';
import { refineStationary, descendOnFit, type Refined } from './refine.js';
import { minimumEnergyPath, type MinimumEnergyPath } from './mep.js';
import { pitRepresentatives, descentLabels, lowerLinkComponents, OUTSIDE, GHOST } from './basins.js';
import { applyCap, preparePeriodic } from './prepare.js';
import { noiseFloor, type NoiseFloor } from './noise.js';
import { groupByPoint, hullInfo, localSpacing, outwardRise } from './merge.js';
import { checkTemperature, kTIn, type EnergyUnit } from './units.js';

export interface BarriersOptions {
  connectivity?: Connectivity;
  /** Threads for the survey of the surface (see SurveyOptions); default the number of cores. */
  threads?: number;
  /** Default 'closed': the edge of the sampled window is a wall. */
  boundary?: Boundary;
  /** Energy unit of the input values; default 'none'. */
  units?: EnergyUnit;
  /** Temperature in kelvin; default 300. */
  temperature?: number;
  /** Persistence threshold in input units; default 1 kT when the unit allows, 0 otherwise. */
  minPersistence?: number;
  /** Values above this (input units) count as unsampled. */
  cap?: number;
  /** Span each periodic axis must have (x, y); default 360 or 2π. */
  period?: [number | null, number | null];
  /** Images on each string; default 81. */
  images?: number;
  /** Minimum-energy paths are traced for at most this many transition states (lowest first); default 200. */
  maxPaths?: number;
  /** Scattered samples: options of the moving-least-squares fit. */
  meshFit?: MeshFieldOptions;
}

/** Most images on one string: a path is resolved by the grid it runs over, and each image costs a fit per iteration. */
export const MAX_IMAGES = 10000;
export const IMAGES_WHY = 'a path is resolved by the samples it crosses, so more images add no detail, while each one costs a fit at every iteration of every path';
/** Most minimum-energy paths traced in one run: each is a string-method run and a file of its own. */
export const MAX_PATHS = 10000;
export const PATHS_WHY = 'each path is a string-method run and a file of its own; keep fewer transition states with --min-persistence, or trace the lowest ones first';

/** Pairwise minimax barriers are listed for at most this many minima. */
export const MINIMAX_LIMIT = 300;

export type EnergyBasis = 'refined' | 'sampled';

/** Refined points closer than this many local sample spacings are one stationary point. */
export const MERGE_TOLERANCE = 0.5;
/** How far (in sample spacings) the descent on the fit from a failed minimum may go to find the minimum whose basin holds it. */
export const FAILED_DESCENT_SPACINGS = 20;

/** A sampled critical point folded into a state. */
export interface MergedPoint {
  /** Sample index, location and value. */
  index: number;
  x: number;
  y: number;
  energy: number;
  /** Its own refinement status. */
  refinement: string;
  /**
   * 'same-minimum' / 'same-saddle': refined to the same point as the state (within MERGE_TOLERANCE
   * local spacings); 'failed-minimum-in-basin': its refinement failed, descent on the fit from it
   * reaches the state's minimum, and it lies no more than the threshold above that minimum;
   * 'saddle-inside-minimum': the pass that joined two sampled pits that are this one minimum.
   */
  rule: 'same-minimum' | 'same-saddle' | 'failed-minimum-in-basin' | 'saddle-inside-minimum';
}

export interface StationaryRecord {
  id: string;
  vertex: number;
  /** Where it was found on the samples (cell or sample point). */
  location: Location;
  /** Sampled value there. */
  energy: number;
  onEdge: boolean;
  refined: Refined;
  /** Refined energy when refinement converged with the right Hessian signature, else the sampled value. */
  bestEnergy: number;
  bestX: number;
  bestY: number;
  basis: EnergyBasis;
  /** Sampled critical points folded into this state (none usually). */
  merged: MergedPoint[];
  /** Persistence of the feature on the samples (its pair in the sublevel filtration); null when it never dies. */
  persistence: number | null;
}

export interface BasinInfo {
  /** Samples draining to the minimum. */
  samples: number;
  /** Area of those samples (map units²). */
  area: number;
  /** −kT ln Σ exp(−E/kT)·dA (null when the unit has no kT). */
  freeEnergy: number | null;
  population: number | null;
}

export interface MinimumRecord extends StationaryRecord {
  basin: BasinInfo;
}

export interface PathRecord extends MinimumEnergyPath {
  /** Minima the two ends settled in (null when an end is not near a minimum). */
  ends: [string | null, string | null];
  /** Highest point on the path minus the transition-state energy used for the barriers. */
  maximumMinusTs: number;
  /** Distance from the highest point to the transition state. */
  maximumOffset: number;
  /** The highest point coincides with the transition state (energy within 1% of the barrier, position within 2 spacings). */
  agrees: boolean;
}

export interface TransitionStateRecord extends StationaryRecord {
  multiplicity: number;
  /** The two basins joined (deeper first); 'outside' on an open boundary. */
  connects: [string, string];
  /** Every pair of basins joined (one pair unless a monkey saddle). */
  connectsPairs: [string, string][];
  /** A merge of the basin hierarchy (inner node of the simplified join tree). */
  inTree: boolean;
  path: PathRecord | null;
  /** Why there is no path, or what to know about it. */
  pathNote: string | null;
}

export interface BarrierRow {
  from: string;
  to: string;
  via: string;
  /** E(TS) − E(from); null when `from` is the outside. */
  forward: number | null;
  backward: number | null;
  basis: EnergyBasis;
}

export interface MinimaxRow {
  a: string;
  b: string;
  /** Transition state at which the basins of a and b first join (lowest barrier path). */
  via: string;
  energy: number;
  fromA: number;
  fromB: number;
}

export interface HierarchyNode {
  id: number;
  kind: 'minimum' | 'transition-state' | 'outside';
  /** Minimum or transition-state id. */
  ref: string | null;
  energy: number | null;
  parent: number | null;
  children: number[];
}

export interface BarriersResult {
  surface: Grid | Mesh;
  survey: SurveyResult;
  field: Field;
  connectivity: Connectivity | null;
  boundary: Boundary;
  units: EnergyUnit;
  temperature: number;
  /** k_B·T in input units (null for 'none'). */
  kT: number | null;
  minPersistence: { value: number; source: string };
  /** The noise floor estimated from the samples, and whether it set the threshold. */
  noiseFloor: NoiseFloor & { used: boolean };
  /**
   * What was left out or folded together: features with positive persistence below the threshold,
   * saddles on the hull of scattered samples where the surface climbs out of the window, and
   * sampled points merged into another state.
   */
  removed: {
    belowThreshold: { minima: number; transitionStates: number; threshold: number; rule: string };
    edge: { transitionStates: number; rule: string };
    merged: { minima: number; transitionStates: number; rule: string };
  };
  minima: MinimumRecord[];
  transitionStates: TransitionStateRecord[];
  barriers: BarrierRow[];
  minimax: MinimaxRow[] | null;
  hierarchy: HierarchyNode[];
  /** Steepest-descent basin of every sample: index into `minima`, −2 outside, −1 nodata. */
  basinOf: Int32Array;
  /** Periods of the wrapped axes. */
  period: [number | null, number | null];
  notes: string[];
}

export function barriers(input: Grid | Mesh, opts: BarriersOptions = {}): BarriersResult {
  const units = opts.units ?? 'none';
  const T = checkTemperature(opts.temperature ?? 300);
  if (opts.images !== undefined && !(Number.isInteger(opts.images) && opts.images >= 5 && opts.images <= MAX_IMAGES)) {
    throw new InputError(`images must be a whole number from 5 to ${MAX_IMAGES}, got ${opts.images}: ${IMAGES_WHY}`);
  }
  if (opts.maxPaths !== undefined && !(Number.isInteger(opts.maxPaths) && opts.maxPaths >= 0 && opts.maxPaths <= MAX_PATHS)) {
    throw new InputError(`maxPaths must be a whole number from 0 to ${MAX_PATHS}, got ${opts.maxPaths}: ${PATHS_WHY}`);
  }
  const kT = kTIn(units, T);
  const boundary = opts.boundary ?? 'closed';
  const notes: string[] = [];

  if (opts.minPersistence !== undefined && (!(opts.minPersistence >= 0) || !Number.isFinite(opts.minPersistence))) {
    throw new InputError(`minimum persistence must be a number ≥ 0, got ${opts.minPersistence}`);
  }

  let surface = input;
  if (opts.cap !== undefined) {
    if (!Number.isFinite(opts.cap)) throw new InputError(`the energy cap must be a finite number, got ${opts.cap}`);
    const c = applyCap(surface, opts.cap);
    surface = c.surface;
    if (c.capped > 0) notes.push(`${c.capped} sample${c.capped === 1 ? '' : 's'} above the cap ${opts.cap} treated as unsampled`);
    if (surface.kind === 'grid' && surface.validCount() === 0) throw new InputError(`every sample is above the cap ${opts.cap}; raise --cap`);
  }
  const prep = preparePeriodic(surface, boundary, opts.period);
  surface = prep.surface;
  notes.push(...prep.notes);

  // the noise floor of the samples: the default threshold when neither a unit nor a threshold is given
  const floor = noiseFloor(surface);
  let minP: number, minPSource: string, threshold: number;
  if (opts.minPersistence !== undefined) {
    minP = opts.minPersistence;
    minPSource = 'given';
    threshold = minP;
  } else if (kT !== null) {
    minP = kT;
    minPSource = `default: 1 kT at ${T} K`;
    threshold = minP;
  } else {
    minP = floor.value;
    minPSource = `default: the noise floor of the samples (${floor.estimator})`;
    // a quantised grid: features one quantum deep are within the rounding, so they go too
    threshold = surface.kind === 'grid' && floor.value > 0 ? floor.value * (1 + 1e-6) : floor.value;
  }
  const floorUsed = opts.minPersistence === undefined && kT === null;

  const res = survey(surface, { connectivity: opts.connectivity, boundary, minPersistence: 0, threads: opts.threads });
  const cx = res.complex;
  const values = cx.values;
  // persistence below the threshold is cancelled; zero persistence (ties) always is
  threshold = Math.max(threshold, Number.MIN_VALUE);
  const tree = simplifyMergeTree(res.join, values, threshold);
  const rep = pitRepresentatives(res.join, values, threshold);

  const minimaVerts: number[] = [];
  for (let k = 0; k < tree.vertex.length; k++) if (tree.childCount[k] === 0 && tree.vertex[k] >= 0) minimaVerts.push(tree.vertex[k]);
  if (minimaVerts.length === 0) {
    throw new InputError(`no minimum is left after simplification (minimum persistence ${minP}${cx.hasOmega ? ', open boundary: every basin spills off the map' : ''}); lower --min-persistence${cx.hasOmega ? ' or use --boundary closed' : ''}`);
  }
  const minimaArr = Int32Array.from(minimaVerts);
  const basinOf = descentLabels(cx, res.order, rep, minimaArr);

  // passes left after cancelling pairs below the threshold; features with positive persistence below it are counted as removed
  const cancelled = new Map<number, number>();
  const P = res.pairs;
  // persistence of the surviving pair(s) at each pit and pass (the largest, for a pass in two pairs)
  const persOf = new Map<number, number>();
  const removed = { minima: 0, transitionStates: 0 };
  for (let k = 0; k < P.dim.length; k++) {
    const passV = P.dim[k] === 0 ? P.deathVertex[k] : P.birthVertex[k];
    if (!(P.persistence[k] < threshold)) {
      if (P.dim[k] === 0) persOf.set(P.birthVertex[k], P.persistence[k]);
      persOf.set(passV, Math.max(persOf.get(passV) ?? 0, P.persistence[k]));
      continue;
    }
    cancelled.set(passV, (cancelled.get(passV) ?? 0) + 1);
    if (P.persistence[k] > 0) {
      removed.transitionStates++;
      if (P.dim[k] === 0) removed.minima++;
    }
  }
  const passVerts: number[] = [], passMult: number[] = [];
  const cp = res.critical;
  for (let k = 0; k < cp.vertex.length; k++) {
    if (cp.kind[k] !== PASS) continue;
    const m = cp.multiplicity[k] - (cancelled.get(cp.vertex[k]) ?? 0);
    if (m > 0) { passVerts.push(cp.vertex[k]); passMult.push(m); }
  }

  const wrapX = boundary === 'periodic' || boundary === 'periodic-x';
  const wrapY = boundary === 'periodic' || boundary === 'periodic-y';
  const field = fieldFor(surface, wrapX && surface.kind === 'grid', wrapY && surface.kind === 'grid', opts.meshFit);

  const base = (vertex: number, kind: 'minimum' | 'transition-state'): Omit<StationaryRecord, 'id' | 'merged' | 'persistence'> => {
    const location = locate(surface, vertex);
    const refined = refineStationary(field, location.x, location.y, kind);
    const good = refined.status === 'converged';
    return {
      vertex, location, energy: values[vertex], onEdge: cx.onEdge(vertex), refined,
      bestEnergy: good ? refined.energy : values[vertex],
      bestX: good ? refined.x : location.x,
      bestY: good ? refined.y : location.y,
      basis: good ? 'refined' : 'sampled',
    };
  };
  // x wraps (grids only): the period, for the searches by x
  const periodX = field.periodic && wrapX ? prep.period[0] : null;
  const hull = surface.kind === 'mesh' ? hullInfo(surface) : null;
  // two refined points closer than half the local sample spacing are one stationary point
  const mergeTol = (vertex: number) => MERGE_TOLERANCE * localSpacing(surface, vertex, field.spacing);
  const mergedAway = { minima: 0, transitionStates: 0, edge: 0 };
  const mergedPoint = (r: Omit<StationaryRecord, 'id' | 'merged' | 'persistence'>, rule: MergedPoint['rule']): MergedPoint => ({
    index: r.vertex, x: r.location.x, y: r.location.y, energy: r.energy, refinement: r.refined.status, rule,
  });
  const better = (a: Omit<StationaryRecord, 'id' | 'merged' | 'persistence'>, b: Omit<StationaryRecord, 'id' | 'merged' | 'persistence'>) =>
    a.bestEnergy - b.bestEnergy || a.energy - b.energy || a.vertex - b.vertex;

  // minima: refine every sampled pit, then one state per refined point
  const minRaw = minimaVerts.map((v) => base(v, 'minimum'));
  const nm = minRaw.length;
  const minGroup = groupByPoint(
    minRaw.map((m) => m.bestX), minRaw.map((m) => m.bestY), minRaw.map((m) => mergeTol(m.vertex)),
    minRaw.map((m) => m.basis === 'refined'), field.delta.bind(field), periodX,
  );
  // a failed minimum that lies in a refined minimum's basin of the fit, no higher than the floor above it, joins it
  const minMerged: MergedPoint[][] = minRaw.map(() => []);
  const leader = new Int32Array(nm);
  for (let k = 0; k < nm; k++) leader[k] = minGroup[k];
  // the deepest member leads each group
  // (members of a group share the refined point, so the lowest sample leads)
  const lower = (a: { energy: number; vertex: number }, b: { energy: number; vertex: number }) => a.energy - b.energy || a.vertex - b.vertex;
  for (let k = 0; k < nm; k++) if (lower(minRaw[k], minRaw[leader[minGroup[k]]]) < 0) leader[minGroup[k]] = k;
  const headOf = (k: number) => leader[minGroup[k]];
  const failedInto = new Int32Array(nm).fill(-1);
  if (threshold > Number.MIN_VALUE && minRaw.some((m) => m.basis === 'sampled' && !m.onEdge)) {
    const leaders: number[] = [];
    for (let j = 0; j < nm; j++) if (minRaw[j].basis === 'refined' && headOf(j) === j) leaders.push(j);
    leaders.sort((a, b) => minRaw[a].bestX - minRaw[b].bestX);
    const leadX = Float64Array.from(leaders, (j) => minRaw[j].bestX);
    const leadTolMax = leaders.reduce((t, j) => Math.max(t, mergeTol(minRaw[j].vertex)), 0);
    for (let k = 0; k < nm; k++) {
      const f = minRaw[k];
      if (f.basis === 'refined' || f.onEdge) continue;
      const d = descendOnFit(field, f.location.x, f.location.y, FAILED_DESCENT_SPACINGS);
      if (d === null) continue;
      // the refined minimum the descent reached (leaders sorted by x; look within the largest
      // tolerance, and across the seam when x wraps)
      search: for (const shift of periodX === null ? [0] : [0, periodX, -periodX]) {
        const cx = d.x + shift;
        for (let q = lowerBound(leadX, cx - leadTolMax); q < leaders.length && leadX[q] <= cx + leadTolMax; q++) {
          const j = leaders[q], m = minRaw[j];
          if (Math.hypot(...field.delta(d.x, d.y, m.bestX, m.bestY)) > mergeTol(m.vertex)) continue;
          if (f.energy - m.bestEnergy <= threshold) failedInto[k] = j;
          break search;
        }
      }
    }
  }
  // label of every sampled pit → the state that represents it
  const stateOfPit = new Int32Array(nm);
  for (let k = 0; k < nm; k++) stateOfPit[k] = failedInto[k] >= 0 ? failedInto[k] : headOf(k);
  for (let k = 0; k < nm; k++) {
    const s = stateOfPit[k];
    if (s === k) continue;
    minMerged[s].push(mergedPoint(minRaw[k], failedInto[k] >= 0 ? 'failed-minimum-in-basin' : 'same-minimum'));
    mergedAway.minima++;
  }
  // compact labels 0..R−1 over the states, deepest first later
  const stateIds: number[] = [];
  const compact = new Int32Array(nm).fill(-1);
  for (let k = 0; k < nm; k++) if (stateOfPit[k] === k) { compact[k] = stateIds.length; stateIds.push(k); }
  const labelOf = new Int32Array(nm);
  for (let k = 0; k < nm; k++) labelOf[k] = compact[stateOfPit[k]];
  // a state's persistence: the largest of its sampled pits' (a pit that never dies makes it null)
  const statePers = new Float64Array(nm).fill(-Infinity);
  for (let j = 0; j < nm; j++) statePers[stateOfPit[j]] = Math.max(statePers[stateOfPit[j]], persOf.get(minimaVerts[j]) ?? Infinity);
  const minPersOf = (k: number): number | null => (Number.isFinite(statePers[k]) ? statePers[k] : null);
  const minTmp = stateIds.map((k) => ({ k: compact[k], rec: minRaw[k], merged: minMerged[k], persistence: minPersOf(k) }));
  minTmp.sort((a, b) => better(a.rec, b.rec));
  const minId = new Array<string>(stateIds.length);
  minTmp.forEach((m, r) => { minId[m.k] = `M${r + 1}`; });
  const labelName = (label: number): string => (label === OUTSIDE ? 'outside' : minId[label]);
  const energyOfLabel = new Float64Array(stateIds.length);
  for (const m of minTmp) energyOfLabel[m.k] = m.rec.bestEnergy;
  const minEnergyOfLabel = (label: number): number => (label === OUTSIDE ? -Infinity : energyOfLabel[label]);

  // transition states: the basins each pass joins (after the merges of minima)
  const treeVerts = new Set<number>();
  for (let k = 0; k < tree.vertex.length; k++) if (tree.childCount[k] > 0 && tree.vertex[k] >= 0) treeVerts.add(tree.vertex[k]);
  const pairsOf = (comps: number[]): [number, number][] => {
    comps.sort((a, b) => minEnergyOfLabel(a) - minEnergyOfLabel(b) || a - b);
    const pairs: [number, number][] = [];
    for (let i = 0; i < comps.length; i++) {
      for (let j = i + 1; j < comps.length; j++) {
        if (!pairs.some(([p, q]) => p === comps[i] && q === comps[j])) pairs.push([comps[i], comps[j]]);
      }
    }
    if (pairs.length === 0) pairs.push([comps[0] ?? OUTSIDE, comps[0] ?? OUTSIDE]);
    return pairs;
  };
  const tsRaw = passVerts.map((v, k) => {
    const raw = lowerLinkComponents(cx, v).map((u) => (u === GHOST ? OUTSIDE : basinOf[u]));
    // whether it joined distinct basins before the minima were merged
    const distinct = new Set(raw).size > 1;
    const comps = raw.map((b) => (b >= 0 ? labelOf[b] : b));
    return { k, mult: passMult[k], comps, distinct, inTree: treeVerts.has(v), rec: base(v, 'transition-state') };
  });
  // every sample's basin label in terms of the states
  if (mergedAway.minima > 0) for (let i = 0; i < basinOf.length; i++) if (basinOf[i] >= 0) basinOf[i] = labelOf[basinOf[i]];
  const nt = tsRaw.length;
  const tsGroup = groupByPoint(
    tsRaw.map((t) => t.rec.bestX), tsRaw.map((t) => t.rec.bestY), tsRaw.map((t) => mergeTol(t.rec.vertex)),
    tsRaw.map((t) => t.rec.basis === 'refined'), field.delta.bind(field), periodX,
  );
  const tsLead = new Int32Array(nt);
  for (let k = 0; k < nt; k++) tsLead[k] = tsGroup[k];
  for (let k = 0; k < nt; k++) if (lower(tsRaw[k].rec, tsRaw[tsLead[tsGroup[k]]].rec) < 0) tsLead[tsGroup[k]] = k;
  const minOfLabel = (label: number) => stateIds[label];
  const edgeRemoved: number[] = [];
  const tsKeep: { lead: number; members: number[] }[] = [];
  const groupMembers = new Map<number, number[]>();
  for (let k = 0; k < nt; k++) {
    const g = tsLead[tsGroup[k]];
    const list = groupMembers.get(g);
    if (list) list.push(k); else groupMembers.set(g, [k]);
  }
  for (const [lead, members] of groupMembers) {
    const t = tsRaw[lead];
    const comps = new Set(members.flatMap((k) => tsRaw[k].comps));
    const inTree = members.some((k) => tsRaw[k].inTree);
    // a join of two sampled pits that are one minimum: it joins that minimum to itself, so it is part of it
    if (mergedAway.minima > 0 && inTree && comps.size === 1 && members.some((k) => tsRaw[k].distinct)) {
      const label = [...comps][0];
      if (label >= 0) {
        for (const k of members) minMerged[minOfLabel(label)].push(mergedPoint(tsRaw[k].rec, 'saddle-inside-minimum'));
        mergedAway.transitionStates += members.length;
        continue;
      }
    }
    // scattered samples: an unrefined saddle on the hull (or next to it) where the surface climbs out
    // of the window by more than the threshold within one spacing is an artefact of where the hull was sampled
    if (surface.kind === 'mesh' && hull !== null && !inTree && threshold > Number.MIN_VALUE && t.rec.basis === 'sampled' && members.length === 1 && outwardRise(surface, hull, t.rec.vertex, field, localSpacing(surface, t.rec.vertex, field.spacing)) > threshold) {
      edgeRemoved.push(lead);
      continue;
    }
    tsKeep.push({ lead, members });
  }
  mergedAway.edge = edgeRemoved.length;
  const tsTmp = tsKeep.map(({ lead, members }) => {
    const t = tsRaw[lead];
    const comps = [...new Set(members.flatMap((k) => tsRaw[k].comps))];
    const merged = members.filter((k) => k !== lead).map((k) => mergedPoint(tsRaw[k].rec, 'same-saddle'));
    mergedAway.transitionStates += merged.length;
    let pers = -Infinity;
    for (const k of members) pers = Math.max(pers, persOf.get(tsRaw[k].rec.vertex) ?? Infinity);
    return {
      k: t.k, mult: Math.max(...members.map((k) => tsRaw[k].mult)), pairs: pairsOf(comps), rec: t.rec, merged,
      inTree: members.some((k) => tsRaw[k].inTree), persistence: Number.isFinite(pers) ? pers : null,
    };
  });
  tsTmp.sort((a, b) => better(a.rec, b.rec));

  const minima: MinimumRecord[] = minTmp.map((m) => ({
    id: minId[m.k], ...m.rec, merged: m.merged, persistence: m.persistence, basin: { samples: 0, area: 0, freeEnergy: null, population: null },
  }));
  const transitionStates: TransitionStateRecord[] = tsTmp.map((t, r) => {
    const pairs = t.pairs.map(([a, b]) => [labelName(a), labelName(b)] as [string, string]);
    return {
      id: `T${r + 1}`, ...t.rec, merged: t.merged, persistence: t.persistence, multiplicity: t.mult, connects: pairs[0], connectsPairs: pairs,
      inTree: t.inTree, path: null, pathNote: null,
    };
  });
  const minById = new Map(minima.map((m) => [m.id, m]));
  const tsByVertex = new Map(transitionStates.map((t) => [t.vertex, t]));

  // barrier table
  const barrierRows: BarrierRow[] = [];
  for (const t of transitionStates) {
    for (const [a, b] of t.connectsPairs) {
      const ma = minById.get(a), mb = minById.get(b);
      const basis: EnergyBasis = t.basis === 'refined' && (ma?.basis ?? 'refined') === 'refined' && (mb?.basis ?? 'refined') === 'refined' ? 'refined' : 'sampled';
      barrierRows.push({
        from: a, to: b, via: t.id,
        forward: ma ? t.bestEnergy - ma.bestEnergy : null,
        backward: mb ? t.bestEnergy - mb.bestEnergy : null,
        basis,
      });
    }
  }

  // hierarchy: the simplified join tree, or, when minima were merged, the same tree rebuilt over the
  // states (transition states in order of their sampled energy join the components of their basins)
  let hierarchy: HierarchyNode[];
  if (mergedAway.minima === 0 && mergedAway.transitionStates === 0) {
    hierarchy = [];
    const labelOfVertex = new Map<number, number>();
    minimaVerts.forEach((v, k) => labelOfVertex.set(v, k));
    for (let k = 0; k < tree.vertex.length; k++) {
      const v = tree.vertex[k];
      let kind: HierarchyNode['kind'], ref: string | null = null, energy: number | null = null;
      if (v < 0) kind = 'outside';
      else if (tree.childCount[k] === 0) {
        kind = 'minimum';
        ref = minId[labelOfVertex.get(v)!];
        energy = minById.get(ref)!.bestEnergy;
      } else {
        kind = 'transition-state';
        const t = tsByVertex.get(v) ?? transitionStates.find((s) => s.merged.some((q) => q.index === v));
        if (!t) throw new Error(`internal: merge at vertex ${v} is not a transition state`);
        ref = t.id;
        energy = t.bestEnergy;
      }
      hierarchy.push({ id: k, kind, ref, energy, parent: tree.parent[k] < 0 ? null : tree.parent[k], children: [] });
    }
    for (const node of hierarchy) if (node.parent !== null) hierarchy[node.parent].children.push(node.id);
  } else {
    hierarchy = hierarchyOverStates(minima, transitionStates);
  }

  let minimax: MinimaxRow[] | null = null;
  if (minima.length <= MINIMAX_LIMIT) minimax = minimaxBarriers(hierarchy, minima);
  else notes.push(`${minima.length} minima: the pairwise lowest-barrier table is left out above ${MINIMAX_LIMIT} minima (the disconnectivity graph holds the same information)`);

  // basin thermodynamics
  basinThermodynamics(surface, values, basinOf, minima, minTmp.map((m) => m.k), kT);

  // minimum-energy paths, lowest transition states first
  const maxPaths = opts.maxPaths ?? 200;
  let traced = 0;
  for (const t of transitionStates) {
    if (t.refined.status !== 'converged') {
      t.pathNote = `no path: the transition state was not refined (${t.refined.status})`;
      continue;
    }
    if (traced >= maxPaths) {
      t.pathNote = `no path: only the ${maxPaths} lowest transition states are traced`;
      continue;
    }
    traced++;
    const [vx, vy] = t.refined.eigen.vectors[0];
    // each end goes to the minimum whose basin the descent reached (the nearest periodic image)
    const ends: [string | null, string | null] = [null, null];
    let side = 0;
    const target = (x: number, y: number): [number, number] | null => {
      const k = side++;
      const i = field.nearestSample(x, y);
      const label = i >= 0 ? basinOf[i] : -1;
      if (label < 0) return null;
      const m = minById.get(minId[label])!;
      ends[k] = m.id;
      const [dx, dy] = field.delta(x, y, m.bestX, m.bestY);
      return [x + dx, y + dy];
    };
    const mep = minimumEnergyPath(field, t.refined.x, t.refined.y, vx, vy, { images: opts.images }, target);
    const endOf = (p: { x: number; y: number } | undefined): string | null => {
      if (!p) return null;
      let best: string | null = null, bestD = 3 * field.spacing;
      for (const m of minima) {
        const d = Math.hypot(...field.delta(p.x, p.y, m.bestX, m.bestY));
        if (d <= bestD) { best = m.id; bestD = d; }
      }
      return best;
    };
    // a free end (no basin found) is identified by the minimum it settled next to
    if (ends[0] === null) ends[0] = endOf(mep.images[0]);
    if (ends[1] === null) ends[1] = endOf(mep.images[mep.images.length - 1]);
    // the smaller of the two barriers sets the tolerance
    const sides = t.connects.map((id) => minById.get(id)?.bestEnergy).filter((e): e is number => e !== undefined);
    const barrier = sides.length ? t.bestEnergy - Math.max(...sides) : NaN;
    const diff = mep.maximum.energy - t.bestEnergy;
    const offset = Math.hypot(...field.delta(t.bestX, t.bestY, mep.maximum.x, mep.maximum.y));
    const tolE = Math.max(0.01 * Math.abs(barrier), 1e-9 * Math.abs(t.bestEnergy));
    const agrees = Number.isFinite(diff) && Math.abs(diff) <= tolE && offset <= 2 * field.spacing;
    t.path = { ...mep, ends, maximumMinusTs: diff, maximumOffset: offset, agrees };
    const notesHere: string[] = [];
    if (mep.status !== 'converged') notesHere.push(mep.message ?? mep.status);
    if (!agrees && mep.images.length > 0) notesHere.push(`the highest point on the path is ${fmt(diff)} above the transition state and ${fmt(offset)} away from it`);
    const want = [...t.connects].sort().join(' ');
    const got = ends.map((e) => e ?? '?').sort().join(' ');
    if (mep.images.length > 0 && want !== got) notesHere.push(`the path ends at ${ends.map((e) => e ?? 'no minimum').join(' and ')}, not at ${t.connects.join(' and ')}`);
    t.pathNote = notesHere.length ? notesHere.join('; ') : null;
  }

  const badMin = minima.filter((m) => m.refined.status !== 'converged').length;
  const badTs = transitionStates.filter((t) => t.refined.status !== 'converged').length;
  if (badMin + badTs > 0) notes.push(`refinement failed for ${badMin} minim${badMin === 1 ? 'um' : 'a'} and ${badTs} transition state${badTs === 1 ? '' : 's'}: their sampled values are used (see each point's refinement message)`);

  return {
    surface, survey: res, field, connectivity: cx.connectivity, boundary, units, temperature: T, kT,
    minPersistence: { value: minP, source: minPSource },
    noiseFloor: { ...floor, used: floorUsed },
    removed: {
      belowThreshold: {
        minima: removed.minima, transitionStates: removed.transitionStates, threshold: minP,
        rule: floorUsed ? 'persistence below the noise floor' : minPSource === 'given' ? 'persistence below --min-persistence' : 'persistence below 1 kT',
      },
      edge: { transitionStates: mergedAway.edge, rule: 'saddle on the hull of the samples where the surface rises out of the window by more than the threshold within one sample spacing' },
      merged: { minima: mergedAway.minima, transitionStates: mergedAway.transitionStates, rule: `refined to the same point (within ${MERGE_TOLERANCE} local sample spacing), a failed minimum inside a minimum's basin within the threshold, or a saddle between two such points` },
    },
    minima, transitionStates, barriers: barrierRows, minimax, hierarchy, basinOf, period: prep.period, notes,
  };
}

/**
 * The basin hierarchy over merged states: transition states in order of their sampled energy (the
 * order of the join tree) join the components of the basins they connect; each join is a node
 * (children before parents), and `inTree` is set on the transition states that join something.
 */
export function hierarchyOverStates(
  minima: readonly Pick<MinimumRecord, 'id' | 'bestEnergy'>[],
  transitionStates: Pick<TransitionStateRecord, 'id' | 'energy' | 'vertex' | 'bestEnergy' | 'connectsPairs' | 'inTree'>[],
): HierarchyNode[] {
  const nodes: HierarchyNode[] = [];
  const nodeOf = new Map<string, number>();
  for (const m of minima) {
    nodeOf.set(m.id, nodes.length);
    nodes.push({ id: nodes.length, kind: 'minimum', ref: m.id, energy: m.bestEnergy, parent: null, children: [] });
  }
  const parent = new Map<string, string>();
  const find = (a: string): string => { let r = a; while (parent.has(r)) r = parent.get(r)!; return r; };
  const top = new Map<string, number>(nodeOf);
  const ensure = (id: string) => {
    if (id === 'outside' && !top.has('outside')) {
      top.set('outside', nodes.length);
      nodes.push({ id: nodes.length, kind: 'outside', ref: null, energy: null, parent: null, children: [] });
    }
  };
  const order = transitionStates.slice().sort((a, b) => a.energy - b.energy || a.vertex - b.vertex);
  for (const t of order) {
    let node = -1;
    for (const [a, b] of t.connectsPairs) {
      ensure(a); ensure(b);
      const ra = find(a), rb = find(b);
      if (ra === rb) continue;
      if (node < 0) {
        node = nodes.length;
        nodes.push({ id: node, kind: 'transition-state', ref: t.id, energy: t.bestEnergy, parent: null, children: [] });
      }
      for (const r of [ra, rb]) {
        const child = top.get(r)!;
        if (child === node) continue;
        nodes[child].parent = node;
        nodes[node].children.push(child);
      }
      parent.set(ra, rb);
      top.set(rb, node);
    }
    t.inTree = node >= 0;
  }
  return nodes;
}

/** First index of a sorted array whose value is at least v. */
function lowerBound(a: Float64Array, v: number): number {
  let lo = 0, hi = a.length;
  while (lo < hi) {
    const mid = (lo + hi) >> 1;
    if (a[mid] < v) lo = mid + 1; else hi = mid;
  }
  return lo;
}

function fmt(x: number): string {
  return Number(x.toPrecision(3)).toString();
}

/**
 * Lowest-barrier (minimax) connection of every pair of minima: the join where their branches of the
 * hierarchy meet (their lowest common ancestor). Each join pairs the minima of one child branch with
 * those of another, so every pair is produced once.
 */
export function minimaxBarriers(hierarchy: HierarchyNode[], minima: readonly Pick<MinimumRecord, 'id' | 'bestEnergy'>[]): MinimaxRow[] {
  const byId = new Map(minima.map((m, k) => [m.id, k]));
  const leaves: number[][] = hierarchy.map(() => []);
  const rows: MinimaxRow[] = [];
  // children come before parents in the tree
  for (const node of hierarchy) {
    if (node.kind === 'minimum') { leaves[node.id].push(byId.get(node.ref!)!); continue; }
    const kids = node.children.map((c) => leaves[c]);
    if (node.kind === 'transition-state' && node.energy !== null) {
      for (let p = 0; p < kids.length; p++) {
        for (let q = p + 1; q < kids.length; q++) {
          for (const i of kids[p]) {
            for (const j of kids[q]) {
              const [a, b] = i < j ? [minima[i], minima[j]] : [minima[j], minima[i]];
              rows.push({ a: a.id, b: b.id, via: node.ref!, energy: node.energy, fromA: node.energy - a.bestEnergy, fromB: node.energy - b.bestEnergy });
            }
          }
        }
      }
    }
    leaves[node.id] = kids.flat();
    for (const c of node.children) leaves[c] = [];
  }
  const rank = (id: string) => byId.get(id)!;
  rows.sort((x, y) => rank(x.a) - rank(y.a) || rank(x.b) - rank(y.b));
  return rows;
}

/** Sample areas, basin sizes, free energies and populations (in place on `minima`). */
function basinThermodynamics(surface: Grid | Mesh, values: ArrayLike<number>, basinOf: Int32Array, minima: MinimumRecord[], labelOfRank: number[], kT: number | null): void {
  const nb = minima.length;
  const count = new Float64Array(nb), area = new Float64Array(nb);
  const emin = new Float64Array(nb).fill(Infinity);
  // sample areas: one constant for a grid; a third of the incident triangles on a mesh
  let cellArea = 0;
  let va: Float64Array | null = null;
  if (surface.kind === 'grid') {
    const t = surface.transform;
    cellArea = Math.abs(t[1] * t[5] - t[2] * t[4]);
  } else {
    const m = surface;
    va = new Float64Array(m.size);
    for (let k = 0; k < m.triangles.length; k += 3) {
      const a = m.triangles[k], b = m.triangles[k + 1], c = m.triangles[k + 2];
      const ar = Math.abs((m.x[b] - m.x[a]) * (m.y[c] - m.y[a]) - (m.x[c] - m.x[a]) * (m.y[b] - m.y[a])) / 2;
      va[a] += ar / 3; va[b] += ar / 3; va[c] += ar / 3;
    }
  }
  const n = basinOf.length;
  for (let i = 0; i < n; i++) {
    const b = basinOf[i];
    if (b < 0) continue;
    count[b]++;
    area[b] += va === null ? cellArea : va[i];
    if (values[i] < emin[b]) emin[b] = values[i];
  }
  const rankOfLabel = new Int32Array(nb);
  labelOfRank.forEach((label, r) => { rankOfLabel[label] = r; });
  for (let b = 0; b < nb; b++) {
    const m = minima[rankOfLabel[b]];
    m.basin.samples = count[b];
    m.basin.area = area[b];
  }
  if (kT === null) return;
  const sum = new Float64Array(nb);
  const beta = 1 / kT;
  for (let i = 0; i < n; i++) {
    const b = basinOf[i];
    if (b < 0) continue;
    sum[b] += Math.exp(-(values[i] - emin[b]) * beta) * (va === null ? cellArea : va[i]);
  }
  const F = new Float64Array(nb);
  let Fmin = Infinity;
  for (let b = 0; b < nb; b++) {
    F[b] = emin[b] - kT * Math.log(sum[b]);
    if (F[b] < Fmin) Fmin = F[b];
  }
  let Z = 0;
  for (let b = 0; b < nb; b++) Z += Math.exp(-(F[b] - Fmin) / kT);
  for (let b = 0; b < nb; b++) {
    const m = minima[rankOfLabel[b]];
    m.basin.freeEnergy = F[b];
    m.basin.population = Math.exp(-(F[b] - Fmin) / kT) / Z;
  }
}
