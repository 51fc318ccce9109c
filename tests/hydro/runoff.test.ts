/**
 * `runoff` (Fill–Spill–Merge on the depression tree) against sources outside sill:
 *  - conservation of mass: input = ponded + outflow, to 1e-9 relative, in every test (checkBalance);
 *  - limits: no runoff ponds nothing; enough runoff to fill every depression leaves the water
 *    surface equal to the filled DEM, here the scikit-image reconstructions of the ponds tests
 *    (fixtures/hydro/fill-reference.json, made by tests/reference/fill_reference.py);
 *  - Archimedes' paraboloid: a bowl z = H·(r/R)² holding V stands at h = sqrt(2·V·H/(π·R²)),
 *    from V(h) = πR²h²/(2H); the computed level converges to it as the grid is refined;
 *  - two bowls joined by a saddle follow the order of the published method (Barnes, Callaghan &
 *    Wickert 2021): the first fills and spills into the second, both fill, they merge and fill
 *    together, then the whole spills off the map — volumes and levels checked against direct sums
 *    over cells found by a flood fill written here.
 */
import { describe, it, expect } from 'vitest';
import { Grid } from '../../src/surface/grid.js';
import { runoff, runoffStageVolume, type RunoffResult } from '../../src/hydro/runoff.js';
import { runoffReport } from '../../src/report/runoff.js';
import { parseDepth, alignRaster } from '../../src/hydro/runoff-input.js';
import { InputError } from '../../src/errors.js';
import { fillReference, gridOf, bruteFill, NEIGHBOURS } from './helpers.js';

const UTM = { epsg: 32633, geographic: false, linearUnit: 'metre' };

/** Conservation of mass (every test): input = ponded + outflow to 1e-9 of the input. */
function checkBalance(r: RunoffResult): void {
  const w = r.water;
  expect(Math.abs(w.input - w.ponded - w.outflow)).toBeLessThanOrEqual(1e-9 * Math.max(w.input, 1e-300));
  expect(Math.abs(w.stored - w.ponded)).toBeLessThanOrEqual(1e-9 * Math.max(w.input, 1e-300));
  expect(w.balanceError).toBeLessThanOrEqual(1e-9);
}

/** Cells of {z < level} connected to `seed` (neighbours of the connectivity), found by a flood fill; with Σ (level − z)·a. */
function floodBelow(g: Grid, seed: number, level: number, conn: 4 | 6 | 8 = 8, cellArea = 1): { cells: Set<number>; volume: number } {
  const W = g.width, H = g.height, z = g.values;
  const cells = new Set<number>();
  if (!(z[seed] < level)) return { cells, volume: 0 };
  const stack = [seed];
  cells.add(seed);
  let volume = 0;
  while (stack.length) {
    const i = stack.pop()!;
    volume += (level - z[i]) * cellArea;
    const c = i % W, r = (i - c) / W;
    for (const [dc, dr] of NEIGHBOURS[conn]) {
      const cc = c + dc, rr = r + dr;
      if (cc < 0 || rr < 0 || cc >= W || rr >= H) continue;
      const j = rr * W + cc;
      if (!cells.has(j) && z[j] < level) { cells.add(j); stack.push(j); }
    }
  }
  return { cells, volume };
}

