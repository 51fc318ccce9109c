/** The `survey` report object (schema sill/survey@1). */
import type { Grid } from '../surface/grid.js';
import type { Mesh } from '../surface/mesh.js';
import { survey, type SurveyOptions, type SurveyResult } from '../morse/survey.js';
import { KIND_NAMES, type CriticalKind } from '../morse/critical.js';
import type { MergeTree } from '../morse/mergetree.js';
import { surfaceInfo, locate, eulerInfo, num, SILL_VERSION, type SurfaceInfo, type EulerInfo, type Location } from './common.js';

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
  criticalPoints: CriticalPointRecord[];
  pairs: PairRecord[];
}

export interface SurveyRun {
  result: SurveyResult;
  report: SurveyReport;
}

export function surveyReport(surface: Grid | Mesh, opts: SurveyOptions = {}, input: string | null = null): SurveyRun {
  const result = survey(surface, opts);
  const cx = result.complex;
  const kept = result.kept;
  const criticalPoints: CriticalPointRecord[] = [];
  for (let k = 0; k < kept.vertex.length; k++) {
    const i = kept.vertex[k];
    criticalPoints.push({
      kind: KIND_NAMES[kept.kind[k]], ...locate(surface, i), value: cx.values[i],
      multiplicity: kept.multiplicity[k], onEdge: cx.onEdge(i),
    });
  }
  const pairs: PairRecord[] = [];
  let zero = 0;
  const P = result.pairs;
  for (let k = 0; k < P.dim.length; k++) {
    const p = P.persistence[k];
    if (!(p > 0)) { zero++; continue; }
    if (p < result.minPersistence) continue;
    pairs.push({
      dim: P.dim[k] as 0 | 1, birth: cx.values[P.birthVertex[k]], death: cx.values[P.deathVertex[k]], persistence: p,
      birthAt: locate(surface, P.birthVertex[k]), deathAt: locate(surface, P.deathVertex[k]),
    });
  }
  pairs.sort((a, b) => b.persistence - a.persistence || a.dim - b.dim);
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
      pits: criticalPoints.filter((c) => c.kind === 'pit').length,
      passes: criticalPoints.filter((c) => c.kind === 'pass').length,
      peaks: criticalPoints.filter((c) => c.kind === 'peak').length,
      zeroPersistencePairs: zero,
      removedPairs: result.removedPairs,
    },
    criticalPoints,
    pairs,
  };
  return { result, report };
}

/** Join and split trees as plain records (for merge-tree.json). */
export function mergeTreeRecords(surface: Grid | Mesh, values: ArrayLike<number>, tree: MergeTree): TreeNodeRecord[] {
  const out: TreeNodeRecord[] = [];
  for (let k = 0; k < tree.vertex.length; k++) {
    const v = tree.vertex[k];
    const leaf = tree.childCount[k] === 0;
    let kind: TreeNodeRecord['kind'];
    if (v < 0) kind = tree.kind === 'join' ? 'outside' : 'top';
    else if (leaf) kind = tree.kind === 'join' ? 'pit' : 'peak';
    else kind = 'pass';
    out.push({
      id: k, kind, value: v < 0 ? null : num(values[v]), location: v < 0 ? null : locate(surface, v),
      parent: tree.parent[k] < 0 ? null : tree.parent[k],
    });
  }
  return out;
}
