// The topology's element and node indices of an elaborated circuit, read through the elaborator's name tables, against
// maps filled from the circuit's lists in order (an independent computation written here).

import { describe, expect, it } from 'vitest';
import { elaborate } from '../../../shared-analysis/src/elaborate/index';
import { parse } from '../../../shared-analysis/src/syntax/parser';
import { MemoryWorkspace } from '../../../shared-analysis/src/types';
import { elaboratedNamesOf, type Circuit } from '../../../shared-analysis/src/circuit';
import { Topology, followTopology, topologyOf } from '../../../shared-analysis/src/structures/topology';
import { patchedElaboration, keptElaboration, elaborationSettings } from '../../../shared-analysis/src/incremental-elaborate';
import { rng } from '../../seeded-random';

const URI = '/w/top.cir';

function circuitOf(text: string): Circuit {
  return elaborate(parse(URI, text, { hasTitle: true }), new MemoryWorkspace({})).circuit;
}

/** Name -> last index, filled from a list in order. */
function plainIndex(names: readonly string[]): Map<string, number> {
  const m = new Map<string, number>();
  names.forEach((n, i) => m.set(n, i));
  return m;
}

/** Every name of `names`, in upper and lower case and with its first letter's case turned, and a few that are no name (beyond ASCII too, unless `ascii`). */
function questions(names: readonly string[], ascii: boolean): string[] {
  const out = ascii ? ['', 'no such name', 'ZZZ9', 'zzz9'] : ['', 'no such name', 'ZZZ9', 'zzz9', 'R\u212A9', 'µ'];
  for (const n of names) out.push(n, n.toUpperCase(), n.toLowerCase(), (n[0] === n[0]!.toUpperCase() ? n[0]!.toLowerCase() : n[0]!.toUpperCase()) + n.slice(1));
  return out;
}

/** Whether the index had to build its map of every name (it reads the elaborator's tables otherwise). */
function built(index: ReadonlyMap<string, number>): boolean {
  return (index as unknown as { every: { map: unknown } }).every.map !== undefined;
}

/** Answers of `index` as a map filled in order gives them. */
function expectSameAnswers(index: ReadonlyMap<string, number>, names: readonly string[], label: string, ascii = false): void {
  const plain = plainIndex(names);
  for (const q of questions(names, ascii)) {
    expect(index.get(q), `${label}: get(${JSON.stringify(q)})`).toBe(plain.get(q));
    expect(index.has(q), `${label}: has(${JSON.stringify(q)})`).toBe(plain.has(q));
  }
  expect(index.size, label).toBe(plain.size);
}

/**
 * A netlist of sink cells at the top level and in subcircuit instances, element and node names in random case
 * (some repeated in another case: a duplicate the elaborator leaves out), a global node and a subcircuit port.
 */
function netlist(seed: number): string {
  const random = rng(seed);
  const cased = (s: string) => [...s].map((c) => (random() < 0.5 ? c.toUpperCase() : c.toLowerCase())).join('');
  const lines = [`Name index ${seed}`, '.global vsup', '.model qn npn (IS=1e-15 BF=120)', 'Vsup vsup 0 5', '.subckt cell top', `${cased('rref')} top ${cased('ref')} 10k`, `${cased('qr')} ${cased('ref')} ${cased('ref')} 0 qn`, `${cased('qo')} ${cased('out')} ${cased('ref')} 0 qn`, `${cased('rl')} vsup ${cased('out')} 2k`, '.ends'];
  for (let k = 0; k < 12; k++) {
    if (random() < 0.4) lines.push(`${cased('x')}${k} vsup cell`);
    else lines.push(`${cased('rr')}${k} vsup ${cased('r')}${k} 10k`, `${cased('q')}${k} ${cased('r')}${k} ${cased('r')}${k} 0 qn`, `${cased('rl')}${k} vsup ${cased('o')}${k} 1k`, `${cased('qo')}${k} ${cased('o')}${k} ${cased('r')}${k} 0 qn`);
    if (random() < 0.2) lines.push(`${cased('rr')}${k} vsup 0 1k`);
  }
  return lines.join('\n') + '\n.end\n';
}