describe('limits', () => {
  const ref = fillReference();

  it('no runoff ponds nothing and nothing flows out', () => {
    for (const c of ref.cases) {
      const g = gridOf(c.width, c.height, c.values, { f32: c.dtype === 'float32' });
      const r = runoff(g, { depth: 0, connectivity: c.connectivity, nodataOutlet: c.nodataAs === 'outlet', euler: false });
      checkBalance(r);
      expect(r.water).toMatchObject({ input: 0, ponded: 0, outflow: 0 });
      expect(r.bodies.count).toBe(0);
      for (let i = 0; i < g.size; i++) {
        expect(Number.isNaN(r.rasters.level[i])).toBe(true);
        if (g.values[i] === g.values[i]) expect(r.rasters.depth[i]).toBe(0);
      }
    }
  });

  it(`enough runoff to fill everything leaves the water surface equal to scikit-image ${ref.skimage_version}'s filled DEM`, () => {
    for (const c of ref.cases) {
      const g = gridOf(c.width, c.height, c.values, { f32: c.dtype === 'float32' });
      let lo = Infinity, hi = -Infinity;
      for (const z of g.values) if (z === z) { lo = Math.min(lo, z); hi = Math.max(hi, z); }
      // a depression holds at most (spill − pit) over its own cells, and every cell of it drains into it
      const r = runoff(g, { depth: hi - lo + 1, connectivity: c.connectivity, nodataOutlet: c.nodataAs === 'outlet', euler: false });
      checkBalance(r);
      // cells walled in by nodata (no outlet) are not in the reference: they hold whatever falls on them
      const closed = c.nodataAs === 'wall' ? bruteFill(g, c.connectivity, false) : null;
      const bad: string[] = [];
      for (let i = 0; i < g.size; i++) {
        const z = c.values[i], want = c.filled[i];
        if (z === null || want === null || (closed && closed[i] === Infinity)) continue;
        const level = r.rasters.level[i];
        // wet exactly where the reference raised the cell, at the reference's level
        if (want > z ? level !== want : !Number.isNaN(level)) bad.push(`${c.name} cell ${i}: level ${level}, filled ${want}, z ${z}`);
      }
      expect(bad).toEqual([]);
      // every depression is full, and the water beyond their capacity left the map
      for (let k = 1; k <= r.hierarchy.count; k++) expect(r.route.full[r.hierarchy.node[k]]).toBe(1);
    }
  });
});

describe('analytic paraboloid bowl (Archimedes: V(h) = πR²h²/(2H))', () => {
  const R = 100, H = 5, d = 0.5;
  /** The bowl inside r < R, a plateau at H to the map edge; runoff d on the bowl's cells only (its catchment). */
  function bowl(N: number): { g: Grid; rain: Grid; A: number } {
    const L = 1.25 * R, h = (2 * L) / N;
    const v = new Float64Array(N * N), rain = new Float64Array(N * N);
    let inDisc = 0;
    for (let r = 0; r < N; r++) {
      for (let c = 0; c < N; c++) {
        const x = -L + (c + 0.5) * h, y = L - (r + 0.5) * h;
        const q = Math.hypot(x, y) / R;
        v[r * N + c] = q < 1 ? H * q * q : H;
        rain[r * N + c] = q < 1 ? d : NaN;
        if (q < 1) inDisc++;
      }
    }
    const t: [number, number, number, number, number, number] = [-L, h, 0, L, 0, -h];
    return { g: new Grid({ width: N, height: N, values: v, transform: t, crs: UTM }), rain: new Grid({ width: N, height: N, values: rain, transform: t, crs: UTM }), A: inDisc * h * h };
  }

  it('holds V = d·A and stands at h = sqrt(2VH/(πR²)), converging at second order', () => {
    const sizes = [100, 200, 400, 800];
    const errs: number[] = [];
    for (const N of sizes) {
      const { g, rain, A } = bowl(N);
      const r = runoff(g, { depthRaster: rain, euler: false });
      checkBalance(r);
      expect(r.water.outflow).toBe(0);
      expect(r.bodies.count).toBe(1);
      const V = r.bodies.volume[1];
      // every cell of the catchment drains to the pit: the bowl holds the runoff of its whole area
      expect(Math.abs(V - d * A)).toBeLessThanOrEqual(1e-12 * d * A);
      const exact = Math.sqrt((2 * V * H) / (Math.PI * R * R));
      const e = Math.abs(r.bodies.level[1] - exact) / exact;
      expect(e).toBeLessThanOrEqual(1 / (N * N));
      errs.push(e);
    }
    const lx = sizes.map(Math.log), ly = errs.map(Math.log);
    const mx = lx.reduce((a, b) => a + b) / lx.length, my = ly.reduce((a, b) => a + b) / ly.length;
    let sxy = 0, sxx = 0;
    for (let i = 0; i < lx.length; i++) { sxy += (lx[i] - mx) * (ly[i] - my); sxx += (lx[i] - mx) ** 2; }
    expect(-sxy / sxx).toBeGreaterThanOrEqual(1.5);
  });

  it('the level is exact on the grid: the cells below it hold the water (direct sum), and a stage–volume row at it agrees', () => {
    const { g, rain } = bowl(200);
    const r = runoff(g, { depthRaster: rain, euler: false });
    const level = r.bodies.level[1];
    const pit = r.hierarchy.pit[1];
    const cellArea = (250 / 200) ** 2;
    const f = floodBelow(g, pit, level, 8, cellArea);
    expect(Math.abs(f.volume - r.bodies.volume[1])).toBeLessThanOrEqual(1e-9 * f.volume);
    expect(f.cells.size).toBe(r.bodies.cells[1]);
    for (const i of f.cells) expect(r.rasters.bodies[i]).toBe(1);
    const rows = runoffStageVolume(r, 1, level - r.hierarchy.pitValue[1]);
    expect(Math.abs(rows[1].volume - r.bodies.volume[1])).toBeLessThanOrEqual(1e-9 * f.volume);
  });
});

