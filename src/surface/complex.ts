/**
 * The complex actually analysed: which cells are joined, how the boundary is treated,
 * and the link of every vertex. See docs/definitions.md.
 *
 * Grid vertices are cells; the ring of a cell lists its neighbours in cyclic order:
 *   connectivity 8 and 4: (1,0) (1,1) (0,1) (-1,1) (-1,0) (-1,-1) (0,-1) (1,-1)   [(dcol, drow)]
 *   connectivity 6:       (1,0) (1,1) (0,1) (-1,0) (-1,-1) (0,-1)
 * connectivity 8: flag complex of the 8-neighbour graph (each full 2×2 block a tetrahedron);
 * connectivity 6: Freudenthal triangulation (diagonal (+1,+1));
 * connectivity 4: cubical complex (squares = full 2×2 blocks), lower-star filtration.
 * Boundary 'open' adds an outside vertex ω at −∞ coning the boundary subcomplex B (the simplices
 * whose vertices are all ω-adjacent: on the grid edge, or next to nodata when nodata drains).
 */
import { Grid } from './grid.js';
import { Mesh } from './mesh.js';
import { InputError } from '../errors.js';

export type Connectivity = 4 | 6 | 8;
export type Boundary = 'open' | 'closed' | 'periodic' | 'periodic-x' | 'periodic-y';
export const BOUNDARIES: readonly Boundary[] = ['open', 'closed', 'periodic', 'periodic-x', 'periodic-y'];

export interface ComplexOptions {
  connectivity?: Connectivity;
  boundary?: Boundary;
  /** Open boundary only: nodata cells drain to the outside (default true). False makes nodata a wall. */
  nodataOutlet?: boolean;
}

const RING8_DC = [1, 1, 0, -1, -1, -1, 0, 1];
const RING8_DR = [0, 1, 1, 1, 0, -1, -1, -1];
const RING6_DC = [1, 1, 0, -1, -1, 0];
const RING6_DR = [0, 1, 1, 0, -1, -1];

/** χ of the subcomplex of a ring spanned by a vertex mask, for each mask. */
function ringChiTable(conn: Connectivity): Int8Array {
  if (conn === 4) {
    // cubical link: orthogonal neighbours are link vertices; a diagonal stands for a square, whose
    // link vertex and its two link edges are present when the square's other three corners are.
    const t = new Int8Array(256);
    for (let m = 0; m < 256; m++) {
      let v = 0, sq = 0;
      for (let k = 0; k < 8; k += 2) if (m & (1 << k)) v++;
      for (let k = 1; k < 8; k += 2) if (m & (1 << k) && m & (1 << (k - 1)) && m & (1 << ((k + 1) & 7))) sq++;
      t[m] = v + sq - 2 * sq;
    }
    return t;
  }
  const dc = conn === 8 ? RING8_DC : RING6_DC;
  const dr = conn === 8 ? RING8_DR : RING6_DR;
  const k = dc.length;
  const adj = (a: number, b: number): boolean => {
    const x = dc[a] - dc[b], y = dr[a] - dr[b];
    if (conn === 8) return Math.max(Math.abs(x), Math.abs(y)) === 1;
    return (Math.abs(x) + Math.abs(y) === 1) || (x === y && Math.abs(x) === 1);
  };
  const t = new Int8Array(1 << k);
  for (let m = 0; m < 1 << k; m++) {
    let chi = 0;
    const verts: number[] = [];
    for (let a = 0; a < k; a++) if (m & (1 << a)) verts.push(a);
    chi += verts.length;
    for (let i = 0; i < verts.length; i++)
      for (let j = i + 1; j < verts.length; j++) {
        if (!adj(verts[i], verts[j])) continue;
        chi--;
        for (let l = j + 1; l < verts.length; l++) if (adj(verts[i], verts[l]) && adj(verts[j], verts[l])) chi++;
      }
    t[m] = chi;
  }
  return t;
}

const CHI_TABLES: Record<Connectivity, Int8Array> = { 4: ringChiTable(4), 6: ringChiTable(6), 8: ringChiTable(8) };

export interface SimplexCounts {
  /** Simplices (or cells) of each dimension, including those through a virtual outside vertex. */
  byDimension: number[];
  characteristic: number;
}

