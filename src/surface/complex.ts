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
  private readonly ringSize: number;
  private readonly dc: number[];
  private readonly dr: number[];
  private readonly off: Int32Array;
  private readonly chi: Int8Array;
  private readonly ring = new Int32Array(8);
  /** Open boundary with draining nodata: nodata cells are outlets. */
  private readonly ghostNodata: boolean;
  /** ring positions used by the sublevel / superlevel graphs */
  private readonly subPos: number[];
  private readonly supPos: number[];

  constructor(grid: Grid, connectivity: Connectivity, boundary: Boundary, nodataOutlet: boolean) {
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
    this.subPos = connectivity === 4 ? orth : all;
    this.supPos = connectivity === 8 ? orth : all;

    // boundary flags. Open boundary: cells beyond the grid edge (and nodata cells when they drain)
    // are outlets at −∞, all identified to the one outside vertex ω. ω-adjacent = an outlet among the
    // sublevel-graph neighbours. τ-adjacent = a wall (grid edge on a closed axis, or nodata that does
    // not drain) among the superlevel-graph neighbours.
    const open = boundary === 'open';
    this.ghostNodata = open && nodataOutlet;
    const w = this.w, h = this.h, v = this.values;
    const omega = open ? new Uint8Array(this.n) : null;
    const top = !open || !nodataOutlet ? new Uint8Array(this.n) : null;
    let anyOmega = false, anyTop = false;
    for (let r = 0; r < h; r++) {
      for (let c = 0; c < w; c++) {
        const i = r * w + c;
        if (v[i] !== v[i]) continue;
        for (let k = 0; k < this.ringSize; k++) {
          const j = this.nbrAt(c, r, k);
          const outside = j < 0, hole = j >= 0 && v[j] !== v[j];
          if (!outside && !hole) continue;
          const ghost = open && (outside || this.ghostNodata);
          if (ghost && omega !== null && this.subPos.includes(k)) { omega[i] = 1; anyOmega = true; }
          if (!ghost && top !== null && this.supPos.includes(k)) { top[i] = 1; anyTop = true; }
        }
      }
    }
    this.hasOmega = open;
    this.omegaAdj = open ? omega : null;
    this.hasTop = anyTop;
    this.topAdj = anyTop ? top : null;
    void anyOmega;
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
      for (let k = 0; k < rs; k++) {
        const j = i + this.off[k];
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
    let cnt = 0;
    for (const k of this.subPos) { const j = this.ring[k]; if (j >= 0) out[cnt++] = j; }
    return cnt;
  }

  superlevelNbrs(i: number, out: Int32Array): number {
    this.fillRing(i);
    let cnt = 0;
    for (const k of this.supPos) { const j = this.ring[k]; if (j >= 0) out[cnt++] = j; }
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
    this.lastLowerLinkEmpty = (m | g) === 0;
    return 1 - chi;
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
    const v = this.values, w = this.w, h = this.h;
    const isValid = (c: number, r: number) => c >= 0 && r >= 0 && c < w && r < h && v[r * w + c] === v[r * w + c];
    let dims: number[];
    if (this.boundary !== 'open') {
      dims = this.countWith(isValid, false);
    } else {
      const isGhost = (c: number, r: number) =>
        c < 0 || r < 0 || c >= w || r >= h || (this.ghostNodata && v[r * w + c] !== v[r * w + c]);
      const P = this.countWith((c, r) => isValid(c, r) || isGhost(c, r), true);
      const G = this.countWith(isGhost, true);
      // cells of P/G: those of P not in G, plus the vertex ω
      dims = P.map((x, d) => x - G[d]);
      dims[0] += 1;
    }
    let chi = 0;
    dims.forEach((c, d) => { chi += d % 2 === 0 ? c : -c; });
    return { byDimension: dims, characteristic: chi };
  }

  private countWith(inSet: (c: number, r: number) => boolean, pad: boolean): number[] {
    const w = this.w, h = this.h, conn = this.connectivity;
    let V = 0, E = 0, F = 0, T = 0;
    const c0 = pad ? -1 : 0, r0 = pad ? -1 : 0;
    const c1 = pad ? w + 1 : w, r1 = pad ? h + 1 : h;
    const wrapC = (c: number) => (this.wrapX ? (c + w) % w : c);
    const wrapR = (r: number) => (this.wrapY ? (r + h) % h : r);
    const has = (c: number, r: number) => {
      const cc = wrapC(c), rr = wrapR(r);
      return cc >= c0 && cc < c1 && rr >= r0 && rr < r1 && inSet(cc, rr);
    };
    for (let r = r0; r < r1; r++) {
      for (let c = c0; c < c1; c++) {
        if (!inSet(c, r)) continue;
        V++;
        if (has(c + 1, r) && (this.wrapX || c + 1 < c1)) E++;
        if (has(c, r + 1) && (this.wrapY || r + 1 < r1)) E++;
      }
    }
    const bc1 = this.wrapX ? w : c1 - 1, br1 = this.wrapY ? h : r1 - 1;
    for (let r = r0; r < br1; r++) {
      for (let c = c0; c < bc1; c++) {
        const a = has(c, r), b = has(c + 1, r), d = has(c, r + 1), e = has(c + 1, r + 1);
        const cnt = +a + +b + +d + +e;
        if (conn === 8) {
          if (a && e) E++;
          if (b && d) E++;
          if (cnt === 3) F += 1;
          if (cnt === 4) { F += 4; T += 1; }
        } else if (conn === 6) {
          if (a && e) E++;
          if (a && b && e) F++;
          if (a && d && e) F++;
        } else if (cnt === 4) {
          F++;
        }
      }
    }
    return conn === 8 ? [V, E, F, T] : [V, E, F];
  }
}

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
