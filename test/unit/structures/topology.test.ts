// The topology's node incidence against a plain scan of the circuit's elements.

import { describe, expect, it } from 'vitest';
import type { Circuit } from '../../../shared-analysis/src/circuit';
import { Topology } from '../../../shared-analysis/src/structures/topology';
import { CircuitBuilder } from './build';
import { rng } from '../../seeded-random';

/** A random tangle of resistors, capacitors, sources, BJTs (some with a substrate node), MOSFETs and diodes on a few nodes (seeded). */
function tangle(seed: number): Circuit {
  const random = rng(seed);
  const node = () => (random() < 0.15 ? '0' : `n${Math.floor(random() * 12)}`);
  const b = new CircuitBuilder();
  b.model('qn', 'npn').model('qp', 'pnp').model('mn', 'nmos', { KP: 1e-4, VTO: 0.5 }).model('dd', 'd');
  b.v('VCC', 'n0', '0', 5);
  for (let k = 0; k < 40; k++) {
    const pick = random();
    if (pick < 0.25) b.r(`R${k}`, node(), node(), 1e3 + k);
    else if (pick < 0.35) b.c(`C${k}`, node(), node(), 1e-9);
    else if (pick < 0.4) b.i(`I${k}`, node(), node(), 1e-4);
    else if (pick < 0.65) b.q(`Q${k}`, node(), node(), node(), random() < 0.7 ? 'qn' : 'qp');
    else if (pick < 0.85) b.mos(`M${k}`, node(), node(), node(), node(), 'mn');
    else b.d(`D${k}`, node(), node(), 'dd');
  }
  const circuit = b.build();
  // A substrate node on some BJTs: it carries no DC current and is left out of the incidence.
  for (const e of circuit.elements) if (e.kind === 'Q' && random() < 0.3) e.nodes.push(circuit.nodes.indexOf('n1'));
  return circuit;
}