/** Interface shared by the grid and mesh complexes; hot loops call these monomorphically. */
export interface SurfaceComplex {
  readonly surface: Grid | Mesh;
  readonly n: number;
  readonly values: Float32Array | Float64Array;
  readonly connectivity: Connectivity | null;
  readonly boundary: Boundary;
  /** ω (outside vertex at −∞) exists; omegaAdj[i] = 1 when i touches it. */
  readonly hasOmega: boolean;
  readonly omegaAdj: Uint8Array | null;
  /** τ (virtual vertex at +∞ used for the superlevel sweep) exists; topAdj[i] = 1 when i touches it. */
  readonly hasTop: boolean;
  readonly topAdj: Uint8Array | null;
  /** Largest number of neighbours sublevelNbrs / superlevelNbrs can write. */
  readonly maxDegree: number;
  /** Neighbours joining sublevel sets (edges of the complex); returns the count written into out. */
  sublevelNbrs(i: number, out: Int32Array): number;
  /** Neighbours joining superlevel sets (dual connectivity on grids). */
  superlevelNbrs(i: number, out: Int32Array): number;
  /** 1 − χ(lower link of i): +1 pit/peak, −k pass of multiplicity k, 0 regular. Also sets lastLowerLinkEmpty. */
  contribution(i: number): number;
  lastLowerLinkEmpty: boolean;
  /** χ of the whole complex, by counting its simplices. */
  countSimplices(): SimplexCounts;
  /** True when vertex i lies on the boundary of the analysed domain (grid edge, next to nodata, or on the hull). */
  onEdge(i: number): boolean;
}

export function buildComplex(surface: Grid | Mesh, opts: ComplexOptions = {}): SurfaceComplex {
  const boundary = opts.boundary ?? 'open';
  if (surface.kind === 'mesh') {
    if (boundary !== 'open' && boundary !== 'closed') {
      throw new InputError(`boundary '${boundary}' needs a regular grid; scattered samples support 'open' or 'closed'`);
    }
    return new MeshComplex(surface, boundary);
  }
  return new GridComplex(surface, opts.connectivity ?? 8, boundary, opts.nodataOutlet ?? true);
}

/** Which neighbour pairs of a ring are adjacent in the graph of a connectivity ('4', '6' or '8'). */
function ringAdjacent(graph: Connectivity, dc: number[], dr: number[], a: number, b: number): boolean {
  const x = dc[a] - dc[b], y = dr[a] - dr[b];
  const ax = Math.abs(x), ay = Math.abs(y);
  if (graph === 8) return Math.max(ax, ay) === 1;
  if (graph === 4) return ax + ay === 1;
  return ax + ay === 1 || (x === y && ax === 1);
}

/**
 * Stencil for union-find sweeps over interior grid cells (used by the merge-tree sweep).
 * `components[mask]`: for a set `mask` of ring positions already swept, the number of groups
 * of them that are certainly in one component already — groups joined by graph edges between
 * swept ring positions — counting only groups that hold a graph neighbour (a bit of `nbrMask`).
 */
export interface SweepStencil {
  /** Linear offset of each ring position. */
  offsets: Int32Array;
  /** Ring positions that are neighbours in the sweep's graph. */
  nbrMask: number;
  components: Uint8Array;
  /** For each mask, the first graph neighbour (lowest ring position) of each of those groups. */
  representatives: Uint8Array;
  /**
   * Ring mask of a 3 × 3 window given as 9 bits, row by row from (−1, −1) (bit 0) to (+1, +1)
   * (bit 8): the window of flags around a cell, read three bits a row, becomes its ring mask.
   */
  windowToRing: Uint8Array;
}

