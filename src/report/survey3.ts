/**
 * The `survey` report object of a 3-D grid (schema sill/survey@1): the keys of the 2-D report,
 * with `z` (and the layer `layer`) beside `x`, `y` (`col`, `row`) wherever a point appears and
 * `surface.depth` beside `width` and `height`. Critical points are minima, index-1 and index-2
 * saddles and maxima (`kind`, `morseIndex`); pairs are of dimension 0 and 2.
 */
import type { Grid3 } from '../surface/grid3.js';
import { survey3, KIND3_NAMES, MINIMUM, SADDLE1, SADDLE2, MAXIMUM, type CriticalKind3, type Survey3Options, type Survey3Result, type PersistencePairs3 } from '../morse/survey3.js';
import { pairsByPersistence, listedPair } from '../morse/survey.js';
import type { MergeTree } from '../morse/mergetree.js';
import { Rows } from '../io/stream.js';
import { num, SILL_VERSION, type FeatureHook } from './common.js';

export interface Location3 {
  /** Point index: col + width·(row + height·layer). */
  index: number;
  /** Lattice indices along x, y and z. */
  col: number;
  row: number;
  layer: number;
  x: number;
  y: number;
  z: number;
}

export function locate3(g: Grid3, i: number): Location3 {
  const col = i % g.nx, r = (i - col) / g.nx, row = r % g.ny, layer = (r - row) / g.ny;
  return { index: i, col, row, layer, x: g.x(col), y: g.y(row), z: g.z(layer) };
}

export interface Surface3Info {
  kind: 'grid3';
  width: number;
  height: number;
  depth: number;
  points: number;
  validCells: number;
  crs: null;
  /** Steps along x, y, z. */
  cellSize: [number, number, number];
  origin: [number, number, number];
  /** Period of each axis that wraps, else null. */
  periods: [number | null, number | null, number | null];
  /** Names of the x, y, z variables (from a header line), or null. */
  names: [string, string, string] | null;
}

export function surface3Info(g: Grid3): Surface3Info {
  return {
    kind: 'grid3', width: g.nx, height: g.ny, depth: g.nz, points: g.size, validCells: g.validCount(), crs: null,
    cellSize: [...g.spacing], origin: [...g.origin], periods: [...g.periods], names: g.names ? [...g.names] : null,
  };
}

export interface Euler3Info {
  characteristic: number;
  /** Minima with the outside vertex (as `pits` in 2-D). */
  minima: number;
  saddles1: number;
  saddles2: number;
  maxima: number;
  /** The 2-D names: pits = minima, peaks = maxima (passes are split by index in 3-D). */
  pits: number;
  peaks: number;
  holds: boolean;
  outsidePit: boolean;
}

export interface CriticalPoint3Record extends Location3 {
  kind: CriticalKind3;
  morseIndex: number;
  value: number;
  multiplicity: number;
  onEdge: boolean;
}

export interface Pair3Record {
  dim: 0 | 2;
  birth: number;
  death: number;
  persistence: number;
  birthAt: Location3;
  deathAt: Location3;
}

export interface TreeNode3Record {
  id: number;
  kind: 'minimum' | 'maximum' | 'saddle' | 'outside' | 'top';
  value: number | null;
  location: Location3 | null;
  parent: number | null;
}

export interface Survey3Report {
  schema: 'sill/survey@1';
  sill: string;
  input: string | null;
  surface: Surface3Info;
  connectivity: number;
  boundary: string;
  /** Axes that wrap ('x', 'y', 'z'). */
  periodicAxes: string[];
  minPersistence: number;
  euler: Euler3Info;
  eulerKept: { minima: number; saddles1: number; saddles2: number; maxima: number; holds: boolean };
  counts: { minima: number; saddles1: number; saddles2: number; maxima: number; zeroPersistencePairs: number; removedPairs: { dim0: number; dim2: number } };
  /** Persistence pairs of dimension 1 are not computed. */
  pairDimensions: [0, 2];
  criticalPoints: Rows<CriticalPoint3Record>;
  /** Listed pairs (positive persistence, at least minPersistence), most persistent first. */
  pairs: Rows<Pair3Record>;
}

export interface Survey3Run {
  result: Survey3Result;
  report: Survey3Report;
}

