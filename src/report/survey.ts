/** The `survey` report object (schema sill/survey@1). */
import type { Grid } from '../surface/grid.js';
import type { Mesh } from '../surface/mesh.js';
import { survey, countListedPairs, pairsByPersistence, mostPersistentPairs, type SurveyOptions, type SurveyResult, type PersistencePairs } from '../morse/survey.js';
import { KIND_NAMES, PIT, PASS, PEAK, type CriticalKind } from '../morse/critical.js';
import { Rows } from '../io/stream.js';
import type { MergeTree } from '../morse/mergetree.js';
import { surfaceInfo, locate, eulerInfo, num, SILL_VERSION, type SurfaceInfo, type EulerInfo, type Location, type FeatureHook } from './common.js';

export interface CriticalPointRecord extends Location {
  kind: CriticalKind;
  value: number;
  multiplicity: number;
  onEdge: boolean;
}

export interface PairRecord {
  dim: 0 | 1;
  birth: number;
  death: number;
  persistence: number;
  birthAt: Location;
  deathAt: Location;
}

export interface TreeNodeRecord {
  id: number;
  kind: 'pit' | 'peak' | 'pass' | 'outside' | 'top';
  value: number | null;
  location: Location | null;
  parent: number | null;
}

export interface SurveyReport {
  schema: 'sill/survey@1';
  sill: string;
  input: string | null;
  surface: SurfaceInfo;
  connectivity: number | null;
  boundary: string;
  minPersistence: number;
  euler: EulerInfo;
  /** Euler counts of the features kept after --min-persistence. */
  eulerKept: { pits: number; passes: number; peaks: number; holds: boolean };
  counts: { pits: number; passes: number; peaks: number; zeroPersistencePairs: number; removedPairs: { dim0: number; dim1: number } };
  /** The kept critical points in vertex order, each record made when asked for (from `result.kept`). */
  criticalPoints: Rows<CriticalPointRecord>;
  /** The listed pairs, most persistent first, each record made when asked for (from `result.pairs`). */
  pairs: PairRows;
}

/**
 * The listed persistence pairs as a lazy list: the order by persistence is an index sort made on
 * first use; `top(k)` picks the k most persistent without it.
 */
export class PairRows extends Rows<PairRecord> {
  constructor(private readonly src: PairSource) {
    super(src.length, (i) => src.record(src.sorted()[i]));
  }

  /** The first `k` records, by a partial selection when k is small and the full order is not there yet. */
  top(k: number): PairRecord[] {
    const m = Math.min(k, this.length);
    // a small selection in one pass; for many, the full index sort is cheaper
    const sel = this.src.order || m > 64 ? this.src.sorted().subarray(0, m) : mostPersistentPairs(this.src.pairs, this.src.minPersistence, m);
    return Array.from(sel, (q) => this.src.record(q));
  }

  /** Pair indices (into `result.pairs`) in list order. */
  order(): Uint32Array {
    return this.src.sorted();
  }
}

class PairSource {
  order: Uint32Array | null = null;
  readonly length: number;
  constructor(readonly surface: Grid | Mesh, readonly values: ArrayLike<number>, readonly pairs: PersistencePairs, readonly minPersistence: number) {
    this.length = countListedPairs(pairs, minPersistence);
  }

  sorted(): Uint32Array {
    return (this.order ??= pairsByPersistence(this.pairs, this.minPersistence));
  }

  /** The record of pair k of the columns. */
  record(k: number): PairRecord {
    const P = this.pairs, b = P.birthVertex[k], d = P.deathVertex[k];
    return {
      dim: P.dim[k] as 0 | 1, birth: this.values[b], death: this.values[d], persistence: P.persistence[k],
      birthAt: locate(this.surface, b), deathAt: locate(this.surface, d),
    };
  }
}

/** The record of kept critical point k (the `kept` columns of a survey). */
export function criticalPointRecord(surface: Grid | Mesh, result: SurveyResult, k: number): CriticalPointRecord {
  const cx = result.complex, kept = result.kept, i = kept.vertex[k];
  const at = locate(surface, i);
  return {
    kind: KIND_NAMES[kept.kind[k]], index: at.index, col: at.col, row: at.row, x: at.x, y: at.y,
    value: cx.values[i], multiplicity: kept.multiplicity[k], onEdge: cx.onEdge(i),
  };
}

export interface SurveyRun {
  result: SurveyResult;
  report: SurveyReport;
}

export function surveyReport(surface: Grid | Mesh, opts: SurveyOptions & FeatureHook = {}, input: string | null = null): SurveyRun {
  const result = survey(surface, opts);
  opts.onFeatures?.(result.kept.vertex.length);
  const cx = result.complex;
  const kept = result.kept;
  const byKind = [0, 0, 0, 0];
  for (let k = 0; k < kept.kind.length; k++) byKind[kept.kind[k]]++;
  let zero = 0;
  const pp = result.pairs.persistence;
  for (let k = 0; k < pp.length; k++) if (!(pp[k] > 0)) zero++;
  const report: SurveyReport = {
    schema: 'sill/survey@1',
    sill: SILL_VERSION,
    input,
    surface: surfaceInfo(surface),
    connectivity: cx.connectivity,
    boundary: cx.boundary,
    minPersistence: result.minPersistence,
    euler: eulerInfo(result),
    eulerKept: result.eulerKept,
    counts: {
      pits: byKind[PIT],
      passes: byKind[PASS],
      peaks: byKind[PEAK],
      zeroPersistencePairs: zero,
      removedPairs: result.removedPairs,
    },
    criticalPoints: new Rows(kept.vertex.length, (k) => criticalPointRecord(surface, result, k)),
    pairs: new PairRows(new PairSource(surface, cx.values, result.pairs, result.minPersistence)),
  };
  return { result, report };
}

/** The record of node k of a join or split tree (for merge-tree.json). */
export function mergeTreeRecord(surface: Grid | Mesh, values: ArrayLike<number>, tree: MergeTree, k: number): TreeNodeRecord {
  const v = tree.vertex[k];
  const leaf = tree.childCount[k] === 0;
  let kind: TreeNodeRecord['kind'];
  if (v < 0) kind = tree.kind === 'join' ? 'outside' : 'top';
  else if (leaf) kind = tree.kind === 'join' ? 'pit' : 'peak';
  else kind = 'pass';
  return {
    id: k, kind, value: v < 0 ? null : num(values[v]), location: v < 0 ? null : locate(surface, v),
    parent: tree.parent[k] < 0 ? null : tree.parent[k],
  };
}

/** Join and split trees as lazy lists of plain records (for merge-tree.json). */
export function mergeTreeRecords(surface: Grid | Mesh, values: ArrayLike<number>, tree: MergeTree): Rows<TreeNodeRecord> {
  return new Rows(tree.vertex.length, (k) => mergeTreeRecord(surface, values, tree, k));
}