function sweepStencil(graph: Connectivity, dc: number[], dr: number[], positions: readonly number[], w: number): SweepStencil {
  const k = dc.length;
  const offsets = new Int32Array(k);
  for (let q = 0; q < k; q++) offsets[q] = dr[q] * w + dc[q];
  let nbrMask = 0;
  for (const q of positions) nbrMask |= 1 << q;
  const components = new Uint8Array(1 << k);
  const representatives = new Uint8Array(1 << k);
  const lab = new Int8Array(k);
  for (let mask = 0; mask < 1 << k; mask++) {
    for (let q = 0; q < k; q++) lab[q] = mask & (1 << q) ? q : -1;
    // propagate the smallest label along adjacencies until stable (k ≤ 8, so this is tiny)
    for (let changed = true; changed;) {
      changed = false;
      for (let a = 0; a < k; a++) {
        if (lab[a] < 0) continue;
        for (let b = 0; b < k; b++) {
          if (lab[b] < 0 || lab[b] <= lab[a] || !ringAdjacent(graph, dc, dr, a, b)) continue;
          lab[b] = lab[a];
          changed = true;
        }
      }
    }
    let groups = 0, reps = 0;
    for (let root = 0; root < k; root++) {
      if (lab[root] !== root) continue;
      for (let q = 0; q < k; q++) if (lab[q] === root && nbrMask & (1 << q)) { groups++; reps |= 1 << q; break; }
    }
    components[mask] = groups;
    representatives[mask] = reps;
  }
  const windowToRing = new Uint8Array(512);
  for (let win = 0; win < 512; win++) {
    let ring = 0;
    for (let q = 0; q < k; q++) if (win & (1 << ((dr[q] + 1) * 3 + dc[q] + 1))) ring |= 1 << q;
    windowToRing[win] = ring;
  }
  return { offsets, nbrMask, components, representatives, windowToRing };
}

/** The per-cell boundary flags of a grid complex and whether any cell is nodata. */
export interface GridFlags {
  omegaAdj: Uint8Array | null;
  topAdj: Uint8Array | null;
  hasNodata: boolean;
}

export class GridComplex implements SurfaceComplex {
  readonly surface: Grid;
  readonly n: number;
  readonly values: Float32Array | Float64Array;
  readonly connectivity: Connectivity;
  readonly boundary: Boundary;
  readonly hasOmega: boolean;
  readonly omegaAdj: Uint8Array | null;
  readonly hasTop: boolean;
  readonly topAdj: Uint8Array | null;
  readonly maxDegree = 8;
  lastLowerLinkEmpty = false;
  readonly w: number;
  readonly h: number;
  readonly wrapX: boolean;
  readonly wrapY: boolean;
  /** Some cell is nodata (NaN). */
  readonly hasNodata: boolean;
  private readonly ringSize: number;
  private readonly dc: number[];
  private readonly dr: number[];
  private readonly off: Int32Array;
  private readonly chi: Int8Array;
  private readonly ring = new Int32Array(8);
  /** Open boundary with draining nodata: nodata cells are outlets. */
  readonly ghostNodata: boolean;
  /** ring positions used by the sublevel / superlevel graphs */
  private readonly subPos: Uint8Array;
  private readonly supPos: Uint8Array;
  private readonly subMask: number;
  private readonly supMask: number;
  private stencils: [SweepStencil | null, SweepStencil | null] = [null, null];

