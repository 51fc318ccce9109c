/**
 * Basins of the sampled surface and the basins each pass joins.
 *
 *  - Steepest-descent labels: every vertex drains to the neighbour (in the sublevel graph of the
 *    complex) with the steepest drop — drop over distance, ties by the (value, index) order — and
 *    inherits that neighbour's label; a vertex with no lower neighbour is a pit. Each pit is then
 *    mapped to the minimum that survives simplification: a pit whose join-tree component dies with
 *    persistence below the threshold belongs to the component it merged into (elder rule), and so on.
 *    On an open boundary a vertex next to the outside with no lower neighbour drains to the outside.
 *  - Lower-link components of a pass: the pieces of its lower link in the complex analysed; the
 *    lowest vertex of each piece drains to one basin. A first-order pass has two pieces, so it
 *    joins two basins (or one basin with itself); a monkey saddle has three.
 */
import type { SurfaceComplex, GridComplex, MeshComplex } from '../surface/complex.js';
import type { MergeTree } from '../morse/mergetree.js';

/** Label of vertices that drain to the outside (open boundary). */
export const OUTSIDE = -2;
/** Label of nodata vertices. */
export const NO_LABEL = -1;

/**
 * Representative surviving pit of every pit of the (unsimplified) join tree: Map pit vertex →
 * representative pit vertex (−1 = the outside vertex). `threshold` > 0: a pit survives when its
 * persistence is at least the threshold (or it never dies).
 */
export function pitRepresentatives(tree: MergeTree, values: ArrayLike<number>, threshold: number): Map<number, number> {
  const nn = tree.vertex.length;
  const leafOfBirth = new Map<number, number>();
  for (let k = 0; k < nn; k++) if (tree.childCount[k] === 0) leafOfBirth.set(tree.vertex[k], k);
  const rep = new Map<number, number>();
  const resolve = (pit: number): number => {
    const stack: number[] = [];
    let p = pit;
    for (;;) {
      const known = rep.get(p);
      if (known !== undefined) { p = known; break; }
      if (p < 0) break; // the outside vertex never dies
      const leaf = leafOfBirth.get(p);
      if (leaf === undefined) throw new Error(`internal: pit ${p} is not a leaf of the join tree`);
      let q = tree.parent[leaf];
      while (q >= 0 && tree.birth[q] === p) q = tree.parent[q];
      if (q < 0) break; // essential: survives
      const pers = values[tree.vertex[q]] - values[p];
      if (pers >= threshold) break;
      stack.push(p);
      p = tree.birth[q];
    }
    for (const s of stack) rep.set(s, p);
    if (pit >= 0) rep.set(pit, p);
    return p;
  };
  for (const [v] of leafOfBirth) resolve(v);
  return rep;
}

/**
 * Steepest-descent basin label of every vertex: the index into `minima` (vertices of the surviving
 * pits), OUTSIDE, or NO_LABEL for nodata. `order` is the ascending (value, index) order.
 */
export function descentLabels(cx: SurfaceComplex, order: Uint32Array, rep: Map<number, number>, minima: Int32Array): Int32Array {
  const n = cx.n, v = cx.values;
  const label = new Int32Array(n).fill(NO_LABEL);
  const minIndex = new Map<number, number>();
  minima.forEach((p, k) => minIndex.set(p, k));
  const pitLabel = (p: number): number => {
    const r = rep.get(p);
    if (r === undefined) throw new Error(`internal: pit ${p} has no representative`);
    if (r < 0) return OUTSIDE;
    const k = minIndex.get(r);
    if (k === undefined) throw new Error(`internal: representative pit ${r} is not a minimum`);
    return k;
  };
  const omega = cx.hasOmega ? cx.omegaAdj : null;
  if (cx.surface.kind === 'grid') {
    gridDescent(cx as GridComplex, label, pitLabel, omega);
    return label;
  }
  const mesh = cx.surface;
  const nbr = new Int32Array(cx.maxDegree + 1);
  for (let s = 0; s < order.length; s++) {
    const i = order[s];
    const k = cx.sublevelNbrs(i, nbr);
    const vi = v[i];
    let best = -1, bestSlope = 0;
    for (let q = 0; q < k; q++) {
      const j = nbr[q];
      const vj = v[j];
      if (!(vj < vi || (vj === vi && j < i))) continue;
      const slope = (vi - vj) / Math.hypot(mesh.x[j] - mesh.x[i], mesh.y[j] - mesh.y[i]);
      if (best < 0 || slope > bestSlope || (slope === bestSlope && (vj < v[best] || (vj === v[best] && j < best)))) {
        best = j; bestSlope = slope;
      }
    }
    if (best >= 0) label[i] = label[best];
    else if (omega !== null && omega[i]) label[i] = OUTSIDE;
    else label[i] = pitLabel(i);
  }
  return label;
}