describe('topology', () => {
  it('lists every connection of a node in element order, then slot order, as a scan of the elements does (seeded)', () => {
    for (let seed = 1; seed <= 20; seed++) {
      const circuit = tangle(seed);
      const topo = new Topology(circuit);
      for (let n = 0; n < circuit.nodes.length; n++) {
        const plain: { element: string; slot: number }[] = [];
        for (const e of circuit.elements) {
          // A BJT's fourth (substrate) node is not an incidence (docs of `Topology`).
          const slots = e.kind === 'Q' ? Math.min(3, e.nodes.length) : e.nodes.length;
          for (let s = 0; s < slots; s++) if (e.nodes[s] === n) plain.push({ element: e.name, slot: s });
        }
        expect(topo.at(n).map((a) => ({ element: a.element.name, slot: a.slot }))).toEqual(plain);
        // Asked again, the same list.
        expect(topo.at(n)).toBe(topo.at(n));
      }
      expect(topo.at(circuit.nodes.length)).toEqual([]);
      expect(topo.at(-1)).toEqual([]);
    }
  });

  it('follows a circuit that differs only in resistances and element objects: the same views as one built afresh, holding the new elements (seeded)', () => {
    for (let seed = 1; seed <= 20; seed++) {
      const before = tangle(seed);
      // The value edit's circuit: every element a new object, resistors with new values.
      const after: Circuit = { ...before, elements: before.elements.map((e) => (e.kind === 'R' ? { ...e, resistance: e.resistance * 2 } : { ...e })) };
      const followed = new Topology(after, new Topology(before));
      const fresh = new Topology(after);
      const view = (t: Topology) => ({
        transistors: t.transistors,
        byName: [...t.byName],
        byCtrl: [...t.byCtrl],
        byCommon: [...t.byCommon],
        at: after.nodes.map((_, n) => t.at(n)),
        conducting: after.nodes.map((_, n) => t.conducting(n)),
        nodeIndex: [...t.nodeIndex],
        elementIndex: [...t.elementIndex],
      });
      expect(view(followed)).toEqual(view(fresh));
      // Every element object reached is the new circuit's (toEqual above cannot tell copies apart).
      const mine = new Set(after.elements);
      for (const x of followed.transistors) expect(mine.has(x.element)).toBe(true);
      for (let n = 0; n < after.nodes.length; n++) for (const a of followed.at(n)) expect(mine.has(a.element)).toBe(true);
      for (const e of after.elements) expect(followed.elementByName.get(e.name)).toBe(fresh.elementByName.get(e.name));
      expect(followed.elementByName.get('no such element')).toBeUndefined();
    }
  });

  it('follows a circuit that shares its transistor elements: the same view objects, equal to the views built afresh (seeded)', () => {
    for (let seed = 1; seed <= 20; seed++) {
      const before = tangle(seed);
      const previous = new Topology(before);
      // A value edit that moved no offset: the resistors new objects with new values, every other element shared.
      const after: Circuit = { ...before, elements: before.elements.map((e) => (e.kind === 'R' ? { ...e, resistance: e.resistance * 3 } : e)) };
      const followed = new Topology(after, previous);
      const fresh = new Topology(after);
      const views = (t: Topology) => ({ transistors: t.transistors, byName: [...t.byName], byCtrl: [...t.byCtrl], byCommon: [...t.byCommon] });
      expect(views(followed)).toEqual(views(fresh));
      expect(followed.transistors).toBe(previous.transistors);
      // The connections hold the new circuit's elements all the same (the edited resistors among them).
      const mine = new Set(after.elements);
      for (let n = 0; n < after.nodes.length; n++) for (const a of followed.at(n)) expect(mine.has(a.element)).toBe(true);
      // One transistor a new object: the views are made again, holding it.
      const q = after.elements.findIndex((e) => e.kind === 'Q' || e.kind === 'M');
      if (q < 0) continue;
      const moved: Circuit = { ...after, elements: after.elements.map((e, i) => (i === q ? { ...e } : e)) };
      const again = new Topology(moved, previous);
      expect(again.transistors).not.toBe(previous.transistors);
      expect(views(again)).toEqual(views(new Topology(moved)));
      expect(again.byName.get(moved.elements[q]!.name)!.element).toBe(moved.elements[q]);
    }
  });

  it('finds each transistor by name as a map filled from the transistors in order does, names unique or repeated, built or followed (seeded)', () => {
    for (let seed = 1; seed <= 20; seed++) {
      const unique = tangle(seed);
      // The same tangle with some names repeated (a builder's circuit may have them; the elaborator's has not): a later
      // transistor or another element taking an earlier element's name.
      const repeated: Circuit = { ...unique, elements: unique.elements.map((e, i) => (i > 3 && i % 4 === 0 ? { ...e, name: unique.elements[i - 3]!.name } : e)) };
      for (const circuit of [unique, repeated]) {
        const built = new Topology(circuit);
        const followed = new Topology({ ...circuit, elements: circuit.elements.map((e) => ({ ...e })) }, built);
        for (const topo of [built, followed]) {
          const plain = new Map<string, (typeof topo.transistors)[number]>();
          const firstIndex = new Map<string, number>();
          for (const t of topo.transistors) {
            plain.set(t.name, t);
            if (!firstIndex.has(t.name)) firstIndex.set(t.name, t.index);
          }
          expect([...topo.byName]).toEqual([...plain]);
          circuit.elements.forEach((e, k) => {
            expect(topo.byName.get(e.name)).toBe(plain.get(e.name));
            expect(topo.byName.has(e.name)).toBe(plain.has(e.name));
            // By the element's index, as its name gives (the judgements read it so).
            expect(topo.transistorOfElement(k)).toBe(plain.get(e.name));
          });
          expect(topo.byName.get('no such element')).toBeUndefined();
          expect(topo.byName.has('no such element')).toBe(false);
          for (const t of topo.transistors) expect(t.nameIndex).toBe(firstIndex.get(t.name));
        }
      }
    }
  });

  it('lists the DC connections of a node as a scan of the elements does: no capacitor, no MOS gate or bulk (seeded)', () => {
    let kept = 0;
    let made = 0;
    for (let seed = 1; seed <= 20; seed++) {
      const circuit = tangle(seed);
      const topo = new Topology(circuit);
      // Every other node asked for all its connections first: the DC list must not depend on what was asked before.
      for (let n = 0; n < circuit.nodes.length; n += 2) topo.at(n);
      for (let n = 0; n < circuit.nodes.length; n++) {
        const plain: { element: string; slot: number }[] = [];
        for (const e of circuit.elements) {
          const slots = e.kind === 'Q' ? Math.min(3, e.nodes.length) : e.nodes.length;
          for (let s = 0; s < slots; s++) {
            // A capacitor is open at DC; a MOSFET's gate (slot 1) and bulk (slot 3) draw no DC current (level-1 model).
            if (e.nodes[s] !== n || e.kind === 'C' || (e.kind === 'M' && (s === 1 || s === 3))) continue;
            plain.push({ element: e.name, slot: s });
          }
        }
        expect(topo.conducting(n).map((a) => ({ element: a.element.name, slot: a.slot }))).toEqual(plain);
        // Asked again, the same connections: the one list kept for a node of 16 connections or more (a rail's), a new
        // list each time for a smaller node (kept, the lists of every small node were megabytes at 100,000 elements).
        const connections = topo.at(n).length;
        if (connections >= 16) {
          expect(topo.conducting(n)).toBe(topo.conducting(n));
          kept++;
        } else {
          expect(topo.conducting(n)).toEqual(topo.conducting(n));
          made++;
        }
      }
      expect(topo.conducting(circuit.nodes.length)).toEqual([]);
    }
    // Both kinds of node must come up, or the test says little about one of them.
    expect(kept).toBeGreaterThan(5);
    expect(made).toBeGreaterThan(5);
  });

  it("finds a node's sole DC connection besides the excepted elements as a scan of its DC list does, asked before or after the list is made (seeded)", () => {
    let soles = 0;
    for (let seed = 1; seed <= 20; seed++) {
      const circuit = tangle(seed);
      const topo = new Topology(circuit);
      const random = rng(500 + seed);
      for (let n = 0; n < circuit.nodes.length; n++) {
        // Leave out a random few elements, as a recogniser leaves out a structure's own devices.
        const except = new Set(circuit.elements.filter(() => random() < 0.7));
        const leaveOut = (e: (typeof circuit.elements)[number]) => except.has(e);
        // On odd nodes the DC list is made after the question, on even ones before it.
        const listed = n % 2 === 0 ? topo.conducting(n) : undefined;
        const got = topo.soleOther(n, leaveOut);
        const others = (listed ?? topo.conducting(n)).filter((a) => !except.has(a.element));
        const plain = others.length === 1 ? others[0] : undefined;
        expect(got && { element: got.element.name, slot: got.slot }, `node ${n} of circuit ${seed}`).toEqual(plain && { element: plain.element.name, slot: plain.slot });
        if (plain) soles++;
      }
      // Nodes outside the circuit's list have no connection at all.
      expect(topo.soleOther(circuit.nodes.length, () => false)).toBeUndefined();
    }
    // Both answers must come up, or the comparison proves little.
    expect(soles).toBeGreaterThan(20);
  });
});
