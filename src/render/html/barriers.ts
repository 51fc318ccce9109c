/**
 * The barriers report page: the energy surface with its minima (labelled states), transition
 * states and minimum-energy paths; the basin tree (disconnectivity graph) from the barriers
 * report; the persistence diagram of the surface; minima, transition-state and barrier tables.
 */
import type { BarriersResult } from '../../chem/barriers.js';
import type { BarriersReport, StationaryEntry } from '../../report/barriers.js';
import { mapSvg, type MapMarker, type MapShape } from '../figures/map.js';
import { treeSvg, reduceSweepTree, type TreeNodeIn } from '../figures/tree.js';
import { mapToPlot, finiteRange } from '../figures/raster.js';
import { fmtNum, topIndices } from '../figures/scale.js';
import { n } from '../figures/svg.js';
import type { ReportDoc, TableSpec, ReportContext, BuiltReport } from './model.js';
import { surfaceDisplay, surfaceLayer, surfaceContours, surfaceHover, displayNotes, commonHeader, readoutNote, valueDecimals, fmtDec, type SurfaceDisplay } from './surface.js';
import { axesLabels, pairsDiagram, vkey, xyText, LIMITS } from './survey.js';

export const skey = (id: string): string => `s:${id}`;

/** Where a stationary point is drawn: the refined point when refinement converged, else the sample. */
export function stationaryXY(s: StationaryEntry): [number, number] {
  return s.refined ? [s.refined.x, s.refined.y] : [s.x, s.y];
}

/** Plot coordinates of a map point, wrapped into the grid on periodic axes. */
function plotWrapped(sd: SurfaceDisplay, wrap: [boolean, boolean], x: number, y: number): [number, number] {
  let [u, v] = mapToPlot(sd.transform, x, y);
  const W = sd.frame.width, H = sd.frame.height;
  if (wrap[0]) u = ((u % W) + W) % W;
  if (wrap[1]) v = ((v % H) + H) % H;
  return [u, v];
}

/**
 * A path as SVG data in plot coordinates: points wrapped into the window on periodic axes, the
 * line lifted (a new M) where it leaves one side of the window and comes back at the other.
 */
export function pathData(points: [number, number][], wrap: [boolean, boolean], W: number, H: number): string {
  const parts: string[] = [];
  let prev: [number, number] | null = null;
  for (const [u0, v0] of points) {
    const u = wrap[0] ? ((u0 % W) + W) % W : u0, v = wrap[1] ? ((v0 % H) + H) % H : v0;
    const jump = prev !== null && ((wrap[0] && Math.abs(u - prev[0]) > W / 2) || (wrap[1] && Math.abs(v - prev[1]) > H / 2));
    parts.push(`${prev === null || jump ? 'M' : 'L'}${n(u, 2)} ${n(v, 2)}`);
    prev = [u, v];
  }
  return parts.join('');
}

/**
 * How persistent each state is, on typed arrays over the disconnectivity graph (numbered children
 * before parents): a minimum's persistence is the energy of the join where its basin meets a deeper
 * one minus its own (the elder rule; ∞ for the deepest of each tree); a transition state ranks with
 * the most persistent basin that ends at it (−∞ when it is not in the graph). `stateKey` holds the
 * minima, then the transition states, in report order; `keepLeaf` marks the graph's leaves kept for
 * the tree figure (the most persistent LIMITS.treeLeaves, the outside always).
 */
