/**
 * Outlines of labelled regions of a grid as valid Simple Features polygons along cell edges.
 *
 * A region is a set of cells (a depression's wet cells, a pond). Its boundary is made of the cell
 * edges between a cell in the region and one outside; they are linked into rings, walking each
 * edge with the region on one side. Where two cells of the region meet only at a corner (the
 * other two cells there are outside), the walk turns around the cell it is following, so the two
 * cells stay in separate rings: a region is cut into its 4-connected pieces (cells sharing an
 * edge), one polygon each, and pieces that touch only at a corner are parts of a MultiPolygon
 * touching at that point — which the Simple Features rules allow, while a ring that touches itself
 * is invalid. When one piece wraps round and touches itself at a corner, its ring is split there
 * into a shell and a hole touching at that point (also allowed). Holes belong to the piece whose
 * cells line them. Vertices are cell corners, only where the ring turns (straight runs are one
 * segment), so a polygon's area is exactly its cells' area.
 *
 * How: one pass over the grid finds, for every region, the corners where one of its rings may
 * start (the top-left corner of a ring: the region's cell below-right of it with the cells above
 * and left of that cell outside, or the one outside cell below-right with the other three inside),
 * and joins each row's runs of one label to the runs they touch in the row above (union-find), so
 * the 4-connected pieces are known without another pass. A region is then traced from its own
 * start corners only, in id order, and written before the next. Nested regions (every level of the
 * depression hierarchy) are handled level by level: a parent's region is its own cells plus its
 * children's, so its start corners are those of its own cells plus the children's that still lie
 * on its boundary, and its pieces are the children's pieces joined where they touch. The cost is
 * the length of the boundaries written (plus the one pass), never a rescan of the grid per region.
 */
import type { Grid, GeoTransform } from '../surface/grid.js';
import type { Hierarchy } from './hierarchy.js';
import { IntList } from '../morse/growable.js';
import { formatNumber as jn } from '../io/stream.js';

export type Ring = [number, number][];
export type PolygonCoords = Ring[];

export interface DepressionOutline {
  id: number;
  /** Polygons (exterior ring first, then holes), in map coordinates, exterior counter-clockwise. */
  polygons: PolygonCoords[];
}

/** Which depressions get an outline: the innermost (leaf), the outermost (top) or every level (all). */
export type OutlineLevels = 'leaf' | 'top' | 'all';
export const OUTLINE_LEVELS: readonly OutlineLevels[] = ['leaf', 'top', 'all'];

/** A ring as flat map coordinates x0, y0, x1, y1, …, closed (the last vertex repeats the first). */
export type FlatRing = Float64Array;
/** A polygon as flat rings: the exterior first, then the holes. */
export type FlatPolygon = FlatRing[];

/**
 * One region's outline, handed to a visitor: valid only during the call (the arrays are reused).
 * Polygon p has rings polyStart[p] … polyStart[p + 1] − 1, its exterior first; ring k has the
 * vertices ringStart[k] … ringStart[k + 1] − 1 (not repeated at the end) as cell-corner
 * coordinates (x = column, y = row of the corner), already in the order to write: through a
 * geotransform, exteriors run counter-clockwise and holes clockwise (RFC 7946 §3.1.6).
 */
export interface Outline {
  polygons: number;
  rings: number;
  polyStart: Int32Array;
  ringStart: Int32Array;
  x: Int32Array;
  y: Int32Array;
}

/** The regions to outline: a flat partition of the labels, or every level of a hierarchy. */
export type RegionSpec =
  /** Region of cell i is keyOf[labels[i]] (labels ≤ 0 and keys 0 are none); regions 1 … count. */
  | { kind: 'flat'; keyOf: Int32Array; count: number }
  /** Region d is every cell whose label lies in d's subtree (tin[d] ≤ tin[label] < tout[d]); all of 1 … count, children first. */
  | { kind: 'nested'; parent: Int32Array; tin: Int32Array; tout: Int32Array; count: number };

// directions E, S, W, N as steps of a cell corner (x right, y down the rows)
const E = 0, S = 1, W = 2, N = 3;
const STEP_X = [1, 0, -1, 0], STEP_Y = [0, 1, 0, -1];

