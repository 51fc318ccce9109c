/** The survey report page: the surface with its pits, passes and peaks, the join tree, the persistence diagram, tables. */
import type { Grid } from '../../surface/grid.js';
import type { Mesh } from '../../surface/mesh.js';
import type { SurveyResult } from '../../morse/survey.js';
import type { SurveyReport, CriticalPointRecord } from '../../report/survey.js';
import type { MergeTree } from '../../morse/mergetree.js';
import { PIT } from '../../morse/critical.js';
import { mapSvg, type MapMarker } from '../figures/map.js';
import { treeSvg, reduceSweepTree, type TreeNodeIn } from '../figures/tree.js';
import { persistenceSvg, type DiagramPoint, type DiagramEssential } from '../figures/persistence.js';
import { fmtNum, topIndices } from '../figures/scale.js';
import type { MarkerKind } from '../figures/markers.js';
import type { ReportDoc, TableSpec, ReportContext, BuiltReport } from './model.js';
import {
  surfaceDisplay, surfaceLayer, surfaceContours, surfaceHover, displayNotes, commonHeader, readoutNote, plotOf, TERRAIN_CAUTION, valueDecimals, fmtDec, type SurfaceDisplay,
} from './surface.js';
import { finiteRange } from '../figures/raster.js';

/** Most markers drawn on the map, tree leaves, and table rows carried in the page. */
export const LIMITS = { markers: 1500, treeLeaves: 250, tableRows: 5000, diagramPoints: 2500 };

export const vkey = (v: number): string => (v < 0 ? 'outside' : `v${v}`);

export function where(c: { col: number | null; row: number | null; index: number }): string {
  return c.col !== null ? `cell (${c.col}, ${c.row})` : `point ${c.index}`;
}

export function xyText(x: number, y: number, geographic: boolean, unit: string): string {
  const f = (v: number) => (geographic ? v.toFixed(6) : fmtNum(v, 9));
  return `${f(x)}, ${f(y)}${unit && unit !== 'input units' ? ' ' + unit : ''}`;
}

/**
 * For each vertex, the finite pair it starts or ends with the largest persistence (−1: none), so
 * persistence(v) = pairs.persistence[pairOf[v]]. One Int32 per vertex, no objects.
 */
export function pairOfVertex(result: SurveyResult): Int32Array {
  const m = new Int32Array(result.complex.values.length).fill(-1);
  const P = result.pairs, pp = P.persistence;
  for (let k = 0; k < P.dim.length; k++) {
    const p = pp[k], b = P.birthVertex[k], d = P.deathVertex[k];
    if (m[b] < 0 || pp[m[b]] < p) m[b] = k;
    if (m[d] < 0 || pp[m[d]] < p) m[d] = k;
  }
  return m;
}

/** Terrain or energy surface: open boundaries and georeferenced grids read as terrain. */
export function domainOf(report: { boundary: string; surface: { crs: unknown } }): 'terrain' | 'energy' {
  return report.boundary === 'open' || report.surface.crs ? 'terrain' : 'energy';
}

/**
 * Join-tree nodes as tree-plot input, reduced to the `maxLeaves` most persistent leaves (the
 * outside first) in one pass over the sweep-ordered tree.
 */
export function joinTreeNodes(tree: MergeTree, values: ArrayLike<number>, surface: Grid | Mesh, persOf: (v: number) => number, unit: string, fv: (x: number) => string, maxLeaves: number): { nodes: TreeNodeIn[]; leaves: number } {
  const nn = tree.vertex.length;
  const imp = new Float64Array(nn).fill(NaN);
  let leaves = 0;
  for (let k = 0; k < nn; k++) {
    if (tree.childCount[k] !== 0) continue;
    leaves++;
    const v = tree.vertex[k];
    imp[k] = persOf(v);
  }
  const keep = new Uint8Array(nn);
  for (const k of topIndices(imp, maxLeaves)) keep[k] = 1;
  const red = reduceSweepTree(tree.parent, tree.childCount, (k) => keep[k] === 1);
  const out: TreeNodeIn[] = [];
  for (let q = 0; q < red.nodes.length; q++) {
    const k = red.nodes[q], v = tree.vertex[k];
    const leaf = tree.childCount[k] === 0;
    const kind: MarkerKind = v < 0 ? 'outside' : leaf ? 'pit' : 'pass';
    const value = v < 0 ? -Infinity : values[v];
    const at = v < 0 ? '' : surface.kind === 'grid' ? ` at cell (${v % surface.width}, ${Math.floor(v / surface.width)})` : ` at point ${v}`;
    out.push({
      id: k, parent: red.parent[q], value, kind, key: vkey(v),
      title: v < 0 ? 'outside (−∞): every component drains here in the end' : `${kind} ${fv(value)}${unit ? ' ' + unit : ''}${at}`,
      importance: leaf ? imp[k] : 0,
    });
  }
  return { nodes: out, leaves };
}

