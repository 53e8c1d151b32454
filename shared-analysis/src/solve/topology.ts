// Structural checks before any factorisation: nodes with no DC path to ground and loops of voltage-defining branches.

import type { Circuit, Element } from '../circuit';
import { deviceKindOf } from '../devices/registry';

/** A set of nodes whose voltage the circuit does not define at DC. */
export interface FloatingGroup {
  /** Node indices (never ground). */
  nodes: number[];
  /** Indices of the elements touching those nodes. */
  elements: number[];
}

/** A loop made only of branches that each fix a voltage (sources, inductors, shorts): its current is undefined. */
export interface VoltageLoop {
  elements: number[];
}

class UnionFind {
  private readonly parent: Int32Array;
  constructor(n: number) {
    this.parent = new Int32Array(n);
    for (let i = 0; i < n; i++) this.parent[i] = i;
  }
  find(a: number): number {
    let r = a;
    while (this.parent[r] !== r) r = this.parent[r];
    while (this.parent[a] !== r) {
      const next = this.parent[a];
      this.parent[a] = r;
      a = next;
    }
    return r;
  }
  union(a: number, b: number): boolean {
    const ra = this.find(a);
    const rb = this.find(b);
    if (ra === rb) return false;
    this.parent[ra] = rb;
    return true;
  }
}

/**
 * Joins the node pairs through which an element conducts at DC (a junction's robustness conductance counts; a MOS
 * gate and bulk do not). Two-terminal kinds join their nodes directly: no list of pairs for each of them.
 */
function uniteConducting(uf: UnionFind, el: Element, resistance: number): void {
  const n = el.nodes;
  switch (el.kind) {
    case 'R':
      if (!(Number.isNaN(resistance) || resistance === Infinity)) uf.union(n[0], n[1]);
      return;
    case 'L':
    case 'V':
    case 'E':
    case 'H':
      uf.union(n[0], n[1]);
      return;
    default:
      // Nonlinear kinds say which of their nodes they connect; C, I, G and F conduct nothing at DC, and anything unrecognised is treated the same way.
      // Handed straight to the union-find: no list of pairs is made per device.
      deviceKindOf(el.kind)?.dcPaths(el, uf);
  }
}

/** Whether an element fixes the voltage between its first two nodes (`resistance` overrides a resistor's netlist value). */
export function isVoltageDefining(el: Element, resistance?: number): boolean {
  return el.kind === 'V' || el.kind === 'L' || el.kind === 'E' || el.kind === 'H' || (el.kind === 'B' && el.output === 'V') || (el.kind === 'R' && (resistance ?? el.resistance) === 0);
}

/** Resistance of element `i` for one solve (a per-solve override, else the netlist value); `undefined` means "as written". */
export type ResistanceOf = (element: number) => number | undefined;

/**
 * Groups of nodes with no DC path to ground, with the elements that touch them. `skip` lists
 * elements left out of the solve; `resistanceOf` gives per-solve resistor values.
 */
export function findFloatingGroups(circuit: Circuit, skip: Set<number>, resistanceOf?: ResistanceOf): FloatingGroup[] {
  const n = Math.max(1, circuit.nodes.length);
  const uf = new UnionFind(n);
  const elements = circuit.elements;
  for (let i = 0; i < elements.length; i++) {
    const el = elements[i];
    if (skip.has(i)) continue;
    uniteConducting(uf, el, el.kind === 'R' ? (resistanceOf?.(i) ?? el.resistance) : 0);
  }
  const groundRoot = uf.find(0);
  const groups = new Map<number, FloatingGroup>();
  for (let node = 1; node < n; node++) {
    const r = uf.find(node);
    if (r === groundRoot) continue;
    let g = groups.get(r);
    if (!g) {
      g = { nodes: [], elements: [] };
      groups.set(r, g);
    }
    g.nodes.push(node);
  }
  if (groups.size === 0) return [];
  circuit.elements.forEach((el, i) => {
    if (skip.has(i)) return;
    const seen = new Set<number>();
    for (const node of el.nodes) {
      if (node <= 0 || node >= n) continue;
      const g = groups.get(uf.find(node));
      if (g && !seen.has(uf.find(node))) {
        seen.add(uf.find(node));
        g.elements.push(i);
      }
    }
  });
  return [...groups.values()];
}

/** Every loop closed only by voltage-defining branches (one loop reported per redundant branch). */
export function findVoltageLoops(circuit: Circuit, skip: Set<number>, resistanceOf?: ResistanceOf): VoltageLoop[] {
  const n = Math.max(1, circuit.nodes.length);
  const uf = new UnionFind(n);
  // Lists are made only for nodes a voltage-defining branch touches (few, in most circuits).
  const adjacency: ({ to: number; element: number }[] | undefined)[] = new Array(n);
  const loops: VoltageLoop[] = [];
  circuit.elements.forEach((el, i) => {
    if (skip.has(i) || !isVoltageDefining(el, el.kind === 'R' ? resistanceOf?.(i) : undefined)) return;
    const [a, b] = el.nodes;
    if (!uf.union(a, b)) {
      loops.push({ elements: [...pathBetween(adjacency, a, b), i] });
      return;
    }
    (adjacency[a] ??= []).push({ to: b, element: i });
    (adjacency[b] ??= []).push({ to: a, element: i });
  });
  return loops;
}

/** Elements along the tree path from a to b in a forest (breadth-first). Empty when a === b. */
function pathBetween(adjacency: ({ to: number; element: number }[] | undefined)[], a: number, b: number): number[] {
  if (a === b) return [];
  const via = new Map<number, { from: number; element: number }>();
  via.set(a, { from: -1, element: -1 });
  const queue = [a];
  for (let q = 0; q < queue.length; q++) {
    const cur = queue[q];
    if (cur === b) break;
    for (const e of adjacency[cur] ?? []) {
      if (via.has(e.to)) continue;
      via.set(e.to, { from: cur, element: e.element });
      queue.push(e.to);
    }
  }
  const path: number[] = [];
  let cur = b;
  while (cur !== a) {
    const step = via.get(cur);
    if (!step) return path;
    path.push(step.element);
    cur = step.from;
  }
  return path.reverse();
}
