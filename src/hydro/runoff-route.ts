/**
 * Routing a runoff depth through the depression tree: Fill–Spill–Merge (Barnes, Callaghan &
 * Wickert, Earth Surface Dynamics 9, 2021), on the tree of the depression sweep (src/hydro/sweep.ts).
 *
 *  1. Where each cell's water goes: steepest descent on the neighbour graph of the sweep, in the
 *     (value, index) order, so that on a flat the water moves to the neighbour first in the order
 *     and every cell has a way down. A cell next to an outlet (grid edge, draining nodata) sends
 *     its water off the map (the outside is below everything); a cell with no lower neighbour is
 *     a pit and keeps it. Every path ends at a pit — a leaf of the tree — or outside.
 *  2. Each leaf fills with the water of its catchment. A node that is full passes the rest on at
 *     its pour point: to the outside when it spills there, otherwise to its siblings (the
 *     components that meet it at the same pass), the one with the lowest pit first, entering each
 *     at the cell next to the pass, from where the water runs down to one of its leaves. When all
 *     siblings are full, they are one water body above the pass: the water rises in the layer of
 *     their parent node, up to the parent's own spill level, and so on up the tree.
 *  3. The level of a partly filled node is where its stage–volume curve meets the water it holds;
 *     the curve is piecewise linear between the elevations of its cells, so the inversion is exact.
 *
 * Nodes are processed children first (node numbers rise from child to parent). Water given to a
 * node that was processed before is routed inside it top-down: into the child holding the cell
 * where it enters, then that child's siblings, then the node's own layer. Each node becomes full
 * once, so the routing costs O(nodes) plus, per partly filled gift, one path down the tree.
 */
import type { GridComplex } from '../surface/complex.js';
import { sublevelOffsets, SUM_STRIDE as S, SUMA, SUMAZ, SPILLZ, PITZ, type DepressionSweep, type NodeSums } from './sweep.js';

/**
 * Inverse lengths of the steps to each ring neighbour (sublevelOffsets order), in map units (or
 * metres on a geographic grid, where an east–west step shrinks with the cosine of the latitude).
 * One row of ring entries for a projected grid; one per grid row for a geographic one.
 */
export function stepWeights(transform: readonly number[], height: number, conn: 4 | 6 | 8, geographic: boolean): { inv: Float64Array; perRow: boolean } {
  const off = sublevelOffsets(conn);
  const [, dx, rx, y0, ry, dy] = transform;
  const k = off.length;
  if (!geographic) {
    const inv = new Float64Array(k);
    for (let q = 0; q < k; q++) {
      const [c, r] = off[q];
      inv[q] = 1 / Math.hypot(c * dx + r * rx, c * ry + r * dy);
    }
    return { inv, perRow: false };
  }
  const inv = new Float64Array(k * height);
  for (let row = 0; row < height; row++) {
    const lat = ((y0 + (row + 0.5) * dy) * Math.PI) / 180;
    const cx = Math.cos(lat);
    for (let q = 0; q < k; q++) {
      const [c, r] = off[q];
      inv[row * k + q] = 1 / Math.hypot(c * dx * cx, r * dy);
    }
  }
  return { inv, perRow: true };
}

/**
 * For every cell, the node its water reaches: the leaf (pit node of the sweep) at the end of its
 * steepest-descent path, or 0 when the path leaves the map. Nodata cells get 0.
 * Paths are followed from each cell not yet resolved and written back, so every cell's step is
 * worked out once.
 * @param label the sweep's per-cell node label (a pit cell's label is its own leaf)
 * @param dest  output, one entry per cell
 */