  /**
   * @param flags the outlet and wall flags of this grid, connectivity and boundary, as another
   *   GridComplex found them (a worker thread rebuilds the complex over shared memory this way,
   *   without scanning or copying anything grid-sized)
   */
  constructor(grid: Grid, connectivity: Connectivity, boundary: Boundary, nodataOutlet: boolean, flags?: GridFlags) {
    if (connectivity !== 4 && connectivity !== 6 && connectivity !== 8) {
      throw new InputError(`connectivity must be 4, 6 or 8, got ${connectivity}`);
    }
    this.surface = grid;
    this.values = grid.values;
    this.w = grid.width;
    this.h = grid.height;
    this.n = grid.width * grid.height;
    this.connectivity = connectivity;
    this.boundary = boundary;
    this.wrapX = boundary === 'periodic' || boundary === 'periodic-x';
    this.wrapY = boundary === 'periodic' || boundary === 'periodic-y';
    if ((this.wrapX && this.w < 4) || (this.wrapY && this.h < 4)) {
      throw new InputError(`a periodic axis needs at least 4 samples (grid is ${this.w}×${this.h}); use --boundary closed`);
    }
    this.dc = connectivity === 6 ? RING6_DC : RING8_DC;
    this.dr = connectivity === 6 ? RING6_DR : RING8_DR;
    this.ringSize = this.dc.length;
    this.off = new Int32Array(this.ringSize);
    for (let k = 0; k < this.ringSize; k++) this.off[k] = this.dr[k] * this.w + this.dc[k];
    this.chi = CHI_TABLES[connectivity];
    const all = [...Array(this.ringSize).keys()];
    const orth = [0, 2, 4, 6];
    this.subPos = Uint8Array.from(connectivity === 4 ? orth : all);
    this.supPos = Uint8Array.from(connectivity === 8 ? orth : all);
    this.subMask = 0; for (const k of this.subPos) this.subMask |= 1 << k;
    this.supMask = 0; for (const k of this.supPos) this.supMask |= 1 << k;

    // boundary flags. Open boundary: cells beyond the grid edge (and nodata cells when they drain)
    // are outlets at −∞, all identified to the one outside vertex ω. ω-adjacent = an outlet among the
    // sublevel-graph neighbours. τ-adjacent = a wall (grid edge on a closed axis, or nodata that does
    // not drain) among the superlevel-graph neighbours.
    const open = boundary === 'open';
    this.ghostNodata = open && nodataOutlet;
    this.hasOmega = open;
    if (flags !== undefined) {
      this.hasNodata = flags.hasNodata;
      this.omegaAdj = open ? flags.omegaAdj : null;
      this.topAdj = flags.topAdj;
      this.hasTop = flags.topAdj !== null;
      return;
    }
    const w = this.w, h = this.h, v = this.values, off = this.off, rs = this.ringSize;
    // on shared memory, so that a worker thread can read them (see flags)
    const omega = open ? new Uint8Array(new SharedArrayBuffer(this.n)) : null;
    const top = !open || !nodataOutlet ? new Uint8Array(new SharedArrayBuffer(this.n)) : null;
    let anyNodata = false;
    for (let i = 0; i < v.length; i++) if (v[i] !== v[i]) { anyNodata = true; break; }
    let anyTop = false;
    // Only cells on the grid edge or next to nodata can carry a flag.
    for (let r = 0; r < h; r++) {
      const edgeRow = r === 0 || r === h - 1;
      for (let c = 0; c < w; c++) {
        const i = r * w + c;
        if (!edgeRow && c > 0 && c < w - 1) {
          if (!anyNodata) { c = w - 2; continue; }
          let hole = false;
          for (let k = 0; k < rs; k++) { const x = v[i + off[k]]; if (x !== x) { hole = true; break; } }
          if (!hole) continue;
        }
        if (v[i] !== v[i]) continue;
        if (this.flagCell(c, r, omega, top)) anyTop = true;
      }
    }
    this.hasNodata = anyNodata;
    this.omegaAdj = open ? omega : null;
    this.hasTop = anyTop;
    this.topAdj = anyTop ? top : null;
  }

  /** What a complex over the same grid and options can take instead of scanning the grid again. */
  get flags(): GridFlags {
    return { omegaAdj: this.omegaAdj, topAdj: this.topAdj, hasNodata: this.hasNodata };
  }

  /** Set the ω / τ flags of valid cell (c, r) from its ring; true when a τ flag was set. */
  private flagCell(c: number, r: number, omega: Uint8Array | null, top: Uint8Array | null): boolean {
    const v = this.values, i = r * this.w + c, open = this.boundary === 'open';
    let setTop = false;
    for (let k = 0; k < this.ringSize; k++) {
      const j = this.nbrAt(c, r, k);
      const outside = j < 0, hole = j >= 0 && v[j] !== v[j];
      if (!outside && !hole) continue;
      const ghost = open && (outside || this.ghostNodata);
      if (ghost && omega !== null && this.subMask & (1 << k)) omega[i] = 1;
      if (!ghost && top !== null && this.supMask & (1 << k)) { top[i] = 1; setTop = true; }
    }
    return setTop;
  }

  /** Index of ring neighbour k of cell (c, r) with wrapping, or −1 outside the grid (nodata not checked). */
  nbrAt(c: number, r: number, k: number): number {
    let cc = c + this.dc[k], rr = r + this.dr[k];
    if (cc < 0 || cc >= this.w) { if (!this.wrapX) return -1; cc = (cc + this.w) % this.w; }
    if (rr < 0 || rr >= this.h) { if (!this.wrapY) return -1; rr = (rr + this.h) % this.h; }
    return rr * this.w + cc;
  }

