/**
 * The runoff report page: the DEM in greys with hillshade, the water standing after the routing on
 * top, the outlines of the ponds, each depression's pit and pour point (full ones spill there); the
 * spill-level tree with how full each depression is; the depressions table with the water each
 * received, holds and passed on. Modelled on the ponds page (src/render/html/ponds.ts).
 */
import type { RunoffResult } from '../../hydro/runoff.js';
import type { RunoffReport, RunoffDepressionRecord } from '../../report/runoff.js';
import { mapSvg, mapGeometry, type MapMarker, type MapShape } from '../figures/map.js';
import { traceRegion } from '../figures/outline.js';
import { treeSvg, reduceSweepTree, type TreeNodeIn } from '../figures/tree.js';
import { blockStats, blockCentreSample, finiteRange } from '../figures/raster.js';
import { makeRamp } from '../figures/colour.js';
import { overlay } from '../figures/layers.js';
import { encodePng, pngDataUri } from '../figures/png.js';
import { fmtNum, topIndices } from '../figures/scale.js';
import { RAMPS } from '../figures/theme.js';
import type { ReportDoc, TableSpec, ReportContext, BuiltReport, HoverLayer } from './model.js';
import {
  surfaceDisplay, surfaceLayer, surfaceContours, surfaceHover, displayNotes, commonHeader, readoutNote, valueDecimals, fmtDec, packArray,
} from './surface.js';
import { axesLabels } from './survey.js';

/** Caps for the page: pond outlines (count, vertices, display cells scanned), depressions marked, tree leaves, table rows. */
export const RUNOFF_LIMITS = { outlines: 1500, outlinePoints: 250_000, tracedCells: 8_000_000, markedDepressions: 400, treeLeaves: 250, tableRows: 5000 };

export const dkey = (id: number): string => `d${id}`;

const STATE_WORD: Record<RunoffDepressionRecord['state'], string> = { full: 'full', partial: 'partly filled', dry: 'dry' };

/** Depressions in the order the page ranks them: most water held first, then most received, then id. */
export function runoffRanking(report: RunoffReport): RunoffDepressionRecord[] {
  return [...report.depressions].sort((a, b) => b.waterVolume - a.waterVolume || b.received - a.received || a.id - b.id);
}

/** Indices into report.depressions ordered deepest nesting level first (children before their parents). */
function childrenFirst(deps: readonly RunoffDepressionRecord[]): Int32Array {
  let maxLevel = 0;
  for (const d of deps) if (d.level > maxLevel) maxLevel = d.level;
  const start = new Int32Array(maxLevel + 2);
  for (const d of deps) start[maxLevel - d.level + 1]++;
  for (let l = 1; l <= maxLevel + 1; l++) start[l] += start[l - 1];
  const out = new Int32Array(deps.length);
  deps.forEach((d, i) => { out[start[maxLevel - d.level]++] = i; });
  return out;
}

/** Outlines of the largest ponds at display resolution, linked to the depression that holds them. */
function pondOutlines(result: RunoffResult, report: RunoffReport, displayBodies: Int32Array, dw: number, dh: number, factor: number, tol: number): MapShape[] {
  const N = report.ponds.length + 1;
  const box = new Int32Array(4 * N);
  for (let b = 0; b < N; b++) box.set([0x7fffffff, 0x7fffffff, -1, -1], 4 * b);
  for (let r = 0; r < dh; r++) {
    for (let c = 0; c < dw; c++) {
      const e = displayBodies[r * dw + c];
      if (e <= 0) continue;
      const b = 4 * e;
      if (c < box[b]) box[b] = c;
      if (r < box[b + 1]) box[b + 1] = r;
      if (c > box[b + 2]) box[b + 2] = c;
      if (r > box[b + 3]) box[b + 3] = r;
    }
  }
  const shapes: MapShape[] = [];
  let points = 0, traced = 0;
  const scratch = new Uint8Array((dw + 2) * (dh + 2));
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
  void result;
  return shapes;
}

