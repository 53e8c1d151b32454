// Recognition of every structure kind in every polarity, at top level and inside instances, and no false structures on look-alikes.

import { describe, expect, it } from 'vitest';
import type { Circuit } from '../../../shared-analysis/src/circuit';
import { elaborate } from '../../../shared-analysis/src/elaborate/index';
import { findRails, railsByIndex } from '../../../shared-analysis/src/structures/rails';
import { parse } from '../../../shared-analysis/src/syntax/parser';
import { MemoryWorkspace } from '../../../shared-analysis/src/types';
import { recogniseStructures } from '../../../shared-analysis/src/structures/recognise';
import type { Rail, ReferenceBranch, StructureKind, Technology } from '../../../shared-analysis/src/structures/types';
import { CircuitBuilder } from './build';
import { fixture } from './fixtures';

interface Expected {
  id: string;
  kind: StructureKind;
  technology: Technology;
  devices: string[];
  reference: Omit<Partial<ReferenceBranch>, 'rail'> & { device: string; node: string; feed: ReferenceBranch['feed']; rail?: Partial<Rail> };
  outputs: { device: string; node: string; ratio: number }[];
  instance?: string;
}

/** The one entry point: recognise and compare kind, devices, reference branch and outputs (ratios to 1e-12). */
function check(circuit: Circuit, expected: Expected[]): void {
  const got = recogniseStructures(circuit);
  expect(got.map((s) => s.id).sort()).toEqual(expected.map((e) => e.id).sort());
  for (const e of expected) {
    const s = got.find((x) => x.id === e.id)!;
    expect(s.kind).toBe(e.kind);
    expect(s.technology).toBe(e.technology);
    expect([...s.devices].sort()).toEqual([...e.devices].sort());
    expect(s.instance).toBe(e.instance ?? '');
    const { rail, ...refRest } = s.reference;
    const { rail: wantRail, ...wantRest } = e.reference;
    expect(refRest).toMatchObject(wantRest);
    if (wantRail) expect(rail).toMatchObject(wantRail);
    expect(s.outputs.map((o) => ({ device: o.device, node: o.node }))).toEqual(e.outputs.map((o) => ({ device: o.device, node: o.node })));
    s.outputs.forEach((o, i) => expect(o.ratio).toBeCloseTo(e.outputs[i].ratio, 12));
    expect(s.headroom).toEqual({});
    expect(s.corners).toEqual([]);
  }
}

const KINDS: { kind: StructureKind; devices: string[]; ref: string; refNode: string }[] = [
  { kind: 'simple-mirror', devices: ['Q1', 'Q2'], ref: 'Q1', refNode: 'a' },
  { kind: 'widlar-source', devices: ['Q1', 'Q2'], ref: 'Q1', refNode: 'a' },
  { kind: 'helper-mirror', devices: ['Q1', 'Q2', 'Q3'], ref: 'Q1', refNode: 'a' },
  { kind: 'wilson-mirror', devices: ['Q1', 'Q2', 'Q3'], ref: 'Q1', refNode: 'a' },
  { kind: 'improved-wilson-mirror', devices: ['Q1', 'Q2', 'Q3', 'Q4'], ref: 'Q4', refNode: 'a' },
  { kind: 'cascode-mirror', devices: ['Q1', 'Q2', 'Q3', 'Q4'], ref: 'Q3', refNode: 'a' },
  { kind: 'degenerated-mirror', devices: ['Q1', 'Q2'], ref: 'Q1', refNode: 'a' },
];
const OUTPUT: Partial<Record<StructureKind, string>> = {
  'simple-mirror': 'Q2',
  'widlar-source': 'Q2',
  'helper-mirror': 'Q2',
  'wilson-mirror': 'Q3',
  'improved-wilson-mirror': 'Q3',
  'cascode-mirror': 'Q4',
  'degenerated-mirror': 'Q2',
};

describe('recogniseStructures: every kind, every polarity, top level and in an instance', () => {
  for (const tech of ['npn', 'pnp', 'nmos', 'pmos'] as Technology[]) {
    for (const k of KINDS) {
      for (const prefix of ['', 'X1.']) {
        it(`${k.kind} ${tech}${prefix ? ' inside X1' : ''}`, () => {
          const { circuit } = fixture(k.kind, tech, { prefix });
          const up = tech === 'npn' || tech === 'nmos';
          check(circuit, [
            {
              id: `${k.kind}:${prefix}${k.ref}`,
              kind: k.kind,
              technology: tech,
              devices: k.devices.map((d) => prefix + d),
              instance: prefix,
              reference: {
                device: prefix + k.ref,
                node: prefix + k.refNode,
                feed: 'resistor',
                elements: [prefix + 'RREF'],
                rail: { node: up ? 'vcc' : '0', volts: up ? 5 : 0 },
              },
              outputs: [{ device: prefix + OUTPUT[k.kind], node: prefix + 'out', ratio: 1 }],
            },
          ]);
        });
      }
    }
  }
});

