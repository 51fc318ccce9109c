/**
 * The runoff report page: the DEM in greys with hillshade, the water standing after the routing on
 * top, the outlines of the ponds, each depression's pit and pour point (full ones spill there); the
 * spill-level tree with how full each depression is; the depressions table with the water each
 * received, holds and passed on. Modelled on the ponds page (src/render/html/ponds.ts).
 */
import type { RunoffResult } from '../../hydro/runoff.js';
import type { RunoffReport, RunoffDepressionRecord } from '../../report/runoff.js';
import { labelBoxes } from '../../hydro/vectors.js';
import { mapSvg, type MapMarker, type MapShape } from '../figures/map.js';
import { traceRegion, RegionScratch } from '../figures/outline.js';
import { treeSvg, type TreeNodeIn } from '../figures/tree.js';
import { blockCentreSample } from '../figures/raster.js';
import { fmtNum } from '../figures/scale.js';
import { topKBy } from '../../report/hydro-common.js';
import { treeColumns } from './ponds.js';
import type { ReportDoc, TableSpec, ReportContext, BuiltReport } from './model.js';
import { displayNotes, readoutNote } from './surface.js';
import { axesLabels } from './survey.js';
import { dkey, pourAngle, waterDisplay, waterHover, spillTree, waterHeader, unitsRow, hydroToggles } from './hydro.js';

export { dkey } from './hydro.js';

/** Caps for the page: pond outlines (count, vertices, display cells scanned), depressions marked, tree leaves, table rows. */
export const RUNOFF_LIMITS = { outlines: 1500, outlinePoints: 250_000, tracedCells: 8_000_000, markedDepressions: 400, treeLeaves: 250, tableRows: 5000 };

const STATE_WORD: Record<RunoffDepressionRecord['state'], string> = { full: 'full', partial: 'partly filled', dry: 'dry' };

/**
 * The k depressions the page ranks first — most water held, then most received, then the smaller
 * id — as records, by a partial selection over the routing's columns (no record for the rest).
 */
export function runoffRanking(result: RunoffResult, report: RunoffReport, k: number): RunoffDepressionRecord[] {
  const H = result.hierarchy, st = result.route.stored, rc = result.route.received;
  const weaker = (a: number, b: number): boolean => {
    const sa = st[H.node[a]], sb = st[H.node[b]];
    if (sa !== sb) return sa < sb;
    const ra = rc[H.node[a]], rb = rc[H.node[b]];
    return ra !== rb ? ra < rb : a > b;
  };
  return topKBy(1, H.count + 1, k, weaker).map((id) => report.depressions.at(id - 1));
}

/** Outlines of the largest ponds at display resolution, linked to the depression that holds them. */
function pondOutlines(report: RunoffReport, displayBodies: Int32Array, dw: number, dh: number, factor: number, tol: number): MapShape[] {
  const box = labelBoxes(displayBodies, dw, report.ponds.length);
  // (records are made one at a time, and only until the caps are reached)
  const shapes: MapShape[] = [];
  let points = 0, traced = 0;
  const scratch = new RegionScratch(dw, dh);
  const zu = report.units.elevation, vu = report.units.volume;
  // ponds are numbered largest first
  for (const p of report.ponds) {
    if (shapes.length >= RUNOFF_LIMITS.outlines || points >= RUNOFF_LIMITS.outlinePoints || traced >= RUNOFF_LIMITS.tracedCells) break;
    const b = 4 * p.id;
    if (box[b + 2] < 0) continue;
    traced += (box[b + 2] - box[b] + 3) * (box[b + 3] - box[b + 1] + 3);
    const o = traceRegion(displayBodies, dw, [box[b], box[b + 1], box[b + 2], box[b + 3]], (e) => e === p.id, factor, tol, scratch);
    if (!o.d) continue;
    points += o.points;
    shapes.push({
      key: p.depression !== null ? dkey(p.depression) : `p${p.id}`, d: o.d,
      title: `pond ${p.id}: ${fmtNum(p.volume, 5)} ${vu} at level ${fmtNum(p.level, 7)} ${zu}${p.depression !== null ? `, in depression #${p.depression}` : ''}`,
    });
  }
  return shapes;
}

