/**
 * The ponds report page: the DEM in greys with hillshade, water depth at the spill levels on top,
 * depression outlines, pits and pour points; the spill-level tree with volumes; depth against
 * spill level as a persistence diagram; the depressions table.
 */
import type { PondsResult } from '../../hydro/ponds.js';
import type { PondsReport } from '../../report/ponds.js';
import type { DepressionOutline } from '../../hydro/vectors.js';
import { labelBoxes } from '../../hydro/vectors.js';
import { SpillPaths } from '../../hydro/spill-paths.js';
import { topLabels } from '../../hydro/rasters.js';
import { encodePng, pngDataUri } from '../figures/png.js';
import { mapSvg, type MapMarker, type MapShape } from '../figures/map.js';
import { traceRegion, RegionScratch } from '../figures/outline.js';
import { treeSvg, type TreeNodeIn } from '../figures/tree.js';
import { persistenceSvg, type DiagramPoint } from '../figures/persistence.js';
import { blockCentreSample, mapToPlot } from '../figures/raster.js';
import { fmtNum, topIndices } from '../figures/scale.js';
import { n } from '../figures/svg.js';
import type { ReportDoc, TableSpec, ReportContext, BuiltReport } from './model.js';
import { displayNotes, readoutNote, TERRAIN_CAUTION } from './surface.js';
import { axesLabels } from './survey.js';
import { dkey, pourAngle, childrenFirstOf, waterDisplay, waterHover, spillTree, waterHeader, unitsRow, hydroToggles, type DepressionTreeColumns } from './hydro.js';

export { dkey, pourAngle } from './hydro.js';

/** Caps for the page: outlines (count, vertices, display cells scanned to trace them), markers, tree leaves, table rows. */
export const PONDS_LIMITS = { outlines: 1500, outlinePoints: 250_000, tracedCells: 8_000_000, markers: 800, treeLeaves: 250, tableRows: 5000 };

/** Outline rings (map coordinates, e.g. from depressions.geojson) as SVG path data in plot coordinates, collinear points dropped. */
export function outlinePath(o: DepressionOutline, t: PondsResult['grid']['transform']): string {
  const parts: string[] = [];
  for (const poly of o.polygons) {
    for (const ring of poly) {
      const pts = ring.map(([x, y]) => mapToPlot(t, x, y));
      const keep: [number, number][] = [];
      for (let k = 0; k < pts.length - 1; k++) {
        const a = keep.length ? keep[keep.length - 1] : pts[pts.length - 2], b = pts[k], c = pts[k + 1];
        const cross = (b[0] - a[0]) * (c[1] - b[1]) - (b[1] - a[1]) * (c[0] - b[0]);
        if (Math.abs(cross) > 1e-9) keep.push(b);
      }
      if (keep.length < 3) continue;
      parts.push('M' + keep.map(([u, v]) => `${n(u, 3)} ${n(v, 3)}`).join('L') + 'Z');
    }
  }
  return parts.join('');
}

/** Indices into report.depressions ordered deepest nesting level first (children before their parents). */
export function childrenFirst(result: PondsResult): Int32Array {
  const H = result.hierarchy;
  return childrenFirstOf(H.level.subarray(1, H.count + 1));
}

/** The tree columns of a ponds or runoff result: the hierarchy with the report's (cleaned) spill values. */
export function treeColumns(result: PondsResult | { hierarchy: PondsResult['hierarchy'] }, report: { depressions: { columns: { spillValue: Float64Array } } }): DepressionTreeColumns {
  const H = result.hierarchy;
  return { count: H.count, parent: H.parent, childStart: H.childStart, level: H.level, spillValue: report.depressions.columns.spillValue, volume: H.volume };
}

/**
 * Outlines of the largest depressions at display resolution (nested depressions included in their
 * parent's region), most voluminous first, until the count or the vertex budget is reached.
 */