export function buildSurveyReport(surface: Grid | Mesh, result: SurveyResult, report: SurveyReport, ctx: ReportContext): BuiltReport {
  const domain = domainOf(report);
  const unitLabel = ctx.valueUnit ?? 'input units';
  const unitShort = ctx.valueUnit ?? '';
  const sd = surfaceDisplay(surface);
  const valueName = domain === 'terrain' ? 'elevation' : 'value';
  const layer = surfaceLayer(sd, { domain, label: `${valueName} [${unitLabel}]` });
  const contours = surfaceContours(sd, domain === 'terrain' ? 12 : 14);
  const pairOf = pairOfVertex(result);
  /** Persistence of a vertex's most persistent pair; Infinity for an essential class. */
  const persOf = (v: number): number => (v >= 0 && pairOf[v] >= 0 ? result.pairs.persistence[pairOf[v]] : Infinity);
  const xyUnit = sd.xyUnit || (surface.crs ? 'CRS units' : 'input units');
  const dec = valueDecimals(result.complex.values, finiteRange(sd.stats.min)[0], finiteRange(sd.stats.max)[1]);
  const fv = (x: number) => fmtDec(x, dec);

  // features, most persistent first
  const cps = report.criticalPoints, K = result.kept;
  const cpKey = new Float64Array(cps.length);
  for (let i = 0; i < cps.length; i++) cpKey[i] = persOf(K.vertex[i]);
  const ranked = Array.from(topIndices(cpKey, Math.max(LIMITS.markers, LIMITS.tableRows)), (i) => ({ c: cps.at(i), i, p: cpKey[i] }));
  const onMap = ranked.slice(0, LIMITS.markers);
  const tips: ReportDoc['tips'] = {};
  const tipOf = (c: CriticalPointRecord, p: number): [string, string][] => [
    ['', `${c.kind} ${fv(c.value)}${unitShort ? ' ' + unitShort : ''}`],
    ['where', where(c)],
    ['x, y', xyText(c.x, c.y, sd.geographic, xyUnit)],
    ['value', `${fv(c.value)} ${unitLabel}`],
    ['persistence', p === Infinity ? 'essential (never dies)' : `${fv(p)} ${unitLabel}`],
    ...(c.multiplicity > 1 ? [['multiplicity', String(c.multiplicity)] as [string, string]] : []),
    ...(c.onEdge ? [['on the edge', 'yes — may be an artefact of the window'] as [string, string]] : []),
  ];
  for (const { c, p } of ranked.slice(0, LIMITS.tableRows)) tips[vkey(c.index)] = tipOf(c, p);
  const markers: MapMarker[] = onMap.map(({ c }) => {
    const [u, v] = plotOf(sd, c);
    return { key: vkey(c.index), kind: c.kind, u, v, title: `${c.kind} ${fv(c.value)} at ${where(c)}` };
  });
  const counts = { pit: 0, pass: 0, peak: 0 };
  for (const { c } of onMap) counts[c.kind]++;
  const mapNotes = [...displayNotes(sd, surface, contours, unitShort), ...layer.notes];
  if (onMap.length < report.criticalPoints.length) mapNotes.push(`${onMap.length} most persistent of ${report.criticalPoints.length} critical points drawn; raise --min-persistence to see fewer`);
  const map = mapSvg({
    id: 'map', title: `Map of ${report.input ?? 'the surface'} with critical points`,
    desc: `${report.surface.kind === 'grid' ? `${report.surface.width} by ${report.surface.height} grid` : 'scattered samples'} coloured by ${valueName}, with contour lines, `
      + `${counts.pit} pits (downward triangles), ${counts.pass} passes (diamonds) and ${counts.peak} peaks (upward triangles).`,
    frame: sd.frame, layers: [layer.layer], contours, contourUnit: unitShort, markers,
    kinds: (['pit', 'pass', 'peak'] as const).map((kind) => ({ kind, count: counts[kind] })),
    ramps: [layer.legend], notes: mapNotes,
    axes: axesLabels(sd),
  });

  // join tree
  const values = result.complex.values;
  tips.outside = [['', 'outside (−∞)'], ['meaning', 'beyond the grid edge and nodata: water leaving the map']];
  const jt = joinTreeNodes(result.join, values, surface, persOf, unitShort, fv, LIMITS.treeLeaves);
  const lim = { nodes: jt.nodes, leaves: jt.leaves, shown: Math.min(jt.leaves, LIMITS.treeLeaves) };
  const cpOf = new Map<number, CriticalPointRecord>();
  const want = new Set(lim.nodes.map((nd) => nd.key!).filter((k) => k !== 'outside' && !tips[k]).map((k) => Number(k.slice(1))));
  if (want.size) for (let i = 0; i < K.vertex.length; i++) if (want.has(K.vertex[i])) cpOf.set(K.vertex[i], cps.at(i));
  for (const [v, c] of cpOf) tips[vkey(v)] = tipOf(c, persOf(v));
  const treeNotes = [
    report.minPersistence > 0 ? `simplified: branches with persistence < ${fmtNum(report.minPersistence)} removed` : 'every branch of positive persistence shown',
    ...(lim.shown < lim.leaves ? [`${lim.shown} most persistent of ${lim.leaves} leaves shown`] : []),
  ];
  const tree = treeSvg({
    id: 'tree', title: 'Join tree (merge tree of sublevel sets)',
    desc: `Leaves are pits${result.join.hasVirtual ? ' and the outside' : ''}; branches join at passes as the level rises. ${lim.nodes.length} nodes.`,
    nodes: lim.nodes, valueLabel: `level [${unitLabel}]`, notes: treeNotes,
  });

  // persistence diagram
  const diagram = pairsDiagram(result, {
    minPersistence: report.minPersistence, scale: 1, keyOf: (v) => vkey(v), fv, unitLabel, unitShort, tips,
    zeroPairs: report.counts.zeroPersistencePairs,
  });

  const tables: TableSpec[] = [criticalTable(report, ranked, xyUnit, unitLabel, dec), pairsTable(report, unitLabel, dec)];
  const e = report.euler;
  const params = [`min-persistence ${fmtNum(report.minPersistence)}`];
  const doc: ReportDoc = {
    command: 'survey',
    title: `Critical points, merge tree and persistence of ${report.input ?? 'a surface'}`,
    subtitle: report.input ? report.input.split(/[\\/]/).pop()! : 'surface',
    domain,
    header: commonHeader(report, params.join(', '), ctx.commandLine),
    cautions: domain === 'terrain' ? TERRAIN_CAUTION : [],
    map: {
      svg: map.svg, geometry: map.geometry, frame: sd.frame, markers: markers.length,
      caption: 'Scroll or pinch to zoom, drag to pan. Point at a feature for its values; click it to find it in the tree, the diagram and the table.',
      toggles: [{ id: 'surface', label: 'surface', on: true }, { id: 'contours', label: 'contours', on: true }, { id: 'markers', label: 'markers', on: true }],
      hover: [surfaceHover(sd, sd.isGrid ? valueName : `${valueName} (interpolated)`, unitShort)],
      xyUnit: sd.xyUnit, geographic: sd.geographic, interpolated: !sd.isGrid,
    },
    treeTitle: domain === 'energy' ? 'Merge tree of the basins' : 'Merge tree',
    tree: { svg: tree.svg, markers: tree.markers, caption: 'Level rises upward: each pit starts a branch; branches join at the pass where their sublevel sets meet. Click a node to find it on the map.' },
    persistence: { svg: diagram.svg, markers: diagram.drawn, caption: 'Distance above the diagonal is persistence: how far a feature stands out from its surroundings. Pairs in the shaded band fell below --min-persistence.' },
    tables,
    tips,
    facts: [
      `${e.pits} pits, ${e.passes} passes, ${e.peaks} peaks`,
      `Euler ${e.holds ? 'holds ✓' : 'FAILS ✗'} (χ = ${e.characteristic})`,
      ...(report.minPersistence > 0 ? [`kept at persistence ≥ ${fmtNum(report.minPersistence)}: ${report.eulerKept.pits} pits, ${report.eulerKept.passes} passes, ${report.eulerKept.peaks} peaks`] : []),
    ],
    notes: [
      ...mapNotes,
      'Markers: pit ▽, pass ◇, peak △ — told apart by shape; colour repeats the kind.',
      `Colour ramp: ${layer.ramp.name} (d3-scale-chromatic), perceptually uniform.`,
    ],
    files: ctx.files,
    version: report.sill,
    generated: ctx.generated ?? new Date().toISOString(),
  };
  return { doc, svgs: { map: map.svg, tree: tree.svg, persistence: diagram.svg } };
}