/**
 * Trace the outline of every region of `spec` over `labels` (width × height, row-major), handing
 * each to `visit` in id order (regions without cells are skipped). `reverse`: write the rings in
 * the opposite turning sense (set it when the geotransform's determinant is negative, as on
 * north-up grids, so that exteriors run counter-clockwise on the map). Returns how many regions
 * were outlined.
 */
export function traceOutlines(labels: Int32Array, width: number, height: number, spec: RegionSpec, reverse: boolean, visit: (id: number, o: Outline) => void): number {
  const t = new OutlineTracer(labels, width, height, spec, reverse);
  return t.run(visit);
}

/** Union-find over runs: parent links in one growable array, path halving. */
function find(p: Int32Array, a: number): number {
  while (p[a] !== a) { p[a] = p[p[a]]; a = p[a]; }
  return a;
}

class OutlineTracer {
  private readonly V: number; // corners per row (width + 1)
  private readonly nested: boolean;
  private readonly keyOf: Int32Array | null;
  private readonly tin: Int32Array;
  private readonly count: number;
  // start corners: entry e holds corner·2 + type (0: the region's cell below-right, 1: the outside cell below-right), its run, the next entry
  private readonly ev = new IntList(1 << 12);
  private readonly erun = new IntList(1 << 12);
  private readonly enext = new IntList(1 << 12);
  private readonly head: Int32Array;
  private readonly tail: Int32Array;
  // runs (4-connected stretches of one label in a row) and their union-find
  private runs = new IntList(1 << 12);
  // nested: pairs of touching runs of different labels, waiting at a level for the other label to join
  private readonly pa = new IntList(1024);
  private readonly pb = new IntList(1024);
  private readonly plab = new IntList(1024);
  private readonly pnext = new IntList(1024);
  private readonly phead: Int32Array;
  private readonly ptail: Int32Array;
  // corners already walked for the current region (one bit per corner)
  private readonly marks: Int32Array;
  // the current region's test
  private d = 0;
  private lo = 0;
  private hi = 0;
  // scratch of the current region: walked loops (corners, saddle flags), then simple rings, then the outline
  private readonly lx = new IntList(1024);
  private readonly ly = new IntList(1024);
  private readonly lsad = new IntList(1024);
  private readonly loopStart = new IntList(64);
  private readonly loopRun = new IntList(64);
  private readonly rx = new IntList(1024);
  private readonly ry = new IntList(1024);
  private readonly ringStart = new IntList(64);
  private readonly ringRoot = new IntList(64);
  private readonly ringShell = new IntList(64);
  private readonly holeNext = new IntList(64);
  private readonly ox = new IntList(1024);
  private readonly oy = new IntList(1024);
  private readonly oRing = new IntList(64);
  private readonly oPoly = new IntList(64);
  private shellOfRoot: Int32Array = new Int32Array(0);
  private stampOfRoot: Int32Array = new Int32Array(0);
  private readonly pinch = new Map<number, number>();
  private readonly stack = new IntList(256);

  constructor(private readonly labels: Int32Array, private readonly W: number, private readonly H: number, private readonly spec: RegionSpec, private readonly reverse: boolean) {
    this.V = W + 1;
    // a start corner is stored as corner·2 + type in an Int32Array
    if ((W + 1) * (H + 1) > 0x3fffffff) throw new Error(`outlines of a ${W} × ${H} grid: more than 2^30 cell corners, beyond what the tracer indexes`);
    this.nested = spec.kind === 'nested';
    this.keyOf = spec.kind === 'flat' ? spec.keyOf : null;
    this.tin = spec.kind === 'nested' ? spec.tin : new Int32Array(0);
    this.count = spec.count;
    this.head = new Int32Array(this.count + 1).fill(-1);
    this.tail = new Int32Array(this.count + 1).fill(-1);
    this.phead = new Int32Array(this.nested ? this.count + 1 : 0).fill(-1);
    this.ptail = new Int32Array(this.nested ? this.count + 1 : 0).fill(-1);
    this.marks = new Int32Array(((W + 1) * (H + 1) + 31) >>> 5);
  }

  run(visit: (id: number, o: Outline) => void): number {
    this.scan();
    const runs = this.runs.length;
    this.shellOfRoot = new Int32Array(runs);
    this.stampOfRoot = new Int32Array(runs);
    let n = 0;
    for (let d = 1; d <= this.count; d++) {
      if (!this.nested && this.head[d] < 0) continue;
      const o = this.outline(d);
      if (o.rings > 0) { visit(d, o); n++; }
    }
    return n;
  }

