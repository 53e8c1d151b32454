// Topology checks on the flattened circuit: ground, dangling nodes, floating groups, source loops and cut-sets.

import type { Circuit, Element } from '../circuit';
import type { Finding, RelatedLocation, Span } from '../types';
import { formatEngineering } from '../fixes/format';
import { netlistSeverity } from './netlist';

/** Related locations listed per finding at most, so a huge floating block does not make a huge finding. */
const MAX_RELATED = 12;
/** Node names listed in a message at most. */
const MAX_NAMED = 6;

/** One terminal of one element: which element, which of its nodes. */
interface Terminal {
  element: number;
  slot: number;
}

/** Disjoint sets with path halving and union by size; iterative, so 100k nodes cost no stack. */
class DisjointSets {
  private readonly parent: Int32Array;
  private readonly size: Int32Array;
  constructor(n: number) {
    this.parent = new Int32Array(n);
    this.size = new Int32Array(n).fill(1);
    for (let i = 0; i < n; i++) this.parent[i] = i;
  }
  find(x: number): number {
    const p = this.parent;
    while (p[x] !== x) {
      p[x] = p[p[x]!]!;
      x = p[x]!;
    }
    return x;
  }
  /** Joins the sets of a and b; false when they were already one set. */
  union(a: number, b: number): boolean {
    let ra = this.find(a);
    let rb = this.find(b);
    if (ra === rb) return false;
    if (this.size[ra]! < this.size[rb]!) [ra, rb] = [rb, ra];
    this.parent[rb] = ra;
    this.size[ra]! += this.size[rb]!;
    return true;
  }
}

/**
 * Joins the node pairs through which an element conducts at DC (capacitors, current sources, gates and sensing
 * inputs do not), pair by pair: no list of pairs per element (20,000 of them at 20,000 elements).
 */
function joinDcPaths(dc: DisjointSets, e: Element, nodeCount: number): void {
  const n = e.nodes;
  switch (e.kind) {
    case 'R':
    case 'L':
    case 'V':
    case 'D':
    case 'E':
    case 'H':
      if (n.length >= 2) joinPair(dc, n[0]!, n[1]!, nodeCount);
      return;
    case 'Q':
      // Collector, base and emitter are joined through the junctions; the substrate is unused at DC.
      if (n.length >= 3) {
        joinPair(dc, n[0]!, n[1]!, nodeCount);
        joinPair(dc, n[1]!, n[2]!, nodeCount);
      }
      return;
    case 'M':
      // Drain, source and bulk conduct (channel and junctions); the gate is insulated.
      if (n.length >= 4) {
        joinPair(dc, n[0]!, n[2]!, nodeCount);
        joinPair(dc, n[2]!, n[3]!, nodeCount);
      }
      return;
  }
}

/** Joins two nodes when both are nodes of the circuit. */
function joinPair(dc: DisjointSets, a: number, b: number, nodeCount: number): void {
  if (inRange(a, nodeCount) && inRange(b, nodeCount)) dc.union(a, b);
}

/** True for elements that force a voltage (a loop of them leaves the loop current undefined). */
function forcesVoltage(e: Element): boolean {
  return e.kind === 'V' || e.kind === 'L' || e.kind === 'E' || e.kind === 'H';
}

/** True for elements whose output is a current (a cut-set of them forces their currents to balance exactly). */
function forcesCurrent(e: Element): boolean {
  return e.kind === 'I' || e.kind === 'F' || e.kind === 'G';
}

/**
 * Topology checks on the flattened circuit: `no-ground-node`, `node-single-connection`,
 * `node-no-dc-path`, `voltage-source-loop` and `current-source-cutset`. Linear in the size
 * of the circuit apart from the path search that names a loop, which runs only when a loop exists.
 */