export function axesLabels(sd: SurfaceDisplay): { xLabel: string; yLabel: string } {
  if (sd.transform[2] !== 0 || sd.transform[4] !== 0) return { xLabel: 'column', yLabel: 'row' };
  if (sd.geographic) return { xLabel: 'longitude [°]', yLabel: 'latitude [°]' };
  const u = sd.xyUnit ? ` [${sd.xyUnit}]` : '';
  return { xLabel: `x${u}`, yLabel: `y${u}` };
}

function criticalTable(report: SurveyReport, ranked: { c: CriticalPointRecord; p: number }[], xyUnit: string, unit: string, dec: number): TableSpec {
  const rows = ranked.slice(0, LIMITS.tableRows);
  const grid = report.surface.kind === 'grid';
  return {
    id: 'critical-points', title: 'Critical points',
    caption: 'Pits, passes and peaks kept after simplification, most persistent first. Click a row to find it on the map.',
    columns: [
      { key: 'kind', label: 'kind', unit: '', type: 'text' },
      ...(grid ? [{ key: 'col', label: 'col', unit: 'cell', type: 'int' as const }, { key: 'row', label: 'row', unit: 'cell', type: 'int' as const }]
        : [{ key: 'point', label: 'point', unit: 'index', type: 'int' as const }]),
      { key: 'x', label: 'x', unit: xyUnit, type: 'num', digits: 10 },
      { key: 'y', label: 'y', unit: xyUnit, type: 'num', digits: 10 },
      { key: 'value', label: 'value', unit, type: 'num', decimals: dec },
      { key: 'persistence', label: 'persistence', unit, type: 'num', decimals: dec },
      { key: 'multiplicity', label: 'multiplicity', unit: '', type: 'int' },
      { key: 'on_edge', label: 'on edge', unit: '', type: 'text' },
    ],
    rows: rows.map(({ c, p }) => [c.kind, ...(grid ? [c.col, c.row] : [c.index]), c.x, c.y, c.value, p === Infinity ? null : p, c.multiplicity, c.onEdge ? 'yes' : 'no']),
    keys: rows.map(({ c }) => vkey(c.index)),
    total: report.criticalPoints.length,
    csv: 'critical-points.csv',
  };
}

