/** The survey report page: the surface with its pits, passes and peaks, the join tree, the persistence diagram, tables. */
import type { Grid } from '../../surface/grid.js';
import type { Mesh } from '../../surface/mesh.js';
import type { SurveyResult } from '../../morse/survey.js';
import type { SurveyReport, CriticalPointRecord } from '../../report/survey.js';
import type { MergeTree } from '../../morse/mergetree.js';
import { mapSvg, type MapMarker } from '../figures/map.js';
import { treeSvg, limitLeaves, type TreeNodeIn } from '../figures/tree.js';
import { persistenceSvg, type DiagramPoint, type DiagramEssential } from '../figures/persistence.js';
import { fmtNum } from '../figures/scale.js';
import type { MarkerKind } from '../figures/markers.js';
import type { ReportDoc, TableSpec, ReportContext, BuiltReport } from './model.js';
import {
  surfaceDisplay, surfaceLayer, surfaceContours, surfaceHover, displayNotes, commonHeader, plotOf, TERRAIN_CAUTION, valueDecimals, fmtDec, type SurfaceDisplay,
} from './surface.js';
import { finiteRange } from '../figures/raster.js';

/** Most markers drawn on the map, tree leaves, and table rows carried in the page. */
export const LIMITS = { markers: 3000, treeLeaves: 250, tableRows: 5000, diagramPoints: 2500 };

export const vkey = (v: number): string => (v < 0 ? 'outside' : `v${v}`);

export function where(c: { col: number | null; row: number | null; index: number }): string {
  return c.col !== null ? `cell (${c.col}, ${c.row})` : `point ${c.index}`;
}

export function xyText(x: number, y: number, geographic: boolean, unit: string): string {
  const f = (v: number) => (geographic ? v.toFixed(6) : fmtNum(v, 9));
  return `${f(x)}, ${f(y)}${unit && unit !== 'input units' ? ' ' + unit : ''}`;
}

/** Persistence of each vertex that ends or starts a finite pair (the largest, for passes in several). */
export function persistenceByVertex(result: SurveyResult): Map<number, number> {
  const m = new Map<number, number>();
  const P = result.pairs;
  for (let k = 0; k < P.dim.length; k++) {
    const p = P.persistence[k];
    for (const v of [P.birthVertex[k], P.deathVertex[k]]) if (!(m.get(v)! >= p)) m.set(v, p);
  }
  return m;
}

/** Terrain or energy surface: open boundaries and georeferenced grids read as terrain. */
export function domainOf(report: { boundary: string; surface: { crs: unknown } }): 'terrain' | 'energy' {
  return report.boundary === 'open' || report.surface.crs ? 'terrain' : 'energy';
}

/** Join-tree nodes as tree-plot input. */
export function joinTreeNodes(tree: MergeTree, values: ArrayLike<number>, surface: Grid | Mesh, pers: Map<number, number>, unit: string, fv: (x: number) => string = (x) => fmtNum(x, 7)): TreeNodeIn[] {
  const out: TreeNodeIn[] = [];
  for (let k = 0; k < tree.vertex.length; k++) {
    const v = tree.vertex[k];
    const leaf = tree.childCount[k] === 0;
    const kind: MarkerKind = v < 0 ? 'outside' : leaf ? 'pit' : 'pass';
    const value = v < 0 ? -Infinity : values[v];
    const at = v < 0 ? '' : surface.kind === 'grid' ? ` at cell (${v % surface.width}, ${Math.floor(v / surface.width)})` : ` at point ${v}`;
    out.push({
      id: k, parent: tree.parent[k], value, kind, key: vkey(v),
      title: v < 0 ? 'outside (−∞): every component drains here in the end' : `${kind} ${fv(value)}${unit ? ' ' + unit : ''}${at}`,
      importance: leaf ? (v < 0 ? Infinity : pers.get(v) ?? Infinity) : 0,
    });
  }
  return out;
}