  /** Fill this.ring with the ring neighbours of i: index when valid, −2 for an outlet (ghost), −1 when absent. */
  private fillRing(i: number): void {
    const w = this.w, v = this.values, ring = this.ring, rs = this.ringSize;
    const r = (i / w) | 0, c = i - r * w;
    const hole = this.ghostNodata ? -2 : -1;
    if (c > 0 && c < w - 1 && r > 0 && r < this.h - 1) {
      const off = this.off;
      for (let k = 0; k < rs; k++) {
        const j = i + off[k];
        ring[k] = v[j] === v[j] ? j : hole;
      }
    } else {
      const outside = this.boundary === 'open' ? -2 : -1;
      for (let k = 0; k < rs; k++) {
        const j = this.nbrAt(c, r, k);
        ring[k] = j < 0 ? outside : v[j] === v[j] ? j : hole;
      }
    }
  }

  sublevelNbrs(i: number, out: Int32Array): number {
    this.fillRing(i);
    const ring = this.ring, pos = this.subPos;
    let cnt = 0;
    for (let q = 0; q < pos.length; q++) { const j = ring[pos[q]]; if (j >= 0) out[cnt++] = j; }
    return cnt;
  }

  superlevelNbrs(i: number, out: Int32Array): number {
    this.fillRing(i);
    const ring = this.ring, pos = this.supPos;
    let cnt = 0;
    for (let q = 0; q < pos.length; q++) { const j = ring[pos[q]]; if (j >= 0) out[cnt++] = j; }
    return cnt;
  }

  contribution(i: number): number {
    this.fillRing(i);
    const v = this.values, ring = this.ring, rs = this.ringSize;
    const vi = v[i];
    let m = 0, g = 0;
    for (let k = 0; k < rs; k++) {
      const j = ring[k];
      if (j >= 0) { const vj = v[j]; if (vj < vi || (vj === vi && j < i)) m |= 1 << k; }
      else if (j === -2) g |= 1 << k;
    }
    // Outlets are lower than everything. The cells of P/G containing i are exactly those of P
    // (none of them lies in G), so the lower star — and its χ — is that of P with outlets as low vertices.
    const chi = this.chi[m | g];
    // empty lower link: nothing lower among the neighbours joined by edges (with connectivity 4 a
    // lower diagonal alone adds no link vertex)
    this.lastLowerLinkEmpty = ((m | g) & this.subMask) === 0;
    return 1 - chi;
  }