describe('recogniseStructures: ratios, several outputs, feeds', () => {
  it('ratioed and multi-output NPN mirror: one structure, ratios from area × M', () => {
    const b = new CircuitBuilder()
      .v('VCC', 'vcc', '0', 5)
      .model('qn', 'npn')
      .r('R1', 'vcc', 'ref', 10e3)
      .q('Q1', 'ref', 'ref', '0', 'qn', { area: 2 })
      .q('Q2', 'o2', 'ref', '0', 'qn', { area: 2 })
      .q('Q3', 'o3', 'ref', '0', 'qn', { area: 4, m: 2 })
      .q('Q4', 'o4', 'ref', '0', 'qn', { area: 1 });
    check(b.build(), [
      {
        id: 'simple-mirror:Q1',
        kind: 'simple-mirror',
        technology: 'npn',
        devices: ['Q1', 'Q2', 'Q3', 'Q4'],
        reference: { device: 'Q1', node: 'ref', feed: 'resistor', elements: ['R1'] },
        outputs: [
          { device: 'Q2', node: 'o2', ratio: 1 },
          { device: 'Q3', node: 'o3', ratio: 4 },
          { device: 'Q4', node: 'o4', ratio: 0.5 },
        ],
      },
    ]);
  });

  it('NMOS ratio from (W/L)·M', () => {
    const b = new CircuitBuilder()
      .v('VDD', 'vdd', '0', 3.3)
      .model('nch', 'nmos', { KP: 1e-4, VTO: 0.5 })
      .i('IB', 'vdd', 'g', 20e-6)
      .mos('M1', 'g', 'g', '0', '0', 'nch', { w: 4e-6, l: 1e-6 })
      .mos('M2', 'd', 'g', '0', '0', 'nch', { w: 12e-6, l: 2e-6, m: 2 });
    check(b.build(), [
      {
        id: 'simple-mirror:M1',
        kind: 'simple-mirror',
        technology: 'nmos',
        devices: ['M1', 'M2'],
        reference: { device: 'M1', node: 'g', feed: 'current-source', elements: ['IB'] },
        outputs: [{ device: 'M2', node: 'd', ratio: 3 }],
      },
    ]);
  });

  it('a chain of two resistors from the rail is one resistor feed', () => {
    const b = new CircuitBuilder()
      .v('VCC', 'vcc', '0', 9)
      .model('qn', 'npn')
      .r('R1', 'vcc', 'mid', 4.7e3)
      .r('R2', 'mid', 'ref', 3.3e3)
      .q('Q1', 'ref', 'ref', '0', 'qn')
      .q('Q2', 'out', 'ref', '0', 'qn');
    check(b.build(), [
      {
        id: 'simple-mirror:Q1',
        kind: 'simple-mirror',
        technology: 'npn',
        devices: ['Q1', 'Q2'],
        reference: { device: 'Q1', node: 'ref', feed: 'resistor', elements: ['R2', 'R1'], rail: { node: 'vcc', volts: 9 } },
        outputs: [{ device: 'Q2', node: 'out', ratio: 1 }],
      },
    ]);
  });

  it('chained mirrors: a PNP mirror output feeds an NPN mirror reference', () => {
    const b = new CircuitBuilder()
      .v('VCC', 'vcc', '0', 5)
      .model('qn', 'npn')
      .model('qp', 'pnp')
      .r('R1', 'p1', '0', 10e3)
      .q('QP1', 'p1', 'p1', 'vcc', 'qp')
      .q('QP2', 'n1', 'p1', 'vcc', 'qp')
      .q('QN1', 'n1', 'n1', '0', 'qn')
      .q('QN2', 'out', 'n1', '0', 'qn');
    check(b.build(), [
      {
        id: 'simple-mirror:QP1',
        kind: 'simple-mirror',
        technology: 'pnp',
        devices: ['QP1', 'QP2'],
        reference: { device: 'QP1', node: 'p1', feed: 'resistor', elements: ['R1'], rail: { node: '0', volts: 0 } },
        outputs: [{ device: 'QP2', node: 'n1', ratio: 1 }],
      },
      {
        id: 'simple-mirror:QN1',
        kind: 'simple-mirror',
        technology: 'npn',
        devices: ['QN1', 'QN2'],
        reference: { device: 'QN1', node: 'n1', feed: 'mirror-output', elements: ['QP2'], fedBy: 'simple-mirror:QP1' },
        outputs: [{ device: 'QN2', node: 'out', ratio: 1 }],
      },
    ]);
  });

  it('a reference node also driven by a second element is fed by "other"', () => {
    const b = new CircuitBuilder()
      .v('VCC', 'vcc', '0', 5)
      .model('qn', 'npn')
      .r('R1', 'vcc', 'ref', 10e3)
      .i('I1', 'vcc', 'ref', 1e-4)
      .q('Q1', 'ref', 'ref', '0', 'qn')
      .q('Q2', 'out', 'ref', '0', 'qn');
    const s = recogniseStructures(b.build());
    expect(s).toHaveLength(1);
    expect(s[0].reference.feed).toBe('other');
  });

  it('two instances of one mirror give two structures with their own prefixes', () => {
    const b = new CircuitBuilder().v('VCC', 'vcc', '0', 5).model('qn', 'npn');
    for (const x of ['X1.', 'X2.']) {
      b.r(`${x}R1`, 'vcc', `${x}a`, 10e3).q(`${x}Q1`, `${x}a`, `${x}a`, '0', 'qn').q(`${x}Q2`, `${x}o`, `${x}a`, '0', 'qn');
    }
    const s = recogniseStructures(b.build());
    expect(s.map((x) => [x.id, x.instance])).toEqual([
      ['simple-mirror:X1.Q1', 'X1.'],
      ['simple-mirror:X2.Q1', 'X2.'],
    ]);
  });
});

