// TargetIndex: the look-up tables of the target check give the same elements and structure roles as scanning the circuit.

import { describe, expect, it } from 'vitest';
import { structureRole, targetElements, TargetIndex, targetIndexOf, readTargets, sizingKnob } from '../../../shared-analysis/src/checks/targets';
import { elaborate } from '../../../shared-analysis/src/elaborate/index';
import { recogniseStructures } from '../../../shared-analysis/src/structures/recognise';
import { parse } from '../../../shared-analysis/src/syntax/parser';
import { MemoryWorkspace } from '../../../shared-analysis/src/types';

const URI = '/index.cir';

/** The one helper: for every element and every target, the indexed answer equals the scanned one. */
function check(text: string, expected: { targets: number; withRole: number }): void {
  const { circuit, documents } = elaborate(parse(URI, text, { hasTitle: true }), new MemoryWorkspace({ [URI]: text }), {});
  const structures = recogniseStructures(circuit);
  const index = new TargetIndex(circuit, structures);
  let withRole = 0;
  for (const e of circuit.elements) {
    const scanned = structureRole(circuit, structures, e);
    // Source: (common practice) an index must answer exactly as the scan it replaces.
    expect(structureRole(circuit, structures, e, index)).toEqual(scanned);
    expect(sizingKnob(circuit, structures, e, index)).toEqual(sizingKnob(circuit, structures, e));
    if (scanned) withRole++;
  }
  const { targets } = readTargets(documents);
  expect(targets).toHaveLength(expected.targets);
  for (const t of targets) {
    const scanned = circuit.elements.filter((e) =>
      t.subject.kind === 'name' ? e.name.toLowerCase() === t.subject.name.toLowerCase() : e.origin.uri === t.uri && e.origin.span.start === t.subject.cardSpan.start,
    );
    expect(targetElements(circuit, t, index)).toEqual(scanned);
    expect(targetElements(circuit, t)).toEqual(scanned);
  }
  expect(withRole).toBe(expected.withRole);
}

// An invented netlist: a simple mirror, a Widlar source, and a subcircuit mirror used twice, with targets of both kinds.
const netlist = `bias block with three mirrors
VCC vcc 0 DC 9
R1 vcc r1 8.2k
Q1 r1 r1 0 qn
Q2 o1 r1 0 qn ; expect 1mA
RL1 vcc o1 2k
R2 vcc r2 10k
Q3 r2 r2 0 qn
Q4 o2 r2 e4 qn
RE e4 0 1.2k ; expect 100uA
RL2 vcc o2 5k
* expect X1.QO = 0.5mA ±10%
* expect q2 = 1mA
.subckt cell top out
RS top r 15k
QR r r 0 qn
QO out r 0 qn ; expect 500uA
.ends cell
X1 vcc x1o cell
X2 vcc x2o cell
RX1 vcc x1o 3k
RX2 vcc x2o 3k
.model qn npn (IS=1e-16 BF=120)
.end
`;

describe('TargetIndex', () => {
  it('answers as the scans do, for every element and target', () => check(netlist, { targets: 5, withRole: 13 }));

  it('is built once per list of structures, and again for another circuit or a list of another length', () => {
    const read = () => elaborate(parse(URI, netlist, { hasTitle: true }), new MemoryWorkspace({ [URI]: netlist }), {}).circuit;
    const circuit = read();
    const structures = recogniseStructures(circuit);
    const index = targetIndexOf(circuit, structures);
    expect(targetIndexOf(circuit, structures)).toBe(index);
    // The shared index answers as a fresh one does (common practice: a cache must not change an answer).
    const fresh = new TargetIndex(circuit, structures);
    expect([...index.roles.keys()]).toEqual([...fresh.roles.keys()]);
    expect([...index.loads.keys()]).toEqual([...fresh.loads.keys()]);
    const other = read();
    expect(targetIndexOf(other, structures)).not.toBe(index);
    const fewer = structures.slice(0, 1);
    expect(targetIndexOf(circuit, fewer).roles.size).toBeLessThan(index.roles.size);
    const again = targetIndexOf(circuit, structures);
    expect(targetIndexOf(circuit, structures)).toBe(again);
    structures.pop();
    expect(targetIndexOf(circuit, structures)).not.toBe(again);
  });
});
