/**
 * The complex analysed on a 3-D grid (see docs/grids3d.md and docs/definitions.md).
 *
 * Vertices are lattice points; two points are joined by an edge when their offset is one of the
 * graph's offsets, and the complex is the flag (clique) complex of that graph:
 *   connectivity 14: the Freudenthal (Kuhn) triangulation — offsets ±(a, b, c) with a, b, c in
 *     {0, 1}, not all 0; each unit cube is cut into 6 tetrahedra around its main diagonal
 *     (0,0,0)–(1,1,1), and the simplices are exactly the cliques of this graph;
 *   connectivity 26: the flag complex of the 26-neighbour graph (every subset of a 2×2×2 block is
 *     a simplex). By the nerve theorem its full subcomplexes have the homotopy type of the union of
 *     the closed unit cubes around their points, so superlevel sets are joined through the 6 face
 *     neighbours (the dual connectivity), as 8 and 4 are in 2-D.
 * Lower-star filtration in the (value, index) order. A vertex's lower link is the full
 * subcomplex of its link on its lower neighbours (the link of a vertex of a flag complex is the
 * flag complex of its neighbours), a complex of dimension ≤ 2 for connectivity 14.
 *
 * Boundary per axis: a periodic axis wraps (at least 4 points); the other axes are 'open' or
 * 'closed' together. Open: the grid is padded by one layer of outlet points beyond each open
 * face, nodata points are outlets too (unless nodataOutlet is false), and the outlet subcomplex
 * G is coned off by one outside vertex ω at −∞ (P ∪ cone(G), homotopy equivalent to P/G:
 * χ = χ(P) − χ(G) + 1). Closed: points beyond the faces and nodata points are left out (walls);
 * the split sweep adds τ at +∞ joined to every point next to a wall, so that superlevel
 * components dual to the sublevel sets' 2-cycles are counted as on a closed 3-manifold.
 */
import { InputError } from '../errors.js';
import type { Grid3 } from './grid3.js';

export type Connectivity3 = 14 | 26;
export type Boundary3 = 'open' | 'closed' | 'periodic';
export const BOUNDARIES3: readonly Boundary3[] = ['open', 'closed', 'periodic'];
export const CONNECTIVITIES3: readonly Connectivity3[] = [14, 26];

export interface Complex3Options {
  /** 14 (Freudenthal triangulation, default) or 26 (flag complex of the 26-neighbour graph). */
  connectivity?: Connectivity3;
  /** How the faces of the box are treated: 'open', 'closed' (default) or 'periodic' (all axes wrap). */
  boundary?: Boundary3;
  /** Axes that wrap, [x, y, z] (with boundary 'open' or 'closed' for the others). */
  periodicAxes?: readonly [boolean, boolean, boolean];
  /** Open boundary only: nodata points drain to the outside (default true). False makes nodata a wall. */
  nodataOutlet?: boolean;
}

/** All 26 offsets, x fastest: (dx, dy, dz) for dz, dy, dx in −1, 0, 1, without (0, 0, 0). */
const ALL: readonly (readonly [number, number, number])[] = (() => {
  const out: [number, number, number][] = [];
  for (let dz = -1; dz <= 1; dz++) for (let dy = -1; dy <= 1; dy++) for (let dx = -1; dx <= 1; dx++) {
    if (dx !== 0 || dy !== 0 || dz !== 0) out.push([dx, dy, dz]);
  }
  return out;
})();

/** Offsets of the Freudenthal graph: all components ≥ 0 or all ≤ 0. */
const FREUDENTHAL = ALL.filter(([a, b, c]) => (a >= 0 && b >= 0 && c >= 0) || (a <= 0 && b <= 0 && c <= 0));
const FACES = ALL.filter(([a, b, c]) => Math.abs(a) + Math.abs(b) + Math.abs(c) === 1);

/** True when offset d is an edge of the graph of a connectivity. */
function isEdge(conn: Connectivity3, d: readonly number[]): boolean {
  const [a, b, c] = d;
  if (Math.max(Math.abs(a), Math.abs(b), Math.abs(c)) !== 1) return false;
  return conn === 26 || (a >= 0 && b >= 0 && c >= 0) || (a <= 0 && b <= 0 && c <= 0);
}

