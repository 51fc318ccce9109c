/**
 * Merge-tree plot: the level on the vertical axis (low at the bottom), one column per leaf, each
 * branch a vertical stem from its own level up to the level where it joins its parent, and a
 * horizontal bar at that level across the branches that meet there. Stems may be drawn thicker
 * for a weight (e.g. the volume a depression holds). Leaves at −∞ (the outside) sit below the axis.
 */
import { marker, type MarkerKind } from './markers.js';
import { esc, n, titleDesc, wrapText } from './svg.js';
import { Linear, ticks, fmtNum, padded } from './scale.js';
import { THEME } from './theme.js';
import { FONT } from './map.js';

export interface TreeNodeIn {
  id: number;
  /** Parent id, or −1 for a root. */
  parent: number;
  /** Level; −Infinity for the outside vertex. */
  value: number;
  kind: MarkerKind;
  /** Link key shared with the map and tables (optional). */
  key?: string;
  title: string;
  label?: string;
  /** Stem weight (≥ 0), e.g. volume. */
  weight?: number;
  /** Ranking for keeping leaves when the tree is too large (higher = more important). */
  importance?: number;
  /** For a root: the level where its stem ends (default: the top of the plot), with a marker there. */
  top?: number;
  cap?: { kind: MarkerKind; title: string; angle?: number };
}

export interface TreeSpec {
  id: string;
  title: string;
  desc: string;
  nodes: TreeNodeIn[];
  valueLabel: string;
  notes: string[];
  weightLabel?: string;
}

/** Children lists and a post-order (children before parents) of a forest given by parent ids. */
export function forest(nodes: readonly TreeNodeIn[]): { index: Map<number, number>; kids: number[][]; roots: number[]; post: number[] } {
  const index = new Map<number, number>();
  nodes.forEach((nd, i) => index.set(nd.id, i));
  const kids: number[][] = nodes.map(() => []);
  const roots: number[] = [];
  nodes.forEach((nd, i) => {
    const p = nd.parent >= 0 ? index.get(nd.parent) : undefined;
    if (p === undefined) roots.push(i); else kids[p].push(i);
  });
  const post: number[] = [];
  for (const r of roots) {
    const stack: [number, number][] = [[r, 0]];
    while (stack.length) {
      const top = stack[stack.length - 1];
      if (top[1] < kids[top[0]].length) stack.push([kids[top[0]][top[1]++], 0]);
      else { post.push(top[0]); stack.pop(); }
    }
  }
  return { index, kids, roots, post };
}

/**
 * The tree restricted to the leaves for which `keep` holds: a node stays when it is a kept leaf or
 * when two or more of its children's subtrees hold kept leaves; other inner nodes are contracted.
 */
export function reduceTree(nodes: readonly TreeNodeIn[], keep: (nd: TreeNodeIn) => boolean): TreeNodeIn[] {
  const { kids, post } = forest(nodes);
  const rep = new Int32Array(nodes.length).fill(-1); // index of the surviving node standing for this subtree
  const kept: boolean[] = nodes.map(() => false);
  const newParent = new Map<number, number>();
  for (const i of post) {
    if (kids[i].length === 0) {
      if (keep(nodes[i])) { rep[i] = i; kept[i] = true; }
      continue;
    }
    const live = kids[i].map((c) => rep[c]).filter((r) => r >= 0);
    if (live.length >= 2) {
      kept[i] = true;
      rep[i] = i;
      for (const r of live) newParent.set(r, i);
    } else if (live.length === 1) rep[i] = live[0];
  }
  const out: TreeNodeIn[] = [];
  nodes.forEach((nd, i) => {
    if (!kept[i]) return;
    const p = newParent.get(i);
    out.push({ ...nd, parent: p === undefined ? -1 : nodes[p].id });
  });
  return out;
}

/** Keep at most `maxLeaves` leaves, the most important ones (ties: lower level first). */
export function limitLeaves(nodes: readonly TreeNodeIn[], maxLeaves: number): { nodes: TreeNodeIn[]; leaves: number; shown: number } {
  const { kids } = forest(nodes);
  const leaves = nodes.filter((_, i) => kids[i].length === 0);
  if (leaves.length <= maxLeaves) return { nodes: [...nodes], leaves: leaves.length, shown: leaves.length };
  const ranked = [...leaves].sort((a, b) => (b.importance ?? 0) - (a.importance ?? 0) || a.value - b.value);
  const keepIds = new Set(ranked.slice(0, maxLeaves).map((l) => l.id));
  return { nodes: reduceTree(nodes, (nd) => keepIds.has(nd.id)), leaves: leaves.length, shown: maxLeaves };
}

export interface TreeLayout {
  /** Node index → column position (leaf order), and level. */
  x: Float64Array;
  leafCount: number;
  kids: number[][];
  roots: number[];
  /** Lowest finite level in each subtree. */
  low: Float64Array;
}

