// The transistors recognition keeps with a structure are hints: `Topology.transistorNamed` and `elementNamed` must
// answer as `byName.get` and `elementIndex.get` do, for recognised structures, copies, followed topologies and
// circuits with repeated names. The expected answers are a plain scan of the circuit's elements written here
// (the last element of a name, as a map filled in order gives it).

import { describe, expect, it } from 'vitest';
import { elaborate } from '../../../shared-analysis/src/elaborate/index';
import { parse } from '../../../shared-analysis/src/syntax/parser';
import { MemoryWorkspace } from '../../../shared-analysis/src/types';
import type { Circuit } from '../../../shared-analysis/src/circuit';
import { recogniseStructures } from '../../../shared-analysis/src/structures/recognise';
import { recognisedFeed, recognisedRailNode, recognisedRefNode, recognisedTransistor } from '../../../shared-analysis/src/structures/recognised';
import { copyStructure } from '../../../shared-analysis/src/structures/corner-columns';
import { Topology, followTopology, topologyOf, type Transistor } from '../../../shared-analysis/src/structures/topology';
import { patchedElaboration, keptElaboration, elaborationSettings } from '../../../shared-analysis/src/incremental-elaborate';
import type { Structure } from '../../../shared-analysis/src/structures/types';
import { CircuitBuilder } from './build';

const URI = '/w/top.cir';

const TEXT = [
  'Recognised transistors',
  '.model qn npn (IS=1e-15 BF=120)',
  '.model qp pnp (IS=1e-15 BF=60)',
  'VCC vcc 0 5',
  '.subckt cell top',
  'RREF top ref 10k',
  'QR ref ref 0 qn',
  'QO out ref 0 qn',
  'RL top out 2k',
  '.ends',
  'X1 vcc cell',
  'X2 vcc cell',
  'RR1 vcc r1 10k',
  'Q1 r1 r1 0 qn',
  'Q2 o2 r1 0 qn 2',
  'RL2 vcc o2 1k',
  'QP1 p1 p1 vcc qp',
  'QP2 o3 p1 vcc qp',
  'RP p1 0 10k',
  'RL3 o3 0 1k',
  '.end',
  '',
].join('\n');

/** The last element of `name` in the circuit's list, and its index: what a map filled in order answers. */
function scan(circuit: Circuit, name: string): { index: number | undefined; transistor: Transistor | undefined; topo: Topology } {
  const topo = topologyOf(circuit);
  let index: number | undefined;
  circuit.elements.forEach((e, i) => {
    if (e.name === name) index = i;
  });
  // The transistor view of that element (the topology keeps one view per transistor element, in element order).
  const transistor = index === undefined ? undefined : topo.transistors.find((t) => t.element === circuit.elements[index!]);
  return { index, transistor, topo };
}

/** Every device of every structure, read through its hint, against the scan; with hints from another structure too. */
function expectScanAnswers(circuit: Circuit, structures: Structure[], label: string): number {
  const topo = topologyOf(circuit);
  let hinted = 0;
  for (const s of structures) {
    for (let j = 0; j < s.devices.length; j++) {
      const name = s.devices[j]!;
      const plain = scan(circuit, name);
      const known = recognisedTransistor(s, j);
      if (known) hinted++;
      expect(topo.transistorNamed(name, known), `${label}: ${name}`).toBe(plain.transistor);
      expect(topo.elementNamed(name, known), `${label}: ${name}`).toBe(plain.index);
      // A hint for another name is no answer for this one.
      const other = recognisedTransistor(s, (j + 1) % s.devices.length);
      expect(topo.transistorNamed(name, other), `${label}: ${name} with another hint`).toBe(plain.transistor);
      expect(topo.elementNamed(name, other), `${label}: ${name} with another hint`).toBe(plain.index);
    }
    // The reference node, the rail and the feed's elements.
    expect(topo.nodeNamed(s.reference.node, recognisedRefNode(s)), `${label}: node ${s.reference.node}`).toBe(lastIndex(circuit.nodes, s.reference.node));
    if (s.reference.rail) expect(topo.nodeNamed(s.reference.rail.node, recognisedRailNode(s)), `${label}: rail`).toBe(lastIndex(circuit.nodes, s.reference.rail.node));
    s.reference.elements.forEach((name, k) => {
      const index = scan(circuit, name).index;
      if (recognisedFeed(s, k) >= 0) hinted++;
      expect(topo.elementNamedAt(name, recognisedFeed(s, k)), `${label}: feed ${name}`).toBe(index === undefined ? undefined : circuit.elements[index]);
      // Another element's place is no answer for this name.
      expect(topo.elementNamedAt(name, recognisedFeed(s, k) + 1), `${label}: feed ${name}, another place`).toBe(index === undefined ? undefined : circuit.elements[index]);
    });
  }
  return hinted;
}

/** The last index of `name` in a list (what a map filled in order answers), or undefined. */
function lastIndex(list: readonly string[], name: string): number | undefined {
  const k = list.lastIndexOf(name);
  return k < 0 ? undefined : k;
}