  /**
   * Visit every valid vertex with a non-zero contribution, in increasing index order:
   * visit(i, contribution(i), lower link of i empty). Same results as calling contribution()
   * on each vertex, with the interior cells done inline. Leaves lastLowerLinkEmpty as a loop
   * over contribution() would.
   */
  forEachCritical(visit: (i: number, contribution: number, lowerLinkEmpty: boolean) => void): void {
    const w = this.w, h = this.h, v = this.values, rs = this.ringSize, chi = this.chi;
    const ghost = this.ghostNodata, sub = this.subMask;
    let last = -1;
    const edge = (i: number): void => {
      if (v[i] !== v[i]) return;
      last = i;
      const x = this.contribution(i);
      if (x !== 0) visit(i, x, this.lastLowerLinkEmpty);
    };
    for (let r = 0; r < h; r++) {
      if (r === 0 || r === h - 1 || w < 3) {
        for (let c = 0; c < w; c++) edge(r * w + c);
        continue;
      }
      const row = r * w;
      edge(row);
      // Interior cells, unrolled per ring. A neighbour after i in index order is lower when its
      // value is smaller, one before i also when equal. Draining nodata counts as lower: written
      // as !(vj >= vi), which is true for NaN.
      const end = row + w - 1;
      if (rs === 8 && !ghost) {
        for (let i = row + 1; i < end; i++) {
          const vi = v[i];
          if (vi !== vi) continue;
          last = i;
          const a = i - w, b = i + w;
          const m = +(v[i + 1] < vi) | (+(v[b + 1] < vi) << 1) | (+(v[b] < vi) << 2) | (+(v[b - 1] < vi) << 3) |
            (+(v[i - 1] <= vi) << 4) | (+(v[a - 1] <= vi) << 5) | (+(v[a] <= vi) << 6) | (+(v[a + 1] <= vi) << 7);
          const x = 1 - chi[m];
          if (x !== 0) visit(i, x, (m & sub) === 0);
        }
      } else if (rs === 8) {
        for (let i = row + 1; i < end; i++) {
          const vi = v[i];
          if (vi !== vi) continue;
          last = i;
          const a = i - w, b = i + w;
          const m = +(!(v[i + 1] >= vi)) | (+(!(v[b + 1] >= vi)) << 1) | (+(!(v[b] >= vi)) << 2) | (+(!(v[b - 1] >= vi)) << 3) |
            (+(!(v[i - 1] > vi)) << 4) | (+(!(v[a - 1] > vi)) << 5) | (+(!(v[a] > vi)) << 6) | (+(!(v[a + 1] > vi)) << 7);
          const x = 1 - chi[m];
          if (x !== 0) visit(i, x, (m & sub) === 0);
        }
      } else if (!ghost) {
        for (let i = row + 1; i < end; i++) {
          const vi = v[i];
          if (vi !== vi) continue;
          last = i;
          const a = i - w, b = i + w;
          const m = +(v[i + 1] < vi) | (+(v[b + 1] < vi) << 1) | (+(v[b] < vi) << 2) |
            (+(v[i - 1] <= vi) << 3) | (+(v[a - 1] <= vi) << 4) | (+(v[a] <= vi) << 5);
          const x = 1 - chi[m];
          if (x !== 0) visit(i, x, (m & sub) === 0);
        }
      } else {
        for (let i = row + 1; i < end; i++) {
          const vi = v[i];
          if (vi !== vi) continue;
          last = i;
          const a = i - w, b = i + w;
          const m = +(!(v[i + 1] >= vi)) | (+(!(v[b + 1] >= vi)) << 1) | (+(!(v[b] >= vi)) << 2) |
            (+(!(v[i - 1] > vi)) << 3) | (+(!(v[a - 1] > vi)) << 4) | (+(!(v[a] > vi)) << 5);
          const x = 1 - chi[m];
          if (x !== 0) visit(i, x, (m & sub) === 0);
        }
      }
      edge(end);
    }
    if (last >= 0) this.contribution(last);
  }

  /** Stencil for the union-find sweep upward (sublevel graph) or downward (superlevel graph). */
  sweepStencil(up: boolean): SweepStencil {
    const slot = up ? 0 : 1;
    let st = this.stencils[slot];
    if (st === null) {
      const conn = this.connectivity;
      const graph: Connectivity = conn === 6 ? 6 : up ? conn : conn === 8 ? 4 : 8;
      st = sweepStencil(graph, this.dc, this.dr, Array.from(up ? this.subPos : this.supPos), this.w);
      this.stencils[slot] = st;
    }
    return st;
  }

  onEdge(i: number): boolean {
    return (this.omegaAdj !== null && this.omegaAdj[i] === 1) || (this.topAdj !== null && this.topAdj[i] === 1);
  }

  /**
   * χ by counting simplices block by block: every simplex of the complex lies in one 2×2 block
   * (on a periodic axis the blocks wrap). Counted independently of the lower-link contributions.
   * Open boundary: the complex is P/G — the grid padded with a frame of outlet cells (P), with the
   * outlets G (frame, and draining nodata) identified to ω: χ(P/G) = χ(P) − χ(G) + 1.
   */
  countSimplices(): SimplexCounts {
    let dims: number[];
    if (this.boundary !== 'open') {
      dims = this.countSets([SET_VALID], false)[0];
    } else {
      const [P, G] = this.countSets([SET_VALID_OR_OUTLET, SET_OUTLET], true);
      // cells of P/G: those of P not in G, plus the vertex ω
      dims = P.map((x, d) => x - G[d]);
      dims[0] += 1;
    }
    let chi = 0;
    dims.forEach((c, d) => { chi += d % 2 === 0 ? c : -c; });
    return { byDimension: dims, characteristic: chi };
  }