describe('two bowls joined by a saddle: first fills, spills, both fill, merge (Barnes, Callaghan & Wickert 2021)', () => {
  // z = min(b1·r1², 0.5 + b2·r2²) capped at T: a narrow deep bowl (1) and a wide one (2), meeting at a saddle;
  // the plateau at T reaches the map edge, where the merged water finally spills
  const W = 120, Hh = 80, T = 6;
  const c1 = [28, 40], c2 = [68, 40];
  const z = new Float64Array(W * Hh), rain = new Float64Array(W * Hh);
  let A1 = 0, A2 = 0;
  for (let r = 0; r < Hh; r++) {
    for (let c = 0; c < W; c++) {
      const r1 = Math.hypot(c - c1[0], r - c1[1]), r2 = Math.hypot(c - c2[0], r - c2[1]);
      z[r * W + c] = Math.min(T, 0.02 * r1 * r1, 0.5 + 0.005 * r2 * r2);
      // runoff falls on the middle of each bowl only (well inside its catchment), 1 m² cells
      const inside = r1 < 10 || r2 < 10;
      rain[r * W + c] = inside ? 1 : NaN;
      if (r1 < 10) A1++;
      if (r2 < 10) A2++;
    }
  }
  const g = new Grid({ width: W, height: Hh, values: z, transform: [0, 1, 0, 0, 0, -1], crs: UTM });
  const pit1 = c1[1] * W + c1[0], pit2 = c2[1] * W + c2[0];
  const base = runoff(g, { depth: 0, euler: false });
  const Hr = base.hierarchy;
  // the depressions: the two bowls (leaves, in the order the rising water completes them) and the merged one
  const id1 = Hr.pit[1] === pit1 ? 1 : 2, id2 = 3 - id1, idm = 3;
  const S = Hr.spillValue[id1];
  // capacities straight from the cells (flood fill below the level, Σ (level − z))
  const C1 = floodBelow(g, pit1, S).volume, C2 = floodBelow(g, pit2, S).volume, Cm = floodBelow(g, pit1, T).volume;
  const run = (depth: number): RunoffResult => {
    const scaled = new Grid({ width: W, height: Hh, values: rain.map((x) => x * depth), transform: g.transform, crs: UTM });
    const r = runoff(g, { depthRaster: scaled, euler: false });
    checkBalance(r);
    return r;
  };
  const state = (r: RunoffResult, id: number) => (r.route.full[r.hierarchy.node[id]] ? 'full' : r.route.stored[r.hierarchy.node[id]] > 0 ? 'partial' : 'dry');
  const stored = (r: RunoffResult, id: number) => r.route.stored[r.hierarchy.node[id]];
  const near = (a: number, b: number) => expect(Math.abs(a - b)).toBeLessThanOrEqual(1e-9 * Math.max(1, Math.abs(b)));

  it('the volumes make bowl 1 fill first', () => {
    expect(Hr.count).toBe(3);
    expect(Hr.pit[id1]).toBe(pit1);
    expect(Hr.pit[id2]).toBe(pit2);
    expect(Hr.spillValue[id2]).toBe(S);
    expect(Hr.spillValue[idm]).toBe(T);
    expect(C1).toBeCloseTo(base.hierarchy.volume[id1], 6);
    expect(C2).toBeCloseTo(base.hierarchy.volume[id2], 6);
    expect(Cm).toBeCloseTo(base.hierarchy.volume[idm], 6);
    expect(C1 / A1).toBeLessThan(C2 / A2);
  });

  it('phase 1: both fill from their own catchments, each at the level where its volume equals its runoff', () => {
    const d = 0.5 * (C1 / A1);
    const r = run(d);
    expect([state(r, id1), state(r, id2), state(r, idm)]).toEqual(['partial', 'partial', 'partial']);
    expect(r.bodies.count).toBe(2);
    for (const [id, pit, A] of [[id1, pit1, A1], [id2, pit2, A2]]) {
      near(stored(r, id), d * A);
      const lev = r.singleLevel[r.hierarchy.node[id]];
      near(floodBelow(g, pit, lev).volume, d * A);
      expect(lev).toBeLessThan(S);
    }
    expect(r.water.outflow).toBe(0);
  });

  it('phase 2: bowl 1 is full and passes its overflow to bowl 2, which holds its own runoff and that', () => {
    const d = 0.5 * (C1 / A1 + (C1 + C2) / (A1 + A2));
    const r = run(d);
    expect([state(r, id1), state(r, id2)]).toEqual(['full', 'partial']);
    const { report } = runoffReport(g, { depthRaster: new Grid({ width: W, height: Hh, values: rain.map((x) => x * d), transform: g.transform, crs: UTM }), euler: false });
    const d1 = report.depressions.at(id1 - 1), d2 = report.depressions.at(id2 - 1);
    near(d1.received, d * A1);
    near(d1.waterVolume, C1);
    near(d1.passedOn, d * A1 - C1);
    expect(d1.waterLevel).toBe(S);
    near(d2.received, d * A2 + d * A1 - C1);
    near(d2.waterVolume, d * A2 + d * A1 - C1);
    expect(d2.passedOn).toBe(0);
    near(floodBelow(g, pit2, d2.waterLevel!).volume, d2.waterVolume);
    expect(report.depressions.at(idm - 1).waterLevel).toBeNull(); // two pools at different levels
  });

  it('phase 3: both full, they merge and fill together: one level over both, above the saddle', () => {
    const d = 0.5 * ((C1 + C2) / (A1 + A2) + Cm / (A1 + A2));
    const r = run(d);
    expect([state(r, id1), state(r, id2), state(r, idm)]).toEqual(['full', 'full', 'partial']);
    expect(r.bodies.count).toBe(1);
    const lev = r.bodies.level[1];
    expect(lev).toBeGreaterThan(S);
    const f = floodBelow(g, pit1, lev);
    expect(f.cells.has(pit2)).toBe(true);
    near(f.volume, d * (A1 + A2));
    near(stored(r, idm), d * (A1 + A2));
    expect(r.water.outflow).toBe(0);
  });

  it('phase 4: the merged depression is full at its spill level and the rest leaves the map', () => {
    const d = 1.5 * Cm / (A1 + A2);
    const r = run(d);
    expect([state(r, id1), state(r, id2), state(r, idm)]).toEqual(['full', 'full', 'full']);
    expect(r.bodies.level[1]).toBe(T);
    near(r.water.ponded, Cm);
    near(r.water.outflow, d * (A1 + A2) - Cm);
  });

  it('as the runoff grows, the states only ever move forward through the four phases', () => {
    const phases: string[] = [];
    const dMax = 1.2 * Cm / (A1 + A2);
    for (let s = 1; s <= 60; s++) {
      const r = run((s / 60) * dMax);
      const p = [state(r, id1), state(r, id2), state(r, idm)].join(' ');
      if (phases[phases.length - 1] !== p) phases.push(p);
    }
    expect(phases).toEqual(['partial partial partial', 'full partial partial', 'full full partial', 'full full full']);
  });
});

