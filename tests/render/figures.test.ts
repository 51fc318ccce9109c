import { describe, it, expect } from 'vitest';
import fc from 'fast-check';
import { createRequire } from 'node:module';
import { mapSvg, plotToFigure, mapGeometry, type MapSpec } from '../../src/render/figures/map.js';
import { makeFrame, mapToPlot } from '../../src/render/figures/raster.js';
import { makeRamp } from '../../src/render/figures/colour.js';
import { encodePng, pngDataUri } from '../../src/render/figures/png.js';
import { treeSvg, reduceTree, layoutTree, limitLeaves, type TreeNodeIn } from '../../src/render/figures/tree.js';
import { persistenceSvg, diagramXY } from '../../src/render/figures/persistence.js';
import { shapePath } from '../../src/render/figures/markers.js';
import type { GeoTransform } from '../../src/surface/grid.js';

const ramp = makeRamp('cividis');
const onePixel = pngDataUri(encodePng(new Uint8Array([10, 20, 30, 255]), 1, 1, 4));

function spec(width: number, height: number, transform: GeoTransform, markers: MapSpec['markers']): MapSpec {
  return {
    id: 'm', title: 't', desc: 'd', frame: makeFrame(width, height, transform, 1000), layers: [{ id: 'surface', label: 's', href: onePixel, visible: true }],
    markers, kinds: [], ramps: [{ label: 'v', ramp, lo: 0, hi: 1 }], notes: [], axes: { xLabel: 'x', yLabel: 'y' },
  };
}