export function rankStates(report: BarriersReport): { stateKey: Float64Array; parent: Int32Array; childCount: Int32Array; keepLeaf: Uint8Array; leaves: number } {
  const dn = report.disconnectivity.nodes, N = dn.length;
  const parent = Int32Array.from(dn, (d) => d.parent ?? -1);
  const childCount = Int32Array.from(dn, (d) => d.children.length);
  const E = Float64Array.from(dn, (d) => d.energy ?? -Infinity);
  const lowest = new Int32Array(N).fill(-1); // the deepest leaf of each subtree
  const pers = new Float64Array(N).fill(NaN); // per leaf
  const endsAt = new Float64Array(N).fill(-Infinity); // per join: the most persistent basin ending there
  let leaves = 0;
  for (let k = 0; k < N; k++) {
    if (childCount[k] === 0) { lowest[k] = k; leaves++; continue; }
    let best = -1;
    for (const c of dn[k].children) if (lowest[c] >= 0 && (best < 0 || E[lowest[c]] < E[best])) best = lowest[c];
    lowest[k] = best;
    for (const c of dn[k].children) {
      const l = lowest[c];
      if (l < 0 || l === best) continue;
      pers[l] = E[k] - E[l];
      if (pers[l] > endsAt[k]) endsAt[k] = pers[l];
    }
  }
  for (let k = 0; k < N; k++) if (parent[k] < 0 && lowest[k] >= 0) pers[lowest[k]] = Infinity;
  const keepLeaf = new Uint8Array(N);
  const leafKey = new Float64Array(N).fill(NaN);
  for (let k = 0; k < N; k++) if (childCount[k] === 0) leafKey[k] = dn[k].kind === 'outside' ? Infinity : pers[k];
  for (const k of topIndices(leafKey, LIMITS.treeLeaves)) keepLeaf[k] = 1;
  const nodeOf = new Map<string, number>();
  for (let k = 0; k < N; k++) if (dn[k].ref !== null) nodeOf.set(dn[k].ref!, k);
  const nMin = report.minima.length;
  const stateKey = new Float64Array(nMin + report.transitionStates.length);
  report.minima.forEach((m, i) => { const k = nodeOf.get(m.id); stateKey[i] = k === undefined || !(pers[k] === pers[k]) ? -Infinity : pers[k]; });
  report.transitionStates.forEach((t, i) => { const k = nodeOf.get(t.id); stateKey[nMin + i] = k === undefined || childCount[k] === 0 ? -Infinity : endsAt[k]; });
  return { stateKey, parent, childCount, keepLeaf, leaves };
}