describe('recogniseStructures: no false structures', () => {
  it('two devices sharing a base with no diode-connected one', () => {
    const b = new CircuitBuilder()
      .v('VCC', 'vcc', '0', 5)
      .v('VB', 'b', '0', 0.65)
      .model('qn', 'npn')
      .q('Q1', 'c1', 'b', '0', 'qn')
      .q('Q2', 'c2', 'b', '0', 'qn')
      .r('R1', 'vcc', 'c1', 1e3)
      .r('R2', 'vcc', 'c2', 1e3);
    expect(recogniseStructures(b.build())).toEqual([]);
  });

  it('a differential pair with a tail source', () => {
    const b = new CircuitBuilder()
      .v('VCC', 'vcc', '0', 5)
      .v('VP', 'inp', '0', 2)
      .v('VN', 'inn', '0', 2)
      .model('qn', 'npn')
      .q('Q1', 'c1', 'inp', 'tail', 'qn')
      .q('Q2', 'c2', 'inn', 'tail', 'qn')
      .i('IT', 'tail', '0', 1e-3)
      .r('R1', 'vcc', 'c1', 2e3)
      .r('R2', 'vcc', 'c2', 2e3);
    expect(recogniseStructures(b.build())).toEqual([]);
  });

  it('a lone diode-connected device', () => {
    const b = new CircuitBuilder().v('VCC', 'vcc', '0', 5).model('qn', 'npn').r('R1', 'vcc', 'a', 4.3e3).q('Q1', 'a', 'a', '0', 'qn');
    expect(recogniseStructures(b.build())).toEqual([]);
  });

  it('an output of the other polarity on the diode node is not an output', () => {
    const b = new CircuitBuilder()
      .v('VCC', 'vcc', '0', 5)
      .model('qn', 'npn')
      .model('qp', 'pnp')
      .r('R1', 'vcc', 'a', 4.3e3)
      .q('Q1', 'a', 'a', '0', 'qn')
      .q('Q2', '0', 'a', 'vcc', 'qp');
    expect(recogniseStructures(b.build())).toEqual([]);
  });

  it('an emitter resistor that also carries another load is not a Widlar degeneration', () => {
    const b = new CircuitBuilder()
      .v('VCC', 'vcc', '0', 5)
      .model('qn', 'npn')
      .r('R1', 'vcc', 'a', 4.3e3)
      .q('Q1', 'a', 'a', '0', 'qn')
      .q('Q2', 'out', 'a', 'e2', 'qn')
      .r('R2', 'e2', '0', 5e3)
      .r('R3', 'e2', 'vcc', 50e3);
    expect(recogniseStructures(b.build())).toEqual([]);
  });

  it('the simple mirror inside a Wilson mirror is not reported separately', () => {
    const { circuit } = fixture('wilson-mirror', 'npn');
    expect(recogniseStructures(circuit).map((s) => s.kind)).toEqual(['wilson-mirror']);
  });
});