  /**
   * Count the vertices, edges, triangles (squares for connectivity 4) and tetrahedra of the
   * subcomplexes spanned by some vertex sets, two rows at a time. Rows are bit sets (32 cells a
   * word), so every count is a population count of a few ANDs of a row, its neighbour to the
   * right, the next row and that row's right neighbour.
   */
  private countSets(sets: number[], pad: boolean): number[][] {
    const w = this.w, h = this.h, v = this.values, conn = this.connectivity;
    const wrapX = this.wrapX, wrapY = this.wrapY, ghost = this.ghostNodata;
    const c0 = pad ? -1 : 0, r0 = pad ? -1 : 0;
    const c1 = pad ? w + 1 : w, r1 = pad ? h + 1 : h;
    const len = c1 - c0;
    const bcols = wrapX ? len : len - 1;
    const br1 = wrapY ? h : r1 - 1;
    // words per row: bits 0 … len (bit len holds the wrapped first cell), plus a zero word
    const nw = ((len + 32) >>> 5) + 1;
    const bitsBelow = (n: number): Int32Array => {
      const m = new Int32Array(nw);
      for (let k = 0; k < nw; k++) {
        const lo = k * 32;
        m[k] = n >= lo + 32 ? -1 : n <= lo ? 0 : (1 << (n - lo)) - 1;
      }
      return m;
    };
    const lenMask = bitsBelow(len), blockMask = bitsBelow(bcols);
    const inGrid = new Int32Array(nw);
    for (let x = 0; x < len; x++) if (c0 + x >= 0 && c0 + x < w) inGrid[x >>> 5] |= 1 << (x & 31);
    const valid = new Int32Array(nw);
    const ns = sets.length;
    let rowsA = sets.map(() => new Int32Array(nw)), rowsB = sets.map(() => new Int32Array(nw));
    const firsts = sets.map(() => new Int32Array(nw));
    const counts = sets.map(() => [0, 0, 0, 0]);
    const fill = (r: number, rows: Int32Array[]): void => {
      valid.fill(0);
      const inside = r >= 0 && r < h;
      if (inside) {
        const base = r * w, xoff = -c0;
        let acc = 0;
        for (let c = 0; c < w; c++) {
          const z = v[base + c], x = c + xoff;
          if (z === z) acc |= 1 << (x & 31);
          if ((x & 31) === 31) { valid[x >>> 5] = acc; acc = 0; }
        }
        const xl = w - 1 + xoff;
        if ((xl & 31) !== 31) valid[xl >>> 5] = acc;
      }
      for (let q = 0; q < ns; q++) {
        const row = rows[q], set = sets[q];
        for (let k = 0; k < nw; k++) {
          const g = inside ? inGrid[k] : 0;
          const vb = valid[k];
          const outlet = (ghost ? g & ~vb : 0) | (lenMask[k] & ~g);
          row[k] = set === SET_VALID ? vb : set === SET_OUTLET ? outlet : vb | outlet;
        }
        if (wrapX) row[len >>> 5] |= (row[0] & 1) << (len & 31);
      }
    };
    fill(r0, rowsA);
    if (wrapY) for (let q = 0; q < ns; q++) firsts[q].set(rowsA[q]);
    for (let r = r0; r < r1; r++) {
      // rowsB = row r + 1: wrapped to the first row, or empty, past the end
      if (r + 1 < r1) fill(r + 1, rowsB);
      else for (let q = 0; q < ns; q++) { if (wrapY) rowsB[q].set(firsts[q]); else rowsB[q].fill(0); }
      const blocks = r < br1;
      for (let q = 0; q < ns; q++) {
        const A = rowsA[q], B = rowsB[q], cnt = counts[q];
        let V = 0, E = 0, F = 0, T = 0;
        for (let k = 0; k < nw - 1; k++) {
          const a = A[k], b = B[k];
          const p = a & lenMask[k];
          const u = (a >>> 1) | (A[k + 1] << 31); // right neighbours of row r
          V += popcount(p);
          E += popcount(p & u) + popcount(p & b);
          if (!blocks) continue;
          const bm = blockMask[k];
          const pb = a & bm, ub = u & bm, d = b & bm;
          const t = ((b >>> 1) | (B[k + 1] << 31)) & bm; // right neighbours of row r + 1
          if (conn === 8) {
            E += popcount(pb & t) + popcount(ub & d);
            const all4 = pb & ub & d & t;
            const three = ((pb & ub & (d | t)) | (d & t & (pb | ub))) & ~all4;
            const n4 = popcount(all4);
            F += popcount(three) + 4 * n4;
            T += n4;
          } else if (conn === 6) {
            const pt = pb & t;
            E += popcount(pt);
            F += popcount(pt & ub) + popcount(pt & d);
          } else {
            F += popcount(pb & ub & d & t);
          }
        }
        cnt[0] += V; cnt[1] += E; cnt[2] += F; cnt[3] += T;
      }
      const tmp = rowsA; rowsA = rowsB; rowsB = tmp;
    }
    return counts.map((c) => (conn === 8 ? c : c.slice(0, 3)));
  }
}