/**
 * descentLabels on a grid. First, in memory order, each cell's steepest lower neighbour (ring
 * offsets read directly for interior cells, wrapped at the edges); then each cell follows its chain
 * of steepest neighbours to a labelled cell or a pit, and the whole chain takes that label.
 */
function gridDescent(cx: GridComplex, label: Int32Array, pitLabel: (p: number) => number, omega: Uint8Array | null): void {
  const g = cx.surface, w = g.width, h = g.height, v = cx.values, t = g.transform, n = w * h;
  const six = cx.connectivity === 6;
  const ringDc = six ? RING6_DC : RING8_DC, ringDr = six ? RING6_DR : RING8_DR;
  const pos = cx.connectivity === 4 ? [0, 2, 4, 6] : six ? [0, 1, 2, 3, 4, 5] : [0, 1, 2, 3, 4, 5, 6, 7];
  const K = pos.length;
  const dc = Int32Array.from(pos, (k) => ringDc[k]), dr = Int32Array.from(pos, (k) => ringDr[k]);
  const off = Int32Array.from(pos, (_, q) => dr[q] * w + dc[q]);
  const inv = Float64Array.from(pos, (_, q) => 1 / Math.hypot(dc[q] * t[1] + dr[q] * t[2], dc[q] * t[4] + dr[q] * t[5]));
  const wrapX = cx.wrapX, wrapY = cx.wrapY;
  // down[i]: steepest lower neighbour, −1 for none (pit or outlet), −2 for nodata
  const down = new Int32Array(n);
  for (let r = 0; r < h; r++) {
    const edgeRow = r === 0 || r === h - 1;
    for (let c = 0; c < w; c++) {
      const i = r * w + c;
      const vi = v[i];
      if (vi !== vi) { down[i] = -2; continue; }
      const interior = !edgeRow && c > 0 && c < w - 1;
      let best = -1, bestSlope = 0;
      for (let q = 0; q < K; q++) {
        let j: number;
        if (interior) j = i + off[q];
        else {
          let cc = c + dc[q], rr = r + dr[q];
          if (cc < 0 || cc >= w) { if (!wrapX) continue; cc = (cc + w) % w; }
          if (rr < 0 || rr >= h) { if (!wrapY) continue; rr = (rr + h) % h; }
          j = rr * w + cc;
        }
        const vj = v[j];
        if (!(vj < vi || (vj === vi && j < i))) continue; // also skips nodata (NaN)
        const slope = (vi - vj) * inv[q];
        if (best < 0 || slope > bestSlope || (slope === bestSlope && (vj < v[best] || (vj === v[best] && j < best)))) {
          best = j; bestSlope = slope;
        }
      }
      down[i] = best;
    }
  }
  labelByDescent(down, label, pitLabel, omega);
}

/**
 * Label every vertex by where its steepest-descent chain ends (`down[i]`: the next vertex, −1 at a
 * pit, −2 for nodata): the pit's label, or OUTSIDE where the chain ends beside the outside vertex.
 * Each chain is walked once; its vertices take the label of where it stops. Shared by the 2-D and
 * 3-D basins.
 */
export function labelByDescent(down: Int32Array, label: Int32Array, pitLabel: (p: number) => number, omega: Uint8Array | null): void {
  const n = down.length;
  const UNSET = -3;
  label.fill(UNSET);
  const chain = new Int32Array(n);
  for (let i = 0; i < n; i++) {
    if (label[i] !== UNSET) continue;
    if (down[i] === -2) { label[i] = NO_LABEL; continue; }
    let len = 0, j = i, lab = UNSET;
    while (label[j] === UNSET) {
      chain[len++] = j;
      const d = down[j];
      if (d < 0) { lab = omega !== null && omega[j] ? OUTSIDE : pitLabel(j); break; }
      j = d;
    }
    if (lab === UNSET) lab = label[j];
    for (let k = 0; k < len; k++) label[chain[k]] = lab;
  }
}

const RING8_DC = [1, 1, 0, -1, -1, -1, 0, 1];
const RING8_DR = [0, 1, 1, 1, 0, -1, -1, -1];
const RING6_DC = [1, 1, 0, -1, -1, 0];
const RING6_DR = [0, 1, 1, 0, -1, -1];

/** Marker for the outside vertex in lower-link components. */
export const GHOST = -2;

/**
 * Components of the lower link of vertex i: for each, its lowest vertex (by the (value, index)
 * order), or GHOST when the component reaches the outside vertex.
 */
export function lowerLinkComponents(cx: SurfaceComplex, i: number): number[] {
  return cx.surface.kind === 'grid' ? gridLowerLink(cx as GridComplex, i) : meshLowerLink(cx as MeshComplex, i);
}

function lowerThan(v: ArrayLike<number>, j: number, i: number): boolean {
  return v[j] < v[i] || (v[j] === v[i] && j < i);
}