  /** Append entry e to region d's list of start corners. */
  private link(d: number, e: number): void {
    this.enext.data[e] = -1;
    if (this.tail[d] < 0) this.head[d] = e; else this.enext.data[this.tail[d]] = e;
    this.tail[d] = e;
  }

  private addStart(d: number, corner2: number, run: number): void {
    const e = this.ev.push(corner2);
    this.erun.push(run);
    this.enext.push(-1);
    this.link(d, e);
  }

  /**
   * Runs `runA` (label `labA`) and `runB` (label `labB`) touch: they are one piece from the level that
   * holds both up. The pair waits at the larger id (an ancestor's id is larger than its
   * descendants', so a pair of a depression and one inside it is joined at once).
   */
  private addPair(labA: number, runA: number, runB: number, labB: number): void {
    if (labA < labB) { const t = labA; labA = labB; labB = t; const r = runA; runA = runB; runB = r; }
    const d = labA;
    const e = this.pa.push(runA);
    this.pb.push(runB);
    this.plab.push(labB);
    this.pnext.push(-1);
    this.linkPair(d, e);
  }

  private linkPair(d: number, e: number): void {
    this.pnext.data[e] = -1;
    if (this.ptail[d] < 0) this.phead[d] = e; else this.pnext.data[this.ptail[d]] = e;
    this.ptail[d] = e;
  }

  private newRun(): number {
    const r = this.runs.length;
    this.runs.push(r);
    return r;
  }

  private union(a: number, b: number): void {
    const p = this.runs.data;
    a = find(p, a); b = find(p, b);
    if (a !== b) { if (a < b) p[b] = a; else p[a] = b; }
  }

  /** One pass over the rows: keys, runs and their unions, start corners (and, nested, touching pairs). */
  private scan(): void {
    const { labels, W, H, V, nested, keyOf } = this;
    let prevKey = new Int32Array(W + 2), curKey = new Int32Array(W + 2);
    let prevRun = new Int32Array(W + 2).fill(-1), curRun = new Int32Array(W + 2).fill(-1);
    for (let y = 0; y <= H; y++) {
      if (y < H) {
        const row = y * W;
        let lastA = -1, lastB = -1;
        for (let x = 0; x < W; x++) {
          const lab = labels[row + x];
          const k = lab > 0 ? (keyOf === null ? lab : keyOf[lab]) : 0;
          curKey[x + 1] = k;
          if (k === 0) { curRun[x + 1] = -1; lastA = -1; continue; }
          const left = curKey[x];
          let r: number;
          if (x > 0 && left === k) r = curRun[x];
          else {
            r = this.newRun();
            if (nested && x > 0 && left > 0) this.addPair(k, r, curRun[x], left);
          }
          curRun[x + 1] = r;
          const up = prevKey[x + 1];
          if (up > 0) {
            const ru = prevRun[x + 1];
            if (r !== lastA || ru !== lastB) {
              if (up === k) this.union(r, ru);
              else if (nested) this.addPair(k, r, ru, up);
              lastA = r; lastB = ru;
            }
          } else lastA = -1;
        }
      } else {
        curKey.fill(0);
        curRun.fill(-1);
      }
      // the corners on line y: ul, ur above it, ll, lr below
      const base = y * V;
      for (let x = 0; x <= W; x++) {
        const ul = prevKey[x], ur = prevKey[x + 1], ll = curKey[x], lr = curKey[x + 1];
        if (ul === ur && ur === ll && ll === lr) continue;
        const c2 = 2 * (base + x);
        if (nested) {
          if (lr > 0 && (ur !== lr || ll !== lr)) this.addStart(lr, c2, curRun[x + 1]);
          if (ul > 0 && ur > 0 && ll > 0 && lr !== ul) this.addStart(ul, c2 + 1, prevRun[x]);
        } else {
          if (lr > 0 && ur !== lr && ll !== lr) this.addStart(lr, c2, curRun[x + 1]);
          if (ul > 0 && ur === ul && ll === ul && lr !== ul) this.addStart(ul, c2 + 1, prevRun[x]);
        }
      }
      let t = prevKey; prevKey = curKey; curKey = t;
      t = prevRun; prevRun = curRun; curRun = t;
    }
  }