/** Adjacency of the link positions (the graph's offsets) as bit masks. */
function linkAdjacency(conn: Connectivity3, pos: readonly (readonly number[])[]): Int32Array {
  const adj = new Int32Array(pos.length);
  for (let a = 0; a < pos.length; a++) {
    for (let b = 0; b < pos.length; b++) {
      if (a !== b && isEdge(conn, [pos[a][0] - pos[b][0], pos[a][1] - pos[b][1], pos[a][2] - pos[b][2]])) adj[a] |= 1 << b;
    }
  }
  return adj;
}

/** χ of the flag complex on the vertex set `mask` (sum of (−1)^(size−1) over its cliques). */
function cliqueChi(adj: Int32Array, mask: number): number {
  let chi = 0;
  const grow = (cand: number, size: number): void => {
    for (let c = cand; c !== 0; c &= c - 1) {
      const b = 31 - Math.clz32(c & -c);
      chi += size % 2 === 1 ? -1 : 1;
      // extend with later positions adjacent to every member
      grow(cand & adj[b] & ~((2 << b) - 1), size + 1);
    }
  };
  grow(mask, 0);
  return chi;
}

/**
 * The component, within the vertex set `rest` (a bit mask), of the lowest vertex of `rest`, in the
 * graph whose neighbours of vertex q are the bit mask `adj[q]`.
 */
export function componentOfLowest(adj: Int32Array, rest: number): number {
  let comp = rest & -rest;
  for (let grown = comp; grown !== 0;) {
    let next = 0;
    for (let g = grown; g !== 0; g &= g - 1) next |= adj[31 - Math.clz32(g & -g)];
    next &= rest & ~comp;
    comp |= next;
    grown = next;
  }
  return comp;
}

/** Number of components of the graph `adj` restricted to `mask`. */
function components(adj: Int32Array, mask: number): number {
  let n = 0;
  let rest = mask;
  while (rest !== 0) {
    rest &= ~componentOfLowest(adj, rest);
    n++;
  }
  return n;
}

const F_ADJ = linkAdjacency(14, FREUDENTHAL);
const A_ADJ = linkAdjacency(26, ALL);
/** Connectivity 14: χ and number of components of the lower link for each of the 2^14 masks. */
const F_CHI = new Int8Array(1 << 14);
const F_COMP = new Uint8Array(1 << 14);
for (let m = 0; m < 1 << 14; m++) {
  F_CHI[m] = cliqueChi(F_ADJ, m);
  F_COMP[m] = components(F_ADJ, m);
}
const F_FULL = (1 << 14) - 1;

/** Lowest position of each component of the subset `mask`, as a mask. */
export function componentReps(adj: Int32Array, mask: number): number {
  let reps = 0, rest = mask;
  while (rest !== 0) {
    const low = rest & -rest;
    let comp = low;
    for (let grown = comp; grown !== 0;) {
      let next = 0;
      for (let g = grown; g !== 0; g &= g - 1) next |= adj[31 - Math.clz32(g & -g)];
      next &= rest & ~comp;
      comp |= next;
      grown = next;
    }
    reps |= low;
    rest &= ~comp;
  }
  return reps;
}
const F_REP = new Uint16Array(1 << 14);
for (let m = 0; m < 1 << 14; m++) F_REP[m] = componentReps(F_ADJ, m);
/** The 6 face neighbours are pairwise not adjacent in the 6-neighbour graph: each is its own component. */
const FACE_ADJ = new Int32Array(6);
const FACE_COMP = new Uint8Array(64);
const FACE_REP = new Uint16Array(64);
for (let m = 0; m < 64; m++) { FACE_COMP[m] = components(FACE_ADJ, m); FACE_REP[m] = m; }

/**
 * Connectivity 26: χ(L) = Σ octants [L meets it] − Σ quarter-planes [L meets it] + Σ axis
 * neighbours [lower]. Every clique of the link lies in the octants (and quarter-planes, axes)
 * that contain its sign pattern; the weights add to one for each clique, and each of these sets
 * spans a full simplex (χ = 1 when met).
 */
