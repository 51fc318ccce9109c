/**
 * Scattered samples as a surface: the Delaunay triangulation (delaunator) is the complex.
 * Adjacency is kept in CSR form: `nbrOffsets[v]..nbrOffsets[v+1]` index `nbrs`,
 * and `triOffsets[v]..triOffsets[v+1]` index `vertexTris` (triangles incident to v).
 */
import Delaunator from 'delaunator';
import type { Crs } from './grid.js';
import { InputError } from '../errors.js';


export class Mesh {
  readonly kind = 'mesh' as const;
  readonly x: Float64Array;
  readonly y: Float64Array;
  readonly values: Float64Array;
  /** Triangles as vertex triples, counter-clockwise. */
  readonly triangles: Uint32Array;
  readonly nbrOffsets: Uint32Array;
  readonly nbrs: Uint32Array;
  readonly triOffsets: Uint32Array;
  readonly vertexTris: Uint32Array;
  /** Convex-hull vertices in order. */
  readonly hull: Uint32Array;
  readonly onHull: Uint8Array;
  readonly crs: Crs | null;

  constructor(x: Float64Array, y: Float64Array, values: Float64Array, crs: Crs | null = null) {
    const n = x.length;
    if (y.length !== n || values.length !== n) throw new RangeError('x, y and values must have the same length');
    if (n < 3) throw new InputError(`scattered input has ${n} usable point(s); at least 3 not on one line are needed`);
    for (let i = 0; i < n; i++) {
      if (!Number.isFinite(x[i]) || !Number.isFinite(y[i]) || !Number.isFinite(values[i])) {
        throw new InputError(`point ${i + 1} has a non-finite coordinate or value; remove it or mark the value as nodata`);
      }
      if (values[i] === 0) values[i] = 0; // -0 → +0 for a consistent order
    }
    // Duplicate locations make the triangulation ambiguous: refuse them.
    const idx = new Uint32Array(n);
    for (let i = 0; i < n; i++) idx[i] = i;
    idx.sort((a, b) => x[a] - x[b] || y[a] - y[b]);
    for (let k = 1; k < n; k++) {
      const a = idx[k - 1], b = idx[k];
      if (x[a] === x[b] && y[a] === y[b]) {
        throw new InputError(`points ${Math.min(a, b) + 1} and ${Math.max(a, b) + 1} share the location (${x[a]}, ${y[a]}); remove or average duplicates`);
      }
    }
    const coords = new Float64Array(2 * n);
    for (let i = 0; i < n; i++) { coords[2 * i] = x[i]; coords[2 * i + 1] = y[i]; }
    const d = new Delaunator(coords);
    if (d.triangles.length === 0) {
      throw new InputError('scattered points are all on one line: no triangulation exists; sample a 2-D region');
    }
    this.x = x; this.y = y; this.values = values; this.crs = crs;
    this.triangles = Uint32Array.from(d.triangles);
    this.hull = Uint32Array.from(d.hull);
    this.onHull = new Uint8Array(n);
    for (const h of this.hull) this.onHull[h] = 1;
    const used = new Uint8Array(n);
    for (const t of this.triangles) used[t] = 1;
    for (let i = 0; i < n; i++) {
      if (!used[i]) throw new InputError(`point ${i + 1} at (${x[i]}, ${y[i]}) is not part of the triangulation (nearly coincident with another point)`);
    }

    // incident triangles
    const nt = this.triangles.length / 3;
    const triCount = new Uint32Array(n + 1);
    for (const v of this.triangles) triCount[v + 1]++;
    for (let i = 0; i < n; i++) triCount[i + 1] += triCount[i];
    this.triOffsets = triCount.slice();
    this.vertexTris = new Uint32Array(this.triangles.length);
    const fill = triCount.slice(0, n);
    for (let t = 0; t < nt; t++) for (let k = 0; k < 3; k++) this.vertexTris[fill[this.triangles[3 * t + k]]++] = t;

    // neighbours from half-edges (each undirected edge once per direction)
    const he = d.halfedges;
    const nbrCount = new Uint32Array(n + 1);
    const tri = d.triangles;
    for (let e = 0; e < tri.length; e++) {
      const a = tri[e], b = tri[e % 3 === 2 ? e - 2 : e + 1];
      if (he[e] === -1 || a < b) { nbrCount[a + 1]++; nbrCount[b + 1]++; }
    }
    for (let i = 0; i < n; i++) nbrCount[i + 1] += nbrCount[i];
    this.nbrOffsets = nbrCount.slice();
    this.nbrs = new Uint32Array(nbrCount[n]);
    const nf = nbrCount.slice(0, n);
    for (let e = 0; e < tri.length; e++) {
      const a = tri[e], b = tri[e % 3 === 2 ? e - 2 : e + 1];
      if (he[e] === -1 || a < b) { this.nbrs[nf[a]++] = b; this.nbrs[nf[b]++] = a; }
    }
  }

  get size(): number {
    return this.values.length;
  }

  validCount(): number {
    return this.values.length;
  }

  /** Number of undirected edges. */
  edgeCount(): number {
    return this.nbrs.length / 2;
  }
}