  /** Is cell (c, r) in the current region? */
  private inside(c: number, r: number): boolean {
    if (c < 0 || r < 0 || c >= this.W || r >= this.H) return false;
    const lab = this.labels[r * this.W + c];
    if (lab <= 0) return false;
    if (this.keyOf !== null) return this.keyOf[lab] === this.d;
    const t = this.tin[lab];
    return t >= this.lo && t < this.hi;
  }

  /**
   * Status of start-corner entry e for the current (nested) region: 1 a start corner of it,
   * 0 not yet (a later level may make it one), −1 never again.
   */
  private status(e: number): number {
    const c2 = this.ev.data[e], corner = c2 >>> 1, x = corner % this.V, y = (corner - x) / this.V;
    if ((c2 & 1) === 0) return this.inside(x, y - 1) || this.inside(x - 1, y) ? -1 : 1;
    if (this.inside(x, y)) return -1;
    return this.inside(x, y - 1) && this.inside(x - 1, y) && this.inside(x - 1, y - 1) ? 1 : 0;
  }

  private isMarked(corner: number): boolean {
    return (this.marks[corner >>> 5] & (1 << (corner & 31))) !== 0;
  }

  /** The outline of region d (its start corners are in its list; nested: its children's are passed up to it already). */
  private outline(d: number): Outline {
    this.d = d;
    const nested = this.nested;
    if (nested) {
      const sp = this.spec as { tin: Int32Array; tout: Int32Array; parent: Int32Array };
      this.lo = sp.tin[d]; this.hi = sp.tout[d];
      // pieces that touch at this level are one piece from here up
      const parent = sp.parent[d];
      for (let e = this.phead[d]; e >= 0;) {
        const next = this.pnext.data[e];
        const b = sp.tin[this.plab.data[e]];
        if (b >= this.lo && b < this.hi) this.union(this.pa.data[e], this.pb.data[e]);
        else if (parent > 0) this.linkPair(parent, e);
        e = next;
      }
    }
    this.lx.length = 0; this.ly.length = 0; this.lsad.length = 0;
    this.loopStart.length = 0; this.loopRun.length = 0;
    // walk a loop from every start corner not yet walked; nested, pass the corners that may start
    // a ring of the parent up to it (the others never will again)
    const parent = nested ? (this.spec as { parent: Int32Array }).parent[d] : 0;
    for (let e = this.head[d]; e >= 0;) {
      const next = this.enext.data[e];
      const s = nested ? this.status(e) : 1;
      if (s === 1) {
        const c2 = this.ev.data[e], corner = c2 >>> 1;
        if (!this.isMarked(corner)) {
          const x = corner % this.V, y = (corner - x) / this.V;
          this.walk(x, y, (c2 & 1) === 0 ? E : S, this.erun.data[e], (c2 & 1) === 0 && this.inside(x - 1, y - 1));
        }
      }
      if (s >= 0 && parent > 0) this.link(parent, e);
      e = next;
    }
    this.head[d] = -1; this.tail[d] = -1;
    // clear the marks: every marked corner is a turning corner of a walked loop
    const marks = this.marks, V = this.V, lx = this.lx.data, ly = this.ly.data;
    for (let i = 0, n = this.lx.length; i < n; i++) { const c = ly[i] * V + lx[i]; marks[c >>> 5] &= ~(1 << (c & 31)); }
    return this.assemble();
  }