export function checkConnectivity(circuit: Circuit): Finding[] {
  const findings: Finding[] = [];
  const { elements, nodes } = circuit;
  const nodeCount = nodes.length;
  // Nodes a left-out element connects to: that element's own finding explains them, so no cascade here.
  const detached = new Set(circuit.detachedNodes ?? []);
  if (elements.length === 0 || nodeCount === 0) return findings;

  const terminalAt = (t: Terminal): { uri: string; span: Span } => {
    const o = elements[t.element]!.origin;
    return { uri: o.uri, span: o.nodeSpans?.[t.slot] ?? o.span };
  };
  /** Where an element inside a subcircuit was instantiated from, so a node can be traced to the X card. */
  const viaInstance = (t: Terminal): RelatedLocation[] => {
    const chain = elements[t.element]!.origin.instances;
    if (chain.length === 0) return [];
    const outer = chain[0]!;
    return [{ uri: outer.uri, span: outer.span, message: `\`${elements[t.element]!.name}\` is flattened from instance \`${chain.map((c) => c.name).join('.')}\`.` }];
  };
  const cardOf = (i: number): { uri: string; span: Span } => ({ uri: elements[i]!.origin.uri, span: elements[i]!.origin.span });
  const nameNodes = (list: number[]): string => {
    const shown = list.slice(0, MAX_NAMED).map((k) => `\`${nodes[k]}\``);
    const extra = list.length > MAX_NAMED ? ` and ${list.length - MAX_NAMED} more` : '';
    return shown.join(', ') + extra;
  };
  const nameElements = (list: number[]): string => {
    const shown = list.slice(0, MAX_NAMED).map((k) => `\`${elements[k]!.name}\``);
    const extra = list.length > MAX_NAMED ? ` and ${list.length - MAX_NAMED} more` : '';
    return shown.join(', ') + extra;
  };

  // Terminal counts and the first terminal of each node.
  const count = new Int32Array(nodeCount);
  const firstElement = new Int32Array(nodeCount).fill(-1);
  const firstSlot = new Int32Array(nodeCount);
  for (let i = 0; i < elements.length; i++) {
    const ns = elements[i]!.nodes;
    for (let s = 0; s < ns.length; s++) {
      const k = ns[s]!;
      if (!(k >= 0 && k < nodeCount)) continue;
      count[k]!++;
      if (firstElement[k] === -1) {
        firstElement[k] = i;
        firstSlot[k] = s;
      }
    }
  }
  const first = (k: number): Terminal => ({ element: firstElement[k]!, slot: firstSlot[k]! });

  const hasGround = count[0]! > 0;
  if (!hasGround) {
    findings.push({
      code: 'no-ground-node',
      severity: netlistSeverity('no-ground-node'),
      message: 'Nothing connects to ground (node 0 or gnd), so no node voltage is defined; connect the circuit\'s reference node to 0.',
      ...cardOf(0),
      data: { elementCount: elements.length, nodeCount: nodeCount - 1 },
    });
  }

  // DC connectivity.
  const dc = new DisjointSets(nodeCount);
  for (let i = 0; i < elements.length; i++) joinDcPaths(dc, elements[i]!, nodeCount);

  // Groups of nodes not DC-connected to ground, in order of first appearance.
  const floating = new Set<number>();
  if (hasGround) {
    const groundRoot = dc.find(0);
    const groups = new Map<number, number[]>();
    for (let k = 1; k < nodeCount; k++) {
      if (count[k] === 0) continue;
      const r = dc.find(k);
      if (r === groundRoot) continue;
      let g = groups.get(r);
      if (!g) groups.set(r, (g = []));
      g.push(k);
    }
    if (groups.size > 0) {
      // The current sources that cross each group's boundary, with the net current they push into the group.
      const crossing = new Map<number, { sources: number[]; net: number; netKnown: boolean }>();
      for (let i = 0; i < elements.length; i++) {
        const e = elements[i]!;
        if (!forcesCurrent(e) || e.nodes.length < 2) continue;
        const [p, m] = [e.nodes[0]!, e.nodes[1]!];
        const rp = dc.find(p);
        const rm = dc.find(m);
        if (rp === rm) continue;
        for (const [r, sign] of [[rp, -1], [rm, 1]] as const) {
          if (!groups.has(r)) continue;
          let c = crossing.get(r);
          if (!c) crossing.set(r, (c = { sources: [], net: 0, netKnown: true }));
          c.sources.push(i);
          // An I source drives its current out of the plus node, through itself, into the minus node.
          if (e.kind === 'I') c.net += sign * e.dc;
          else c.netKnown = false;
        }
      }
      for (const [root, group] of groups) {
        for (const k of group) floating.add(k);
        if (detached.size > 0 && group.some((k) => detached.has(nodes[k]!))) continue;
        const at = terminalAt(first(group[0]!));
        const related: RelatedLocation[] = group.slice(1, MAX_RELATED + 1).map((k) => ({
          ...terminalAt(first(k)),
          message: `Node \`${nodes[k]}\` is in the same group.`,
        }));
        const cut = crossing.get(root);
        const plural = group.length > 1;
        const subject = `${plural ? 'Nodes' : 'Node'} ${nameNodes(group)}`;
        if (cut) {
          const net = cut.netKnown ? ` (their net current into the group is ${formatEngineering(cut.net, { unit: 'A' })})` : '';
          findings.push({
            code: 'current-source-cutset',
            severity: netlistSeverity('current-source-cutset'),
            message:
              `${subject} ${plural ? 'are' : 'is'} joined to the rest of the circuit only through the current source${cut.sources.length > 1 ? 's' : ''} ${nameElements(cut.sources)}${net}; ` +
              `at DC their currents would have to balance exactly, so the ${plural ? 'node voltages are' : 'node voltage is'} not determined. Add a DC path (for example a resistor) from the group to the rest of the circuit.`,
            ...at,
            related: [
              ...cut.sources.slice(0, MAX_RELATED).map((i) => ({ ...cardOf(i), message: `Current source \`${elements[i]!.name}\` crosses the boundary.` })),
              ...related,
            ],
            data: { nodes: group.slice(0, 100).map((k) => nodes[k]), sources: cut.sources.map((i) => elements[i]!.name), ...(cut.netKnown ? { netCurrent: cut.net } : {}) },
          });
        } else {
          const single = group.length === 1 && count[group[0]!] === 1 ? ' It connects to only one terminal.' : '';
          findings.push({
            code: 'node-no-dc-path',
            severity: netlistSeverity('node-no-dc-path'),
            message:
              `${subject} ${plural ? 'have' : 'has'} no DC path to ground: capacitors are open at DC, and MOSFET gates and controlled-source inputs draw no current, so the ${plural ? 'voltages are' : 'voltage is'} not determined.${single}`,
            ...at,
            related: [...viaInstance(first(group[0]!)), ...related],
            data: { nodes: group.slice(0, 100).map((k) => nodes[k]) },
          });
        }
      }
    }
  }

  // Nodes with one terminal (those already reported as floating are not repeated).
  for (let k = 1; k < nodeCount; k++) {
    if (count[k] !== 1 || floating.has(k) || detached.has(nodes[k]!)) continue;
    const t = first(k);
    const e = elements[t.element]!;
    findings.push({
      code: 'node-single-connection',
      severity: netlistSeverity('node-single-connection'),
      message: `Node \`${nodes[k]}\` connects only to \`${e.name}\`; a node with one terminal is usually a typo in a node name or a missing connection.`,
      ...terminalAt(t),
      ...(e.origin.instances.length > 0 ? { related: viaInstance(t) } : {}),
      data: { node: nodes[k], element: e.name },
    });
  }

  // Loops of voltage-forcing elements.
  const loops = new DisjointSets(nodeCount);
  // Adjacency of the spanning forest, allocated only for nodes that voltage-forcing elements touch.
  const forest = new Map<number, { to: number; element: number }[]>();
  const edgesOf = (k: number) => {
    let list = forest.get(k);
    if (!list) forest.set(k, (list = []));
    return list;
  };
  for (let i = 0; i < elements.length; i++) {
    const e = elements[i]!;
    if (!forcesVoltage(e) || e.nodes.length < 2) continue;
    const [a, b] = [e.nodes[0]!, e.nodes[1]!];
    if (!inRange(a, nodeCount) || !inRange(b, nodeCount)) continue;
    if (loops.union(a, b)) {
      edgesOf(a).push({ to: b, element: i });
      edgesOf(b).push({ to: a, element: i });
      continue;
    }
    const members = a === b ? [i] : [...pathInForest(forest, a, b), i].sort((x, y) => x - y);
    const described = members.map((m) => elements[m]!.kind);
    const hasInductor = described.includes('L');
    findings.push({
      code: 'voltage-source-loop',
      severity: netlistSeverity('voltage-source-loop'),
      message:
        a === b
          ? `\`${e.name}\` has both ends on node \`${nodes[a]}\`, which shorts it; its current is not determined.`
          : `${nameElements(members)} form a loop made only of voltage sources${hasInductor ? ' and inductors (an inductor is a short at DC)' : ''}; the current around the loop is not determined${
              described.every((k) => k === 'V') ? ', and the loop voltages must sum exactly to zero' : ''
            }.`,
      ...cardOf(i),
      related: members
        .filter((m) => m !== i)
        .slice(0, MAX_RELATED)
        .map((m) => ({ ...cardOf(m), message: `\`${elements[m]!.name}\` is part of the loop.` })),
      data: { elements: members.map((m) => elements[m]!.name) },
    });
  }
  return findings;
}

function inRange(k: number, n: number): boolean {
  return Number.isInteger(k) && k >= 0 && k < n;
}

/** The elements on the path from a to b in a forest (breadth-first; the path exists because a and b share a tree). */
function pathInForest(forest: Map<number, { to: number; element: number }[]>, a: number, b: number): number[] {
  const via = new Map<number, { from: number; element: number }>();
  via.set(a, { from: -1, element: -1 });
  const queue = [a];
  for (let q = 0; q < queue.length; q++) {
    const x = queue[q]!;
    if (x === b) break;
    for (const edge of forest.get(x) ?? []) {
      if (via.has(edge.to)) continue;
      via.set(edge.to, { from: x, element: edge.element });
      queue.push(edge.to);
    }
  }
  const path: number[] = [];
  for (let x = b; x !== a; ) {
    const step = via.get(x);
    if (!step) break;
    path.push(step.element);
    x = step.from;
  }
  return path.reverse();
}