export function displayOutlines(result: PondsResult, report: PondsReport, displayLabels: Int32Array, dw: number, dh: number, factor: number, tol: number): MapShape[] {
  const H = result.hierarchy;
  const N = H.count;
  const box = labelBoxes(displayLabels, dw, N);
  // a parent's box holds its children's: deepest first
  for (const i of childrenFirst(result)) {
    const id = i + 1;
    if (H.parent[id] === 0 || box[4 * id + 2] < 0) continue;
    const b = 4 * id, p = 4 * H.parent[id];
    box[p] = Math.min(box[p], box[b]); box[p + 1] = Math.min(box[p + 1], box[b + 1]);
    box[p + 2] = Math.max(box[p + 2], box[b + 2]); box[p + 3] = Math.max(box[p + 3], box[b + 3]);
  }
  const shapes: MapShape[] = [];
  let points = 0, traced = 0;
  const scratch = new RegionScratch(dw, dh);
  for (const i of topIndices(H.volume.subarray(1, N + 1), 4 * PONDS_LIMITS.outlines)) {
    const id = i + 1;
    if (shapes.length >= PONDS_LIMITS.outlines || points >= PONDS_LIMITS.outlinePoints || traced >= PONDS_LIMITS.tracedCells) break;
    const b = 4 * id;
    if (box[b + 2] < 0) continue;
    traced += (box[b + 2] - box[b] + 3) * (box[b + 3] - box[b + 1] + 3);
    const lo = H.tin[id], hi = H.tout[id];
    const o = traceRegion(displayLabels, dw, [box[b], box[b + 1], box[b + 2], box[b + 3]], (e) => e > 0 && H.tin[e] >= lo && H.tin[e] < hi, factor, tol, scratch);
    if (!o.d) continue;
    points += o.points;
    shapes.push({ key: dkey(id), d: o.d, title: `depression #${id}` });
  }
  // outer outlines first, nested ones drawn over them
  return shapes.sort((a, b) => H.level[Number(a.key.slice(1))] - H.level[Number(b.key.slice(1))]);
}

/** Eight tints for the catchments (hue steps of 45° at equal lightness: neighbours tell apart, none dominates). */
const CATCH_TINTS: [number, number, number][] = Array.from({ length: 8 }, (_, k) => {
  const h = (k * 135) % 360; // 0, 135, 270, 45, … : consecutive ids far apart in hue
  const c = (a: number) => Math.round(255 * (0.62 + 0.2 * Math.cos(((h - a) * Math.PI) / 180)));
  return [c(0), c(120), c(240)];
});

/** RGBA display pixels of the top-level catchments (block-centre samples at display resolution). */
export function catchmentOverlay(top: Int32Array, width: number, height: number, f: number, dw: number, dh: number): string {
  const ids = f === 1 ? top : blockCentreSample(top, width, height, f);
  const px = new Uint8Array(dw * dh * 4);
  for (let y = 0; y < dh; y++) {
    for (let x = 0; x < dw; x++) {
      const i = y * dw + x, id = ids[i];
      if (id <= 0) continue;
      const edge = (x > 0 && ids[i - 1] !== id) || (x + 1 < dw && ids[i + 1] !== id) || (y > 0 && ids[i - dw] !== id) || (y + 1 < dh && ids[i + dw] !== id);
      const t = CATCH_TINTS[id % 8];
      px[4 * i] = t[0]; px[4 * i + 1] = t[1]; px[4 * i + 2] = t[2]; px[4 * i + 3] = edge ? 170 : 70;
    }
  }
  return pngDataUri(encodePng(px, dw, dh, 4));
}