export function flowDestinations(cx: GridComplex, label: Int32Array, dest: Int32Array, steps: { inv: Float64Array; perRow: boolean }): void {
  const values = cx.values, w = cx.w, n = cx.n;
  const omegaAdj = cx.omegaAdj;
  if (omegaAdj === null) throw new Error('internal: runoff routing needs the open boundary');
  const off = sublevelOffsets(cx.connectivity);
  const k = off.length;
  const roff = new Int32Array(k);
  for (let q = 0; q < k; q++) roff[q] = off[q][1] * w + off[q][0];
  const inv = steps.inv, perRow = steps.perRow;
  const UNSET = -1;
  dest.fill(UNSET);
  let stack = new Int32Array(1024);

  // the next cell down from x: −1 at a pit, −2 off the map
  const next = (x: number): number => {
    if (omegaAdj[x] === 1) return -2;
    const z = values[x];
    const base = perRow ? ((x / w) | 0) * k : 0;
    let best = -1, bestDrop = -1, bestZ = 0;
    for (let q = 0; q < k; q++) {
      // every ring neighbour of a cell not touching an outlet lies on the grid (the grid edge is an outlet)
      const j = x + roff[q];
      const y = values[j];
      if (!(y < z || (y === z && j < x))) continue; // higher, later in the order, or a nodata wall
      const drop = (z - y) * inv[base + q];
      if (drop > bestDrop || (drop === bestDrop && (y < bestZ || (y === bestZ && j < best)))) {
        best = j; bestDrop = drop; bestZ = y;
      }
    }
    return best;
  };

  for (let i = 0; i < n; i++) {
    if (dest[i] !== UNSET) continue;
    if (values[i] !== values[i]) { dest[i] = 0; continue; }
    let top = 0, x = i, d = 0;
    for (;;) {
      const t = next(x);
      if (t === -2) { d = 0; dest[x] = 0; break; }
      if (t === -1) { d = label[x]; dest[x] = d; break; }
      if (top === stack.length) { const s = new Int32Array(2 * top); s.set(stack); stack = s; }
      stack[top++] = x;
      const dt = dest[t];
      if (dt !== UNSET) { d = dt; break; }
      x = t;
    }
    while (top > 0) dest[stack[--top]] = d;
  }
}

/** The sweep's tree, as Fill–Spill–Merge reads it. */
export interface RoutingTree {
  /** Nodes, the outside (node 0) included. */
  count: number;
  /** Node → parent: 0 = spills to the outside, −1 = never spills (walled in: holds any amount). */
  parent: Int32Array;
  /** Node → children, CSR; each node's children in the order its siblings receive overflow (lowest pit first). */
  childStart: Int32Array;
  children: Int32Array;
  /** Node → water it holds when full (volume unit); +∞ for a walled-in root. */
  capacity: Float64Array;
  /** Node → capacity of its own layer: between its children's spill level and its own (capacity − Σ children's). */
  layer: Float64Array;
  /** Node → the leaf that water entering it from a sibling runs down to (from the cell next to the pass); −1 for roots. */
  entryLeaf: Int32Array;
  /** Node → Euler-tour interval: node m lies in the subtree of k when tin[k] ≤ tin[m] < tout[k]. */
  tin: Int32Array;
  tout: Int32Array;
}

/**
 * The routing tree of a sweep: capacities from the volume sums (V = (h − z0)·Σa − Σa·(z − z0) at
 * the spill level h, × areaScale × zFactor), children ordered lowest pit first, entry leaves from
 * the flow destinations of the cells next to each pass.
 */