function popcount(x: number): number {
  x = x - ((x >>> 1) & 0x55555555);
  x = (x & 0x33333333) + ((x >>> 2) & 0x33333333);
  x = (x + (x >>> 4)) & 0x0f0f0f0f;
  return Math.imul(x, 0x01010101) >>> 24;
}

const SET_VALID = 0;
const SET_VALID_OR_OUTLET = 1;
const SET_OUTLET = 2;

export class MeshComplex implements SurfaceComplex {
  readonly surface: Mesh;
  readonly n: number;
  readonly values: Float64Array;
  readonly connectivity = null;
  readonly boundary: Boundary;
  readonly hasOmega: boolean;
  readonly omegaAdj: Uint8Array | null;
  readonly hasTop: boolean;
  readonly topAdj: Uint8Array | null;
  readonly maxDegree: number;
  lastLowerLinkEmpty = false;
  private readonly hullPos: Int32Array;

  constructor(mesh: Mesh, boundary: Boundary) {
    this.surface = mesh;
    this.values = mesh.values;
    this.n = mesh.size;
    this.boundary = boundary;
    this.hasOmega = boundary === 'open';
    this.omegaAdj = this.hasOmega ? mesh.onHull : null;
    this.hasTop = !this.hasOmega;
    this.topAdj = this.hasTop ? mesh.onHull : null;
    let md = 0;
    for (let i = 0; i < this.n; i++) md = Math.max(md, mesh.nbrOffsets[i + 1] - mesh.nbrOffsets[i]);
    this.maxDegree = md;
    this.hullPos = new Int32Array(this.n).fill(-1);
    mesh.hull.forEach((vtx, k) => { this.hullPos[vtx] = k; });
  }

  sublevelNbrs(i: number, out: Int32Array): number {
    const m = this.surface;
    let cnt = 0;
    for (let k = m.nbrOffsets[i]; k < m.nbrOffsets[i + 1]; k++) out[cnt++] = m.nbrs[k];
    return cnt;
  }

  superlevelNbrs(i: number, out: Int32Array): number {
    return this.sublevelNbrs(i, out);
  }

  contribution(i: number): number {
    const m = this.surface, v = this.values, vi = v[i];
    const lower = (j: number) => v[j] < vi || (v[j] === vi && j < i);
    let chi = 0;
    for (let k = m.nbrOffsets[i]; k < m.nbrOffsets[i + 1]; k++) if (lower(m.nbrs[k])) chi++;
    let empty = chi === 0;
    const tri = m.triangles;
    for (let k = m.triOffsets[i]; k < m.triOffsets[i + 1]; k++) {
      const t = 3 * m.vertexTris[k];
      let both = true;
      for (let q = 0; q < 3; q++) { const j = tri[t + q]; if (j !== i && !lower(j)) both = false; }
      if (both) chi--;
    }
    if (this.hasOmega && m.onHull[i]) {
      const hp = this.hullPos[i], H = m.hull.length;
      const prev = m.hull[(hp + H - 1) % H], next = m.hull[(hp + 1) % H];
      chi += 1 - (+lower(prev) + +lower(next));
      empty = false;
    }
    this.lastLowerLinkEmpty = empty;
    return 1 - chi;
  }

  onEdge(i: number): boolean {
    return this.surface.onHull[i] === 1;
  }

  countSimplices(): SimplexCounts {
    const m = this.surface;
    const dims = [m.size, m.edgeCount(), m.triangles.length / 3];
    if (this.hasOmega) {
      // ω, and the cone over the hull polygon (its vertices and edges)
      dims[0] += 1; dims[1] += m.hull.length; dims[2] += m.hull.length;
    }
    return { byDimension: dims, characteristic: dims[0] - dims[1] + dims[2] };
  }
}