describe('findRails', () => {
  it('follows chains of sources and keeps ground first', () => {
    const b = new CircuitBuilder().v('V1', 'a', '0', 5).v('V2', 'b', 'a', 3).v('V3', 'a', 'c', 12).r('R', 'b', 'd', 1e3);
    // Source: Kirchhoff's voltage law around each source loop (facts of the trade).
    expect(findRails(b.build())).toEqual([
      { node: '0', volts: 0, sources: [] },
      { node: 'a', volts: 5, sources: ['V1'] },
      { node: 'b', volts: 8, sources: ['V1', 'V2'] },
      { node: 'c', volts: -7, sources: ['V1', 'V3'] },
    ]);
  });

  it('indexes each rail at the last node of its name, for a few rails and for many, names unique or repeated', () => {
    for (const sources of [3, 40]) {
      const b = new CircuitBuilder();
      for (let k = 0; k < sources; k++) b.v(`V${k}`, `s${k}`, k % 3 === 0 ? '0' : `s${k - 1}`, 1 + k).r(`R${k}`, `s${k}`, `m${k}`, 1e3);
      const unique = b.build();
      // A builder's circuit may repeat a node's name (the elaborator's does not): a later node named as a rail's.
      const repeated: Circuit = { ...unique, nodes: unique.nodes.map((n, i) => (n.startsWith('m') && i % 2 === 0 ? `s${i % sources}` : n)) };
      for (const circuit of [unique, repeated]) {
        // Expected: a table of every node's name (the last of a name wins), each rail looked up in it.
        const byName = new Map<string, number>();
        circuit.nodes.forEach((n, i) => byName.set(n, i));
        const expected = new Map<number, Rail>();
        for (const r of findRails(circuit)) if (byName.has(r.node)) expected.set(byName.get(r.node)!, r);
        expect([...railsByIndex(circuit)]).toEqual([...expected]);
        expect([...railsByIndex(circuit, findRails(circuit))]).toEqual([...expected]);
      }
    }
  });
});

/** Text → flat circuit through the real parser and elaborator. */
function fromText(text: string): Circuit {
  const r = elaborate(parse('t.cir', text, { hasTitle: true }), new MemoryWorkspace({ 't.cir': text }));
  expect(r.findings.filter((f) => f.severity === 'error')).toEqual([]);
  return r.circuit;
}

