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

/** What `descentStepper` returns for a cell that has no lower neighbour (a pit). */
export const STEP_PIT = -1;
/** … for a cell next to an outlet (grid edge, draining nodata): its water leaves the map. */
export const STEP_OFF_MAP = -2;
/** … for a nodata cell. */
export const STEP_NODATA = -3;

/**
 * The steepest-descent step of single cells: the neighbour a cell's water moves to, or STEP_PIT,
 * STEP_OFF_MAP, STEP_NODATA. Steepest: the largest drop over distance to a neighbour earlier in the
 * (value, index) order; equal drops go to the first of them in ring order (E, SE, S, SW, W, NW, N,
 * NE, as in sweep.ts). A cell next to an outlet drains off the map (the outside is below everything).
 */
export function descentStepper(cx: GridComplex, steps: { inv: Float64Array; perRow: boolean }): (i: number) => number {
  const values = cx.values, w = cx.w;
  const omegaAdj = cx.omegaAdj;
  if (omegaAdj === null) throw new Error('internal: descent routing needs the open boundary');
  const off = sublevelOffsets(cx.connectivity);
  const k = off.length;
  const roff = new Int32Array(k);
  for (let q = 0; q < k; q++) roff[q] = off[q][1] * w + off[q][0];
  const inv = steps.inv, perRow = steps.perRow;
  return (i: number): number => {
    const z = values[i];
    if (z !== z) return STEP_NODATA;
    if (omegaAdj[i] === 1) return STEP_OFF_MAP;
    // every ring neighbour of a cell not touching an outlet lies on the grid (the grid edge is an outlet)
    const base = perRow ? Math.floor(i / w) * k : 0;
    let best = -1, bd = -1;
    for (let q = 0; q < k; q++) {
      const j = i + roff[q];
      const y = values[j];
      if (!(y < z || (y === z && j < i))) continue; // higher, later in the order, or a nodata wall
      const d = (z - y) * inv[base + q];
      if (d > bd) { best = j; bd = d; }
    }
    return best < 0 ? STEP_PIT : best;
  };
}

/**
 * For every cell, where its water ends: `label[i]` of the pit at the end of its steepest-descent
 * path (`descentStepper`'s rule; runoff passes the sweep's node labels, so a pit gives its leaf
 * node), or `offMap` (default 0) when the path leaves the map. Nodata cells get `offMap` too.
 * Two passes: the step of every cell in storage order (cells next to an outlet and pits are
 * resolved at once; any other cell stores −3 − the cell it drains to), then the paths are followed
 * from each unresolved cell until a resolved one and written back. Labels and `offMap` must be ≥ −2
 * (more negative values mark the cells still to follow).
 * @param label per-cell labels, read at pit cells
 * @param dest  output, one entry per cell
 */