function pairsTable(report: SurveyReport, unit: string, dec: number): TableSpec {
  const rows = report.pairs.top(LIMITS.tableRows);
  return {
    id: 'pairs', title: 'Persistence pairs',
    caption: 'Kept pairs (persistence ≥ the threshold), most persistent first. Dimension 0: a pit and the pass where it merges; dimension 1: a pass and the peak that fills its loop.',
    columns: [
      { key: 'dim', label: 'dim', unit: '', type: 'int' },
      { key: 'birth', label: 'birth', unit, type: 'num', decimals: dec },
      { key: 'death', label: 'death', unit, type: 'num', decimals: dec },
      { key: 'persistence', label: 'persistence', unit, type: 'num', decimals: dec },
      { key: 'born', label: 'born at', unit: '', type: 'text' },
      { key: 'dies', label: 'dies at', unit: '', type: 'text' },
    ],
    rows: rows.map((p) => [p.dim, p.birth, p.death, p.persistence, where(p.birthAt), where(p.deathAt)]),
    keys: rows.map((p) => vkey(p.dim === 0 ? p.birthAt.index : p.deathAt.index)),
    total: report.pairs.length,
  };
}

export interface DiagramOptions {
  /** Threshold, in the unit shown (after `scale`). */
  minPersistence: number;
  /** Factor from the surface's values to the unit shown. */
  scale: number;
  /** Link key of the feature a pair stands for (its pit for dimension 0, its peak for dimension 1). */
  keyOf: (vertex: number, dim: 0 | 1) => string;
  fv: (x: number) => string;
  unitLabel: string;
  unitShort: string;
  /** Tooltips are added here for the pairs drawn one by one (when missing). */
  tips: ReportDoc['tips'];
  zeroPairs: number;
}