export function routingTree(sw: DepressionSweep, sums: NodeSums, values: Float32Array | Float64Array, dest: Int32Array, areaScale: number, zFactor: number): RoutingTree {
  const K = sw.count;
  const parent = sw.parent;
  const rec = sums.rec, z0 = sums.z0;
  const scale = areaScale * zFactor;
  // children, CSR
  const childStart = new Int32Array(K + 1);
  for (let k = 1; k < K; k++) if (parent[k] > 0) childStart[parent[k] + 1]++;
  for (let k = 0; k < K; k++) childStart[k + 1] += childStart[k];
  const children = new Int32Array(childStart[K]);
  const fill = childStart.slice(0, K);
  for (let k = 1; k < K; k++) if (parent[k] > 0) children[fill[parent[k]]++] = k;
  // lowest pit first (value, then cell index): insertion sort of each (short) list
  const birth = sw.birth;
  for (let k = 1; k < K; k++) {
    const a = childStart[k], b = childStart[k + 1];
    for (let i = a + 1; i < b; i++) {
      const c = children[i], zc = values[birth[c]], bc = birth[c];
      let j = i - 1;
      while (j >= a) {
        const e = children[j], ze = values[birth[e]];
        if (ze < zc || (ze === zc && birth[e] < bc)) break;
        children[j + 1] = e;
        j--;
      }
      children[j + 1] = c;
    }
  }
  // capacities: never less than the children's together (rounding), walled-in roots unbounded
  const capacity = new Float64Array(K), layer = new Float64Array(K);
  for (let k = 1; k < K; k++) {
    const h = rec[S * k + SPILLZ];
    let c = h === Infinity ? Infinity : ((h - z0) * rec[S * k + SUMA] - rec[S * k + SUMAZ]) * scale;
    if (!(c > 0)) c = 0;
    let kids = 0;
    for (let q = childStart[k]; q < childStart[k + 1]; q++) kids += capacity[children[q]];
    if (c < kids) c = kids;
    capacity[k] = c;
    layer[k] = c === Infinity ? Infinity : c - kids;
  }
  const entryLeaf = new Int32Array(K).fill(-1);
  for (let k = 1; k < K; k++) if (parent[k] > 0) entryLeaf[k] = dest[sw.entry[k]];
  // Euler tour: subtree sizes bottom-up, then intervals top-down (parents have larger numbers)
  const size = new Int32Array(K).fill(1);
  for (let k = 1; k < K; k++) if (parent[k] > 0) size[parent[k]] += size[k];
  const tin = new Int32Array(K), tout = new Int32Array(K);
  let clock = 0;
  for (let k = K - 1; k >= 1; k--) {
    if (parent[k] <= 0) { tin[k] = clock; clock += size[k]; }
    let t = tin[k] + 1;
    for (let q = childStart[k]; q < childStart[k + 1]; q++) { const c = children[q]; tin[c] = t; t += size[c]; }
    tout[k] = tin[k] + size[k];
  }
  // the water entering a node runs down to one of its own leaves (the cell next to the pass lies in its component)
  for (let k = 1; k < K; k++) {
    const e = entryLeaf[k];
    if (parent[k] > 0 && !(e > 0 && tin[e] >= tin[k] && tin[e] < tout[k])) {
      throw new Error(`internal: the water entering depression node ${k} at its pass runs to node ${e}, outside it; this is a bug in sill, please report it with the input`);
    }
  }
  return { count: K, parent, childStart, children, capacity, layer, entryLeaf, tin, tout };
}

/** The state of every node after the routing (volumes in the volume unit). */
export interface RoutingResult {
  /** Node → water held in its subtree (≤ capacity). */
  stored: Float64Array;
  /** Node → water in its own layer (a leaf: all it holds). */
  own: Float64Array;
  /** Node → full to its spill level. */
  full: Uint8Array;
  /** Node → water that entered its subtree: from the cells draining into it and from its neighbours' overflow. */
  received: Float64Array;
  /** Node → water it passed on at its pour point (received − stored). */
  passedOn: Float64Array;
  /** Water that left the map: straight from the cells beside an outlet, and over the pour points of the outermost nodes. */
  outflow: number;
  /** Of that, the water of cells whose steepest-descent path leaves the map without entering a depression. */
  outflowDirect: number;
}

/**
 * Fill–Spill–Merge over the routing tree.
 * @param direct node → water arriving from the cells that drain to it (leaves only); entry 0 = water
 *               draining straight off the map
 */