const OCTANTS = new Int32Array(8);
const QUADRANTS = new Int32Array(12);
let AXES26 = 0;
{
  let q = 0;
  for (let p = 0; p < 26; p++) {
    const [a, b, c] = ALL[p];
    for (let o = 0; o < 8; o++) {
      const s = [o & 1 ? 1 : -1, o & 2 ? 1 : -1, o & 4 ? 1 : -1];
      if ((a === 0 || a === s[0]) && (b === 0 || b === s[1]) && (c === 0 || c === s[2])) OCTANTS[o] |= 1 << p;
    }
    if (Math.abs(a) + Math.abs(b) + Math.abs(c) === 1) AXES26 |= 1 << p;
  }
  for (const [u, v] of [[0, 1], [0, 2], [1, 2]]) {
    for (const su of [-1, 1]) for (const sv of [-1, 1]) {
      let m = 0;
      for (let p = 0; p < 26; p++) {
        const d = ALL[p];
        const w = 3 - u - v;
        if (d[w] !== 0 || (d[u] !== 0 && d[u] !== su) || (d[v] !== 0 && d[v] !== sv)) continue;
        m |= 1 << p;
      }
      QUADRANTS[q++] = m;
    }
  }
}

function chi26(m: number): number {
  let chi = 0;
  for (let o = 0; o < 8; o++) if (m & OCTANTS[o]) chi++;
  for (let q = 0; q < 12; q++) if (m & QUADRANTS[q]) chi--;
  let a = m & AXES26;
  while (a !== 0) { a &= a - 1; chi++; }
  return chi;
}

/** Reduced Betti numbers of a lower link (b0 − 1 as `saddles1`, b1 as `saddles2`, b2 as `maxima`) or a minimum. */
export interface LowerLinkKind {
  /** Empty lower link. */
  minimum: boolean;
  /** Components − 1 (index-1 saddle multiplicity). */
  saddles1: number;
  /** First Betti number (index-2 saddle multiplicity). */
  saddles2: number;
  /** Second Betti number: 1 for a maximum. */
  maxima: number;
}

/**
 * Cliques of the 2×2×2 block at an anchor, counted by the anchor: those whose smallest
 * coordinate on each axis is the anchor's (so each clique of the grid is counted once).
 * Block positions: bit dx + 2·dy + 4·dz. Result: table[mask·8 + dim], dims 0…7.
 */
function blockCliqueTable(conn: Connectivity3): Int32Array {
  const t = new Int32Array(256 * 8);
  const pos = (b: number) => [b & 1, (b >> 1) & 1, (b >> 2) & 1];
  for (let m = 0; m < 256; m++) {
    for (let s = 1; s < 256; s++) {
      if ((s & m) !== s) continue;
      const members: number[] = [];
      for (let b = 0; b < 8; b++) if (s & (1 << b)) members.push(b);
      let clique = true;
      for (let x = 0; x < members.length && clique; x++) {
        for (let y = x + 1; y < members.length; y++) {
          const p = pos(members[x]), q = pos(members[y]);
          if (!isEdge(conn, [p[0] - q[0], p[1] - q[1], p[2] - q[2]])) { clique = false; break; }
        }
      }
      if (!clique) continue;
      let anchored = true;
      for (let ax = 0; ax < 3; ax++) if (!members.some((b) => pos(b)[ax] === 0)) anchored = false;
      if (anchored) t[m * 8 + members.length - 1]++;
    }
  }
  return t;
}

const BLOCK_TABLES: Record<Connectivity3, Int32Array> = { 14: blockCliqueTable(14), 26: blockCliqueTable(26) };

export interface SimplexCounts3 {
  /** Simplices of each dimension (0 … 7 for connectivity 26, 0 … 3 for 14), with those through ω. */
  byDimension: number[];
  characteristic: number;
}

/** Point kinds while counting simplices: valid, outlet (padding or draining nodata), absent. */
const SET_P = 0, SET_G = 1;