/** Leaves left to right by depth-first order, children sorted by the lowest level in their subtree; inner nodes centred over their children. */
export function layoutTree(nodes: readonly TreeNodeIn[]): TreeLayout {
  const { kids, roots, post } = forest(nodes);
  const low = new Float64Array(nodes.length);
  for (const i of post) {
    let m = nodes[i].value;
    for (const c of kids[i]) if (low[c] < m) m = low[c];
    low[i] = m;
  }
  for (const k of kids) k.sort((a, b) => low[a] - low[b] || nodes[a].id - nodes[b].id);
  roots.sort((a, b) => low[a] - low[b]);
  const x = new Float64Array(nodes.length);
  let next = 0;
  const visit = (r: number) => {
    const stack: [number, number][] = [[r, 0]];
    while (stack.length) {
      const top = stack[stack.length - 1];
      const i = top[0];
      if (kids[i].length === 0) { x[i] = next++; stack.pop(); continue; }
      if (top[1] < kids[i].length) { stack.push([kids[i][top[1]++], 0]); continue; }
      x[i] = (x[kids[i][0]] + x[kids[i][kids[i].length - 1]]) / 2;
      stack.pop();
    }
  };
  for (const r of roots) visit(r);
  return { x, leafCount: next, kids, roots, low };
}

export interface TreeGeometry { fw: number; fh: number; ml: number; mt: number; pw: number; ph: number }

/** The tree plot as an <svg>; `nodes` should already be limited to a readable number of leaves. */
export function treeSvg(spec: TreeSpec): { svg: string; markers: number; geometry: TreeGeometry } {
  const nodes = spec.nodes;
  const L = layoutTree(nodes);
  const finite = nodes.flatMap((nd) => (nd.top !== undefined ? [nd.value, nd.top] : [nd.value])).filter((v) => Number.isFinite(v));
  const [lo, hi] = finite.length ? padded(Math.min(...finite), Math.max(...finite), 0.06) : [0, 1];
  const hasOutside = nodes.some((nd) => nd.value === -Infinity);
  const ml = 64, mt = 14, mr = 14;
  const pw = Math.max(300, Math.min(560, 40 + L.leafCount * 14));
  const ph = 330;
  const mb = hasOutside ? 56 : 40;
  const fw = ml + pw + mr;
  const noteLines = spec.notes.flatMap((t) => wrapText(t, Math.floor((fw - 24) / 6.6)));
  const fh = mt + ph + mb + noteLines.length * 16 + 8;
  const y = new Linear(lo, hi, mt + ph, mt);
  const xs = new Linear(-0.5, Math.max(0.5, L.leafCount - 0.5), ml + 8, ml + pw - 8);
  const yOutside = mt + ph + 22;
  const yOf = (v: number) => (v === -Infinity ? yOutside : v === Infinity ? mt : y.map(v));
  const maxW = Math.max(0, ...nodes.map((nd) => nd.weight ?? 0));
  const stemW = (nd: TreeNodeIn) => (maxW > 0 && nd.weight !== undefined ? 1.2 + 5 * Math.sqrt(Math.max(0, nd.weight) / maxW) : 1.5);

  const parts: string[] = [];
  parts.push(`<svg xmlns="http://www.w3.org/2000/svg" class="fig fig-tree" id="${spec.id}" viewBox="0 0 ${fw} ${fh}" width="${fw}" height="${fh}" role="img" aria-labelledby="${spec.id}-title ${spec.id}-desc" font-family="${esc(FONT)}">`);
  parts.push(titleDesc(spec.id, spec.title, spec.desc));
  parts.push(`<rect width="${fw}" height="${fh}" fill="${THEME.panel}"/>`);
  // axis
  const ax: string[] = [];
  for (const v of ticks(lo, hi, 6)) {
    const yy = y.map(v);
    ax.push(`<line x1="${ml - 5}" y1="${n(yy)}" x2="${ml}" y2="${n(yy)}"/><line x1="${ml}" y1="${n(yy)}" x2="${ml + pw}" y2="${n(yy)}" stroke="${THEME.border}" stroke-dasharray="2 3"/><text x="${ml - 8}" y="${n(yy + 4)}" text-anchor="end" stroke="none">${esc(fmtNum(v, 6))}</text>`);
  }
  ax.push(`<line x1="${ml}" y1="${mt}" x2="${ml}" y2="${mt + ph}"/>`);
  if (hasOutside) ax.push(`<text x="${ml - 8}" y="${n(yOutside + 4)}" text-anchor="end" stroke="none">−∞</text>`);
  ax.push(`<text transform="translate(14 ${n(mt + ph / 2)}) rotate(-90)" text-anchor="middle" stroke="none">${esc(spec.valueLabel)}</text>`);
  parts.push(`<g class="axes" font-size="12" fill="${THEME.text}" stroke="${THEME.text}">${ax.join('')}</g>`);
  // stems and bars
  const edges: string[] = [];
  const idx = new Map(nodes.map((nd, i) => [nd.id, i] as [number, number]));
  nodes.forEach((nd, i) => {
    const xx = xs.map(L.x[i]);
    const y0 = yOf(nd.value);
    const p = nd.parent >= 0 ? idx.get(nd.parent) ?? -1 : -1;
    const y1 = p >= 0 ? yOf(nodes[p].value) : nd.top !== undefined ? yOf(nd.top) : mt;
    const dash = nd.value === -Infinity ? ' stroke-dasharray="4 3"' : '';
    edges.push(`<line class="stem"${nd.key ? ` data-k="${esc(nd.key)}"` : ''} x1="${n(xx)}" y1="${n(y0)}" x2="${n(xx)}" y2="${n(y1)}" stroke-width="${n(stemW(nd))}"${dash}/>`);
    const k = L.kids[i];
    if (k.length >= 2) {
      const xa = xs.map(L.x[k[0]]), xb = xs.map(L.x[k[k.length - 1]]);
      edges.push(`<line class="bar" x1="${n(xa)}" y1="${n(y0)}" x2="${n(xb)}" y2="${n(y0)}" stroke-width="1.5"/>`);
    }
  });
  parts.push(`<g class="edges" stroke="${THEME.text}" stroke-linecap="round">${edges.join('')}</g>`);
  // node markers
  const mk: string[] = [];
  nodes.forEach((nd, i) => {
    mk.push(marker({ key: nd.key ?? `tree-${nd.id}`, kind: nd.kind, x: xs.map(L.x[i]), y: yOf(nd.value), scale: 1, radius: 5, title: nd.title, label: nd.label }));
    if (nd.cap && nd.parent < 0 && nd.top !== undefined) {
      mk.push(marker({ key: nd.key ?? `tree-${nd.id}`, kind: nd.cap.kind, x: xs.map(L.x[i]), y: yOf(nd.top), scale: 1, radius: 5, angle: nd.cap.angle, title: nd.cap.title, extraClass: 'cap' }));
    }
  });
  parts.push(`<g class="markers">${mk.join('')}</g>`);
  let ny = mt + ph + mb;
  const notes = noteLines.map((t) => { const s = `<text x="16" y="${n(ny)}" fill="${THEME.muted}">${esc(t)}</text>`; ny += 16; return s; });
  parts.push(`<g class="notes" font-size="12">${notes.join('')}</g>`);
  parts.push('</svg>');
  return { svg: parts.join(''), markers: mk.length, geometry: { fw, fh, ml, mt, pw, ph } };
}