describe('recogniseStructures on elaborated netlists', () => {
  it('a Wilson cell used twice, a PMOS cascode, an NMOS helper and a PNP improved Wilson at top level', () => {
    const circuit = fromText(`bias cells for an invented sensor interface
.model qn npn (bf=80)
.model qp pnp (bf=60)
.model nch nmos (kp=100u vto=0.45)
.model pch pmos (kp=40u vto=-0.5)
.subckt wil in out
Q1 in b 0 qn
Q2 b b 0 qn
Q3 out in b qn
.ends
VCC vcc 0 5
R1 vcc i1 10k
X1 i1 o1 wil
R2 vcc i2 22k
X2 i2 o2 wil
* PMOS cascode hanging from VCC
M1 pb pb vcc vcc pch w=20u l=2u
M2 pc pb vcc vcc pch w=20u l=2u
M3 pa pa pb vcc pch w=20u l=2u
M4 pout pa pc vcc pch w=20u l=2u
RP pa 0 47k
* NMOS mirror with a source-follower helper and a pull-down
M5 na nb 0 0 nch w=10u l=1u
M6 vcc na nb 0 nch w=10u l=1u
M7 nout nb 0 0 nch w=30u l=1u
RNB nb 0 100k
INA vcc na 20u
* PNP improved Wilson
Q11 wc wb vcc qp
Q12 wb wb vcc qp
Q13 wout wa wb qp
Q14 wa wa wc qp
RW wa 0 33k
.end
`);
    check(circuit, [
      {
        id: 'wilson-mirror:X1.Q1',
        kind: 'wilson-mirror',
        technology: 'npn',
        devices: ['X1.Q1', 'X1.Q2', 'X1.Q3'],
        instance: 'X1.',
        reference: { device: 'X1.Q1', node: 'i1', feed: 'resistor', elements: ['R1'], rail: { node: 'vcc', volts: 5 } },
        outputs: [{ device: 'X1.Q3', node: 'o1', ratio: 1 }],
      },
      {
        id: 'wilson-mirror:X2.Q1',
        kind: 'wilson-mirror',
        technology: 'npn',
        devices: ['X2.Q1', 'X2.Q2', 'X2.Q3'],
        instance: 'X2.',
        reference: { device: 'X2.Q1', node: 'i2', feed: 'resistor', elements: ['R2'] },
        outputs: [{ device: 'X2.Q3', node: 'o2', ratio: 1 }],
      },
      {
        id: 'cascode-mirror:M3',
        kind: 'cascode-mirror',
        technology: 'pmos',
        devices: ['M1', 'M2', 'M3', 'M4'],
        reference: { device: 'M3', node: 'pa', feed: 'resistor', elements: ['RP'], rail: { node: '0', volts: 0 } },
        outputs: [{ device: 'M4', node: 'pout', ratio: 1 }],
      },
      {
        id: 'helper-mirror:M5',
        kind: 'helper-mirror',
        technology: 'nmos',
        devices: ['M5', 'M6', 'M7'],
        reference: { device: 'M5', node: 'na', feed: 'current-source', elements: ['INA'] },
        outputs: [{ device: 'M7', node: 'nout', ratio: 3 }],
      },
      {
        id: 'improved-wilson-mirror:Q14',
        kind: 'improved-wilson-mirror',
        technology: 'pnp',
        devices: ['Q11', 'Q12', 'Q13', 'Q14'],
        reference: { device: 'Q14', node: 'wa', feed: 'resistor', elements: ['RW'] },
        outputs: [{ device: 'Q13', node: 'wout', ratio: 1 }],
      },
    ]);
  });

  it('an NMOS mirror fed by a current source feeds a PMOS mirror inside an instance; the diff pair it loads is no mirror', () => {
    const circuit = fromText(`an invented two-stage bias chain
.model nch nmos (kp=100u vto=0.45)
.model pch pmos (kp=40u vto=-0.5)
VDD vdd 0 3.3
VIP inp 0 1.6
VIN inn 0 1.6
IB vdd g 10u
MN1 g g 0 0 nch w=4u l=1u
MN2 tail g 0 0 nch w=8u l=1u
MN3 pfeed g 0 0 nch w=4u l=1u
* the diff pair and its PMOS active load
MD1 d1 inp tail 0 nch w=10u l=1u
MD2 d2 inn tail 0 nch w=10u l=1u
ML1 d1 d1 vdd vdd pch w=10u l=1u
ML2 d2 d1 vdd vdd pch w=10u l=1u
.subckt pcell in out vdd
MA in in vdd vdd pch w=5u l=1u
MB out in vdd vdd pch w=10u l=1u
.ends
XP pfeed pout vdd pcell
RO pout 0 50k
.end
`);
    check(circuit, [
      {
        id: 'simple-mirror:MN1',
        kind: 'simple-mirror',
        technology: 'nmos',
        devices: ['MN1', 'MN2', 'MN3'],
        reference: { device: 'MN1', node: 'g', feed: 'current-source', elements: ['IB'] },
        outputs: [
          { device: 'MN2', node: 'tail', ratio: 2 },
          { device: 'MN3', node: 'pfeed', ratio: 1 },
        ],
      },
      {
        id: 'simple-mirror:ML1',
        kind: 'simple-mirror',
        technology: 'pmos',
        devices: ['ML1', 'ML2'],
        // The active load is fed by the differential pair's drain, which is no structure output.
        reference: { device: 'ML1', node: 'd1', feed: 'other', elements: [] },
        outputs: [{ device: 'ML2', node: 'd2', ratio: 1 }],
      },
      {
        id: 'simple-mirror:XP.MA',
        kind: 'simple-mirror',
        technology: 'pmos',
        devices: ['XP.MA', 'XP.MB'],
        instance: 'XP.',
        reference: { device: 'XP.MA', node: 'pfeed', feed: 'mirror-output', elements: ['MN3'], fedBy: 'simple-mirror:MN1' },
        outputs: [{ device: 'XP.MB', node: 'pout', ratio: 2 }],
      },
    ]);
  });
});