export class Complex3 {
  readonly surface: Grid3;
  readonly n: number;
  readonly nx: number;
  readonly ny: number;
  readonly nz: number;
  readonly values: Float32Array | Float64Array;
  readonly connectivity: Connectivity3;
  /** 'periodic' when all three axes wrap; otherwise how the faces of the other axes are treated. */
  readonly boundary: Boundary3;
  readonly wrap: readonly [boolean, boolean, boolean];
  readonly hasOmega: boolean;
  readonly omegaAdj: Uint8Array | null;
  readonly hasTop: boolean;
  readonly topAdj: Uint8Array | null;
  readonly maxDegree = 26;
  readonly hasNodata: boolean;
  /** Open boundary with draining nodata: nodata points are outlets. */
  readonly ghostNodata: boolean;
  /** Offsets of the sublevel graph and of the superlevel graph, and their linear offsets. */
  private readonly sub: readonly (readonly [number, number, number])[];
  private readonly sup: readonly (readonly [number, number, number])[];
  /** Linear offsets of the sublevel and the superlevel graph's neighbours (valid for interior points). */
  readonly subOff: Int32Array;
  readonly supOff: Int32Array;
  private readonly subNeg: Uint8Array;
  private readonly ring: Int32Array;

  constructor(grid: Grid3, opts: Complex3Options = {}) {
    const conn = opts.connectivity ?? 14;
    if (conn !== 14 && conn !== 26) throw new InputError(`connectivity of a 3-D grid must be 14 or 26, got ${String(conn)}`);
    const bnd = opts.boundary ?? 'closed';
    if (!BOUNDARIES3.includes(bnd)) throw new InputError(`boundary of a 3-D grid must be one of ${BOUNDARIES3.join(', ')}, got '${String(bnd)}'`);
    const axes = opts.periodicAxes ?? [false, false, false];
    if (bnd === 'periodic' && opts.periodicAxes !== undefined && !axes.every(Boolean)) {
      throw new InputError(`--boundary periodic wraps every axis; give --boundary open or closed with --periodic-axes to wrap only some`);
    }
    const wrap: [boolean, boolean, boolean] = bnd === 'periodic' ? [true, true, true] : [axes[0], axes[1], axes[2]];
    const sizes = [grid.nx, grid.ny, grid.nz];
    for (let a = 0; a < 3; a++) {
      if (wrap[a] && sizes[a] < 4) {
        throw new InputError(`a periodic axis needs at least 4 points (${'xyz'[a]} has ${sizes[a]}); do not wrap it`);
      }
    }
    this.surface = grid;
    this.values = grid.values;
    this.nx = grid.nx; this.ny = grid.ny; this.nz = grid.nz;
    this.n = grid.nx * grid.ny * grid.nz;
    this.connectivity = conn;
    this.wrap = wrap;
    this.boundary = wrap[0] && wrap[1] && wrap[2] ? 'periodic' : bnd === 'periodic' ? 'closed' : bnd;
    const open = this.boundary === 'open';
    this.ghostNodata = open && (opts.nodataOutlet ?? true);
    this.hasOmega = open;
    this.sub = conn === 14 ? FREUDENTHAL : ALL;
    this.sup = conn === 14 ? FREUDENTHAL : FACES;
    const lin = (d: readonly number[]) => d[0] + this.nx * (d[1] + this.ny * d[2]);
    this.subOff = Int32Array.from(this.sub, lin);
    this.supOff = Int32Array.from(this.sup, lin);
    this.subNeg = Uint8Array.from(this.subOff, (o) => (o < 0 ? 1 : 0));
    this.ring = new Int32Array(26);

    const v = this.values;
    let anyNodata = false;
    for (let i = 0; i < v.length; i++) if (v[i] !== v[i]) { anyNodata = true; break; }
    this.hasNodata = anyNodata;
    const omega = open ? new Uint8Array(this.n) : null;
    const top = new Uint8Array(this.n);
    let anyTop = false;
    // only points on a face of the box, or next to nodata, touch ω or τ; each is flagged once
    const seen = new Uint8Array(this.n);
    const subOff = this.subOff, supOff = this.supOff, ghost = this.ghostNodata;
    const flag = (i: number): void => {
      if (seen[i] === 1 || v[i] !== v[i]) return;
      seen[i] = 1;
      if (this.interior(i)) {
        // inside the box only nodata neighbours matter: outlets when they drain, else walls
        if (ghost) { for (let q = 0; q < subOff.length; q++) { const x = v[i + subOff[q]]; if (x !== x) { omega![i] = 1; break; } } }
        else { for (let q = 0; q < supOff.length; q++) { const x = v[i + supOff[q]]; if (x !== x) { top[i] = 1; anyTop = true; break; } } }
        return;
      }
      this.fillRing(i, this.sub);
      for (let q = 0; q < this.sub.length; q++) if (this.ring[q] === -2 && omega !== null) omega[i] = 1;
      this.fillRing(i, this.sup);
      for (let q = 0; q < this.sup.length; q++) if (this.ring[q] === -1) { top[i] = 1; anyTop = true; }
    };
    this.forEachFacePoint(flag);
    if (anyNodata) {
      const [nx, ny] = [this.nx, this.ny];
      const all = Int32Array.from(ALL, (d) => d[0] + nx * (d[1] + ny * d[2]));
      for (let i = 0; i < this.n; i++) {
        if (v[i] === v[i]) continue;
        if (this.interior(i)) { for (let q = 0; q < 26; q++) flag(i + all[q]); continue; }
        const x = i % nx, y = ((i - x) / nx) % ny, z = Math.floor(i / (nx * ny));
        for (const [dx, dy, dz] of ALL) {
          const j = this.locate(x + dx, y + dy, z + dz);
          if (j >= 0) flag(j);
        }
      }
    }
    this.omegaAdj = omega;
    this.hasTop = anyTop;
    this.topAdj = anyTop ? top : null;
  }