describe('routing details of the method', () => {
  /** One valley row between walls of 9 (the rows above and below, and the ends). */
  function valley(profile: number[]): Grid {
    const W = profile.length;
    const v = new Float64Array(3 * W).fill(9);
    profile.forEach((z, c) => { v[W + c] = z; });
    return new Grid({ width: W, height: 3, values: v, transform: [0, 1, 0, 0, 0, -1], crs: UTM });
  }
  function rainOn(g: Grid, cols: number[], depth: number): Grid {
    const v = new Float64Array(g.size).fill(NaN);
    for (const c of cols) v[g.width + c] = depth;
    return new Grid({ width: g.width, height: g.height, values: v, transform: g.transform, crs: UTM });
  }

  it('each cell sends its water down the steepest way (drop over distance): to the deeper pit, and along an edge before a diagonal', () => {
    // cell 2 (z 5) has two lower neighbours: the pit at 0 (drop 5) and the pit at 3 (drop 2)
    const g = valley([9, 0, 5, 3, 9]);
    const r = runoff(g, { depthRaster: rainOn(g, [1, 2, 3], 1), euler: false });
    checkBalance(r);
    const at = (col: number) => r.route.stored[r.label[g.width + col]];
    expect(at(1)).toBe(2);
    expect(at(3)).toBe(1);
    // a cell whose edge neighbour drops 1 (slope 1) and diagonal neighbour 1.3 (slope 0.92): the edge neighbour wins
    // (7 × 7 cells of 9: the cell (3, 3) at 5, its east neighbour (4, 3) at 4, its south-west diagonal (2, 4) at 3.7)
    const v = new Float64Array(49).fill(9);
    v[24] = 5; v[25] = 4; v[30] = 3.7;
    const h = new Grid({ width: 7, height: 7, values: v, transform: [0, 1, 0, 0, 0, -1], crs: UTM });
    const rain = new Grid({ width: 7, height: 7, values: v.map((_, i) => (i === 24 ? 1 : NaN)), transform: h.transform, crs: UTM });
    const q = runoff(h, { depthRaster: rain, euler: false });
    checkBalance(q);
    expect(q.route.stored[q.label[25]]).toBe(1);
    expect(q.route.stored[q.label[30]]).toBe(0);
  });

  it('overflow enters the neighbouring depression at its pour point and fills the nested depression there first', () => {
    // A (cols 1–3, holds 11 at the pass of 6 in col 4) spills toward B, made of B1 (cols 5–6, holds 2 at 4) next to
    // the pass and B2 (cols 8–9, deeper pit, holds 4 at 4) beyond it; only A's cells get runoff
    const g = valley([9, 3, 1, 3, 6, 4, 2, 4, 1, 3, 9]);
    const H = runoff(g, { depth: 0, euler: false }).hierarchy;
    const idAt = (col: number) => { for (let d = 1; d <= H.count; d++) if (H.pit[d] === g.width + col) return d; throw new Error(`no pit at ${col}`); };
    const A = idAt(2), B1 = idAt(6), B2 = idAt(8);
    expect([H.volume[A], H.volume[B1], H.volume[B2]]).toEqual([11, 2, 4]);
    for (const [x, b1, b2] of [[1.5, 1.5, 0], [3, 2, 1]]) {
      const r = runoff(g, { depthRaster: rainOn(g, [1, 2, 3], (11 + x) / 3), euler: false });
      checkBalance(r);
      const held = (d: number) => r.route.stored[r.hierarchy.node[d]];
      expect(held(A)).toBeCloseTo(11, 12);
      expect(held(B1)).toBeCloseTo(b1, 12);
      expect(held(B2)).toBeCloseTo(b2, 12);
    }
  });
  it('three depressions meeting at one pass (a monkey saddle): the overflow goes to the one with the lowest pit first', () => {
    // 9 × 9 cells of 9; the pass (4, 4) at 5 joins a west arm (pit 1), a north-east arm (pit 2) and a south-east arm (pit 0)
    const v = new Float64Array(81).fill(9);
    const set = (c: number, r: number, z: number) => { v[r * 9 + c] = z; };
    set(4, 4, 5);
    set(1, 4, 3); set(2, 4, 1); set(3, 4, 3);
    set(5, 3, 3); set(6, 2, 2);
    set(5, 5, 3); set(6, 6, 0);
    const g = new Grid({ width: 9, height: 9, values: v, transform: [0, 1, 0, 0, 0, -1], crs: UTM });
    const H = runoff(g, { depth: 0, euler: false }).hierarchy;
    const idAt = (c: number, r: number) => { for (let d = 1; d <= H.count; d++) if (H.pit[d] === r * 9 + c) return d; throw new Error('no pit'); };
    const W = idAt(2, 4), NE = idAt(6, 2), SE = idAt(6, 6);
    expect([H.volume[W], H.volume[NE], H.volume[SE]]).toEqual([8, 5, 7]);
    expect(H.parent[W]).toBe(H.parent[NE]);
    expect(H.parent[SE]).toBe(H.parent[NE]);
    // 8 on the north-east arm: it holds 5 and passes 3 on, all into the south-east arm (pit 0) before the west one (pit 1)
    const rain = new Grid({ width: 9, height: 9, values: v.map((_, i) => (i === 2 * 9 + 6 ? 8 : NaN)), transform: g.transform, crs: UTM });
    const r = runoff(g, { depthRaster: rain, euler: false });
    checkBalance(r);
    const held = (d: number) => r.route.stored[r.hierarchy.node[d]];
    expect([held(NE), held(SE), held(W)]).toEqual([5, 3, 0]);
    // 15: the south-east arm fills (7), the west one takes the remaining 3
    const more = new Grid({ width: 9, height: 9, values: v.map((_, i) => (i === 2 * 9 + 6 ? 15 : NaN)), transform: g.transform, crs: UTM });
    const q = runoff(g, { depthRaster: more, euler: false });
    checkBalance(q);
    expect([q.route.stored[q.hierarchy.node[NE]], q.route.stored[q.hierarchy.node[SE]], q.route.stored[q.hierarchy.node[W]]]).toEqual([5, 7, 3]);
  });

  it('overflow that fills a pair of nested depressions at once is received by both: the one it enters and the sibling it spills into', () => {
    // 8 × 9 cells of 2 m × 3 m (6 m²), connectivity 4, nodata as walls (a random DEM of the property tests).
    // Depression P (spill 2) holds a pair meeting at 1: D1 (pit (5, 4)) and D2 (pit (4, 6)), 6 m³ each, and a flat
    // pit of no volume at (2, 7). Rain on that cell only overflows into P at the cell next to D2; with more than
    // the pair can hold, D2 fills, passes 6 on to D1, which fills too, and the rest stands over both in P.
    const _ = null;
    const g = gridOf(8, 9, [
      _, _, 3, 0, 0, _, 0, 1,
      4, 2, 4, 3, 1, 3, 1, 2,
      1, 3, _, 1, 3, 4, 3, 2,
      4, 3, _, 1, 2, 2, 2, 1,
      1, 2, 0, 1, 3, 0, 2, 1,
      0, 0, 0, 3, 2, 1, 3, 4,
      4, 1, 4, 1, 0, 1, 4, 3,
      2, 3, 1, 1, 2, 4, 2, _,
      0, 2, 3, 2, 0, 2, 4, 2,
    ], { transform: [0, 2, 0, 0, 0, -3], crs: UTM });
    const rain = (depth: number) => new Grid({ width: 8, height: 9, values: g.values.map((_z, i) => (i === 7 * 8 + 2 ? depth : NaN)), transform: g.transform, crs: UTM });
    const opts = { connectivity: 4 as const, nodataOutlet: false, euler: false };
    const pitAt = (rep: ReturnType<typeof runoffReport>['report'], c: number, r: number) => rep.depressions.find((d) => d.pit.col === c && d.pit.row === r && d.children.length === 0)!;
    // [depth on the cell, D1 received/held/passed on, D2 received/held/passed on, P's water]: 9 m³ fill D2 and give D1 3;
    // 30 m³ fill both (the pair at once) and leave 18 over them in P
    for (const [depth, d1, d2, p] of [[1.5, [3, 3, 0], [9, 6, 3], 9], [5, [6, 6, 0], [12, 6, 6], 30]] as const) {
      const { result, report } = runoffReport(g, { depthRaster: rain(depth), ...opts });
      checkBalance(result);
      const D1 = pitAt(report, 5, 4), D2 = pitAt(report, 4, 6);
      expect(D1.parent).toBe(D2.parent);
      const P = report.depressions.at(D1.parent! - 1);
      expect([D1.volume, D2.volume]).toEqual([6, 6]);
      for (const [d, want] of [[D1, d1], [D2, d2]] as const) {
        expect(d.received).toBeCloseTo(want[0], 12);
        expect(d.waterVolume).toBeCloseTo(want[1], 12);
        expect(d.passedOn).toBeCloseTo(want[2], 12);
        // the bookkeeping of every depression: received = held + passed on
        expect(d.received).toBeCloseTo(d.waterVolume + d.passedOn, 12);
      }
      expect(P.received).toBeCloseTo(p, 12);
      expect(P.waterVolume).toBeCloseTo(p, 12);
      expect(P.passedOn).toBeCloseTo(0, 12);
    }
  });
});