export function fillSpillMerge(t: RoutingTree, direct: Float64Array): RoutingResult {
  const { count: K, parent, childStart, children, capacity: cap, layer, entryLeaf, tin, tout } = t;
  const stored = new Float64Array(K), own = new Float64Array(K), excess = new Float64Array(K), mark = new Float64Array(K);
  const full = new Uint8Array(K);
  // "received" as a sum over subtrees of marks: water entering the subtree of s at leaf λ is
  // added at λ and taken off at s's parent, so it counts for every node on the path λ … s.
  for (let k = 1; k < K; k++) mark[k] = direct[k];
  let outflow = direct[0];

  // pending gifts: (node, amount, leaf where it enters)
  let sNode = new Int32Array(256), sLeaf = new Int32Array(256), sAmt = new Float64Array(256);
  let sp = 0;
  const push = (s: number, x: number, lam: number): void => {
    if (sp === sNode.length) {
      const a = new Int32Array(2 * sp), b = new Int32Array(2 * sp), c = new Float64Array(2 * sp);
      a.set(sNode); b.set(sLeaf); c.set(sAmt);
      sNode = a; sLeaf = b; sAmt = c;
    }
    sNode[sp] = s; sAmt[sp] = x; sLeaf[sp] = lam; sp++;
  };
  /** A gift from a sibling: water enters q at its entry leaf. */
  const give = (q: number, x: number): void => {
    const lam = entryLeaf[q];
    mark[lam] += x;
    mark[parent[q]] -= x;
    push(q, x, lam);
    drain();
  };
  /** Route the pending gifts down the tree; each is at most the room left in its node. */
  const drain = (): void => {
    while (sp > 0) {
      sp--;
      const s = sNode[sp], x = sAmt[sp], lam = sLeaf[sp];
      const room = cap[s] - stored[s];
      const complete = x >= room;
      if (complete) { stored[s] = cap[s]; full[s] = 1; } else stored[s] += x;
      const a = childStart[s], b = childStart[s + 1];
      if (a === b) { own[s] = stored[s]; continue; }
      // the child on the way in, then its siblings in overflow order, then the layer
      const tl = tin[lam];
      let c0 = -1;
      for (let q = a; q < b; q++) { const c = children[q]; if (tin[c] <= tl && tl < tout[c]) { c0 = c; break; } }
      if (c0 < 0) throw new Error(`internal: water entering node ${s} at node ${lam} found no child holding it`);
      let rem = x;
      for (let q = a - 1; q < b; q++) {
        const c = q < a ? c0 : children[q];
        if (q >= a && c === c0) continue;
        const r = cap[c] - stored[c];
        if (!(r > 0)) continue;
        const g = complete || rem >= r ? r : rem;
        if (c === c0) push(c, g, lam);
        else { const e = entryLeaf[c]; mark[e] += g; mark[s] -= g; push(c, g, e); }
        rem -= g;
        if (!complete && rem <= 0) break;
      }
      if (complete) own[s] = layer[s];
      else if (rem > 0) own[s] += rem;
    }
  };

  for (let k = 1; k < K; k++) {
    const a = childStart[k], b = childStart[k + 1];
    if (a === b) {
      const d = direct[k];
      if (d >= cap[k]) { stored[k] = cap[k]; full[k] = 1; excess[k] = d - cap[k]; } else stored[k] = d;
      own[k] = stored[k];
    } else {
      let E = 0, held = 0;
      for (let q = a; q < b; q++) { const c = children[q]; E += excess[c]; held += stored[c]; }
      const room = cap[k] - held;
      if (E > 0 && E >= room) {
        // every child fills and the water rises through the layer to the spill level
        for (let q = a; q < b; q++) { const c = children[q]; const r = cap[c] - stored[c]; if (r > 0) give(c, r); }
        own[k] = layer[k];
        stored[k] = cap[k];
        full[k] = 1;
        excess[k] = E - room;
      } else if (E > 0) {
        // the overflow goes to the siblings with room, lowest pit first; what is left rises in the layer
        let rem = E;
        for (let q = a; q < b && rem > 0; q++) {
          const c = children[q];
          const r = cap[c] - stored[c];
          if (!(r > 0)) continue;
          const g = rem >= r ? r : rem;
          give(c, g);
          rem -= g;
        }
        if (rem > 0) own[k] = rem;
        stored[k] = held + E;
      } else {
        stored[k] = held;
        // children exactly full with nothing to spare: a layer of no volume is full too
        if (layer[k] === 0) {
          let all = 1;
          for (let q = a; q < b; q++) if (!full[children[q]]) { all = 0; break; }
          if (all) full[k] = 1;
        }
      }
    }
    if (parent[k] === 0) outflow += excess[k];
  }

  const received = mark;
  for (let k = 1; k < K; k++) { const p = parent[k]; if (p > 0) received[p] += received[k]; }
  const passedOn = new Float64Array(K);
  for (let k = 1; k < K; k++) { const x = received[k] - stored[k]; passedOn[k] = x > 0 ? x : 0; }
  return { stored, own, full, received, passedOn, outflow, outflowDirect: direct[0] };
}