/**
 * The persistence diagram of a survey: the most persistent pairs drawn one by one, the others
 * counted in cells, kept/dropped by the threshold, essential pits (born, never dying) on top.
 */
export function pairsDiagram(result: SurveyResult, o: DiagramOptions): { svg: string; drawn: number } {
  const values = result.complex.values;
  const P = result.pairs;
  const NP = P.dim.length;
  const f = o.scale;
  const born = new Uint8Array(values.length);
  const pkey = new Float64Array(NP).fill(NaN);
  let nKept = 0, nDropped = 0;
  for (let k = 0; k < NP; k++) {
    if (P.dim[k] === 0) born[P.birthVertex[k]] = 1;
    const p = P.persistence[k] * f;
    if (!(p > 0)) continue;
    pkey[k] = p;
    if (p >= o.minPersistence) nKept++; else nDropped++;
  }
  const drawnIdx = topIndices(pkey, LIMITS.diagramPoints);
  const isDrawn = new Uint8Array(NP);
  const points: DiagramPoint[] = [];
  for (const k of drawnIdx) {
    isDrawn[k] = 1;
    const dim = P.dim[k] as 0 | 1;
    const feature = dim === 0 ? P.birthVertex[k] : P.deathVertex[k];
    points.push({ key: o.keyOf(feature, dim), dim, birth: values[P.birthVertex[k]] * f, death: values[P.deathVertex[k]] * f, kept: pkey[k] >= o.minPersistence });
  }
  const restN = nKept + nDropped - points.length;
  const restB = new Float64Array(restN), restD = new Float64Array(restN);
  for (let k = 0, q = 0; k < NP; k++) {
    if (isDrawn[k] || !(pkey[k] > 0)) continue;
    restB[q] = values[P.birthVertex[k]] * f; restD[q] = values[P.deathVertex[k]] * f; q++;
  }
  for (const pt of points) {
    if (o.tips[pt.key!]) continue;
    o.tips[pt.key!] = [['', `${pt.dim === 0 ? 'pit' : 'peak'} ${o.fv(pt.dim === 0 ? pt.birth : pt.death)}${o.unitShort ? ' ' + o.unitShort : ''}`],
      ['pair', `${o.fv(pt.birth)} → ${o.fv(pt.death)}`], ['persistence', `${o.fv(pt.death - pt.birth)} ${o.unitLabel}`], ['kept', pt.kept ? 'yes' : `no: below ${fmtNum(o.minPersistence)}`]];
  }
  const K = result.kept;
  const essential: DiagramEssential[] = [];
  for (let i = 0; i < K.vertex.length; i++) {
    const v = K.vertex[i];
    if (K.kind[i] !== PIT || born[v]) continue;
    essential.push({ key: o.keyOf(v, 0), dim: 0, birth: values[v] * f, title: `pit ${o.fv(values[v] * f)}: essential (never dies)` });
  }
  const d = persistenceSvg({
    id: 'persistence', title: 'Persistence diagram',
    desc: `Each pair of critical points as (birth level, death level); ${nKept + nDropped} pairs of positive persistence, threshold ${fmtNum(o.minPersistence)}.`,
    points, essential, threshold: o.minPersistence, valueLabel: `level [${o.unitLabel}]`, maxPoints: LIMITS.diagramPoints,
    rest: { birth: restB, death: restD }, counts: { kept: nKept, dropped: nDropped },
    titleOf: (p) => `${p.dim === 0 ? 'pit → pass' : 'pass → peak'}: ${o.fv(p.birth)} → ${o.fv(p.death)}, persistence ${o.fv(p.death - p.birth)}${p.kept ? '' : ' (dropped)'}`,
    notes: o.zeroPairs ? [`${o.zeroPairs} pairs of zero persistence (ties, flats) not drawn`] : [],
  });
  return { svg: d.svg, drawn: d.drawn };
}