describe('runoff input', () => {
  it('depths with units (SI and the inch and foot of the international yard and pound agreement, 1959)', () => {
    expect(parseDepth('25mm').metres).toBeCloseTo(0.025, 15);
    expect(parseDepth('0.1 m').metres).toBe(0.1);
    expect(parseDepth('2in').metres).toBeCloseTo(0.0508, 15);
    expect(parseDepth('1ft').metres).toBeCloseTo(0.3048, 15);
    expect(parseDepth('4 cm').metres).toBeCloseTo(0.04, 15);
    expect(parseDepth('1.5e1mm').metres).toBeCloseTo(0.015, 15);
    expect(parseDepth('0mm').metres).toBe(0);
    for (const bad of ['25', '-5mm', '25 furlongs', 'mm', '', 'NaNmm', 'Infinitymm', '1e999mm', '25mm30']) {
      expect(() => parseDepth(bad), bad).toThrow(InputError);
    }
    expect(() => parseDepth('25')).toThrow(/give the unit/);
    expect(() => parseDepth('-5mm')).toThrow(/cannot be negative/);
    expect(() => parseDepth('3 furlongs')).toThrow(/unknown unit 'furlongs'/);
  });

  it('a raster on another grid is sampled at the DEM cell centres (nearest cell), with a warning; no overlap is refused', () => {
    const dem = gridOf(4, 3, [5, 5, 5, 5, 5, 1, 2, 5, 5, 5, 5, 5], { transform: [100, 10, 0, 230, 0, -10], crs: UTM });
    // 20 m cells from x 90, y 240: DEM cell (c, r) centre (105 + 10c, 225 − 10r) falls in raster cell ((15 + 10c) / 20, (15 + 10r) / 20)
    const src = new Grid({ width: 3, height: 2, values: Float64Array.from([1, 2, 3, 4, 5, 6]), transform: [90, 20, 0, 240, 0, -20], crs: UTM });
    const a = alignRaster(dem, src, '--depth-raster', 'r.tif');
    expect(a.resampled).toBe(true);
    expect(a.warning).toMatch(/resampled to the DEM's cells by nearest neighbour/);
    expect(Array.from(a.values)).toEqual([1, 2, 2, 3, 4, 5, 5, 6, 4, 5, 5, 6]);
    const same = alignRaster(dem, new Grid({ width: 4, height: 3, values: new Float64Array(12).fill(1), transform: [100, 10, 0, 230, 0, -10], crs: UTM }), '--depth-raster', 's.tif');
    expect(same.resampled).toBe(false);
    expect(same.warning).toBeNull();
    const far = new Grid({ width: 2, height: 2, values: new Float64Array(4).fill(1), transform: [5000, 10, 0, 5000, 0, -10], crs: UTM });
    expect(() => alignRaster(dem, far, '--depth-raster', 'far.tif')).toThrow(/does not overlap the DEM/);
    const other = new Grid({ width: 4, height: 3, values: new Float64Array(12), transform: [100, 10, 0, 230, 0, -10], crs: { epsg: 32632, geographic: false } });
    expect(() => alignRaster(dem, other, '--depth-raster', 'o.tif')).toThrow(/is in EPSG:32632 but the DEM is in EPSG:32633/);
  });

  it('negative or infinite runoff in a raster is refused, naming the cell; nodata means no runoff', () => {
    const dem = gridOf(4, 3, [5, 5, 5, 5, 5, 1, 2, 5, 5, 5, 5, 5], { crs: UTM, transform: [0, 1, 0, 0, 0, -1] });
    const bad = new Grid({ width: 4, height: 3, values: Float64Array.from([0, 0, 0, 0, 0, -0.5, 0, 0, 0, 0, 0, 0]), transform: dem.transform, crs: UTM });
    expect(() => runoff(dem, { depthRaster: bad, depthRasterSource: 'neg.tif' })).toThrow(/neg.tif: cell \(col 1, row 1\) holds a negative runoff depth/);
    const inf = new Grid({ width: 4, height: 3, values: Float64Array.from([0, 0, 0, 0, 0, Infinity, 0, 0, 0, 0, 0, 0]), transform: dem.transform, crs: UTM });
    expect(() => runoff(dem, { depthRaster: inf, depthRasterSource: 'inf.tif' })).toThrow(/holds Infinity, not a finite runoff depth/);
    expect(() => runoff(dem, { depth: -1 })).toThrow(InputError);
    expect(() => runoff(dem, {})).toThrow(/--depth D/);
    const holes = new Grid({ width: 4, height: 3, values: Float64Array.from([NaN, NaN, NaN, NaN, NaN, 1, NaN, NaN, NaN, NaN, NaN, NaN]), transform: dem.transform, crs: UTM });
    const r = runoff(dem, { depthRaster: holes });
    checkBalance(r);
    expect(r.water.input).toBe(1);
    expect(r.input.raster!.missingCells).toBe(11);
  });

  it('a uniform raster gives what the same uniform depth gives; a depth unit scales it', () => {
    const g = gridOf(7, 6, [9, 9, 9, 9, 9, 9, 9, 9, 3, 4, 6, 2, 1, 9, 9, 4, 5, 7, 3, 3, 9, 9, 6, 6, 8, 5, 4, 9, 9, 2, 7, 7, 6, 5, 9, 9, 9, 9, 9, 9, 9, 9], { crs: UTM, transform: [0, 2, 0, 0, 0, -2] });
    const a = runoff(g, { depth: 0.75 });
    const b = runoff(g, { depthRaster: new Grid({ width: 7, height: 6, values: new Float32Array(42).fill(750), transform: g.transform, crs: UTM }), depthRasterFactor: 0.001 });
    checkBalance(a);
    checkBalance(b);
    expect(b.water.ponded).toBeCloseTo(a.water.ponded, 9);
    expect(Array.from(b.rasters.level)).toEqual(Array.from(a.rasters.level));
  });

  it('water already standing: a run started from its own water surface, with no more runoff, stays as it was', () => {
    const g = gridOf(7, 6, [9, 9, 9, 9, 9, 9, 9, 9, 3, 4, 6, 2, 1, 9, 9, 4, 5, 7, 3, 3, 9, 9, 6, 6, 8, 5, 4, 9, 9, 2, 7, 7, 6, 5, 9, 9, 9, 9, 9, 9, 9, 9], { crs: UTM, transform: [0, 1, 0, 0, 0, -1] });
    for (const depth of [0.1, 0.4, 1.1, 3]) {
      const a = runoff(g, { depth });
      const init = new Grid({ width: 7, height: 6, values: Float64Array.from(a.rasters.level), transform: g.transform, crs: UTM });
      const b = runoff(g, { depth: 0, initialLevel: init });
      checkBalance(b);
      expect(b.water.initial).toBeCloseTo(a.water.ponded, 9);
      expect(b.water.outflow).toBeLessThanOrEqual(1e-9 * a.water.ponded);
      for (let i = 0; i < g.size; i++) {
        const x = a.rasters.level[i], y = b.rasters.level[i];
        if (Number.isNaN(x)) expect(Number.isNaN(y)).toBe(true); else expect(Math.abs(x - y)).toBeLessThanOrEqual(1e-9);
      }
    }
  });
});