/** Figure pixel of a marker, computed from the SVG text alone: nested <svg> x/y/width/height/viewBox and the marker's translate. */
function markerPixels(svg: string): Map<string, [number, number]> {
  const plot = /<svg class="plot"[^>]*x="([\d.]+)" y="([\d.]+)" width="([\d.]+)" height="([\d.]+)" viewBox="0 0 ([\d.]+) ([\d.]+)"/.exec(svg)!;
  const [px, py, pw, ph, vw, vh] = plot.slice(1).map(Number);
  const out = new Map<string, [number, number]>();
  for (const m of svg.matchAll(/<g class="mk[^"]*" data-k="([^"]+)" transform="translate\(([-\d.]+) ([-\d.]+)\)/g)) {
    out.set(m[1], [px + (Number(m[2]) / vw) * pw, py + (Number(m[3]) / vh) * ph]);
  }
  return out;
}

describe('marker placement on the map', () => {
  it('a feature at grid cell (c, r) lands at figure pixel (ml + (c + ½)·k, mt + (r + ½)·k)', () => {
    const W = 320, H = 240;
    const cells: [number, number][] = [[0, 0], [319, 239], [247, 126], [5, 200]];
    const { svg, geometry: g } = mapSvg(spec(W, H, [512000, 5, 0, 5874000, 0, -5], cells.map(([c, r], i) => ({ key: `k${i}`, kind: 'pit', u: c + 0.5, v: r + 0.5, title: '' }))));
    const px = markerPixels(svg);
    // analytic: the plot box keeps the grid's aspect; k figure pixels per cell
    expect(g.pw / W).toBeCloseTo(g.ph / H, 9);
    cells.forEach(([c, r], i) => {
      const [x, y] = px.get(`k${i}`)!;
      expect(x).toBeCloseTo(g.ml + (c + 0.5) * (g.pw / W), 2);
      expect(y).toBeCloseTo(g.mt + (r + 0.5) * (g.ph / H), 2);
      const [fx, fy] = plotToFigure(g, c + 0.5, r + 0.5);
      expect(x).toBeCloseTo(fx, 2);
      expect(y).toBeCloseTo(fy, 2);
    });
  });

  it('a map point reaches its cell through the inverse transform, rotated grids included', () => {
    // rotated 30°: x = x0 + c·a·cos − r·a·sin, y = y0 + c·a·sin + r·(−a)·cos … (GDAL order)
    const a = 2, th = Math.PI / 6;
    const t: GeoTransform = [1000, a * Math.cos(th), a * Math.sin(th), 2000, a * Math.sin(th), -a * Math.cos(th)];
    const c = 17, r = 9;
    const X = t[0] + (c + 0.5) * t[1] + (r + 0.5) * t[2], Y = t[3] + (c + 0.5) * t[4] + (r + 0.5) * t[5];
    const [u, v] = mapToPlot(t, X, Y);
    const { svg, geometry: g } = mapSvg(spec(40, 30, t, [{ key: 'p', kind: 'peak', u, v, title: '' }]));
    const [x, y] = markerPixels(svg).get('p')!;
    expect(x).toBeCloseTo(g.ml + (c + 0.5) * g.k, 2);
    expect(y).toBeCloseTo(g.mt + (r + 0.5) * g.k, 2);
  });

  it('markers keep their pixel size: scale = grid units per figure pixel', () => {
    const { svg, geometry: g } = mapSvg(spec(100, 50, [0, 1, 0, 0, 0, 1], [{ key: 'a', kind: 'pass', u: 1, v: 1, title: '' }]));
    const s = Number(/data-k="a" transform="translate\([^)]*\) scale\(([\d.]+)\)/.exec(svg)![1]);
    expect(s).toBeCloseTo(1 / g.k, 4);
    expect(mapGeometry(100, 50, 0).k).toBeCloseTo(g.k, 12);
  });

  it('draws the three kinds with three different shapes, with a title and description for the figure', () => {
    const shapes = new Set(['pit', 'pass', 'peak', 'pour'].map((k) => shapePath(k as 'pit', 6)));
    expect(shapes.size).toBe(4);
    const { svg } = mapSvg(spec(10, 10, [0, 1, 0, 0, 0, 1], []));
    expect(svg).toMatch(/role="img" aria-labelledby="m-title m-desc"/);
    expect(svg).toMatch(/<title id="m-title">t<\/title><desc id="m-desc">d<\/desc>/);
  });
});

describe('PNG layers', () => {
  it('decode to the pixels encoded (read back by resvg, an independent PNG decoder)', () => {
    const { Resvg } = createRequire(import.meta.url)('@resvg/resvg-js');
    const w = 5, h = 3, px = new Uint8Array(w * h * 4);
    for (let i = 0; i < w * h; i++) px.set([i * 13, 255 - i * 7, (i * 29) % 256, 255], 4 * i);
    const svg = `<svg xmlns="http://www.w3.org/2000/svg" width="${w}" height="${h}"><image href="${pngDataUri(encodePng(px, w, h, 4))}" width="${w}" height="${h}" image-rendering="optimizeSpeed"/></svg>`;
    const out = new Resvg(svg).render();
    expect([out.width, out.height]).toEqual([w, h]);
    expect(Array.from(out.pixels as Uint8Array)).toEqual(Array.from(px));
  });
});

describe('merge-tree plot', () => {
  // pits 1 (value 0), 2 (value 3), 4 (value 1); pass 3 (value 5) joins 1 and 2; pass 5 (value 6) joins 3 and 4
  const nodes: TreeNodeIn[] = [
    { id: 1, parent: 3, value: 0, kind: 'pit', title: 'a', importance: 10 },
    { id: 2, parent: 3, value: 3, kind: 'pit', title: 'b', importance: 2 },
    { id: 3, parent: 5, value: 5, kind: 'pass', title: 'c' },
    { id: 4, parent: 5, value: 1, kind: 'pit', title: 'd', importance: 5 },
    { id: 5, parent: -1, value: 6, kind: 'pass', title: 'e' },
  ];

  it('orders leaves by the lowest level of their subtree and centres parents over their children', () => {
    const L = layoutTree(nodes);
    expect(L.leafCount).toBe(3);
    // root's children: subtree of 3 (lowest 0) before leaf 4 (1); inside 3: leaf 1 (0) before leaf 2 (3)
    expect([L.x[0], L.x[1], L.x[3]]).toEqual([0, 1, 2]);
    expect(L.x[2]).toBe(0.5);
    expect(L.x[4]).toBe(1.25);
  });

  it('reduces to chosen leaves by contracting passes left with one branch', () => {
    const r = reduceTree(nodes, (n) => n.id !== 2);
    expect(r.map((n) => [n.id, n.parent])).toEqual([[1, 5], [4, 5], [5, -1]]);
    const lim = limitLeaves(nodes, 2);
    expect(lim.leaves).toBe(3);
    expect(lim.nodes.filter((n) => n.kind === 'pit').map((n) => n.id).sort()).toEqual([1, 4]);
  });

  it('draws one marker per node and levels increasing upward', () => {
    const { svg, markers } = treeSvg({ id: 't', title: 't', desc: 'd', nodes, valueLabel: 'level', notes: [] });
    expect(markers).toBe(5);
    const ys = new Map([...svg.matchAll(/data-k="tree-(\d)" transform="translate\(([\d.]+) ([\d.]+)\)/g)].map((m) => [Number(m[1]), Number(m[3])]));
    expect(ys.size).toBe(5);
    expect(ys.get(1)!).toBeGreaterThan(ys.get(4)!); // level 0 below level 1
    expect(ys.get(4)!).toBeGreaterThan(ys.get(2)!);
    expect(ys.get(3)!).toBeGreaterThan(ys.get(5)!);
  });
});

describe('persistence diagram', () => {
  it('places (birth, death) on equal axes with the diagonal and the threshold line death = birth + t', () => {
    const pts = [
      { dim: 0 as const, birth: 1, death: 4, kept: true, title: '', key: 'a' },
      { dim: 1 as const, birth: 2, death: 2.2, kept: false, title: '', key: 'b' },
    ];
    const { svg, drawn, geometry: g } = persistenceSvg({ id: 'p', title: 't', desc: 'd', points: pts, essential: [], threshold: 0.5, valueLabel: 'v', notes: [] });
    expect(drawn).toBe(2);
    const m = /data-k="a" transform="translate\(([\d.]+) ([\d.]+)\)/.exec(svg)!;
    const [x, y] = diagramXY(g, 1, 4);
    expect(Number(m[1])).toBeCloseTo(x, 2);
    expect(Number(m[2])).toBeCloseTo(y, 2);
    // equal scales: the diagonal runs corner to corner of the square plot
    const [x0, y0] = diagramXY(g, g.lo, g.lo), [x1, y1] = diagramXY(g, g.hi, g.hi);
    expect(x1 - x0).toBeCloseTo(y0 - y1, 9);
    const th = /class="threshold" x1="([\d.]+)" y1="([\d.]+)"/.exec(svg)!;
    expect(Number(th[2])).toBeCloseTo(diagramXY(g, g.lo, g.lo + 0.5)[1], 1);
    expect(svg).toMatch(/class="mk mk-peak dropped"[^>]*data-k="b"/);
  });

  it('bins what exceeds the point budget', () => {
    const pts = Array.from({ length: 50 }, (_, i) => ({ dim: 0 as const, birth: i, death: i + 1 + (i % 7), kept: true, title: '' }));
    const r = persistenceSvg({ id: 'p', title: 't', desc: 'd', points: pts, essential: [], threshold: 0, valueLabel: 'v', notes: [], maxPoints: 20 });
    expect(r.drawn).toBe(20);
    expect(r.binned).toBe(30);
    expect(r.svg).toMatch(/class="binned"/);
  });
});

describe('depression outlines and pour arrows', async () => {
  const { outlinePath, pourAngle } = await import('../../src/render/html/ponds.js');
  it('a ring along cell edges keeps only its corners, in plot coordinates (inverse transform)', () => {
    // cells (2..3, 1..2) of a grid with 10 m cells, origin (500, 900), north-up: corners at cols 2,4 and rows 1,3
    const t: GeoTransform = [500, 10, 0, 900, 0, -10];
    const X = (c: number) => 500 + 10 * c, Y = (r: number) => 900 - 10 * r;
    const ring: [number, number][] = [[X(2), Y(1)], [X(3), Y(1)], [X(4), Y(1)], [X(4), Y(2)], [X(4), Y(3)], [X(3), Y(3)], [X(2), Y(3)], [X(2), Y(2)], [X(2), Y(1)]];
    const d = outlinePath({ id: 1, polygons: [[ring]] }, t);
    expect(d).toBe('M2 1L4 1L4 3L2 3Z');
  });
  it('pour arrows point from the pass cell to the cell beyond it', () => {
    const dep = (dc: number, dr: number) => ({ pour: { col: 5, row: 5, to: { col: 5 + dc, row: 5 + dr } } }) as Parameters<typeof pourAngle>[0];
    expect(pourAngle(dep(1, 0))).toBe(0);
    expect(pourAngle(dep(0, 1))).toBe(90); // rows run down the screen
    expect(pourAngle(dep(-1, -1))).toBe(-135);
  });
});

describe('typed-array tree reduction', async () => {
  const { reduceSweepTree } = await import('../../src/render/figures/tree.js');
  it('agrees with the object version on random trees numbered children first, and in a given order', () => {
    fc.assert(fc.property(fc.array(fc.integer({ min: 0, max: 1_000_000 }), { minLength: 1, maxLength: 40 }), fc.integer(), (raw, seed) => {
      // node k's parent is a node numbered after it (or none): a forest in sweep order
      const n = raw.length;
      const parent = Int32Array.from(raw, (r, k) => (k === n - 1 || r % 5 === 0 ? -1 : k + 1 + (r % (n - k - 1))));
      const childCount = new Int32Array(n);
      for (const p of parent) if (p >= 0) childCount[p]++;
      const keep = (k: number) => ((k * 2654435761 + seed) >>> 0) % 3 !== 0;
      const nodes: TreeNodeIn[] = Array.from(parent, (p, k) => ({ id: k, parent: p, value: k, kind: 'pit', title: '' }));
      const want = reduceTree(nodes, (nd) => childCount[nd.id] === 0 && keep(nd.id)).map((nd) => [nd.id, nd.parent]).sort((a, b) => a[0] - b[0]);
      const got = reduceSweepTree(parent, childCount, keep);
      const pairs = Array.from(got.nodes, (k, q) => [k, got.parent[q]]);
      // the same forest visited in reversed numbering with an explicit children-first order
      const rev = (k: number) => n - 1 - k;
      const parentR = Int32Array.from({ length: n }, (_, k) => (parent[rev(k)] < 0 ? -1 : rev(parent[rev(k)])));
      const ccR = Int32Array.from({ length: n }, (_, k) => childCount[rev(k)]);
      const order = Int32Array.from({ length: n }, (_, q) => rev(q));
      const gotR = reduceSweepTree(parentR, ccR, (k) => keep(rev(k)), order);
      const pairsR = Array.from(gotR.nodes, (k, q) => [rev(k), gotR.parent[q] < 0 ? -1 : rev(gotR.parent[q])]).sort((a, b) => a[0] - b[0]);
      return JSON.stringify(pairs) === JSON.stringify(want) && JSON.stringify(pairsR) === JSON.stringify(want);
    }));
  });
});