  /** Index of lattice point (x, y, z) after wrapping, or −1 beyond a face (nodata not checked). */
  locate(x: number, y: number, z: number): number {
    const { nx, ny, nz } = this;
    if (x < 0 || x >= nx) { if (!this.wrap[0]) return -1; x = (x + nx) % nx; }
    if (y < 0 || y >= ny) { if (!this.wrap[1]) return -1; y = (y + ny) % ny; }
    if (z < 0 || z >= nz) { if (!this.wrap[2]) return -1; z = (z + nz) % nz; }
    return x + nx * (y + ny * z);
  }

  /** Call f on every point on a face of the box (each once). */
  private forEachFacePoint(f: (i: number) => void): void {
    const { nx, ny, nz } = this;
    for (let z = 0; z < nz; z++) {
      for (let y = 0; y < ny; y++) {
        const inner = z > 0 && z < nz - 1 && y > 0 && y < ny - 1;
        const base = nx * (y + ny * z);
        if (!inner) { for (let x = 0; x < nx; x++) f(base + x); continue; }
        f(base);
        if (nx > 1) f(base + nx - 1);
      }
    }
  }

  /**
   * For the union-find sweep upward (sublevel graph) or downward (superlevel graph): the
   * adjacency of the graph's neighbour positions among themselves (bit masks), and a table of
   * the components of each subset when there are at most 14 positions (null: compute them).
   */
  sweepLink(up: boolean): { adj: Int32Array; comps: Uint8Array | null; reps: Uint16Array | null } {
    if (this.connectivity === 14) return { adj: F_ADJ, comps: F_COMP, reps: F_REP };
    return up ? { adj: A_ADJ, comps: null, reps: null } : { adj: FACE_ADJ, comps: FACE_COMP, reps: FACE_REP };
  }

  /** True when point i has all its 26 neighbours inside the box (no wrapping needed). */
  interior(i: number): boolean {
    const { nx, ny, nz } = this;
    const x = i % nx, r = (i - x) / nx, y = r % ny, z = (r - y) / ny;
    return x > 0 && x < nx - 1 && y > 0 && y < ny - 1 && z > 0 && z < nz - 1;
  }