export function buildSurveyReport(surface: Grid | Mesh, result: SurveyResult, report: SurveyReport, ctx: ReportContext): BuiltReport {
  const domain = domainOf(report);
  const unitLabel = ctx.valueUnit ?? 'input units';
  const unitShort = ctx.valueUnit ?? '';
  const sd = surfaceDisplay(surface);
  const valueName = domain === 'terrain' ? 'elevation' : 'value';
  const layer = surfaceLayer(sd, { domain, label: `${valueName} [${unitLabel}]` });
  const contours = surfaceContours(sd, domain === 'terrain' ? 12 : 14);
  const pers = persistenceByVertex(result);
  const xyUnit = sd.xyUnit || (surface.crs ? 'CRS units' : 'input units');
  const dec = valueDecimals(result.complex.values, finiteRange(sd.stats.min)[0], finiteRange(sd.stats.max)[1]);
  const fv = (x: number) => fmtDec(x, dec);

  // features, most persistent first
  const ranked = report.criticalPoints.map((c, i) => ({ c, i, p: pers.get(c.index) ?? Infinity }))
    .sort((a, b) => b.p - a.p || a.i - b.i);
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
  const byIndex = new Map(report.criticalPoints.map((c) => [c.index, c] as [number, CriticalPointRecord]));
  for (let k = 0; k < result.join.vertex.length; k++) {
    const v = result.join.vertex[k];
    if (v >= 0 && !tips[vkey(v)]) {
      const c = byIndex.get(v);
      if (c) tips[vkey(v)] = tipOf(c, pers.get(v) ?? Infinity);
    }
  }
  tips.outside = [['', 'outside (−∞)'], ['meaning', 'beyond the grid edge and nodata: water leaving the map']];
  const allNodes = joinTreeNodes(result.join, values, surface, pers, unitShort, fv);
  const lim = limitLeaves(allNodes, LIMITS.treeLeaves);
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
  const P = result.pairs;
  const points: DiagramPoint[] = [];
  const born = new Set<number>();
  for (let k = 0; k < P.dim.length; k++) {
    if (P.dim[k] === 0) born.add(P.birthVertex[k]);
    const p = P.persistence[k];
    if (!(p > 0)) continue;
    const dim = P.dim[k] as 0 | 1;
    const feature = dim === 0 ? P.birthVertex[k] : P.deathVertex[k];
    const kept = p >= report.minPersistence;
    points.push({
      key: vkey(feature), dim, birth: values[P.birthVertex[k]], death: values[P.deathVertex[k]], kept,
      title: `${dim === 0 ? 'pit → pass' : 'pass → peak'}: ${fv(values[P.birthVertex[k]])} → ${fv(values[P.deathVertex[k]])}, persistence ${fv(p)}${kept ? '' : ' (dropped)'}`,
    });
    const key = vkey(feature);
    if (!tips[key]) {
      tips[key] = [['', `${dim === 0 ? 'pit' : 'peak'} ${fv(dim === 0 ? values[P.birthVertex[k]] : values[P.deathVertex[k]])}${unitShort ? ' ' + unitShort : ''}`],
        ['pair', `${fv(values[P.birthVertex[k]])} → ${fv(values[P.deathVertex[k]])}`], ['persistence', `${fv(p)} ${unitLabel}`], ['kept', kept ? 'yes' : `no: below ${fmtNum(report.minPersistence)}`]];
    }
  }
  const essential: DiagramEssential[] = report.criticalPoints.filter((c) => c.kind === 'pit' && !born.has(c.index))
    .map((c) => ({ key: vkey(c.index), dim: 0, birth: c.value, title: `pit ${fv(c.value)}: essential (never dies)` }));
  const diagram = persistenceSvg({
    id: 'persistence', title: 'Persistence diagram',
    desc: `Each pair of critical points as (birth level, death level); ${points.length} pairs of positive persistence, threshold ${fmtNum(report.minPersistence)}.`,
    points, essential, threshold: report.minPersistence, valueLabel: `level [${unitLabel}]`, maxPoints: LIMITS.diagramPoints,
    notes: report.counts.zeroPersistencePairs ? [`${report.counts.zeroPersistencePairs} pairs of zero persistence (ties, flats) not drawn`] : [],
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
      hover: [surfaceHover(sd, valueName, unitShort)],
      xyUnit: sd.xyUnit, geographic: sd.geographic,
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
  const rows = report.pairs.slice(0, LIMITS.tableRows);
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