export function buildBarriersReport(result: BarriersResult, report: BarriersReport, ctx: ReportContext): BuiltReport {
  const surface = result.surface;
  const eu = report.units.output === 'none' ? '' : report.units.output;
  const unitLabel = eu || 'input units';
  const factor = report.units.factor;
  const sd = surfaceDisplay(surface);
  // show energies in the report's output unit
  if (factor !== 1) for (const a of [sd.stats.mean, sd.stats.min, sd.stats.max]) for (let i = 0; i < a.length; i++) a[i] *= factor;
  const layer = surfaceLayer(sd, { domain: 'energy', label: `energy [${unitLabel}]` });
  const contours = surfaceContours(sd, 14);
  const [lo] = finiteRange(sd.stats.min), [, hi] = finiteRange(sd.stats.max);
  const dec = Math.min(valueDecimals(surface.values, lo, hi), 4);
  const fe = (x: number | null) => fmtDec(x, dec);
  const wrap: [boolean, boolean] = [report.periodic.x !== null, report.periodic.y !== null];
  const W = sd.frame.width, H = sd.frame.height;
  const xyUnit = sd.xyUnit || 'input units';

  const nMin = report.minima.length, nTs = report.transitionStates.length;
  const rank = rankStates(report);
  const tips: ReportDoc['tips'] = {};
  const barrierOf = new Map<string, string[]>();
  for (const b of report.barriers) {
    const s = `${b.from} → ${b.to}: ${fe(b.forward)}, back ${fe(b.backward)}${eu ? ' ' + eu : ''}`;
    barrierOf.set(b.via, [...(barrierOf.get(b.via) ?? []), s]);
  }
  const minTip = (m: BarriersReport['minima'][number]) => {
    if (tips[skey(m.id)]) return;
    const [x, y] = stationaryXY(m);
    tips[skey(m.id)] = [
      ['', `minimum ${m.id}`],
      ['energy', `${fe(m.refined?.energy ?? m.energy)} ${unitLabel}${m.refined ? ' (refined)' : ' (sampled)'}`],
      ['at', xyText(x, y, false, xyUnit)],
      ...(m.hessianEigenvalues ? [['Hessian eigenvalues', m.hessianEigenvalues.map((e) => fmtNum(e, 4)).join(', ')] as [string, string]] : []),
      ...(m.basin.relativeFreeEnergy !== null ? [['basin free energy', `${fe(m.basin.relativeFreeEnergy)} ${unitLabel} above the lowest`] as [string, string]] : []),
      ...(m.basin.population !== null ? [['population', fmtNum(m.basin.population, 3)] as [string, string]] : []),
      ...(m.onEdge ? [['on the edge', 'yes — may be an artefact of the window'] as [string, string]] : []),
    ];
  };
  const tsTip = (e: BarriersReport['transitionStates'][number]) => {
    if (tips[skey(e.id)]) return;
    const [x, y] = stationaryXY(e);
    tips[skey(e.id)] = [
      ['', `transition state ${e.id}`],
      ['energy', `${fe(e.refined?.energy ?? e.energy)} ${unitLabel}${e.refined ? ' (refined)' : ' (sampled)'}`],
      ['joins', e.connects.join(' and ')],
      ...(barrierOf.get(e.id) ?? []).map((s) => ['barrier', s] as [string, string]),
      ['at', xyText(x, y, false, xyUnit)],
      ...(e.hessianEigenvalues ? [['Hessian eigenvalues', e.hessianEigenvalues.map((q) => fmtNum(q, 4)).join(', ')] as [string, string]] : []),
      ...(e.path ? [['path', `${e.path.status}, length ${fmtNum(e.path.length, 4)}, ${e.path.images} images`] as [string, string]] : []),
    ];
  };
  // the most persistent states are drawn (all of them when they fit)
  const markers: MapMarker[] = [];
  const drawn = topIndices(rank.stateKey, LIMITS.markers);
  let drawnMin = 0;
  for (const q of drawn) if (q < nMin) drawnMin++;
  const drawnTs = drawn.length - drawnMin;
  const labelMin = drawnMin <= 200, labelTs = drawnTs <= 30;
  for (const q of drawn) {
    if (q < nMin) {
      const m = report.minima[q];
      const [u, v] = plotWrapped(sd, wrap, ...stationaryXY(m));
      markers.push({ key: skey(m.id), kind: 'pit', u, v, label: labelMin ? m.id : undefined, title: `minimum ${m.id}: ${fe(m.refined?.energy ?? m.energy)} ${eu}` });
      minTip(m);
    } else {
      const e = report.transitionStates[q - nMin];
      const [u, v] = plotWrapped(sd, wrap, ...stationaryXY(e));
      markers.push({ key: skey(e.id), kind: 'pass', u, v, label: labelTs ? e.id : undefined, title: `transition state ${e.id}: ${fe(e.refined?.energy ?? e.energy)} ${eu}` });
      tsTip(e);
    }
  }
  // minimum-energy paths: as many as the run traced (--max-paths bounds them)
  const paths: MapShape[] = [];
  result.transitionStates.forEach((t, i) => {
    const e = report.transitionStates[i];
    if (t.path && t.path.images.length > 1) {
      const pts = t.path.images.map((q) => mapToPlot(sd.transform, q.x, q.y));
      paths.push({ key: skey(e.id), d: pathData(pts, wrap, W, H), title: `minimum-energy path through ${e.id}` });
      tsTip(e);
    }
  });
  const mapNotes = [...displayNotes(sd, surface, contours, eu), 'markers at the refined stationary points (the sampled ones where refinement did not converge)'];
  if (drawn.length < nMin + nTs) mapNotes.push(`${drawnMin} of ${nMin} minima and ${drawnTs} of ${nTs} transition states drawn: the most persistent basins and the passes between them; raise --min-persistence to see fewer`);
  const map = mapSvg({
    id: 'map', title: `Energy surface of ${report.input ?? 'the input'} with minima, transition states and paths`,
    desc: `Energy coloured with contour lines; ${drawnMin} minima (downward triangles${labelMin ? ', labelled' : ''}), ${drawnTs} transition states (diamonds) and ${paths.length} minimum-energy paths (white lines).`,
    frame: sd.frame, layers: [layer.layer], contours, contourUnit: eu, paths, markers,
    kinds: [{ kind: 'pit', count: drawnMin, name: 'minimum' }, { kind: 'pass', count: drawnTs, name: 'transition state' }],
    lineKeys: paths.length ? [{ label: 'minimum-energy path', kind: 'path' }] : [],
    ramps: [layer.legend], notes: mapNotes, axes: axesLabels(sd),
  });

  // basin tree: the disconnectivity graph's nodes, level = energy, reduced to the most persistent minima
  const dn = report.disconnectivity.nodes;
  const red = reduceSweepTree(rank.parent, rank.childCount, (k) => rank.keepLeaf[k] === 1);
  const minIx = new Map(report.minima.map((m, i) => [m.id, i] as [string, number]));
  const tsIx = new Map(report.transitionStates.map((t, i) => [t.id, i] as [string, number]));
  const nodes: TreeNodeIn[] = Array.from(red.nodes, (k, q) => {
    const nd = dn[k];
    if (nd.ref !== null) {
      if (nd.kind === 'minimum') { const i = minIx.get(nd.ref); if (i !== undefined) minTip(report.minima[i]); } else { const i = tsIx.get(nd.ref); if (i !== undefined) tsTip(report.transitionStates[i]); }
    }
    return {
      id: nd.id, parent: red.parent[q] < 0 ? -1 : dn[red.parent[q]].id,
      value: nd.energy ?? -Infinity,
      kind: nd.kind === 'minimum' ? 'pit' as const : nd.kind === 'outside' ? 'outside' as const : 'pass' as const,
      key: nd.ref ? skey(nd.ref) : 'outside',
      label: red.nodes.length <= 120 ? nd.ref ?? undefined : undefined,
      title: nd.kind === 'outside' ? 'outside (−∞)' : `${nd.kind === 'minimum' ? 'minimum' : 'transition state'} ${nd.ref}: ${fe(nd.energy)} ${eu}`,
    };
  });
  const shownLeaves = Math.min(rank.leaves, LIMITS.treeLeaves);
  const tree = treeSvg({
    id: 'tree', title: 'Disconnectivity graph (basin tree)',
    desc: `Minima at the bottom of their branches; branches join at the transition state where their basins merge. ${nodes.length} nodes.`,
    nodes, valueLabel: `energy [${unitLabel}]`,
    notes: [`basins shallower than ${fmtNum(report.minPersistence.value, 4)} ${eu} merged (${report.minPersistence.source})`,
      ...(shownLeaves < rank.leaves ? [`${shownLeaves} most persistent of ${rank.leaves} minima shown`] : [])],
  });

  // persistence diagram of the surface, linked to the states where a pair starts or ends at one
  const stateOf = new Map<number, string>();
  for (const m of result.minima) stateOf.set(m.vertex, skey(m.id));
  for (const t of result.transitionStates) stateOf.set(t.vertex, skey(t.id));
  const diagram = pairsDiagram(result.survey, {
    minPersistence: report.minPersistence.value, scale: factor, keyOf: (v) => stateOf.get(v) ?? vkey(v), fv: fe,
    unitLabel, unitShort: eu, tips, zeroPairs: 0,
  });

  // tables carry the first rows of each list (the CSV files beside the report have all), each row with its tooltip
  const barrierRows = report.barriers.slice(0, LIMITS.tableRows);
  const minRows = report.minima.slice(0, LIMITS.tableRows);
  const tsRows = report.transitionStates.slice(0, LIMITS.tableRows);
  for (const m of minRows) minTip(m);
  for (const t of tsRows) tsTip(t);
  for (const b of barrierRows) { const i = tsIx.get(b.via); if (i !== undefined) tsTip(report.transitionStates[i]); }
  const tables: TableSpec[] = [
    {
      id: 'barriers', title: 'Barriers', csv: 'barriers.csv',
      caption: 'For each transition state joining two minima: the barrier from each side (transition-state energy minus the minimum). Click a row to find the transition state and its path.',
      columns: [
        { key: 'from', label: 'from', unit: '', type: 'text' }, { key: 'to', label: 'to', unit: '', type: 'text' }, { key: 'via', label: 'via', unit: '', type: 'text' },
        { key: 'forward', label: 'forward', unit: unitLabel, type: 'num', decimals: dec }, { key: 'backward', label: 'backward', unit: unitLabel, type: 'num', decimals: dec },
        ...(report.rates ? [{ key: 'kf', label: 'rate forward', unit: '1/s', type: 'num' as const, digits: 2 }, { key: 'kb', label: 'rate backward', unit: '1/s', type: 'num' as const, digits: 2 }] : []),
        // a surface from samples: the bootstrap's 95 % intervals and how often the barrier was found
        ...(report.samples?.bootstrap ? [
          { key: 'fl', label: 'forward 2.5 %', unit: unitLabel, type: 'num' as const, decimals: dec }, { key: 'fh', label: 'forward 97.5 %', unit: unitLabel, type: 'num' as const, decimals: dec },
          { key: 'bl', label: 'backward 2.5 %', unit: unitLabel, type: 'num' as const, decimals: dec }, { key: 'bh', label: 'backward 97.5 %', unit: unitLabel, type: 'num' as const, decimals: dec },
          { key: 'found', label: 'found in resamples', unit: '', type: 'text' as const },
        ] : []),
      ],
      rows: barrierRows.map((b) => [b.from, b.to, b.via, b.forward, b.backward, ...(report.rates ? [b.rateForward, b.rateBackward] : []),
        ...(report.samples?.bootstrap ? [b.uncertainty?.forward?.low ?? null, b.uncertainty?.forward?.high ?? null, b.uncertainty?.backward?.low ?? null, b.uncertainty?.backward?.high ?? null, b.uncertainty ? `${b.uncertainty.found}/${b.uncertainty.resamples}` : ''] : [])]),
      keys: barrierRows.map((b) => skey(b.via)),
      total: report.barriers.length,
    },
    {
      id: 'minima', title: 'Minima (stable states)', csv: 'minima.csv',
      caption: 'Minima kept after simplification, with their refined energies and basin statistics.',
      columns: [
        { key: 'id', label: 'id', unit: '', type: 'text' },
        { key: 'x', label: 'x', unit: xyUnit, type: 'num' }, { key: 'y', label: 'y', unit: xyUnit, type: 'num' },
        { key: 'energy', label: 'energy', unit: unitLabel, type: 'num', decimals: dec },
        { key: 'sampled', label: 'sampled energy', unit: unitLabel, type: 'num', decimals: dec },
        { key: 'relF', label: 'basin free energy', unit: unitLabel, type: 'num', decimals: dec },
        { key: 'pop', label: 'population', unit: '', type: 'num', digits: 3 },
        { key: 'edge', label: 'on edge', unit: '', type: 'text' },
      ],
      rows: minRows.map((m) => { const [x, y] = stationaryXY(m); return [m.id, x, y, m.refined?.energy ?? m.energy, m.energy, m.basin.relativeFreeEnergy, m.basin.population, m.onEdge ? 'yes' : 'no']; }),
      keys: minRows.map((m) => skey(m.id)),
      total: report.minima.length,
    },
    {
      id: 'transition-states', title: 'Transition states', csv: 'transition-states.csv',
      caption: 'First-order saddles: where two basins meet at the lowest level.',
      columns: [
        { key: 'id', label: 'id', unit: '', type: 'text' }, { key: 'joins', label: 'joins', unit: '', type: 'text' },
        { key: 'x', label: 'x', unit: xyUnit, type: 'num' }, { key: 'y', label: 'y', unit: xyUnit, type: 'num' },
        { key: 'energy', label: 'energy', unit: unitLabel, type: 'num', decimals: dec },
        { key: 'path', label: 'path', unit: '', type: 'text' },
      ],
      rows: tsRows.map((t) => { const [x, y] = stationaryXY(t); return [t.id, t.connects.join(' – '), x, y, t.refined?.energy ?? t.energy, t.path ? t.path.status : (t.pathNote ?? '—')]; }),
      keys: tsRows.map((t) => skey(t.id)),
      total: report.transitionStates.length,
    },
  ];

  const u = report.units;
  const header = commonHeader(report, [
    `min-persistence ${fmtNum(report.minPersistence.value, 4)} ${eu} (${report.minPersistence.source})`,
    `temperature ${fmtNum(u.temperature)} K`, `fit: ${report.fit.kind}`,
  ].join(', '), ctx.commandLine);
  header.splice(header.findIndex((h) => h.label === 'Parameters'), 0,
    { label: 'Units', value: `energies in ${u.output === 'none' ? 'the input unit' : u.output}${u.input !== u.output ? ` (converted from ${u.input})` : ''}${u.kT !== null ? `; kT = ${fmtNum(u.kT, 4)} ${eu} at ${fmtNum(u.temperature)} K` : ''}; constants ${u.constants}` });
  const cautions = report.rates ? [`Rate constants are transition-state theory estimates (${report.rates.caution}): the barrier stands in for the free energy of activation, with a transmission coefficient of 1.`] : [];
  const doc: ReportDoc = {
    command: 'barriers',
    title: `Minima, transition states and barriers of ${report.input ?? 'an energy surface'}`,
    subtitle: report.input ? report.input.split(/[\\/]/).pop()! : 'energy surface',
    domain: 'energy',
    header, cautions,
    map: {
      svg: map.svg, geometry: map.geometry, frame: sd.frame, markers: markers.length,
      caption: 'Scroll or pinch to zoom, drag to pan. ▽ minima (labelled), ◇ transition states, white lines the minimum-energy paths. Click one to find it in the graph and the tables.',
      toggles: [{ id: 'surface', label: 'surface', on: true }, { id: 'contours', label: 'contours', on: true }, { id: 'paths', label: 'paths', on: true }, { id: 'markers', label: 'markers', on: true }],
      hover: [surfaceHover(sd, sd.isGrid ? 'energy' : 'energy (interpolated)', eu)], xyUnit: sd.xyUnit, geographic: false, interpolated: !sd.isGrid,
    },
    treeTitle: 'Disconnectivity graph',
    tree: { svg: tree.svg, markers: tree.markers, caption: 'Energy rises upward. Each minimum starts a branch; two branches join at the transition state where their basins first meet, so the height of a join above a minimum is its barrier.' },
    persistence: { svg: diagram.svg, markers: diagram.drawn, caption: 'Pairs of critical points of the sampled surface; the shaded band holds the basins merged by the persistence threshold.' },
    tables, tips,
    facts: [`${nMin} minima, ${nTs} transition states, ${report.barriers.length} barriers`, `Euler ${report.euler.holds ? 'holds ✓' : 'FAILS ✗'} (χ = ${report.euler.characteristic})`],
    notes: [...mapNotes, readoutNote(sd), 'Markers: minimum ▽, transition state ◇ — told apart by shape; colour repeats the kind.', `Colour ramp: ${layer.ramp.name} (d3-scale-chromatic).`, ...report.notes],
    files: ctx.files,
    version: report.sill,
    generated: ctx.generated ?? new Date().toISOString(),
  };
  return { doc, svgs: { map: map.svg, tree: tree.svg, persistence: diagram.svg } };
}