/**
 * Water levels of the nodes whose own layer is partly filled, by inverting their stage–volume
 * curves exactly. Below a node's spill level its water is one body over its children (all full)
 * and the cells of its own layer below the level; with Σa and Σa·(z − z0) over the cells under
 * the level, V(h) = ((h − z0)·Σa − Σa·(z − z0)) × areaScale × zFactor, linear between cell
 * elevations. The cells are met in rising order (the sweep's order), each node's curve is
 * followed until it reaches the water held, and the level is solved on that linear piece.
 * @returns node → level (NaN where no layer is partly filled)
 */
export function layerLevels(
  t: RoutingTree, route: RoutingResult, sums: NodeSums, order: Uint32Array, label: Int32Array,
  values: Float32Array | Float64Array, width: number, rowArea: Float64Array, uniform: boolean, areaScale: number, zFactor: number,
): Float64Array {
  const K = t.count;
  const { childStart, children } = t;
  const { own, full, stored } = route;
  const rec = sums.rec, z0 = sums.z0;
  const level = new Float64Array(K).fill(NaN);
  // per open node: the water held (sum units), Σa and Σa·(z − z0) of the cells under the level so far
  const target = new Float64Array(K), A = new Float64Array(K), AZ = new Float64Array(K);
  const open = new Uint8Array(K);
  let anyOpen = 0;
  const scale = areaScale * zFactor;
  for (let k = 1; k < K; k++) {
    if (full[k] || !(own[k] > 0)) continue;
    open[k] = 1;
    anyOpen++;
    target[k] = stored[k] / scale;
    for (let q = childStart[k]; q < childStart[k + 1]; q++) { const c = children[q]; A[k] += rec[S * c + SUMA]; AZ[k] += rec[S * c + SUMAZ]; }
  }
  if (anyOpen === 0) return level;
  const m = order.length;
  for (let s = 0; s < m && anyOpen > 0; s++) {
    const v = order[s];
    const k = label[v];
    if (k <= 0 || open[k] === 0) continue;
    const z = values[v];
    const dz = z - z0;
    if (dz * A[k] - AZ[k] >= target[k]) {
      level[k] = z0 + (target[k] + AZ[k]) / A[k];
      open[k] = 0;
      anyOpen--;
      continue;
    }
    const a = uniform ? 1 : rowArea[(v / width) | 0];
    A[k] += a;
    AZ[k] += a * dz;
  }
  for (let k = 1; k < K; k++) {
    if (open[k]) level[k] = z0 + (target[k] + AZ[k]) / A[k];
    if (level[k] === level[k]) {
      // rounding must not take the level outside the layer
      const a = childStart[k];
      const lo = a === childStart[k + 1] ? rec[S * k + PITZ] : rec[S * children[a] + SPILLZ];
      const hi = rec[S * k + SPILLZ];
      if (level[k] < lo) level[k] = lo;
      if (level[k] > hi) level[k] = hi;
    }
  }
  return level;
}
