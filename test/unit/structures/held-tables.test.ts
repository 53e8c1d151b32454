// A checked structure's per-output tables (headroom, compliance, output resistance, solved currents) and its estimate's
// (output currents, output edges, supply) held as numbers and made again when read: the values against the operating
// point worked out here, the names and their order, the JSON text, copies, and every value that is kept as given.

import { describe, expect, it } from 'vitest';
import { analyse } from '../../../shared-analysis/src/service';
import { MemoryWorkspace } from '../../../shared-analysis/src/types';
import { dropNonFinite } from '../../../shared-analysis/src/output-guard';
import { copyStructure } from '../../../shared-analysis/src/structures/corner-columns';
import { keepChecked, RecognisedStructure } from '../../../shared-analysis/src/structures/recognised';
import { heldEstimate, HandEstimate } from '../../../shared-analysis/src/structures/hand-estimate';
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

describe('values that are not held as numbers are kept as given', () => {
  it('an empty table with a prototype, a number that is not finite, names out of order, a name twice, and an assigned value', () => {
    const { structures } = analysed();
    const s = structures.find((x) => x.reference.device === 'Q1')!;
    const [a, b, c] = outputNames(s);
    const withProto: Record<string, number> = {};
    const notFinite = nameTable<number>({ [a]: 1, [b]: NaN, [c]: 2 });
    const reversed = nameTable<number>({ [c]: 1, [b]: 2, [a]: 3 });
    const ranges = nameTable({ [a]: { min: 0, max: 1, extra: 2 } as { min: number; max: number } });
    const solved = { iref: Infinity, iout: nameTable<number>({ [a]: 1 }) };
    keepChecked(s, solved, withProto, ranges, notFinite);
    expect(s.headroom).toBe(withProto);
    expect(s.compliance).toBe(ranges);
    expect(s.outputResistance).toBe(notFinite);
    expect(s.solved).toBe(solved);
    // Held next to one given: a table in another order is kept as given; one in order is made again.
    const inOrder = nameTable<number>({ [a]: 3, [c]: 1 });
    keepChecked(s, undefined, reversed, nameTable(), inOrder);
    expect(s.headroom).toBe(reversed);
    expect(s.solved).toBeUndefined();
    expect(s.outputResistance).not.toBe(inOrder);
    expect(s.outputResistance).toEqual(inOrder);
    expect(Object.keys(s.outputResistance)).toEqual([a, c]);
    // A value kept as given is walked: the finiteness walk removes its NaN and names where it was.
    keepChecked(s, undefined, withProto, nameTable(), notFinite);
    const removed: string[] = [];
    dropNonFinite(s, 's', removed);
    expect(removed).toEqual([`s.outputResistance.${b}`]);
    expect(Object.keys(s.outputResistance)).toEqual([a, c]);
    // Assigned through the member, a table is what is read back.
    const assigned = nameTable<number>({ [a]: 5 });
    s.headroom = assigned;
    expect(s.headroom).toBe(assigned);
  });

  it('a structure whose outputs name one device twice keeps its tables as given', () => {
    const { structures } = analysed();
    const s = structures.find((x) => x.reference.device === 'Q1')!;
    const twice = { ...s.outputs[0]! };
    s.outputs = [...s.outputs, twice];
    const headroom = nameTable<number>({ [twice.device]: 1 });
    keepChecked(s, undefined, headroom, nameTable(), nameTable());
    expect(s.headroom).toBe(headroom);
  });
});

describe('a hand estimate holds its output currents, output edges and supply as numbers', () => {
  const outs = [{ device: 'QB' }, { device: 'QA' }];
  function literal(): Estimate {
    return {
      iref: 1e-3,
      iout: nameTable({ QB: 0.98e-3, QA: 1.96e-3 }),
      vControl: 0.65,
      irefShortcut: undefined,
      steps: [],
      irefFrom: 'resistor',
      starved: false,
      supply: { available: 9, needed: 0.5 },
      outputEdge: nameTable({ QA: 0.65 }),
    };
  }

  it('reads as the literal it was made from: members in order, values, JSON text', () => {
    const e = literal();
    const held = heldEstimate(outs, e);
    expect(held).toBeInstanceOf(HandEstimate);
    expect(Object.keys(held)).toEqual(Object.keys(e));
    expect(JSON.stringify(held)).toBe(JSON.stringify(e));
    expect(held.iout).toEqual({ QB: 0.98e-3, QA: 1.96e-3 });
    expect(Object.keys(held.iout)).toEqual(['QB', 'QA']);
    expect(Object.getPrototypeOf(held.iout)).toBeNull();
    expect(held.outputEdge).toEqual({ QA: 0.65 });
    expect(held.supply).toEqual({ available: 9, needed: 0.5 });
    expect(structuredClone(held)).toEqual(e);
    // Voltages added after the others, in the literal's order.
    const withVoltages = { ...literal(), voltages: nameTable({ VBG: 1.2 }) };
    const heldV = heldEstimate(outs, withVoltages);
    expect(Object.keys(heldV)).toEqual(Object.keys(withVoltages));
    expect(JSON.stringify(heldV)).toBe(JSON.stringify(withVoltages));
  });

  it('keeps a value that is not a table of finite numbers as given, and any other estimate as it is', () => {
    const e = literal();
    e.iout = nameTable({ QB: NaN, QA: 1 });
    e.supply = { available: Infinity, needed: 0.5 };
    const held = heldEstimate(outs, e);
    expect(held.iout).toBe(e.iout);
    expect(held.supply).toBe(e.supply);
    expect(held.outputEdge).toEqual({ QA: 0.65 });
    // Members in another order (an estimate not made by the hand analysis): the estimate itself.
    const other = { iout: nameTable({ QA: 1 }), iref: 1, vControl: 0.6, steps: [], irefFrom: 'given' } as Estimate;
    expect(heldEstimate(outs, other)).toBe(other);
    // An assigned value is read back.
    const table = nameTable({ QA: 2 });
    held.outputEdge = table;
    expect(held.outputEdge).toBe(table);
  });
});