  /**
   * Walk one loop from corner (x0, y0), leaving it in direction d0, with the region on the
   * walker's right as drawn (rows down): the cells' edges clockwise on the screen. At each corner
   * turn towards the region when the cell ahead on that side is outside (so at a corner where two
   * region cells meet only diagonally the walk stays with its own cell), away from it when the
   * cell ahead on the other side is inside, else go straight. Records the turning corners.
   */
  private walk(x0: number, y0: number, d0: number, run: number, startSaddle: boolean): void {
    const lx = this.lx, ly = this.ly, ls = this.lsad;
    this.loopStart.push(lx.length);
    this.loopRun.push(run);
    lx.push(x0); ly.push(y0); ls.push(startSaddle ? 1 : 0);
    const marks = this.marks, V = this.V;
    let x = x0, y = y0, d = d0;
    const limit = 4 * (this.W + 1) * (this.H + 1);
    for (let guard = 0; ; guard++) {
      x += STEP_X[d]; y += STEP_Y[d];
      let a: boolean, b: boolean;
      switch (d) {
        case E: a = this.inside(x, y); b = this.inside(x, y - 1); break;
        case S: a = this.inside(x - 1, y); b = this.inside(x, y); break;
        case W: a = this.inside(x - 1, y - 1); b = this.inside(x - 1, y); break;
        default: a = this.inside(x, y - 1); b = this.inside(x - 1, y - 1);
      }
      const nd = !a ? (d + 1) & 3 : b ? (d + 3) & 3 : d;
      if (nd !== d) {
        // a ring's top-left corner (arriving upwards and leaving right, or arriving leftwards and leaving down)
        if ((d === N && nd === E) || (d === W && nd === S)) { const c = y * V + x; marks[c >>> 5] |= 1 << (c & 31); }
        if (x === x0 && y === y0 && nd === d0) break;
        lx.push(x); ly.push(y); ls.push(!a && b ? 1 : 0);
      }
      d = nd;
      if (guard > limit) throw new Error('outline tracing did not close a ring (internal error)');
    }
  }

  /** Split the walked loops into simple rings, sort them into polygons (exterior, holes) and put them in writing order. */
  private assemble(): Outline {
    const { lx, ly, lsad, rx, ry, ringStart, ringRoot } = this;
    rx.length = 0; ry.length = 0; ringStart.length = 0; ringRoot.length = 0;
    const loops = this.loopStart.length;
    const runs = this.runs.data;
    for (let k = 0; k < loops; k++) {
      const s = this.loopStart.data[k], e = k + 1 < loops ? this.loopStart.data[k + 1] : lx.length;
      const root = find(runs, this.loopRun.data[k]);
      let saddles = 0;
      for (let i = s; i < e; i++) saddles += lsad.data[i];
      if (saddles < 2) { this.pushRing(s, e, root); continue; }
      // a loop passes a corner twice only at a corner where it touches itself (two of its cells meet
      // diagonally there): cut it into simple rings at those corners
      const st = this.stack, pinch = this.pinch, V = this.V;
      st.length = 0; pinch.clear();
      for (let i = s; i < e; i++) {
        const key = lsad.data[i] ? ly.data[i] * V + lx.data[i] : -1;
        const at = key >= 0 ? pinch.get(key) : undefined;
        if (at !== undefined) {
          this.pushRingFrom(st.data, at, st.length, root);
          for (let q = at + 1; q < st.length; q++) { const j = st.data[q]; if (lsad.data[j]) pinch.delete(ly.data[j] * V + lx.data[j]); }
          st.length = at + 1;
          continue;
        }
        if (key >= 0) pinch.set(key, st.length);
        st.push(i);
      }
      this.pushRingFrom(st.data, 0, st.length, root);
    }
    ringStart.push(rx.length);
    // exteriors (turning clockwise on the screen: positive area in (column, row)) and holes; one exterior per piece
    const nr = ringRoot.length;
    const shellOf = this.shellOfRoot, stamp = this.stampOfRoot, d = this.d;
    const isShell = this.ringShell, holeNext = this.holeNext;
    isShell.length = 0; holeNext.length = 0;
    for (let k = 0; k < nr; k++) {
      const a = this.ringArea(k);
      isShell.push(a > 0 ? 1 : 0);
      holeNext.push(-1);
      if (a > 0) {
        const r = ringRoot.data[k];
        if (stamp[r] === d) throw new Error(`outline of region ${d}: two exteriors for one piece (internal error)`);
        stamp[r] = d; shellOf[r] = k;
      }
    }
    // each hole after its piece's exterior (a chain per exterior, in the order found)
    for (let k = 0; k < nr; k++) {
      if (isShell.data[k]) continue;
      const r = ringRoot.data[k];
      if (stamp[r] !== d) throw new Error(`outline of region ${d}: a hole without its exterior (internal error)`);
      const sh = shellOf[r];
      holeNext.data[k] = holeNext.data[sh];
      holeNext.data[sh] = k;
    }
    // the outline in writing order
    const { ox, oy, oRing, oPoly } = this;
    ox.length = 0; oy.length = 0; oRing.length = 0; oPoly.length = 0;
    for (let k = 0; k < nr; k++) {
      if (!isShell.data[k]) continue;
      oPoly.push(oRing.length);
      this.emitRing(k);
      for (let h = holeNext.data[k]; h >= 0; h = holeNext.data[h]) this.emitRing(h);
    }
    const polygons = oPoly.length;
    oPoly.push(oRing.length);
    const rings = oRing.length;
    oRing.push(ox.length);
    return { polygons, rings, polyStart: oPoly.data, ringStart: oRing.data, x: ox.data, y: oy.data };
  }