describe('name indices read through the elaborator', () => {
  it('answer every name as maps filled from the element and node lists do, without building them for ASCII names (seeded)', () => {
    for (let seed = 1; seed <= 25; seed++) {
      const circuit = circuitOf(netlist(seed));
      expect(elaboratedNamesOf(circuit)).toBeDefined();
      const topo = new Topology(circuit);
      const elementNames = circuit.elements.map((e) => e.name);
      expectSameAnswers(topo.elementIndex, elementNames, `elements of ${seed}`, true);
      expectSameAnswers(topo.nodeIndex, circuit.nodes, `nodes of ${seed}`, true);
      expect(built(topo.elementIndex)).toBe(false);
      expect(built(topo.nodeIndex)).toBe(false);
      // A name beyond ASCII is looked up in the map of every name: the same answers with it built.
      expectSameAnswers(topo.elementIndex, elementNames, `elements of ${seed}, map built`);
      expectSameAnswers(topo.nodeIndex, circuit.nodes, `nodes of ${seed}, map built`);
      expect(built(topo.elementIndex)).toBe(true);
      expect([...topo.elementIndex]).toEqual([...plainIndex(elementNames)]);
    }
  });

  it('answer names beyond ASCII, and circuits whose nodes or elements moved after they were named, through maps of their own', () => {
    const cases = [
      // Names beyond ASCII: looked up in the map of every name.
      'u\nV1 vcc 0 5\nRµ1 vcc µa 1k\nRµ2 µa 0 1k\nRΩ vcc Ωb 1k\nRω Ωb 0 1k\n.end\n',
      // A device left out (its model is missing): its node is dropped and the node indices move.
      'd\n.model qn npn\nV1 vcc 0 5\nR1 vcc c 1k\nQ1 c b 0 QMISSING\nQ2 c c 0 qn\n.end\n',
      // A current-controlled source without its control is dropped after the elements were named: their indices move.
      'f\nV1 vcc 0 5\nVs vcc a 0\nR1 a 0 1k\nF1 0 c Vs 2\nRc c 0 1k\nH1 d 0 VNONE 10\nRd d 0 1k\nR2 vcc d 1k\n.end\n',
    ];
    for (const text of cases) {
      const circuit = circuitOf(text);
      const topo = new Topology(circuit);
      expectSameAnswers(topo.elementIndex, circuit.elements.map((e) => e.name), text.split('\n')[0]!);
      expectSameAnswers(topo.nodeIndex, circuit.nodes, text.split('\n')[0]!);
    }
    // The dropped source: no element table kept, so nothing can point past the moved elements.
    expect(elaboratedNamesOf(circuitOf(cases[2]!))).toBeUndefined();
    expect(elaboratedNamesOf(circuitOf(cases[1]!))?.nodeKeys).toBeUndefined();
  });

  it('answer for a followed topology and a patched circuit from that circuit\'s own lists', () => {
    const text = netlist(7);
    const doc = parse(URI, text, { hasTitle: true });
    const elab = elaborate(doc, new MemoryWorkspace({}));
    const before = elab.circuit;
    topologyOf(before);
    // A value edit of a top-level resistor's plain number, as the editor makes one.
    const at = text.indexOf(' 10k\n', text.indexOf('.ends')) + 1;
    const card = doc.cards.findIndex((c) => c.span.start <= at && at < c.span.end);
    const edited = text.slice(0, at) + '12k' + text.slice(at + 3);
    const after = parse(URI, edited, { hasTitle: true });
    const settings = elaborationSettings({});
    const patched = patchedElaboration({ circuit: before, document: doc, kept: keptElaboration(elab, settings) }, after, { card, region: { start: at, oldEnd: at + 3, delta: 0 } }, settings);
    expect(patched).toBeDefined();
    const circuit = patched!.result.circuit;
    expect(elaboratedNamesOf(circuit)).toBe(elaboratedNamesOf(before));
    followTopology(before, circuit);
    const topo = topologyOf(circuit);
    expectSameAnswers(topo.elementIndex, circuit.elements.map((e) => e.name), 'followed elements');
    expectSameAnswers(topo.nodeIndex, circuit.nodes, 'followed nodes');
    for (const e of circuit.elements) expect(circuit.elements[topo.elementIndex.get(e.name)!]).toBe(e);
  });
});