  /**
   * this.ring[q] for each offset: the neighbour's index when valid, −2 for an outlet (beyond an
   * open face, or draining nodata), −1 when absent (beyond a closed face, or nodata as a wall).
   */
  private fillRing(i: number, offs: readonly (readonly [number, number, number])[]): void {
    const { nx, ny } = this;
    const v = this.values, ring = this.ring;
    const x = i % nx, r = (i - x) / nx, y = r % ny, z = (r - y) / ny;
    const beyond = this.boundary === 'open' ? -2 : -1;
    const hole = this.ghostNodata ? -2 : -1;
    for (let q = 0; q < offs.length; q++) {
      const d = offs[q];
      const j = this.locate(x + d[0], y + d[1], z + d[2]);
      ring[q] = j < 0 ? beyond : v[j] === v[j] ? j : hole;
    }
  }

  sublevelNbrs(i: number, out: Int32Array): number {
    return this.nbrs(i, out, this.sub, this.subOff);
  }

  superlevelNbrs(i: number, out: Int32Array): number {
    return this.nbrs(i, out, this.sup, this.supOff);
  }

  private nbrs(i: number, out: Int32Array, offs: readonly (readonly [number, number, number])[], lin: Int32Array): number {
    const v = this.values;
    let cnt = 0;
    if (this.interior(i)) {
      for (let q = 0; q < lin.length; q++) { const j = i + lin[q]; if (v[j] === v[j]) out[cnt++] = j; }
      return cnt;
    }
    this.fillRing(i, offs);
    for (let q = 0; q < offs.length; q++) { const j = this.ring[q]; if (j >= 0) out[cnt++] = j; }
    return cnt;
  }

  /** Bit mask of the lower neighbours (outlets count as lower) of valid point i, in sublevel-offset order. */
  lowerMask(i: number): number {
    const v = this.values, vi = v[i], off = this.subOff, neg = this.subNeg;
    let m = 0;
    if (this.interior(i)) {
      if (this.ghostNodata) {
        // draining nodata is lower than everything: !(vj ≥ vi) is true for NaN
        for (let q = 0; q < off.length; q++) {
          const vj = v[i + off[q]];
          if (neg[q] ? !(vj > vi) : !(vj >= vi)) m |= 1 << q;
        }
      } else {
        for (let q = 0; q < off.length; q++) {
          const vj = v[i + off[q]];
          if (neg[q] ? vj <= vi : vj < vi) m |= 1 << q;
        }
      }
      return m;
    }
    this.fillRing(i, this.sub);
    const ring = this.ring;
    for (let q = 0; q < off.length; q++) {
      const j = ring[q];
      if (j === -2) m |= 1 << q;
      else if (j >= 0) { const vj = v[j]; if (vj < vi || (vj === vi && j < i)) m |= 1 << q; }
    }
    return m;
  }

  /**
   * Kind of valid point i from the homology of its lower link L: empty → minimum; otherwise
   * b0 − 1 index-1 saddles, b1 index-2 saddles and b2 maxima (b2 = 1 when L encloses the point:
   * the whole 2-sphere link for 14; all six face neighbours for 26, see the header), with
   * b1 = b0 − χ(L) + b2. Contribution to χ: 1 − χ(L) = −(b0 − 1) + b1 − b2 (or 1 for a minimum).
   */
  classify(i: number, out: LowerLinkKind): void {
    const m = this.lowerMask(i);
    out.minimum = m === 0;
    if (m === 0) { out.saddles1 = 0; out.saddles2 = 0; out.maxima = 0; return; }
    let chi: number, b0: number, b2: number;
    if (this.connectivity === 14) {
      chi = F_CHI[m]; b0 = F_COMP[m]; b2 = m === F_FULL ? 1 : 0;
    } else {
      chi = chi26(m); b0 = components(A_ADJ, m); b2 = (m & AXES26) === AXES26 ? 1 : 0;
    }
    out.saddles1 = b0 - 1;
    out.saddles2 = b0 - chi + b2;
    out.maxima = b2;
  }

  /** True when point i touches ω or τ: on an open or closed face, or next to nodata. */
  onEdge(i: number): boolean {
    return (this.omegaAdj !== null && this.omegaAdj[i] === 1) || (this.topAdj !== null && this.topAdj[i] === 1);
  }