  private pushRing(s: number, e: number, root: number): void {
    this.ringStart.push(this.rx.length);
    this.ringRoot.push(root);
    for (let i = s; i < e; i++) { this.rx.push(this.lx.data[i]); this.ry.push(this.ly.data[i]); }
  }

  private pushRingFrom(idx: Int32Array, from: number, to: number, root: number): void {
    this.ringStart.push(this.rx.length);
    this.ringRoot.push(root);
    for (let q = from; q < to; q++) { const i = idx[q]; this.rx.push(this.lx.data[i]); this.ry.push(this.ly.data[i]); }
  }

  /** Twice the signed area of ring k in (column, row) units (shoelace; exact in doubles). */
  private ringArea(k: number): number {
    const s = this.ringStart.data[k], e = this.ringStart.data[k + 1];
    const x = this.rx.data, y = this.ry.data;
    let a = 0;
    for (let i = s, j = e - 1; i < e; j = i++) a += x[j] * y[i] - x[i] * y[j];
    return a;
  }

  private emitRing(k: number): void {
    const s = this.ringStart.data[k], e = this.ringStart.data[k + 1];
    const { ox, oy } = this;
    this.oRing.push(ox.length);
    if (!this.reverse) for (let i = s; i < e; i++) { ox.push(this.rx.data[i]); oy.push(this.ry.data[i]); }
    else {
      ox.push(this.rx.data[s]); oy.push(this.ry.data[s]);
      for (let i = e - 1; i > s; i--) { ox.push(this.rx.data[i]); oy.push(this.ry.data[i]); }
    }
  }
}

/** True when the transform turns the grid's (column, row) frame over (negative determinant: north-up grids). */
export function flips(t: readonly number[]): boolean {
  return t[1] * t[5] - t[2] * t[4] < 0;
}

/**
 * An outline as a GeoJSON geometry written into `sink`: a Polygon for one polygon, a MultiPolygon
 * for several; vertices through the geotransform `t`, then `project` when given. Each ring is
 * closed by repeating its first vertex, and written in pieces (never one string for a huge ring).
 */
export function writeOutlineGeometry(sink: { write(s: string): void }, o: Outline, t: readonly number[], project: ((x: number, y: number) => [number, number]) | null = null): void {
  const [x0, dx, rx, y0, ry, dy] = t;
  const multi = o.polygons > 1;
  sink.write(multi ? '{"type":"MultiPolygon","coordinates":[' : '{"type":"Polygon","coordinates":');
  for (let p = 0; p < o.polygons; p++) {
    sink.write(p ? ',[' : '[');
    for (let k = o.polyStart[p]; k < o.polyStart[p + 1]; k++) {
      const s = o.ringStart[k], e = o.ringStart[k + 1];
      let text = k === o.polyStart[p] ? '[' : ',[';
      for (let i = s; i <= e; i++) {
        const v = i < e ? i : s;
        const c = o.x[v], r = o.y[v];
        let X = x0 + c * dx + r * rx, Y = y0 + c * ry + r * dy;
        if (project) [X, Y] = project(X, Y);
        text += (i > s ? ',[' : '[') + jn(X) + ',' + jn(Y) + ']';
        if (text.length > 16384) { sink.write(text); text = ''; }
      }
      sink.write(text + ']');
    }
    sink.write(']');
  }
  sink.write(multi ? ']}' : '}');
}

/** An outline as flat rings in map coordinates (closed), for callers that hold a few outlines. */
export function outlineRings(o: Outline, t: readonly number[]): FlatPolygon[] {
  const [x0, dx, rx, y0, ry, dy] = t;
  const out: FlatPolygon[] = [];
  for (let p = 0; p < o.polygons; p++) {
    const poly: FlatRing[] = [];
    for (let k = o.polyStart[p]; k < o.polyStart[p + 1]; k++) {
      const s = o.ringStart[k], e = o.ringStart[k + 1], n = e - s;
      const r = new Float64Array(2 * n + 2);
      for (let i = 0; i <= n; i++) {
        const v = s + (i < n ? i : 0);
        r[2 * i] = x0 + o.x[v] * dx + o.y[v] * rx;
        r[2 * i + 1] = y0 + o.x[v] * ry + o.y[v] * dy;
      }
      poly.push(r);
    }
    out.push(poly);
  }
  return out;
}