export function buildPondsReport(result: PondsResult, report: PondsReport, ctx: ReportContext): BuiltReport {
  const g = result.grid;
  const u = report.units;
  const zu = u.elevation, au = u.area, vu = u.volume;
  // the water depth overlay: block means of the depth at the spill levels
  const R = result.rasters;
  const wd = waterDisplay(g, zu, R.depth);
  const { sd, layer, contours, dec, fz, dmax, depthRamp, dTop, depthPng } = wd;
  const geo = sd.geographic;
  // the unit ponds measured the horizontal in (it may have assumed metres for a CRS that names none)
  const hu = /^(m|ft|us-ft|km|deg)\b/.exec(u.horizontal)?.[1];
  const xyUnit = sd.xyUnit || (hu === 'deg' ? '°' : hu) || (g.crs ? 'CRS units' : 'input units');
  const f = sd.frame.factor;

  // depressions, largest first for the caps
  // (records are made only for the depressions shown; the rest is read from the columns)
  const H = result.hierarchy;
  const deps = report.depressions;
  const cols = deps.columns;
  const byVolume = Array.from(topIndices(H.volume.subarray(1, H.count + 1), Math.max(PONDS_LIMITS.tableRows, PONDS_LIMITS.markers)), (i) => deps.at(i));
  const displayLabels = f === 1 ? R.labels : blockCentreSample(R.labels, g.width, g.height, f);
  const shapes = displayOutlines(result, report, displayLabels, sd.frame.dw, sd.frame.dh, f, wd.tol);
  const markers: MapMarker[] = [];
  for (const d of byVolume.slice(0, Math.floor(PONDS_LIMITS.markers / 2))) {
    // a merged depression's pit is its deepest child's pit: one marker there, the child's
    if (d.children.length === 0) markers.push({ key: dkey(d.id), kind: 'pit', u: d.pit.col + 0.5, v: d.pit.row + 0.5, title: `depression #${d.id}: pit ${fz(d.pitValue)} ${zu}` });
    markers.push({ key: dkey(d.id), kind: 'pour', u: d.pour.col + 0.5, v: d.pour.row + 0.5, angle: pourAngle(d), title: `depression #${d.id}: pours at ${fz(d.spillValue)} ${zu} into ${d.into === 'outside' ? 'the outside' : `#${d.into}`}` });
  }
  const shownDeps = Math.min(deps.length, Math.floor(PONDS_LIMITS.markers / 2));
  // spill paths of the depressions marked: where each one's overflow runs when it is full (docs/ponds.md)
  const paths: MapShape[] = [];
  const catchLabels = result.catchments?.labels;
  if (catchLabels) {
    const maker = new SpillPaths(g, result.complex, H, catchLabels, result.options.connectivity, result.options.nodataOutlet, !result.areas.uniform, result.catchments?.resume ?? null);
    for (const d of byVolume.slice(0, shownDeps)) {
      const p = maker.path(d.id);
      let data = '';
      for (let part = 0; part < p.parts; part++) {
        const end = part + 1 < p.parts ? p.partStart[part + 1] : p.vertices;
        for (let v = p.partStart[part]; v < end; v++) {
          const [u, w] = mapToPlot(g.transform, p.xy[2 * v], p.xy[2 * v + 1]);
          data += `${v === p.partStart[part] ? 'M' : 'L'}${n(u, 2)} ${n(w, 2)}`;
        }
      }
      const to = p.arrives.kind === 'depression' ? `depression #${p.arrives.id}` : p.arrives.kind === 'outside' ? 'the map edge' : 'a pit of no reported depression';
      if (data) paths.push({ key: dkey(d.id), d: data, title: `spill path of #${d.id}: ${fmtNum(p.length, 4)} ${xyUnit} down to ${to}, dropping ${fz(p.drop)} ${zu}` });
    }
  }

  const tips: ReportDoc['tips'] = {};
  for (const d of byVolume.slice(0, PONDS_LIMITS.tableRows)) {
    tips[dkey(d.id)] = [
      ['', `depression #${d.id}${d.parent === null ? '' : ` (inside #${d.parent})`}`],
      ['spill level', `${fz(d.spillValue)} ${zu}`],
      ['pit', `${fz(d.pitValue)} ${zu} at cell (${d.pit.col}, ${d.pit.row})`],
      ['max depth', `${fz(d.maxDepth)} ${zu}`],
      ['volume', `${fmtNum(d.volume, 6)} ${vu}`],
      ['area', `${fmtNum(d.area, 6)} ${au}`],
      ['pour point', `cell (${d.pour.col}, ${d.pour.row}), x, y ${geo ? `${d.pour.x.toFixed(6)}, ${d.pour.y.toFixed(6)}` : `${fmtNum(d.pour.x, 9)}, ${fmtNum(d.pour.y, 9)}`}`],
      ['spills into', d.into === 'outside' ? 'the outside (leaves the map)' : `depression #${d.into}`],
      ...(d.children.length ? [['contains', d.children.map((c) => `#${c}`).join(', ')] as [string, string]] : []),
    ];
  }

  // the top-level catchments as a tint under the water (each in one of eight hues, its boundary darker; none where the water leaves the map)
  const catchPng = catchLabels ? catchmentOverlay(topLabels(catchLabels, H), g.width, g.height, f, sd.frame.dw, sd.frame.dh) : null;
  const mapNotes = [...displayNotes(sd, g, contours, zu), ...layer.notes,
    ...(catchPng ? ['catchments: a tint per top-level depression (hues repeat), boundaries darker; untinted land drains off the map'] : []),
    `water depth: each display cell's mean depth with every depression filled to its spill level (deepest ${fz(dmax)} ${zu})`];
  if (shownDeps < deps.length || shapes.length < deps.length) mapNotes.push(`${shownDeps} largest of ${deps.length} depressions marked, ${shapes.length} outlined`);
  mapNotes.push(`outlines traced at display resolution${f > 1 ? ` (blocks of ${f} × ${f} cells)` : ''}; depressions.geojson has them cell by cell (the levels of --outlines: top-level ones by default)`);
  const map = mapSvg({
    id: 'map', title: `Depressions of ${report.input ?? 'the DEM'}`,
    desc: `${g.width} by ${g.height} DEM in grey with hillshade; water depth at the spill levels in colour; ${shapes.length} depression outlines; `
      + `pits of the innermost depressions (downward triangles) and ${shownDeps} pour points (arrows pointing where the water spills)`
      + `${paths.length ? `, with the spill path of each (white lines: where its overflow runs when it is full)` : ''}.`,
    frame: sd.frame,
    layers: [layer.layer, ...(catchPng ? [{ id: 'catchments', label: 'catchments', href: catchPng, visible: true }] : []), { id: 'depth', label: 'water depth', href: depthPng, visible: true }],
    contours, contourUnit: zu, outlines: shapes, paths, markers,
    kinds: [{ kind: 'pit', count: markers.filter((m) => m.kind === 'pit').length }, { kind: 'pour', count: shownDeps }],
    lineKeys: [{ label: 'depression outline', kind: 'outline' }, ...(paths.length ? [{ label: 'spill path', kind: 'path' as const }] : [])],
    ramps: [layer.legend, { label: `water depth [${zu}]`, ramp: depthRamp, lo: 0, hi: dTop }],
    notes: mapNotes, axes: axesLabels(sd),
  });

  // spill-level tree: each depression from its floor (pit, or where its children merged) up to its spill level
  const N = deps.length;
  // keep the largest innermost depressions, then make node objects
  const { red, childSpill, leafCount } = spillTree(treeColumns(result, report), PONDS_LIMITS.treeLeaves);
  const nodes: TreeNodeIn[] = Array.from(red.nodes, (i, q) => {
    const d = deps.at(i);
    const floor = d.children.length ? childSpill[d.id] : d.pitValue;
    return {
      id: d.id, parent: red.parent[q] < 0 ? -1 : red.parent[q] + 1,
      value: floor, kind: d.children.length ? 'pass' as const : 'pit' as const, key: dkey(d.id),
      title: `#${d.id}: ${d.children.length ? `${d.children.length} depressions merge at ${fz(floor)}` : `pit ${fz(d.pitValue)}`} ${zu}; spills at ${fz(d.spillValue)} ${zu}; ${fmtNum(d.volume, 4)} ${vu}`,
      weight: d.volume, importance: d.volume,
      ...(d.parent === null ? { top: d.spillValue, cap: { kind: 'pour' as const, angle: -90, title: `#${d.id} spills at ${fz(d.spillValue)} ${zu} into ${d.into === 'outside' ? 'the outside' : `#${d.into}`}` } } : {}),
    };
  });
  const lim = { nodes, leaves: leafCount, shown: Math.min(leafCount, PONDS_LIMITS.treeLeaves) };
  const tree = treeSvg({
    id: 'tree', title: 'Spill-level tree of the depressions',
    desc: `Each depression is a stem from its floor to its spill level; nested depressions join their parent where they merge. Stem width grows with volume. ${lim.nodes.length} depressions.`,
    nodes: lim.nodes, valueLabel: `level [${zu}]`,
    notes: ['stem width ∝ √volume; ➤ at the top of an outer stem: where it spills', ...(lim.shown < lim.leaves ? [`${lim.shown} largest of ${lim.leaves} innermost depressions shown`] : [])],
  });

  // depth (spill − pit) of every reported depression as a persistence pair
  const thr = Math.max(report.filters.minDepth, report.filters.minPersistence);
  const depth = new Float64Array(N);
  for (let i = 0; i < N; i++) depth[i] = cols.spillValue[i + 1] - cols.pitValue[i + 1];
  const drawnIdx = topIndices(depth, 2500);
  const isDrawn = new Uint8Array(N);
  const points: DiagramPoint[] = Array.from(drawnIdx, (i) => {
    isDrawn[i] = 1;
    return { key: dkey(i + 1), dim: 0 as const, birth: cols.pitValue[i + 1], death: cols.spillValue[i + 1], kept: true };
  });
  const restB = new Float64Array(N - points.length), restD = new Float64Array(N - points.length);
  for (let i = 0, q = 0; i < N; i++) if (!isDrawn[i]) { restB[q] = cols.pitValue[i + 1]; restD[q] = cols.spillValue[i + 1]; q++; }
  const rm = report.removed;
  const diagram = persistenceSvg({
    id: 'persistence', title: 'Depth of each depression: pit level against spill level',
    desc: `${N} depressions as (pit level, spill level); the distance above the diagonal is the depth.`,
    points, essential: [], threshold: thr, valueLabel: `level [${zu}]`, maxPoints: 2500,
    rest: { birth: restB, death: restD }, counts: { kept: N, dropped: 0 },
    titleOf: (p) => `${p.key!.replace('d', '#')}: pit ${fz(p.birth)} → spill ${fz(p.death)} (depth ${fz(p.death - p.birth)})`,
    legend: [`▽ one per depression (${N})${thr > 0 ? `; shaded band: depth < ${fmtNum(thr)} ${zu}, the threshold` : ''}`],
    notes: [
      ...(rm.filtered ? [`${rm.filtered} depressions removed by the filters (depth, area, volume) are not drawn`] : []),
      ...(rm.flats ? [`${rm.flats} flats at their own spill level hold no water`] : []),
    ],
  });

  const rows = byVolume.slice(0, PONDS_LIMITS.tableRows);
  const table: TableSpec = {
    id: 'depressions', title: 'Depressions',
    caption: 'Every depression at its spill level, largest volume first. Click a row to find it on the map and in the tree.',
    columns: [
      { key: 'id', label: 'id', unit: '', type: 'int' },
      { key: 'level', label: 'nesting', unit: '', type: 'int' },
      { key: 'parent', label: 'inside', unit: 'id', type: 'int' },
      { key: 'pit', label: 'pit', unit: zu, type: 'num', decimals: dec },
      { key: 'spill', label: 'spill level', unit: zu, type: 'num', decimals: dec },
      { key: 'depth', label: 'max depth', unit: zu, type: 'num', decimals: dec },
      { key: 'volume', label: 'volume', unit: vu, type: 'num' },
      { key: 'area', label: 'area', unit: au, type: 'num' },
      { key: 'cells', label: 'cells', unit: '', type: 'int' },
      { key: 'pour_col', label: 'pour col', unit: 'cell', type: 'int' },
      { key: 'pour_row', label: 'pour row', unit: 'cell', type: 'int' },
      { key: 'pour_x', label: 'pour x', unit: xyUnit, type: 'num', digits: 10 },
      { key: 'pour_y', label: 'pour y', unit: xyUnit, type: 'num', digits: 10 },
      { key: 'into', label: 'spills into', unit: '', type: 'text' },
    ],
    rows: rows.map((d) => [d.id, d.level, d.parent, d.pitValue, d.spillValue, d.maxDepth, d.volume, d.area, d.cells, d.pour.col, d.pour.row, d.pour.x, d.pour.y, d.into === 'outside' ? 'outside' : `#${d.into}`]),
    keys: rows.map((d) => dkey(d.id)),
    total: deps.length,
    csv: 'depressions.csv',
  };

  const hover = waterHover(wd, zu, 'depression', 'in depression #', 'block centre in depression #', R.labels, displayLabels);

  const fl = report.filters;
  const params = [
    `nodata as ${report.nodataAs}`,
    `min-depth ${fmtNum(fl.minDepth)} ${zu}`, `min-area ${fmtNum(fl.minArea)} ${au}`, `min-volume ${fmtNum(fl.minVolume)} ${vu}`,
    `min-persistence ${fmtNum(fl.minPersistence)}`,
    ...(fl.fillOnlyBelow !== null ? [`fill only below ${fmtNum(fl.fillOnlyBelow)} ${vu}`] : []),
    `labels: ${report.labelLevel}`,
  ];
  const header = waterHeader(report, params, ctx.commandLine, [unitsRow(u, 'elevations and depths')]);
  const t = report.totals, c = report.counts;
  const doc: ReportDoc = {
    command: 'ponds',
    title: `Depressions, spill levels and volumes of ${report.input ?? 'a DEM'}`,
    subtitle: report.input ? report.input.split(/[\\/]/).pop()! : 'DEM',
    domain: 'terrain',
    header,
    cautions: [report.caution ?? TERRAIN_CAUTION.join(' ')],
    map: {
      svg: map.svg, geometry: map.geometry, frame: sd.frame, markers: markers.length,
      caption: 'Scroll or pinch to zoom, drag to pan. ▽ marks the pit, ➤ the pour point and the way the water leaves. Click an outline, a marker or a row to link them.',
      toggles: hydroToggles(),
      hover, xyUnit: sd.xyUnit, geographic: geo,
    },
    treeTitle: 'Spill-level tree',
    tree: { svg: tree.svg, markers: tree.markers, caption: 'Level rises upward. Nested depressions fill first and merge at their spill level into the depression that holds them; outer ones spill (➤) into a neighbour or off the map.' },
    persistence: { svg: diagram.svg, markers: diagram.drawn, caption: 'Height above the diagonal is the depth from pit to spill level. The dashed line is the depth threshold (--min-depth or --min-persistence).' },
    tables: [table],
    tips,
    facts: [
      `${c.depressions} depressions (${c.topLevel} outermost)`,
      `${fmtNum(t.volume, 4)} ${vu} over ${fmtNum(t.area, 4)} ${au}`,
      ...(report.euler ? [`Euler ${report.euler.holds ? 'holds ✓' : 'FAILS ✗'} (χ = ${report.euler.characteristic})`] : []),
    ],
    notes: [...mapNotes, readoutNote(sd), 'Markers: pit ▽, pour point ➤ (pointing to the cell the water spills into), nesting ◇ where depressions merge.',
      `Colour ramps: ${layer.ramp.name} for the terrain, ${depthRamp.name} (reversed) for the depth — d3-scale-chromatic.`],
    files: ctx.files,
    version: report.sill,
    generated: ctx.generated ?? new Date().toISOString(),
  };
  return { doc, svgs: { map: map.svg, tree: tree.svg, persistence: diagram.svg } };
}
