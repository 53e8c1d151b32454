// Recognition of every structure kind in every polarity, at top level and inside instances, and no false structures on look-alikes.

import { describe, expect, it } from 'vitest';
import type { Circuit } from '../../../shared-analysis/src/circuit';
import { findRails } from '../../../shared-analysis/src/structures/rails';
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
];
const OUTPUT: Record<StructureKind, string> = {
  'simple-mirror': 'Q2',
  'widlar-source': 'Q2',
  'helper-mirror': 'Q2',
  'wilson-mirror': 'Q3',
  'improved-wilson-mirror': 'Q3',
  'cascode-mirror': 'Q4',
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
});