describe('transistors recognition keeps with a structure', () => {
  it('answer each device as a scan of the elements does, and stay out of the JSON and of copies', () => {
    const circuit = elaborate(parse(URI, TEXT, { hasTitle: true }), new MemoryWorkspace({})).circuit;
    const structures = recogniseStructures(circuit);
    expect(structures.map((s) => s.id).sort()).toEqual(['simple-mirror:Q1', 'simple-mirror:QP1', 'simple-mirror:X1.QR', 'simple-mirror:X2.QR']);
    // 8 devices and 4 feed resistors, each with the place recognition found it at.
    expect(expectScanAnswers(circuit, structures, 'recognised')).toBe(12);
    // Not written: the JSON and the keys are those of a structure without it.
    const s = structures[0]!;
    expect(Object.keys(s)).not.toContain('recognised transistors');
    expect(JSON.stringify(s)).toBe(JSON.stringify({ ...s }));
    // A copy has none, and is answered by name.
    const copy = copyStructure(s);
    expect(recognisedTransistor(copy, 0)).toBeUndefined();
    expectScanAnswers(circuit, [copy], 'copy');
    // As another thread receives it: a plain object with the same members, and no transistors.
    const cloned = structuredClone({ ...s, corners: [] }) as Structure;
    expect(Object.keys(cloned)).toEqual(Object.keys(s));
    expect(recognisedTransistor(cloned, 0)).toBeUndefined();
    expectScanAnswers(circuit, [cloned], 'cloned');
  });

  it('are not taken from the topology of another circuit: a value edit\'s patched circuit answers from its own views', () => {
    const doc = parse(URI, TEXT, { hasTitle: true });
    const elab = elaborate(doc, new MemoryWorkspace({}));
    const before = elab.circuit;
    const structures = recogniseStructures(before);
    const at = TEXT.indexOf('RR1 vcc r1 10k') + 'RR1 vcc r1 '.length;
    const card = doc.cards.findIndex((c) => c.span.start <= at && at < c.span.end);
    // A longer value: every card after it moves, so the patched circuit's elements (and the topology's views) are new.
    const edited = TEXT.slice(0, at) + '12.5k' + TEXT.slice(at + 3);
    const after = parse(URI, edited, { hasTitle: true });
    const settings = elaborationSettings({});
    const patched = patchedElaboration({ circuit: before, document: doc, kept: keptElaboration(elab, settings) }, after, { card, region: { start: at, oldEnd: at + 3, delta: 2 } }, settings);
    expect(patched).toBeDefined();
    const circuit = patched!.result.circuit;
    followTopology(before, circuit);
    expect(topologyOf(circuit).transistors).not.toBe(topologyOf(before).transistors);
    expectScanAnswers(circuit, structures, 'followed');
    // Whichever views the followed topology holds, each answer is one of its own.
    const topo = topologyOf(circuit);
    for (const s of structures) for (let j = 0; j < s.devices.length; j++) expect(topo.transistors).toContain(topo.transistorNamed(s.devices[j]!, recognisedTransistor(s, j)));
  });

  it('are not taken when two elements share a name: the last of the name answers, as the map does', () => {
    const b = new CircuitBuilder();
    b.model('qn', 'npn');
    b.v('VCC', 'vcc', '0', 5);
    b.r('R1', 'vcc', 'a', 1e4);
    b.q('Q1', 'a', 'a', '0', 'qn');
    b.q('Q2', 'o', 'a', '0', 'qn');
    b.r('RL', 'vcc', 'o', 1e3);
    b.r('R2', 'vcc', 'c', 1e4);
    b.q('Q3', 'c', 'c', '0', 'qn');
    // A second Q1 elsewhere (a builder's circuit may repeat a name; the elaborator's never does).
    b.q('Q1', 'o2', 'c', '0', 'qn');
    b.r('RL2', 'vcc', 'o2', 1e3);
    // And a second R1, after the one that feeds Q1's mirror.
    b.r('R1', 'o2', '0', 1e6);
    const circuit = b.build();
    const structures = recogniseStructures(circuit);
    // Q3's mirror is not one: its output shares Q1's name, which the first mirror claimed.
    expect(structures.map((s) => `${s.id} fed by ${s.reference.elements.join(', ')}`)).toEqual(['simple-mirror:Q1 fed by R1']);
    expect(recognisedFeed(structures[0]!, 0)).toBe(circuit.elements.findIndex((e) => e.name === 'R1'));
    expectScanAnswers(circuit, structures, 'repeated names');
    expect(topologyOf(circuit).transistorNamed('Q1', topologyOf(circuit).transistors[0])).toBe(scan(circuit, 'Q1').transistor);
  });

  it('are not taken when two nodes share a name: the last node of the name answers, as the map does', () => {
    const b = new CircuitBuilder();
    b.model('qn', 'npn');
    b.v('VCC', 'vcc', '0', 5);
    b.r('R1', 'vcc', 'a', 1e4);
    b.q('Q1', 'a', 'a', '0', 'qn');
    b.q('Q2', 'o', 'a', '0', 'qn');
    b.r('RL', 'vcc', 'o', 1e3);
    const circuit = b.build();
    // A second node of the reference node's name and one of the rail's, after every other (a list made by other code).
    circuit.nodes.push('a', 'vcc');
    const structures = recogniseStructures(circuit);
    expect(structures.map((s) => s.id)).toEqual(['simple-mirror:Q1']);
    expect(recognisedRefNode(structures[0]!)).toBe(circuit.nodes.indexOf('a'));
    expectScanAnswers(circuit, structures, 'repeated node names');
    expect(topologyOf(circuit).nodeNamed('a', circuit.nodes.indexOf('a'))).toBe(circuit.nodes.length - 2);
  });
});
