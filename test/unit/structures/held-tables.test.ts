// What the structure check finds (headroom, compliance, output resistance, solved currents, the hand estimate) held by a
// structure as numbers and made again when read: the values against the operating point and the hand formulas worked
// out here, the names and their order, the JSON text, copies, and every value that is kept as given.

import { describe, expect, it } from 'vitest';
import { analyse } from '../../../shared-analysis/src/service';
import { MemoryWorkspace } from '../../../shared-analysis/src/types';
import { dropNonFinite } from '../../../shared-analysis/src/output-guard';
import { copyStructure } from '../../../shared-analysis/src/structures/corner-columns';
import { checkedFigures, estimateFigures, FIGURE, HELD, keepChecked, RecognisedStructure, roleOf, type CheckedValues } from '../../../shared-analysis/src/structures/recognised';
import { nameTable } from '../../../shared-analysis/src/names';
import type { BjtRecord } from '../../../shared-analysis/src/solve/types';
import type { Estimate, Structure } from '../../../shared-analysis/src/structures/types';

// An invented netlist: an NPN mirror with three outputs (one of twice the area, one saturated by its load), and a PNP
// mirror with two outputs, each fed by a resistor from its rail.
const TEXT = [
  'Held tables',
  '.model qn npn (IS=1e-15 BF=120 VAF=80)',
  '.model qp pnp (IS=1e-15 BF=60 VAF=50)',
  'VCC vcc 0 DC 9',
  'RR vcc r 8.2k',
  'Q1 r r 0 qn',
  'Q2 o2 r 0 qn',
  'Q3 o3 r 0 qn 2',
  'Q4 o4 r 0 qn',
  'RL2 vcc o2 2.2k',
  'RL3 vcc o3 1k',
  'RL4 vcc o4 47k',
  'RP p 0 15k',
  'QP1 p p vcc qp',
  'QP2 po2 p vcc qp',
  'QP3 po3 p vcc qp',
  'RLP2 po2 0 3.3k',
  'RLP3 po3 0 1.5k',
  '.end',
  '',
].join('\n');

function analysed(): { structures: Structure[]; nodes: Record<string, number>; devices: Record<string, unknown> } {
  const a = analyse({ uri: '/h.cir', text: TEXT }, new MemoryWorkspace({ '/h.cir': TEXT }));
  return { structures: a.structures, nodes: a.operatingPoint!.nodes, devices: a.operatingPoint!.devices };
}

/** The device names of `s`'s outputs, in their order. */
const outputNames = (s: Structure): string[] => s.outputs.map((o) => o.device);