function components(size: number, present: boolean[], edges: [number, number][], vertexOf: number[], v: ArrayLike<number>): number[] {
  const parent = Array.from({ length: size }, (_, k) => k);
  const find = (a: number): number => { while (parent[a] !== a) a = parent[a] = parent[parent[a]]; return a; };
  for (const [a, b] of edges) if (present[a] && present[b]) parent[find(a)] = find(b);
  const best = new Map<number, number>();
  for (let k = 0; k < size; k++) {
    if (!present[k]) continue;
    const r = find(k);
    const vk = vertexOf[k];
    const cur = best.get(r);
    if (cur === undefined) best.set(r, vk);
    else if (cur === GHOST || vk === GHOST) best.set(r, GHOST);
    else if (lowerThan(v, vk, cur)) best.set(r, vk);
  }
  return [...best.values()];
}

function gridLowerLink(cx: GridComplex, i: number): number[] {
  const g = cx.surface, w = g.width, v = cx.values;
  const r = (i / w) | 0, c = i - r * w;
  const conn = cx.connectivity;
  const six = conn === 6;
  const K = six ? 6 : 8;
  const dc = six ? RING6_DC : RING8_DC, dr = six ? RING6_DR : RING8_DR;
  const open = cx.boundary === 'open';
  // ring vertex: index, GHOST (an outlet: outside the grid or nodata on an open boundary), or −1 absent
  const ring: number[] = [];
  for (let k = 0; k < K; k++) {
    let cc = c + dc[k], rr = r + dr[k];
    let outside = false;
    if (cc < 0 || cc >= w) { if (cx.wrapX) cc = (cc + w) % w; else outside = true; }
    if (rr < 0 || rr >= g.height) { if (cx.wrapY) rr = (rr + g.height) % g.height; else outside = true; }
    const idx = rr * w + cc;
    ring.push(outside ? (open ? GHOST : -1) : v[idx] === v[idx] ? idx : open ? GHOST : -1);
  }
  const isLower = (k: number) => ring[k] === GHOST || (ring[k] >= 0 && lowerThan(v, ring[k], i));
  const present: boolean[] = [];
  const edges: [number, number][] = [];
  // all outlets are the one outside vertex: join them
  let firstGhost = -1;
  for (let k = 0; k < K; k++) {
    if (ring[k] === GHOST) { if (firstGhost < 0) firstGhost = k; else edges.push([firstGhost, k]); }
  }
  if (conn === 8) {
    for (let k = 0; k < 8; k++) present.push(isLower(k));
    for (let k = 0; k < 8; k++) {
      edges.push([k, (k + 1) % 8]);
      if (k % 2 === 0) edges.push([k, (k + 2) % 8]);
    }
  } else if (conn === 6) {
    for (let k = 0; k < 6; k++) present.push(isLower(k));
    for (let k = 0; k < 6; k++) edges.push([k, (k + 1) % 6]);
  } else {
    // cubical: orthogonal neighbours are link vertices; a diagonal joins its two orthogonals when
    // the square's three other corners are all lower
    for (let k = 0; k < 8; k++) present.push(k % 2 === 0 && isLower(k));
    for (let k = 1; k < 8; k += 2) {
      if (isLower(k) && isLower(k - 1) && isLower((k + 1) % 8)) edges.push([k - 1, (k + 1) % 8]);
    }
  }
  return components(K, present, edges, ring, v);
}

function meshLowerLink(cx: MeshComplex, i: number): number[] {
  const m = cx.surface, v = cx.values;
  const nb: number[] = [];
  for (let k = m.nbrOffsets[i]; k < m.nbrOffsets[i + 1]; k++) nb.push(m.nbrs[k]);
  const pos = new Map<number, number>();
  nb.forEach((j, k) => pos.set(j, k));
  const size = nb.length + 1; // last slot: the outside vertex
  const present = nb.map((j) => lowerThan(v, j, i));
  present.push(cx.hasOmega && m.onHull[i] === 1);
  const vertexOf = [...nb, GHOST];
  const edges: [number, number][] = [];
  for (let k = m.triOffsets[i]; k < m.triOffsets[i + 1]; k++) {
    const t = 3 * m.vertexTris[k];
    const others = [m.triangles[t], m.triangles[t + 1], m.triangles[t + 2]].filter((j) => j !== i);
    edges.push([pos.get(others[0])!, pos.get(others[1])!]);
  }
  if (present[size - 1]) {
    // ω is joined to the two hull neighbours of i
    const H = m.hull.length;
    const hp = m.hull.indexOf(i);
    for (const j of [m.hull[(hp + H - 1) % H], m.hull[(hp + 1) % H]]) edges.push([size - 1, pos.get(j)!]);
  }
  return components(size, present, edges, vertexOf, v);
}