  /**
   * χ by counting the cliques of the complex, each once at the 2×2×2 block anchored at its
   * smallest coordinate per axis (a histogram of block masks, then a table per mask); independent
   * of the lower links. Open boundary: χ(P) − χ(G) + 1, P the grid padded with a layer of outlets
   * beyond each open face, G the outlets (padding and draining nodata).
   */
  countSimplices(): SimplexCounts3 {
    const table = BLOCK_TABLES[this.connectivity];
    const dimsOf = (hist: Float64Array): number[] => {
      const dims = new Array(8).fill(0);
      for (let m = 1; m < 256; m++) if (hist[m] > 0) for (let d = 0; d < 8; d++) dims[d] += hist[m] * table[m * 8 + d];
      return dims;
    };
    let dims: number[];
    if (this.boundary !== 'open') {
      dims = dimsOf(this.blockHistogram(SET_P, false));
    } else {
      const P = dimsOf(this.blockHistogram(SET_P, true)), G = dimsOf(this.blockHistogram(SET_G, true));
      dims = P.map((x, d) => x - G[d]);
      dims[0] += 1;
    }
    const top = this.connectivity === 14 ? 4 : 8;
    dims = dims.slice(0, top);
    let chi = 0;
    dims.forEach((c, d) => { chi += d % 2 === 0 ? c : -c; });
    return { byDimension: dims, characteristic: chi };
  }

  /**
   * Histogram of the 8-bit masks of 2×2×2 blocks over all anchors: bit b set when the block's
   * point b (dx + 2dy + 4dz) is in the set. SET_P: valid points (with `pad`: and outlets);
   * SET_G: outlets. With `pad`, anchors and points extend one layer beyond each open face.
   */
  private blockHistogram(set: number, pad: boolean): Float64Array {
    const { nx, ny, nz, wrap } = this;
    const v = this.values, ghost = this.ghostNodata;
    const hist = new Float64Array(256);
    const lo = (a: number) => (pad && !wrap[a] ? -1 : 0);
    const hi = (a: number, n: number) => (pad && !wrap[a] ? n : n - 1);
    // membership of a point: 1 in the set, 0 not
    const member = (x: number, y: number, z: number): number => {
      const j = this.locate(x, y, z);
      if (j < 0) {
        // beyond a face: a padding outlet when within one layer (pad), else absent
        if (!pad) return 0;
        const within = x >= -1 && x <= nx && y >= -1 && y <= ny && z >= -1 && z <= nz;
        return within ? 1 : 0;
      }
      const valid = v[j] === v[j];
      if (set === SET_P) return valid || (pad && ghost) ? 1 : 0;
      return !valid && ghost ? 1 : 0;
    };
    const x0 = lo(0), x1 = hi(0, nx), y0 = lo(1), y1 = hi(1, ny), z0 = lo(2), z1 = hi(2, nz);
    const sx = 1, sy = nx, sz = nx * ny;
    for (let z = z0; z <= z1; z++) {
      for (let y = y0; y <= y1; y++) {
        for (let x = x0; x <= x1; x++) {
          let m: number;
          if (x >= 0 && x < nx - 1 && y >= 0 && y < ny - 1 && z >= 0 && z < nz - 1) {
            // fast path: the whole block inside the grid
            const i = x + nx * (y + ny * z);
            const ok = +(v[i] === v[i]) | (+(v[i + sx] === v[i + sx]) << 1) | (+(v[i + sy] === v[i + sy]) << 2) |
              (+(v[i + sx + sy] === v[i + sx + sy]) << 3) | (+(v[i + sz] === v[i + sz]) << 4) |
              (+(v[i + sx + sz] === v[i + sx + sz]) << 5) | (+(v[i + sy + sz] === v[i + sy + sz]) << 6) |
              (+(v[i + sx + sy + sz] === v[i + sx + sy + sz]) << 7);
            m = set === SET_P ? (pad && ghost ? 255 : ok) : ghost ? ~ok & 255 : 0;
          } else {
            m = 0;
            for (let b = 0; b < 8; b++) if (member(x + (b & 1), y + ((b >> 1) & 1), z + ((b >> 2) & 1))) m |= 1 << b;
          }
          hist[m]++;
        }
      }
    }
    return hist;
  }
}