describe('a checked structure holds its per-output tables as numbers', () => {
  it('gives the headroom, compliance and solved currents the operating point gives, keyed by the outputs in order', () => {
    const { structures, nodes, devices } = analysed();
    const npn = structures.find((s) => s.reference.device === 'Q1')!;
    const pnp = structures.find((s) => s.reference.device === 'QP1')!;
    expect(outputNames(npn)).toEqual(['Q2', 'Q3', 'Q4']);
    expect(outputNames(pnp)).toEqual(['QP2', 'QP3']);
    for (const s of [npn, pnp]) {
      expect(s).toBeInstanceOf(RecognisedStructure);
      const sign = s.technology === 'npn' ? 1 : -1;
      for (const t of [s.headroom, s.compliance, s.outputResistance, s.solved!.iout, s.estimate!.iout, s.estimate!.outputEdge!]) {
        // Names as data: no prototype, every output once, in the outputs' order.
        expect(Object.getPrototypeOf(t)).toBeNull();
        expect(Object.keys(t)).toEqual(outputNames(s));
      }
      const top = 9;
      const bottom = 0;
      for (const o of s.outputs) {
        // Headroom of a bipolar output is −VBC in its own polarity (docs/DEVICE-MODELS.md, forward-active region):
        // the collector's distance beyond its base, worked out here from the node voltages.
        const vb = nodes[s.reference.node]!;
        const vc = nodes[o.node]!;
        expect(s.headroom[o.device]).toBeCloseTo(sign * (vc - vb), 12);
        // The output stays active from its base (VBC = 0) to the far rail: [VB, top] for NPN, [bottom, VB] for PNP.
        expect(s.compliance[o.device]).toEqual(sign > 0 ? { min: vb, max: top } : { min: bottom, max: vb });
        // Solved output current: the collector current's magnitude in the device's record.
        expect(s.solved!.iout[o.device]).toBeCloseTo(Math.abs((devices[o.device] as BjtRecord).ic), 15);
        expect(s.outputResistance[o.device]).toBeGreaterThan(0);
      }
      // IREF is the current into the reference node from the structure's terminals: with the feed resistor's own
      // current (Kirchhoff's current law at that node) it is (VCC − V(r))/RR for the NPN side, V(p)/RP for the PNP.
      const iref = sign > 0 ? (9 - nodes['r']!) / 8.2e3 : nodes['p']! / 15e3;
      expect(s.solved!.iref).toBeCloseTo(iref, 12);
      expect(Object.keys(s.solved!)).toEqual(['iref', 'iout']);
      // The hand estimate of a resistor-fed reference: IREF = (V+ − V− − VBE)/R (Gray, Hurst, Lewis, Meyer, 5th ed.,
      // ch. 4; from memory), with the VBE the estimate solved together with it.
      const e = s.estimate!;
      expect(e.iref).toBeCloseTo((9 - e.vControl) / (sign > 0 ? 8.2e3 : 15e3), 12);
      expect(Object.keys(e)).toEqual(['iref', 'iout', 'vControl', 'irefShortcut', 'steps', 'irefFrom', 'starved', 'supply', 'outputEdge']);
      expect(Object.keys(s.estimate!.supply!)).toEqual(['available', 'needed']);
    }
    // Q4's 47 kΩ load takes it into saturation: a negative headroom, held like any other number.
    expect(npn.headroom['Q4']).toBeLessThan(0);
  });

  it('writes the same JSON text and copies the same data as tables assigned as data members', () => {
    const { structures } = analysed();
    for (const s of structures) {
      // The same structure with every member a data member (a spread reads each accessor once).
      const plain = { ...s } as unknown as Record<string, unknown>;
      expect(Object.getOwnPropertyDescriptor(plain, 'headroom')!.get).toBeUndefined();
      expect(JSON.stringify(s)).toBe(JSON.stringify(plain));
      expect(Object.keys(s)).toEqual(Object.keys(plain));
      const cloned = structuredClone(s) as Structure;
      expect(JSON.stringify(cloned)).toBe(JSON.stringify(s));
      expect(cloned.headroom).toEqual(s.headroom);
      expect(cloned.estimate!.iout).toEqual(s.estimate!.iout);
      // A copy for another analysis (`copyStructure`) holds the tables as data members, equal to the held ones.
      const copy = copyStructure(s);
      expect(Object.getOwnPropertyDescriptor(copy, 'compliance')!.get).toBeUndefined();
      expect(JSON.stringify([copy.headroom, copy.compliance, copy.outputResistance, copy.solved, copy.estimate])).toBe(JSON.stringify([s.headroom, s.compliance, s.outputResistance, s.solved, s.estimate]));
      // Each read makes its own table: writing into one changes nothing held.
      const t = s.headroom;
      expect(s.headroom).not.toBe(t);
      t[s.outputs[0]!.device] = 123;
      expect(s.headroom[s.outputs[0]!.device]).not.toBe(123);
    }
  });

  it('leaves the tables held as numbers out of the finiteness walk, which finds nothing in them', () => {
    const { structures } = analysed();
    const before = JSON.stringify(structures);
    const removed: string[] = [];
    dropNonFinite(structures, 'structures', removed);
    expect(removed).toEqual([]);
    expect(JSON.stringify(structures)).toBe(before);
  });
});

/** `keepChecked` with nothing held: every value as given. */
function given(v: Partial<CheckedValues>): CheckedValues {
  return { solved: undefined, headroom: nameTable(), compliance: nameTable(), outputResistance: nameTable(), estimate: undefined, ...v };
}