export function buildRunoffHtml(result: RunoffResult, report: RunoffReport, ctx: ReportContext): BuiltReport {
  const g = result.grid;
  const u = report.units;
  const zu = u.elevation, au = u.area, vu = u.volume;
  // water depth after the routing
  const R = result.rasters;
  const wd = waterDisplay(g, zu, R.depth);
  const { sd, layer, contours, dec, fz, dmax, depthRamp, dTop, depthPng } = wd;
  const geo = sd.geographic;
  const f = sd.frame.factor;

  const deps = report.depressions;
  const ranked = runoffRanking(result, report, Math.max(RUNOFF_LIMITS.markedDepressions, RUNOFF_LIMITS.tableRows));
  const displayBodies = f === 1 ? R.bodies : blockCentreSample(R.bodies, g.width, g.height, f);
  const shapes = pondOutlines(report, displayBodies, sd.frame.dw, sd.frame.dh, f, wd.tol);
  const into = (d: RunoffDepressionRecord) => (d.into === 'outside' ? 'the outside' : `#${d.into}`);
  const marked = ranked.slice(0, RUNOFF_LIMITS.markedDepressions);
  const markers: MapMarker[] = [];
  for (const d of marked) {
    if (d.children.length === 0) markers.push({ key: dkey(d.id), kind: 'pit', u: d.pit.col + 0.5, v: d.pit.row + 0.5, title: `depression #${d.id}: pit ${fz(d.pitValue)} ${zu}; ${STATE_WORD[d.state]}` });
    // the pour arrow points from the pass to the cell the overflow runs into
    markers.push({
      key: dkey(d.id), kind: 'pour', u: d.pour.col + 0.5, v: d.pour.row + 0.5, angle: pourAngle(d),
      title: d.state === 'full'
        ? `depression #${d.id}: full at ${fz(d.spillValue)} ${zu}; passes ${fmtNum(d.passedOn, 5)} ${vu} on into ${into(d)}`
        : `depression #${d.id}: ${STATE_WORD[d.state]} (${fmtNum(100 * d.fillFraction, 3)} %); would spill here at ${fz(d.spillValue)} ${zu} into ${into(d)}`,
    });
  }
  const pitCount = markers.filter((m) => m.kind === 'pit').length;

  const tips: ReportDoc['tips'] = {};
  for (const d of ranked.slice(0, RUNOFF_LIMITS.tableRows)) {
    tips[dkey(d.id)] = [
      ['', `depression #${d.id}${d.parent === null ? '' : ` (inside #${d.parent})`}: ${STATE_WORD[d.state]}`],
      ['received', `${fmtNum(d.received, 6)} ${vu}`],
      ['holds', `${fmtNum(d.waterVolume, 6)} ${vu} of ${fmtNum(d.volume, 6)} ${vu} (${fmtNum(100 * d.fillFraction, 4)} %)`],
      ['passed on', `${fmtNum(d.passedOn, 6)} ${vu} into ${into(d)}`],
      ['water level', d.waterLevel === null ? (d.state === 'dry' ? 'dry' : 'pools at several levels in nested depressions') : `${fz(d.waterLevel)} ${zu}`],
      ['spill level', `${fz(d.spillValue)} ${zu}`],
      ['pit', `${fz(d.pitValue)} ${zu} at cell (${d.pit.col}, ${d.pit.row})`],
      ['wet area', `${fmtNum(d.wetArea, 6)} ${au}`],
    ];
  }
  for (let b = 1; b <= result.bodies.count; b++) if (result.bodies.depression[b] <= 0) { const p = report.ponds.at(b - 1); tips[`p${p.id}`] = [['', `pond ${p.id} in a walled-in region`], ['water', `${fmtNum(p.volume, 6)} ${vu}`], ['level', `${fz(p.level)} ${zu}`]]; }

  const w = report.water;
  const mapNotes = [...displayNotes(sd, g, contours, zu), ...layer.notes,
    `water depth after routing ${report.runoff.depthText ?? 'the runoff'}: each display cell's mean depth (deepest ${fz(dmax)} ${zu})`];
  if (marked.length < deps.length) mapNotes.push(`${marked.length} of ${deps.length} depressions marked (those holding the most water)`);
  if (shapes.length < report.ponds.length) mapNotes.push(`${shapes.length} largest of ${report.ponds.length} ponds outlined`);
  mapNotes.push(`outlines traced at display resolution${f > 1 ? ` (blocks of ${f} × ${f} cells)` : ''}; ponds.geojson has them cell by cell`);
  const map = mapSvg({
    id: 'map', title: `Water after routing ${report.runoff.depthText ?? 'the runoff'} over ${report.input ?? 'the DEM'}`,
    desc: `${g.width} by ${g.height} DEM in grey with hillshade; ponded water depth in colour; ${shapes.length} pond outlines; `
      + `pits of the innermost depressions (downward triangles) and ${marked.length} pour points (arrows: where a full depression spills).`,
    frame: sd.frame,
    layers: [layer.layer, { id: 'depth', label: 'water depth', href: depthPng, visible: true }],
    contours, contourUnit: zu, outlines: shapes, markers,
    kinds: [{ kind: 'pit', count: pitCount }, { kind: 'pour', count: marked.length }],
    lineKeys: [{ label: 'pond outline', kind: 'outline' }],
    ramps: [layer.legend, { label: `water depth [${zu}]`, ramp: depthRamp, lo: 0, hi: dTop }],
    notes: mapNotes, axes: axesLabels(sd),
  });

  // spill-level tree, as on the ponds page, with how full each depression is
  const { red, childSpill, leafCount } = spillTree(treeColumns(result, report), RUNOFF_LIMITS.treeLeaves);
  const nodes: TreeNodeIn[] = Array.from(red.nodes, (i, q) => {
    const d = deps.at(i);
    const floor = d.children.length ? childSpill[d.id] : d.pitValue;
    return {
      id: d.id, parent: red.parent[q] < 0 ? -1 : red.parent[q] + 1,
      value: floor, kind: d.children.length ? 'pass' as const : 'pit' as const, key: dkey(d.id),
      title: `#${d.id}: ${STATE_WORD[d.state]}, ${fmtNum(d.waterVolume, 4)} of ${fmtNum(d.volume, 4)} ${vu}${d.waterLevel !== null ? ` at ${fz(d.waterLevel)} ${zu}` : ''}; spills at ${fz(d.spillValue)} ${zu}`,
      weight: d.waterVolume, importance: d.volume,
      ...(d.parent === null ? { top: d.spillValue, cap: { kind: 'pour' as const, angle: -90, title: `#${d.id} spills at ${fz(d.spillValue)} ${zu} into ${into(d)}${d.passedOn > 0 ? `: ${fmtNum(d.passedOn, 4)} ${vu} left the map here` : ''}` } } : {}),
    };
  });
  const shownLeaves = Math.min(leafCount, RUNOFF_LIMITS.treeLeaves);
  const tree = treeSvg({
    id: 'tree', title: 'Spill-level tree with the water held',
    desc: `Each depression is a stem from its floor to its spill level; nested depressions join their parent where they merge. Stem width grows with the water it holds after the routing. ${nodes.length} depressions.`,
    nodes, valueLabel: `level [${zu}]`,
    notes: ['stem width ∝ √(water held); ➤ at the top of an outer stem: where it spills', ...(shownLeaves < leafCount ? [`${shownLeaves} largest of ${leafCount} innermost depressions shown`] : [])],
  });

  const rows = ranked.slice(0, RUNOFF_LIMITS.tableRows);
  const table: TableSpec = {
    id: 'depressions', title: 'Depressions after the runoff',
    caption: 'Every depression with the water it received, holds and passed on, the most water held first. Click a row to find it on the map and in the tree.',
    columns: [
      { key: 'id', label: 'id', unit: '', type: 'int' },
      { key: 'parent', label: 'inside', unit: 'id', type: 'int' },
      { key: 'state', label: 'state', unit: '', type: 'text' },
      { key: 'received', label: 'received', unit: vu, type: 'num' },
      { key: 'stored', label: 'holds', unit: vu, type: 'num' },
      { key: 'passed', label: 'passed on', unit: vu, type: 'num' },
      { key: 'capacity', label: 'capacity', unit: vu, type: 'num' },
      { key: 'fill', label: 'full', unit: '%', type: 'num', digits: 4 },
      { key: 'level', label: 'water level', unit: zu, type: 'num', decimals: dec },
      { key: 'spill', label: 'spill level', unit: zu, type: 'num', decimals: dec },
      { key: 'depth', label: 'max water depth', unit: zu, type: 'num', decimals: dec },
      { key: 'area', label: 'wet area', unit: au, type: 'num' },
      { key: 'into', label: 'spills into', unit: '', type: 'text' },
    ],
    rows: rows.map((d) => [d.id, d.parent, STATE_WORD[d.state], d.received, d.waterVolume, d.passedOn, d.volume, 100 * d.fillFraction, d.waterLevel, d.spillValue, d.maxWaterDepth, d.wetArea, d.into === 'outside' ? 'outside' : `#${d.into}`]),
    keys: rows.map((d) => dkey(d.id)),
    total: deps.length,
    csv: 'runoff.csv',
  };

  const hover = waterHover(wd, zu, 'pond', 'pond ', 'block centre in pond ', R.bodies, displayBodies);

  const ro = report.runoff;
  const params = [
    ro.mode === 'uniform' ? `runoff ${ro.depthText ?? `${fmtNum(ro.depth ?? 0)} m`} uniform` : `runoff raster ${ro.raster!.source} (${ro.raster!.unit})${ro.raster!.resampled ? ', resampled' : ''}`,
    ...(ro.initialLevel ? [`initial water level ${ro.initialLevel.source}`] : []),
    `nodata as ${report.nodataAs}`,
  ];
  const header = waterHeader(report, params, ctx.commandLine, [
    unitsRow(u, 'elevations and levels'),
    { label: 'Water balance', value: `input ${fmtNum(w.input, 6)} = ponded ${fmtNum(w.ponded, 6)} + outflow ${fmtNum(w.outflow, 6)} ${vu}; relative error ${w.balanceError.toExponential(1)}`, status: w.balanceError <= 1e-9 ? 'ok' : 'fail' },
  ]);
  const c = report.counts;
  const doc: ReportDoc = {
    command: 'runoff',
    title: `Where ${ro.depthText ?? 'the runoff'} of runoff ponds on ${report.input ?? 'a DEM'}`,
    subtitle: report.input ? report.input.split(/[\\/]/).pop()! : 'DEM',
    domain: 'terrain',
    header,
    cautions: [report.caution],
    map: {
      svg: map.svg, geometry: map.geometry, frame: sd.frame, markers: markers.length,
      caption: 'Scroll or pinch to zoom, drag to pan. ▽ marks a pit, ➤ a pour point, where a full depression passes its water on. Click an outline, a marker or a row to link them.',
      toggles: hydroToggles(),
      hover, xyUnit: sd.xyUnit, geographic: geo,
    },
    treeTitle: 'Spill-level tree',
    tree: { svg: tree.svg, markers: tree.markers, caption: 'Level rises upward. Nested depressions fill first; a full one spills into its neighbour, and when neighbours are both full they merge and fill together. Stem width: water held.' },
    persistence: null,
    tables: [table],
    tips,
    facts: [
      `input ${fmtNum(w.input, 4)} ${vu}: ponded ${fmtNum(w.ponded, 4)}, outflow ${fmtNum(w.outflow, 4)}`,
      `${c.full} full, ${c.partial} partly filled, ${c.dry} dry of ${c.depressions} depressions`,
      `${c.ponds} ponds over ${fmtNum(report.totals.wetArea, 4)} ${au}`,
      ...(report.euler ? [`Euler ${report.euler.holds ? 'holds ✓' : 'FAILS ✗'} (χ = ${report.euler.characteristic})`] : []),
    ],
    notes: [...mapNotes, readoutNote(sd),
      'Routing: Fill–Spill–Merge (Barnes, Callaghan & Wickert 2021) on the depression tree — each cell\'s water runs by steepest descent to a pit, depressions fill, full ones spill at their pour point, neighbours full to a shared spill level merge.',
      ...report.warnings.map((x) => `Warning: ${x}`),
      `Colour ramps: ${layer.ramp.name} for the terrain, ${depthRamp.name} (reversed) for the water depth — d3-scale-chromatic.`],
    files: ctx.files,
    version: report.sill,
    generated: ctx.generated ?? new Date().toISOString(),
  };
  return { doc, svgs: { map: map.svg, tree: tree.svg, persistence: null } };
}