export function flowDestinations(cx: GridComplex, label: Int32Array, dest: Int32Array, steps: { inv: Float64Array; perRow: boolean }, offMap = 0): void {
  const values = cx.values, w = cx.w, h = cx.h;
  const omegaAdj = cx.omegaAdj;
  if (omegaAdj === null) throw new Error('internal: runoff routing needs the open boundary');
  const off = sublevelOffsets(cx.connectivity);
  const k = off.length;
  const roff = new Int32Array(k);
  for (let q = 0; q < k; q++) roff[q] = off[q][1] * w + off[q][0];
  const inv = steps.inv, perRow = steps.perRow;
  const stepper = descentStepper(cx, steps);
  // the step of one cell, any connectivity
  const step = (i: number): number => {
    const s = stepper(i);
    return s >= 0 ? -3 - s : s === STEP_PIT ? label[i] : offMap;
  };
  const fast = k === 8 && !perRow;
  const w0 = inv[0], w1 = inv[1], w2 = inv[2], w3 = inv[3], w4 = inv[4], w5 = inv[5], w6 = inv[6], w7 = inv[7];
  for (let r = 0, i = 0; r < h; r++) {
    if (!fast || r === 0 || r === h - 1 || w < 3) {
      for (let c = 0; c < w; c++, i++) dest[i] = step(i);
      continue;
    }
    dest[i] = step(i); i++;
    for (let c = 1; c < w - 1; c++, i++) {
      const z = values[i];
      if (z !== z || omegaAdj[i] === 1) { dest[i] = offMap; continue; }
      // drops to the 8 neighbours; forward ones (later in storage order) are lower only when strictly
      // lower, backward ones also when equal. Math.max is NaN when a neighbour is nodata: general path.
      const d0 = (z - values[i + 1]) * w0, d1 = (z - values[i + w + 1]) * w1, d2 = (z - values[i + w]) * w2, d3 = (z - values[i + w - 1]) * w3;
      const d4 = (z - values[i - 1]) * w4, d5 = (z - values[i - w - 1]) * w5, d6 = (z - values[i - w]) * w6, d7 = (z - values[i - w + 1]) * w7;
      const m = Math.max(d0, d1, d2, d3, d4, d5, d6, d7);
      let q: number;
      if (m > 0) q = d0 === m ? 0 : d1 === m ? 1 : d2 === m ? 2 : d3 === m ? 3 : d4 === m ? 4 : d5 === m ? 5 : d6 === m ? 6 : 7;
      else if (m === 0) q = d4 === 0 ? 4 : d5 === 0 ? 5 : d6 === 0 ? 6 : d7 === 0 ? 7 : -1;
      else if (m < 0) q = -1;
      else { dest[i] = step(i); continue; }
      dest[i] = q < 0 ? label[i] : -3 - (i + roff[q]);
    }
    dest[i] = step(i); i++;
  }
  let stack = new Int32Array(1024);
  const n = cx.n;
  for (let i = 0; i < n; i++) {
    let t = dest[i];
    if (t > -3) continue;
    let top = 0, x = i;
    while (t <= -3) {
      if (top === stack.length) { const s2 = new Int32Array(2 * top); s2.set(stack); stack = s2; }
      stack[top++] = x;
      x = -3 - t;
      t = dest[x];
    }
    while (top > 0) dest[stack[--top]] = t;
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
 *
 * Water is tracked where it stands: `own[k]` is the water in node k's own layer (a leaf: all it
 * holds), so the water a node holds is the sum of `own` over its subtree — kept in a Fenwick tree
 * over the Euler tour, so that the room left in any node is found in O(log nodes). Water arriving
 * at a node from below (from a full child, or a leaf's own catchment) goes to the node's children
 * that still have room, lowest pit first — entering each at its entry leaf and rising from the
 * lowest node there that is not full — then to the node's own layer; when all is full it climbs to
 * the parent. Full nodes are skipped with a union-find jump to their parent, and a node becomes
 * full once, so the routing costs O(nodes · log nodes).
 * @param direct node → water arriving from the cells that drain to it (leaves only); entry 0 = water
 *               draining straight off the map
 */
export function fillSpillMerge(t: RoutingTree, direct: Float64Array): RoutingResult {
  const { count: K, parent, childStart, children, capacity: cap, layer, entryLeaf, tin, tout } = t;
  const own = new Float64Array(K), excess = new Float64Array(K), mark = new Float64Array(K);
  const full = new Uint8Array(K);
  // "received" as a sum over subtrees of marks: water entering the subtree of s at leaf λ is
  // added at λ and taken off at s's parent, so it counts for every node on the path λ … s.
  for (let k = 1; k < K; k++) mark[k] = direct[k];
  let outflow = direct[0];

  // Fenwick tree over Euler-tour positions (1-based) of the water in each node's own layer
  const fen = new Float64Array(K + 1);
  const add = (k: number, x: number): void => { for (let i = tin[k] + 1; i <= K; i += i & -i) fen[i] += x; };
  const prefix = (i: number): number => { let s = 0; for (; i > 0; i -= i & -i) s += fen[i]; return s; };
  const held = (k: number): number => prefix(tout[k]) - prefix(tin[k]);
  // union-find jump over full nodes: the lowest ancestor (or self) that is not full
  const jump = new Int32Array(K);
  for (let k = 0; k < K; k++) jump[k] = k;
  const lowestOpen = (k: number): number => {
    while (full[k]) {
      const j = jump[k];
      const jj = full[j] ? jump[j] : j;
      jump[k] = jj;
      k = jj;
    }
    return k;
  };
  const setFull = (k: number): void => { full[k] = 1; const p = parent[k]; jump[k] = p > 0 ? p : k; };
  const isLeaf = (k: number): boolean => childStart[k] === childStart[k + 1];

  /**
   * Fill the whole subtree of c (its nodes not yet full), each node's layer to the brim, with water
   * entering it at leaf e. The water climbs from e to c; on the way, every node's children that
   * are not yet full fill from their full sibling over the pass, entering each at its entry leaf
   * and climbing inside it in the same way. That sibling-to-sibling water is booked as received
   * by the child's subtree (mark at its entry leaf, taken off at the node where the siblings meet),
   * so that every node filled here received its room, and the nodes on a path passed the rest on.
   * Each node is filled once: O(nodes filled · log nodes).
   */
  let fillStack = new Int32Array(256);
  const fillSubtree = (c: number, e: number): void => {
    let sp = 0;
    fillStack[sp++] = c; fillStack[sp++] = e;
    while (sp > 0) {
      const from = fillStack[--sp], top = fillStack[--sp];
      if (full[top]) continue;
      // the full nodes below the first open one on the path hold no room
      for (let q = lowestOpen(from); ; q = parent[q]) {
        const a = childStart[q], b = childStart[q + 1];
        for (let i = a; i < b; i++) {
          const ch = children[i];
          if (full[ch]) continue; // full already, or the child on the path (filled just before)
          const r = cap[ch] - held(ch);
          const ce = entryLeaf[ch];
          mark[ce] += r; mark[q] -= r;
          if (sp + 2 > fillStack.length) { const f = new Int32Array(2 * fillStack.length); f.set(fillStack); fillStack = f; }
          fillStack[sp++] = ch; fillStack[sp++] = ce;
        }
        const brim = a === b ? cap[q] : layer[q];
        add(q, brim - own[q]);
        own[q] = brim;
        setFull(q);
        if (q === top) break;
      }
    }
  };

  /**
   * Water x arrives at node y (not full) from below; it is routed inside the subtree of `top` and
   * whatever `top` cannot hold is returned (it leaves over top's pour point).
   */
  const rise = (y: number, x: number, top: number): number => {
    for (;;) {
      if (!(x > 0)) return 0;
      let entered = -1;
      if (isLeaf(y)) {
        const r = cap[y] - own[y];
        if (x < r) { own[y] += x; add(y, x); return 0; }
        own[y] = cap[y];
        add(y, r);
        x -= r;
      } else {
        const a = childStart[y], b = childStart[y + 1];
        for (let i = a; i < b; i++) {
          const c = children[i];
          if (full[c]) continue;
          const r = cap[c] - held(c);
          // water enters c at the cell next to the pass, and from there runs down to its entry leaf
          const e = entryLeaf[c];
          if (x >= r) {
            mark[e] += r; mark[y] -= r;
            fillSubtree(c, e);
            x -= r;
            if (!(x > 0)) return 0;
          } else {
            mark[e] += x; mark[y] -= x;
            entered = lowestOpen(e);
            break;
          }
        }
        if (entered >= 0) { y = entered; continue; }
        const r = layer[y] - own[y];
        if (x < r) { own[y] += x; add(y, x); return 0; }
        own[y] = layer[y];
        add(y, r);
        x -= r;
      }
      setFull(y);
      if (y === top) return x;
      y = parent[y];
    }
  };

  for (let k = 1; k < K; k++) {
    const a = childStart[k], b = childStart[k + 1];
    if (a === b) {
      const d = direct[k];
      const c = cap[k];
      if (d >= c) { own[k] = c; add(k, c); setFull(k); excess[k] = d - c; } else if (d > 0) { own[k] = d; add(k, d); }
    } else {
      let E = 0, allFull = 1;
      for (let q = a; q < b; q++) { const c = children[q]; E += excess[c]; if (!full[c]) allFull = 0; }
      if (E > 0) excess[k] = rise(k, E, k);
      else if (allFull && layer[k] === 0) setFull(k); // children exactly full, a layer of no volume: full too
    }
    if (parent[k] === 0) outflow += excess[k];
  }

  // water held per node: its own layer and its subtree's
  const stored = Float64Array.from(own);
  for (let k = 1; k < K; k++) { const p = parent[k]; if (p > 0) stored[p] += stored[k]; }
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
  if (anyOpen === 0) {
    // nothing to invert
  } else if (uniform) {
    // equal cells: gather the cells of the open layers node by node (two passes in storage order),
    // sort each node's elevations and follow its curve up to the water it holds
    const n = values.length;
    const start = new Int32Array(K + 1);
    for (let i = 0; i < n; i++) { const z = values[i]; if (z === z) { const k = label[i]; if (k > 0 && open[k]) start[k + 1]++; } }
    for (let k = 0; k < K; k++) start[k + 1] += start[k];
    const zs = values instanceof Float32Array ? new Float32Array(start[K]) : new Float64Array(start[K]);
    const pos = start.slice(0, K);
    for (let i = 0; i < n; i++) { const z = values[i]; if (z === z) { const k = label[i]; if (k > 0 && open[k]) zs[pos[k]++] = z; } }
    for (let k = 1; k < K; k++) {
      if (!open[k]) continue;
      const a = start[k], b = start[k + 1];
      if (b - a > 24) zs.subarray(a, b).sort();
      else {
        // short lists (most of them): insertion sort, without the cost of a view and a native call
        for (let i = a + 1; i < b; i++) {
          const x = zs[i];
          let j = i - 1;
          while (j >= a && zs[j] > x) { zs[j + 1] = zs[j]; j--; }
          zs[j + 1] = x;
        }
      }
      let Ak = A[k], AZk = AZ[k];
      const tk = target[k];
      for (let j = a; j < b; j++) {
        const dz = zs[j] - z0;
        if (dz * Ak - AZk >= tk) break;
        Ak += 1;
        AZk += dz;
      }
      level[k] = z0 + (tk + AZk) / Ak;
      open[k] = 0;
    }
  } else {
    orderWalk();
  }
  function orderWalk(): void {
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
    const a = rowArea[(v / width) | 0];
    A[k] += a;
    AZ[k] += a * dz;
  }
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