describe('a structure holds its devices\' roles coded', () => {
  it('reads them as a table of every device in order, and answers a device\'s role without the table', () => {
    const { structures } = analysed();
    for (const s of structures) {
      const roles = s.roles!;
      expect(Object.getPrototypeOf(roles)).toBeNull();
      expect(Object.keys(roles)).toEqual(s.devices);
      // A simple mirror: its diode-connected device is the reference, every other device an output (the outputs listed).
      for (const d of s.devices) {
        expect(roles[d]).toBe(d === s.reference.device ? 'reference' : 'output');
        expect(roleOf(s, d)).toBe(roles[d]);
      }
      expect(roleOf(s, 'RR')).toBeUndefined();
      expect(roleOf(s, '__proto__')).toBeUndefined();
      expect(s.roles).not.toBe(roles);
    }
    // Assigned, a table is read back as it is, and answers for its devices.
    const s = structures[0]!;
    const given = nameTable<'reference' | 'output' | 'helper'>({ [s.devices[0]!]: 'helper' });
    s.roles = given;
    expect(s.roles).toBe(given);
    expect(roleOf(s, s.devices[0]!)).toBe('helper');
    expect(roleOf(s, s.devices[1]!)).toBeUndefined();
  });

  it('gives a resistor-fed reference its rail after its feed, in the order the JSON shows', () => {
    const { structures } = analysed();
    for (const s of structures) {
      expect(Object.keys(s.reference)).toEqual(['device', 'node', 'feed', 'elements', 'rail']);
      expect(s.reference.rail!.node).toBe(s.technology === 'npn' ? 'vcc' : '0');
    }
  });
});

describe('values that are not held as numbers are kept as given', () => {
  it('each value given is read back as it is, walked by the finiteness walk, and replaced by an assignment', () => {
    const { structures } = analysed();
    const s = structures.find((x) => x.reference.device === 'Q1')!;
    const [a, b, c] = outputNames(s);
    const withProto: Record<string, number> = {};
    const notFinite = nameTable<number>({ [a]: 1, [b]: NaN, [c]: 2 });
    const solved = { iref: 1e-3, iout: nameTable<number>({ [a]: 1 }) };
    keepChecked(s, checkedFigures(s), 0, given({ solved, headroom: withProto, outputResistance: notFinite }));
    expect(s.headroom).toBe(withProto);
    expect(s.outputResistance).toBe(notFinite);
    expect(s.solved).toBe(solved);
    expect(s.estimate).toBeUndefined();
    // A value kept as given is walked: the finiteness walk removes its NaN and names where it was.
    const removed: string[] = [];
    dropNonFinite(s, 's', removed);
    expect(removed).toEqual([`s.outputResistance.${b}`]);
    expect(Object.keys(s.outputResistance)).toEqual([a, c]);
    // Assigned through the member, a table is what is read back, also after it was held as figures.
    const figures = checkedFigures(s)!;
    figures[FIGURE.HEADROOM * 3 + 1] = 0.5;
    keepChecked(s, figures, HELD.HEADROOM, given({}));
    expect(s.headroom).toEqual({ [b]: 0.5 });
    const assigned = nameTable<number>({ [a]: 5 });
    s.headroom = assigned;
    expect(s.headroom).toBe(assigned);
  });

  it('a structure whose outputs name one device twice gets no figures, and a structure made elsewhere data members', () => {
    const { structures } = analysed();
    const s = structures.find((x) => x.reference.device === 'Q1')!;
    s.outputs = [...s.outputs, { ...s.outputs[0]! }];
    expect(checkedFigures(s)).toBeUndefined();
    const headroom = nameTable<number>({ [s.outputs[0]!.device]: 1 });
    keepChecked(s, undefined, HELD.HEADROOM, given({ headroom }));
    expect(s.headroom).toBe(headroom);
    const copy = copyStructure(s);
    expect(checkedFigures(copy)).toBeUndefined();
    keepChecked(copy, undefined, 0, given({ headroom }));
    expect(Object.getOwnPropertyDescriptor(copy, 'headroom')!.value).toBe(headroom);
  });
});