export function criticalPoint3Record(g: Grid3, result: Survey3Result, k: number): CriticalPoint3Record {
  const K = result.kept, i = K.vertex[k];
  return {
    kind: KIND3_NAMES[K.kind[k]], morseIndex: K.index[k], ...locate3(g, i),
    value: result.complex.values[i], multiplicity: K.multiplicity[k], onEdge: result.complex.onEdge(i),
  };
}

/** Pairs listed in a report, most persistent first (indices into the pair columns). */
export function listedPairs3(pairs: PersistencePairs3, minPersistence: number): Uint32Array {
  // the 2-D ordering needs only the persistence column
  return pairsByPersistence({ dim: pairs.dim, birthVertex: pairs.birthVertex, deathVertex: pairs.deathVertex, persistence: pairs.persistence }, minPersistence);
}

export function survey3Report(g: Grid3, opts: Survey3Options & FeatureHook = {}, input: string | null = null): Survey3Run {
  const result = survey3(g, opts);
  opts.onFeatures?.(result.kept.vertex.length);
  const cx = result.complex, K = result.kept;
  const byKind = [0, 0, 0, 0, 0];
  for (let k = 0; k < K.kind.length; k++) byKind[K.kind[k]]++;
  let zero = 0;
  const pp = result.pairs.persistence;
  for (let k = 0; k < pp.length; k++) if (!(pp[k] > 0)) zero++;
  const e = result.euler, ek = result.eulerKept;
  let order: Uint32Array | null = null;
  let listed = 0;
  for (let k = 0; k < pp.length; k++) if (listedPair(pp[k], result.minPersistence)) listed++;
  const P = result.pairs, v = cx.values;
  const report: Survey3Report = {
    schema: 'sill/survey@1',
    sill: SILL_VERSION,
    input,
    surface: surface3Info(g),
    connectivity: cx.connectivity,
    boundary: cx.boundary,
    periodicAxes: [...'xyz'].filter((_, a) => cx.wrap[a]),
    minPersistence: result.minPersistence,
    euler: {
      characteristic: e.characteristic, minima: e.minima, saddles1: e.saddles1, saddles2: e.saddles2, maxima: e.maxima,
      pits: e.minima, peaks: e.maxima, holds: e.holds, outsidePit: cx.hasOmega,
    },
    eulerKept: { minima: ek.minima, saddles1: ek.saddles1, saddles2: ek.saddles2, maxima: ek.maxima, holds: ek.holds },
    counts: {
      minima: byKind[MINIMUM], saddles1: byKind[SADDLE1], saddles2: byKind[SADDLE2], maxima: byKind[MAXIMUM],
      zeroPersistencePairs: zero, removedPairs: result.removedPairs,
    },
    pairDimensions: [0, 2],
    criticalPoints: new Rows(K.vertex.length, (k) => criticalPoint3Record(g, result, k)),
    pairs: new Rows(listed, (q) => {
      const k = (order ??= listedPairs3(P, result.minPersistence))[q];
      const b = P.birthVertex[k], d = P.deathVertex[k];
      return { dim: P.dim[k] as 0 | 2, birth: v[b], death: v[d], persistence: P.persistence[k], birthAt: locate3(g, b), deathAt: locate3(g, d) };
    }),
  };
  return { result, report };
}

/** The record of node k of a join or split tree (for merge-tree.json). */
export function mergeTree3Record(g: Grid3, values: ArrayLike<number>, tree: MergeTree, k: number): TreeNode3Record {
  const vtx = tree.vertex[k];
  let kind: TreeNode3Record['kind'];
  if (vtx < 0) kind = tree.kind === 'join' ? 'outside' : 'top';
  else if (tree.childCount[k] === 0) kind = tree.kind === 'join' ? 'minimum' : 'maximum';
  else kind = 'saddle';
  return {
    id: k, kind, value: vtx < 0 ? null : num(values[vtx]), location: vtx < 0 ? null : locate3(g, vtx),
    parent: tree.parent[k] < 0 ? null : tree.parent[k],
  };
}

export function mergeTree3Records(g: Grid3, values: ArrayLike<number>, tree: MergeTree): Rows<TreeNode3Record> {
  return new Rows(tree.vertex.length, (k) => mergeTree3Record(g, values, tree, k));
}

