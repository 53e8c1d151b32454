// What resistor sizing looks up in a circuit, built once per circuit: names, node incidence and the nodes the supplies fix.

import type { Circuit, Element } from '../circuit';
import type { Structure } from '../structures/types';

/** Look-ups sizing needs per target, each built once per (immutable) Circuit object. */
export interface CircuitIndex {
  /** Lower-case name -> the first element of that name (names compare without letter case, as in the netlist). */
  byName: Map<string, Element>;
  /** Element -> its index in `circuit.elements`. */
  position: Map<Element, number>;
  /** Node k's elements are `touching[touchStart[k] .. touchStart[k + 1])` (element indices, each once per node). */
  touchStart: Int32Array;
  touching: Int32Array;
  /** 1 for nodes whose voltage ideal voltage sources fix against ground (ground included). */
  fixed: Uint8Array;
  /** The V sources whose both ends are fixed (they set the rails). */
  pinning: Element[];
  /** False when the circuit cannot be split into blocks: controlled sources, an invalid node, an unusable source value. */
  splittable: boolean;
}

const cache = new WeakMap<Circuit, CircuitIndex>();

/** The index of `circuit`, built on first use and kept while the circuit lives. */
export function circuitIndex(circuit: Circuit): CircuitIndex {
  let index = cache.get(circuit);
  if (!index) cache.set(circuit, (index = build(circuit)));
  return index;
}

/** The element named `name` (any letter case), the first one when several share it. */
export function elementNamed(circuit: Circuit, name: string): Element | undefined {
  return circuitIndex(circuit).byName.get(name.toLowerCase());
}

const structuresById = new WeakMap<Structure[], { count: number; byId: Map<string, Structure> }>();

/**
 * The structure of `structures` with `id`, through a map built once per list (a scan per target
 * made a thousand targets cost targets × structures); built again if the list has grown since.
 */
export function structureWithId(structures: Structure[], id: string): Structure | undefined {
  let index = structuresById.get(structures);
  if (!index || index.count !== structures.length) {
    const byId = new Map<string, Structure>();
    for (const s of structures) if (!byId.has(s.id)) byId.set(s.id, s);
    structuresById.set(structures, (index = { count: structures.length, byId }));
  }
  return index.byId.get(id);
}

function build(circuit: Circuit): CircuitIndex {
  const n = circuit.nodes.length;
  const els = circuit.elements;
  const byName = new Map<string, Element>();
  const position = new Map<Element, number>();
  els.forEach((e, i) => {
    const key = e.name.toLowerCase();
    if (!byName.has(key)) byName.set(key, e);
    position.set(e, i);
  });
  const valid = (e: Element): boolean => e.nodes.every((k) => Number.isInteger(k) && k >= 0 && k < n);
  const vs = els.filter((e) => e.kind === 'V');
  const splittable =
    n > 0 && !els.some((e) => e.kind === 'E' || e.kind === 'G' || e.kind === 'F' || e.kind === 'H') && els.every(valid) && vs.every((v) => Number.isFinite(v.dc));

  // Node -> elements touching it, each element once per node, in element order.
  const touchStart = new Int32Array(n + 1);
  const count = (visit: (k: number, i: number) => void) => {
    if (!splittable) return;
    els.forEach((e, i) => {
      for (let s = 0; s < e.nodes.length; s++) {
        const k = e.nodes[s];
        if (e.nodes.indexOf(k) === s) visit(k, i);
      }
    });
  };
  count((k) => touchStart[k + 1]++);
  for (let k = 0; k < n; k++) touchStart[k + 1] += touchStart[k];
  const touching = new Int32Array(touchStart[n]);
  const fill = touchStart.slice(0, n);
  count((k, i) => (touching[fill[k]++] = i));

  // Nodes fixed by V sources to ground, to a fixed point.
  const fixed = new Uint8Array(n);
  if (n > 0) fixed[0] = 1;
  for (let changed = true; changed && splittable; ) {
    changed = false;
    for (const v of vs) {
      const [a, b] = v.nodes;
      if (fixed[a] && !fixed[b]) (fixed[b] = 1), (changed = true);
      else if (fixed[b] && !fixed[a]) (fixed[a] = 1), (changed = true);
    }
  }
  const pinning = splittable ? vs.filter((v) => fixed[v.nodes[0]] && fixed[v.nodes[1]]) : [];
  return { byName, position, touchStart, touching, fixed, pinning, splittable };
}
