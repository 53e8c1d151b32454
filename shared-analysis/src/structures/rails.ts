// Finds the supply rails: nodes whose potential is fixed relative to ground by voltage sources alone.

import type { Circuit } from '../circuit';
import type { Rail } from './types';

/**
 * Every node pinned to a fixed potential by independent voltage sources, walking outwards
 * from ground through V sources (and inductors, which are 0 V shorts at DC). Chains such as
 * `V1 a 0 5` + `V2 b a 3` give `b` = 8 V with sources [V1, V2]. Ground itself is the first
 * entry, `{ node: '0', volts: 0, sources: [] }`, so a resistor to ground counts as fed from a rail.
 * A node reached twice with different potentials (a loop of sources that disagree) keeps the
 * first value; the conflict is the netlist checks' business, not this walk's.
 */
export function findRails(circuit: Circuit): Rail[] {
  const volts = new Map<number, number>([[0, 0]]);
  const sources = new Map<number, string[]>([[0, []]]);
  const order: number[] = [0];
  const links: { a: number; b: number; dc: number; name: string }[] = [];
  // Indexed: this runs once per circuit, in code V8 has not optimised, where a for-of makes an object per element.
  for (let k = 0; k < circuit.elements.length; k++) {
    const e = circuit.elements[k]!;
    if (e.kind === 'V' && Number.isFinite(e.dc)) links.push({ a: e.nodes[0], b: e.nodes[1], dc: e.dc, name: e.name });
    else if (e.kind === 'L') links.push({ a: e.nodes[0], b: e.nodes[1], dc: 0, name: e.name });
  }
  // Breadth-first over the source graph; each pass fixes at least one new node or stops.
  let changed = true;
  while (changed) {
    changed = false;
    for (const l of links) {
      const va = volts.get(l.a);
      const vb = volts.get(l.b);
      if (va === undefined && vb !== undefined) {
        volts.set(l.a, vb + l.dc);
        sources.set(l.a, [...(sources.get(l.b) ?? []), l.name]);
        order.push(l.a);
        changed = true;
      } else if (vb === undefined && va !== undefined) {
        volts.set(l.b, va - l.dc);
        sources.set(l.b, [...(sources.get(l.a) ?? []), l.name]);
        order.push(l.b);
        changed = true;
      }
    }
  }
  return order
    .filter((n) => n >= 0 && n < circuit.nodes.length)
    .map((n) => ({ node: circuit.nodes[n], volts: volts.get(n) ?? 0, sources: sources.get(n) ?? [] }));
}

const cache = new WeakMap<Circuit, Map<number, Rail>>();

/** Rails keyed by node index, for lookups during recognition and estimation (cached per Circuit object when `rails` is not given). */
export function railsByIndex(circuit: Circuit, rails?: Rail[]): Map<number, Rail> {
  if (rails) return indexRails(circuit, rails);
  let m = cache.get(circuit);
  if (!m) cache.set(circuit, (m = indexRails(circuit, findRails(circuit))));
  return m;
}

/** Gives `next` the rails of `previous` when they are known, for a circuit whose sources, inductors and nodes are `previous`'s (a value edit's: `ValueEdit`). */
export function followRails(previous: Circuit, next: Circuit): void {
  const m = cache.get(previous);
  if (m && !cache.has(next)) cache.set(next, m);
}

/** Up to this many rails are each looked for along the node list; more are found through a table of every node's name. */
const RAILS_LOOKED_FOR = 16;

/**
 * Each rail at the index of its node's name (the last node of that name). A circuit has a few rails and many nodes:
 * each of a few rails' names is looked for from the end of the list, where a table of every node's name (50,000 at
 * 100,000 elements) was made for them.
 */
function indexRails(circuit: Circuit, rails: Rail[]): Map<number, Rail> {
  const out = new Map<number, Rail>();
  if (rails.length <= RAILS_LOOKED_FOR) {
    for (const r of rails) {
      const i = circuit.nodes.lastIndexOf(r.node);
      if (i >= 0) out.set(i, r);
    }
    return out;
  }
  const index = new Map<string, number>();
  for (let i = 0; i < circuit.nodes.length; i++) index.set(circuit.nodes[i]!, i);
  for (const r of rails) {
    const i = index.get(r.node);
    if (i !== undefined) out.set(i, r);
  }
  return out;
}