export function buildRunoffHtml(result: RunoffResult, report: RunoffReport, ctx: ReportContext): BuiltReport {
  const g = result.grid;
  const u = report.units;
  const zu = u.elevation, au = u.area, vu = u.volume;
  const sd = surfaceDisplay(g);
  const layer = surfaceLayer(sd, { domain: 'terrain', label: `elevation [${zu}]`, underWater: true });
  const contours = surfaceContours(sd, 10);
  const dec = valueDecimals(g.values, finiteRange(sd.stats.min)[0], finiteRange(sd.stats.max)[1]);
  const fz = (x: number | null) => fmtDec(x, dec);
  const geo = sd.geographic;
  const hu = /^(m|ft|us-ft|km|deg)\b/.exec(u.horizontal)?.[1];
  const xyUnit = sd.xyUnit || (hu === 'deg' ? '°' : hu) || (g.crs ? 'CRS units' : 'input units');

  // water depth after the routing
  const R = result.rasters;
  const f = sd.frame.factor;
  const dstats = blockStats(R.depth, g.width, g.height, f);
  const [, dmax] = finiteRange(dstats.max);
  const depthRamp = makeRamp(RAMPS.depth.name, RAMPS.depth.lo, RAMPS.depth.hi);
  const dTop = dmax > 0 ? dmax : 1;
  const depthPng = pngDataUri(encodePng(overlay(dstats.mean, depthRamp, 0, dTop, 0.88), sd.frame.dw, sd.frame.dh, 4));

  const deps = report.depressions;
  const ranked = runoffRanking(report);
  const displayBodies = f === 1 ? R.bodies : blockCentreSample(R.bodies, g.width, g.height, f);
  const kfig = mapGeometry(g.width, g.height, 0).k;
  const shapes = pondOutlines(result, report, displayBodies, sd.frame.dw, sd.frame.dh, f, Math.max(0.3, 0.6 / (kfig * f)));
  const into = (d: RunoffDepressionRecord) => (d.into === 'outside' ? 'the outside' : `#${d.into}`);
  const marked = ranked.slice(0, RUNOFF_LIMITS.markedDepressions);
  const markers: MapMarker[] = [];
  for (const d of marked) {
    if (d.children.length === 0) markers.push({ key: dkey(d.id), kind: 'pit', u: d.pit.col + 0.5, v: d.pit.row + 0.5, title: `depression #${d.id}: pit ${fz(d.pitValue)} ${zu}; ${STATE_WORD[d.state]}` });
    // the pour arrow points from the pass to the cell the overflow runs into
    const angle = (Math.atan2(d.pour.to.row - d.pour.row, d.pour.to.col - d.pour.col) * 180) / Math.PI;
    markers.push({
      key: dkey(d.id), kind: 'pour', u: d.pour.col + 0.5, v: d.pour.row + 0.5, angle,
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
  for (const p of report.ponds) if (p.depression === null) tips[`p${p.id}`] = [['', `pond ${p.id} in a walled-in region`], ['water', `${fmtNum(p.volume, 6)} ${vu}`], ['level', `${fz(p.level)} ${zu}`]];

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
  const N = deps.length;
  const childSpill = new Float64Array(N + 1).fill(-Infinity);
  for (const d of deps) if (d.parent !== null && d.spillValue > childSpill[d.parent]) childSpill[d.parent] = d.spillValue;
  const parentIx = Int32Array.from(deps, (d) => (d.parent === null ? -1 : d.parent - 1));
  const kids = Int32Array.from(deps, (d) => d.children.length);
  const leafRank = Float64Array.from(deps, (d) => (d.children.length ? NaN : d.volume));
  const keepLeaf = new Uint8Array(N);
  for (const i of topIndices(leafRank, RUNOFF_LIMITS.treeLeaves)) keepLeaf[i] = 1;
  const leafCount = deps.reduce((m, d) => m + (d.children.length ? 0 : 1), 0);
  const red = reduceSweepTree(parentIx, kids, (i) => keepLeaf[i] === 1, childrenFirst(deps));
  const nodes: TreeNodeIn[] = Array.from(red.nodes, (i, q) => {
    const d = deps[i];
    const floor = d.children.length ? childSpill[d.id] : d.pitValue;
    return {
      id: d.id, parent: red.parent[q] < 0 ? -1 : deps[red.parent[q]].id,
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

  const hover: HoverLayer[] = [surfaceHover(sd, 'elevation', zu)];
  if (f === 1) {
    hover.push({ label: 'water depth', unit: zu, mode: 'exact', b64: packArray(Float32Array.from(dstats.mean)) });
    hover.push({ label: 'pond', unit: '', mode: 'label', prefix: 'pond ', b64: packArray(Int32Array.from(R.bodies)) });
  } else {
    hover.push({ label: 'water depth', unit: zu, mode: 'range', b64: `${packArray(dstats.min)},${packArray(dstats.max)}` });
    hover.push({ label: 'pond', unit: '', mode: 'label', prefix: 'block centre in pond ', b64: packArray(displayBodies) });
  }

  const ro = report.runoff;
  const params = [
    ro.mode === 'uniform' ? `runoff ${ro.depthText ?? `${fmtNum(ro.depth ?? 0)} m`} uniform` : `runoff raster ${ro.raster!.source} (${ro.raster!.unit})${ro.raster!.resampled ? ', resampled' : ''}`,
    ...(ro.initialLevel ? [`initial water level ${ro.initialLevel.source}`] : []),
    `nodata as ${report.nodataAs}`,
  ];
  const header = report.euler
    ? commonHeader({ ...report, euler: report.euler }, params.join(', '), ctx.commandLine)
    : commonHeader({ ...report, euler: { characteristic: 0, pits: 0, passes: 0, peaks: 0, holds: true, outsidePit: false, simplices: [] } }, params.join(', '), ctx.commandLine).filter((h) => h.label !== 'Euler check');
  header.splice(header.findIndex((h) => h.label === 'Parameters'), 0,
    { label: 'Units', value: `elevations and levels in ${zu}, areas in ${au}, volumes in ${vu}; horizontal: ${u.horizontal}${u.notes.length ? ` (${u.notes.join(' ')})` : ''}` },
    { label: 'Water balance', value: `input ${fmtNum(w.input, 6)} = ponded ${fmtNum(w.ponded, 6)} + outflow ${fmtNum(w.outflow, 6)} ${vu}; relative error ${w.balanceError.toExponential(1)}`, status: w.balanceError <= 1e-9 ? 'ok' : 'fail' },
  );
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
      toggles: [
        { id: 'surface', label: 'terrain', on: true }, { id: 'depth', label: 'water depth', on: true }, { id: 'contours', label: 'contours', on: true },
        { id: 'outlines', label: 'outlines', on: true }, { id: 'markers', label: 'markers', on: true },
      ],
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