describe('a hand estimate held as numbers', () => {
  const outs = [{ device: 'QA' }, { device: 'QB' }];
  function literal(): Estimate {
    return {
      iref: 1e-3,
      iout: nameTable({ QA: 1.96e-3, QB: 0.98e-3 }),
      vControl: 0.65,
      irefShortcut: undefined,
      steps: [],
      irefFrom: 'resistor',
      starved: false,
      supply: { available: 9, needed: 0.5 },
      outputEdge: nameTable({ QB: 0.65 }),
    };
  }
  /** A structure recognised with outputs named as `outs` (a two-output NPN mirror of the same names). */
  function twoOutputs(): Structure {
    const text = 'Two outputs\n.model qn npn (IS=1e-15 BF=100)\nVCC vcc 0 5\nRR vcc r 10k\nQR r r 0 qn\nQB b r 0 qn\nQA a r 0 qn\nRB vcc b 1k\nRA vcc a 1k\n.end\n';
    const s = analyse({ uri: '/e.cir', text }, new MemoryWorkspace({ '/e.cir': text })).structures[0]!;
    expect(outputNames(s)).toEqual(['QA', 'QB']);
    return s;
  }

  it('reads as the literal it was made from: members in order, values, JSON text', () => {
    const s = twoOutputs();
    const e = literal();
    const figures = checkedFigures(s)!;
    const held = estimateFigures(e, outs, figures, 2);
    expect(held).toBe(HELD.ESTIMATE | HELD.ESTIMATE_SUPPLY | HELD.ESTIMATE_EDGE);
    keepChecked(s, figures, held, given({ estimate: e }));
    const read = s.estimate!;
    expect(read).not.toBe(e);
    expect(Object.keys(read)).toEqual(Object.keys(e));
    expect(JSON.stringify(read)).toBe(JSON.stringify(e));
    expect(read.iout).toEqual({ QA: 1.96e-3, QB: 0.98e-3 });
    expect(Object.keys(read.iout)).toEqual(['QA', 'QB']);
    expect(Object.getPrototypeOf(read.iout)).toBeNull();
    expect(read.outputEdge).toEqual({ QB: 0.65 });
    expect(read.supply).toEqual({ available: 9, needed: 0.5 });
    expect(structuredClone(s).estimate).toEqual(e);
    // With a 0.7 V-shortcut IREF and without a supply or edges.
    const f2 = checkedFigures(s)!;
    const e2 = { ...literal(), irefShortcut: 1.1e-3, supply: undefined, outputEdge: undefined };
    keepChecked(s, f2, estimateFigures(e2, outs, f2, 2), given({ estimate: e2 }));
    expect(JSON.stringify(s.estimate)).toBe(JSON.stringify(e2));
    expect(Object.keys(s.estimate!)).toEqual(Object.keys(e2));
  });

  it('holds no estimate with steps, voltages, a number that is not finite, or members in another order', () => {
    const f = () => checkedFigures(twoOutputs())!;
    const withSteps = literal();
    withSteps.steps.push({ quantity: 'IREF', formula: 'x', substituted: 'y', value: 1e-3, unit: 'A' });
    expect(estimateFigures(withSteps, outs, f(), 2)).toBe(0);
    expect(estimateFigures({ ...literal(), voltages: nameTable({ VBG: 1.2 }) }, outs, f(), 2)).toBe(0);
    expect(estimateFigures({ ...literal(), iout: nameTable({ QA: NaN, QB: 1 }) }, outs, f(), 2)).toBe(0);
    expect(estimateFigures({ ...literal(), iout: nameTable({ QB: 1, QA: 1 }) }, outs, f(), 2)).toBe(0);
    expect(estimateFigures({ ...literal(), supply: { available: Infinity, needed: 0.5 } }, outs, f(), 2)).toBe(0);
    expect(estimateFigures({ ...literal(), vControl: NaN }, outs, f(), 2)).toBe(0);
    const { iref, ...rest } = literal();
    expect(estimateFigures({ ...rest, iref } as Estimate, outs, f(), 2)).toBe(0);
  });
});