/** Flat rings as [x, y] pairs. */
export function flatToPairs(poly: FlatPolygon): PolygonCoords {
  return poly.map((r) => {
    const ring: Ring = [];
    for (let i = 0; i + 1 < r.length; i += 2) ring.push([r[i], r[i + 1]]);
    return ring;
  });
}

/** The regions of one level of the depression hierarchy (`all`: every depression, nested). */
export function depressionRegions(hier: Hierarchy, levels: OutlineLevels): RegionSpec {
  const n = hier.count;
  if (levels === 'all') return { kind: 'nested', parent: hier.parent, tin: hier.tin, tout: hier.tout, count: n };
  const keyOf = new Int32Array(n + 1);
  if (levels === 'leaf') {
    for (let d = 1; d <= n; d++) if (hier.childStart[d + 1] === hier.childStart[d]) keyOf[d] = d;
  } else {
    // parents have larger ids than their children: top-down
    for (let d = n; d >= 1; d--) keyOf[d] = hier.parent[d] === 0 ? d : keyOf[hier.parent[d]];
  }
  return { kind: 'flat', keyOf, count: n };
}

/** How many depressions an outline level holds. */
export function outlineCount(hier: Hierarchy, levels: OutlineLevels): number {
  if (levels === 'all') return hier.count;
  let n = 0;
  for (let d = 1; d <= hier.count; d++) {
    if (levels === 'leaf' ? hier.childStart[d + 1] === hier.childStart[d] : hier.parent[d] === 0) n++;
  }
  return n;
}

/**
 * The outline of each depression of the chosen levels at its spill level (its wet cells, nested
 * depressions included), handed to `visit` in id order. Returns how many were outlined.
 * @param labels innermost depression id per cell (0 none, −1 nodata)
 */
export function traceDepressionOutlines(grid: Grid, labels: Int32Array, hier: Hierarchy, levels: OutlineLevels, visit: (id: number, o: Outline) => void): number {
  return traceOutlines(labels, grid.width, grid.height, depressionRegions(hier, levels), flips(grid.transform), visit);
}

/** The outlines of the chosen levels as a list (for a few depressions — the writers stream). */
export function depressionOutlines(grid: Grid, labels: Int32Array, hier: Hierarchy, levels: OutlineLevels = 'all'): DepressionOutline[] {
  const out: DepressionOutline[] = [];
  traceDepressionOutlines(grid, labels, hier, levels, (id, o) => out.push({ id, polygons: outlineRings(o, grid.transform).map(flatToPairs) }));
  return out;
}

/** Signed area of a ring (shoelace), positive when counter-clockwise in (x, y). */
export function ringArea(ring: Ring): number {
  let s = 0;
  for (let i = 0, j = ring.length - 1; i < ring.length; j = i++) s += (ring[j][0] - ring[i][0]) * (ring[j][1] + ring[i][1]);
  return s / 2;
}

/**
 * Bounding boxes [c0, r0, c1, r1] (inclusive) of the cells of each label 1..count (labels ≤ 0
 * are none); a label without cells gets c1 = r1 = −1.
 */
export function labelBoxes(labels: Int32Array, width: number, count: number): Int32Array {
  const box = new Int32Array(4 * (count + 1));
  for (let d = 0; d <= count; d++) { box[4 * d] = 0x7fffffff; box[4 * d + 1] = 0x7fffffff; box[4 * d + 2] = -1; box[4 * d + 3] = -1; }
  const height = labels.length / width;
  for (let r = 0, i = 0; r < height; r++) {
    for (let c = 0; c < width; c++, i++) {
      const d = labels[i];
      if (d <= 0) continue;
      const b = 4 * d;
      if (c < box[b]) box[b] = c;
      if (r < box[b + 1]) box[b + 1] = r;
      if (c > box[b + 2]) box[b + 2] = c;
      if (r > box[b + 3]) box[b + 3] = r;
    }
  }
  return box;
}
