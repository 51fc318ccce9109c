/**
 * Disconnectivity graph (Becker & Karplus, J. Chem. Phys. 106, 1495 (1997)) from the basin
 * hierarchy: each minimum is a leaf at its energy; two groups of basins join at the energy of the
 * transition state where their sublevel components merge (an inner node of the simplified join
 * tree). The layout places the leaves left to right — at every join, the branch holding the deeper
 * minimum first — and each join midway between its outermost branches.
 */
import type { HierarchyNode } from './barriers.js';

export interface GraphNode {
  id: number;
  kind: HierarchyNode['kind'];
  ref: string | null;
  energy: number | null;
  parent: number | null;
  children: number[];
  /** Horizontal position: leaves at 0, 1, 2, …; joins between their branches. */
  x: number;
  /** Lowest energy in the subtree. */
  lowest: number;
}

export interface DisconnectivityLayout {
  nodes: GraphNode[];
  /** Leaf node ids, left to right. */
  leafOrder: number[];
  roots: number[];
}

export function layoutDisconnectivity(hierarchy: HierarchyNode[]): DisconnectivityLayout {
  const nodes: GraphNode[] = hierarchy.map((h) => ({ ...h, children: [...h.children], x: 0, lowest: h.energy ?? -Infinity }));
  // children come before parents in the hierarchy, so one pass computes the subtree minima
  for (const n of nodes) for (const c of n.children) n.lowest = Math.min(n.lowest, nodes[c].lowest);
  for (const n of nodes) n.children.sort((a, b) => nodes[a].lowest - nodes[b].lowest || a - b);
  const roots = nodes.filter((n) => n.parent === null).sort((a, b) => a.lowest - b.lowest).map((n) => n.id);
  const leafOrder: number[] = [];
  const place = (root: number) => {
    // iterative post-order
    const stack: [number, number][] = [[root, 0]];
    while (stack.length) {
      const top = stack[stack.length - 1];
      const n = nodes[top[0]];
      if (n.children.length === 0) {
        n.x = leafOrder.length;
        leafOrder.push(n.id);
        stack.pop();
      } else if (top[1] < n.children.length) {
        stack.push([n.children[top[1]++], 0]);
      } else {
        n.x = (nodes[n.children[0]].x + nodes[n.children[n.children.length - 1]].x) / 2;
        stack.pop();
      }
    }
  };
  for (const r of roots) place(r);
  return { nodes, leafOrder, roots };
}