/**
 * The same reduction as reduceTree on typed arrays, for trees numbered children before parents
 * (a merge-tree sweep) or visited in such an `order`: one pass, no objects per node. Returns the surviving node numbers in
 * increasing order and, for each, its surviving parent (−1 for a root).
 */
export function reduceSweepTree(parent: Int32Array, childCount: Int32Array, keepLeaf: (node: number) => boolean, order?: Int32Array): { nodes: Int32Array; parent: Int32Array } {
  const n = parent.length;
  // position of each node in the visiting order (the identity without one: no array needed)
  let pos: Int32Array | null = null;
  if (order) { pos = new Int32Array(n); for (let q = 0; q < n; q++) pos[order[q]] = q; }
  const rep = new Int32Array(n).fill(-1);
  const liveCount = new Int32Array(n), liveHead = new Int32Array(n).fill(-1), nextLive = new Int32Array(n).fill(-1);
  const newParent = new Int32Array(n).fill(-1);
  const kept = new Uint8Array(n);
  for (let q = 0; q < n; q++) {
    const k = order ? order[q] : q;
    if (childCount[k] === 0) {
      if (keepLeaf(k)) { rep[k] = k; kept[k] = 1; }
    } else if (liveCount[k] >= 2) {
      kept[k] = 1; rep[k] = k;
      for (let r = liveHead[k]; r >= 0; r = nextLive[r]) newParent[r] = k;
    } else if (liveCount[k] === 1) rep[k] = liveHead[k];
    const p = parent[k];
    if (p >= 0 && rep[k] >= 0) {
      if ((pos ? pos[p] : p) <= q) throw new Error('reduceSweepTree: parents must come after their children');
      nextLive[rep[k]] = liveHead[p]; liveHead[p] = rep[k]; liveCount[p]++;
    }
  }
  const nodes: number[] = [];
  for (let k = 0; k < n; k++) if (kept[k]) nodes.push(k);
  return { nodes: Int32Array.from(nodes), parent: Int32Array.from(nodes, (k) => newParent[k]) };
}
