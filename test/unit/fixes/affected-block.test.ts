// affectedBlock: the part of a circuit a resistor change can move, cut at rails fixed by ideal voltage sources; and sizing on it.

import { describe, expect, it } from 'vitest';
import type { Circuit, Resistor } from '../../../shared-analysis/src/circuit';
import { affectedBlock, sizeResistorForCurrent } from '../../../shared-analysis/src/fixes/resistor-for-current';
import { DcSolver } from '../../../shared-analysis/src/solve/dc';
import type { DeviceRecord } from '../../../shared-analysis/src/solve/types';
import { recogniseStructures } from '../../../shared-analysis/src/structures/recognise';
import { circuitOf } from './elaborated';

/** The one helper: the element names of the block around `resistor` (undefined when the circuit is not split). */
function check(text: string, resistor: string, expected: string[] | undefined, mustHold: string[] = []): Circuit | undefined {
  const circuit = circuitOf(text);
  const r = circuit.elements.find((e) => e.name === resistor) as Resistor;
  const block = affectedBlock(circuit, r, mustHold);
  expect(block?.elements.map((e) => e.name)).toEqual(expected);
  return block;
}

// An invented array of six mirror cells on one 12 V rail.
const cells = (extra = ''): string => {
  const L = ['six mirror cells on one rail', 'VCC vcc 0 DC 12'];
  for (let i = 0; i < 6; i++) L.push(`RR${i} vcc r${i} ${10 + i}k`, `QR${i} r${i} r${i} 0 qn`, `QO${i} o${i} r${i} 0 qn`, `RL${i} vcc o${i} 3k`);
  L.push(extra, '.model qn npn (IS=1e-16 BF=120 VAF=80)', '.end', '');
  return L.join('\n');
};

const current = (r: DeviceRecord | undefined): number =>
  !r ? NaN : r.type === 'bjt' ? r.ic : r.type === 'mosfet' || r.type === 'jfet' ? r.id : r.type === 'diode' ? r.id : r.current;

describe('affectedBlock', () => {
  // Source: nodal analysis (from memory: any circuit-theory text) — a node held by an ideal voltage
  // source to ground is not an unknown, so nodes separated only by such nodes are solved independently.
  it('cuts at the rail: one cell and the supply that fixes the rail', () =>
    check(cells(), 'RR1', ['VCC', 'RR1', 'QR1', 'QO1', 'RL1']));

  it('keeps cells joined through a node no source fixes together', () =>
    check(cells('RX o1 o2 1meg'), 'RR1', ['VCC', 'RR1', 'QR1', 'QO1', 'RL1', 'RR2', 'QR2', 'QO2', 'RL2', 'RX']));

  it('does not split a circuit with a controlled source, whose control may sit anywhere', () =>
    check(cells('E1 e 0 o3 0 1\nRE e 0 1k'), 'RR1', undefined));

  it('does not split when an element that must be held falls outside the block', () => check(cells(), 'RR1', undefined, ['QO2']));

  it('does not split when the block would be most of the circuit', () =>
    check('one cell\nVCC vcc 0 12\nR1 vcc r 10k\nQ1 r r 0 qn\nQ2 o r 0 qn\nRL vcc o 3k\n.model qn npn\n.end\n', 'R1', undefined));

  it('does not split at a rail fixed through a source the solver would leave out', () => {
    const circuit = circuitOf(cells());
    const broken: Circuit = { ...circuit, elements: circuit.elements.map((e) => (e.kind === 'V' ? { ...e, dc: Number.NaN } : e)) };
    expect(affectedBlock(broken, broken.elements.find((e) => e.name === 'RR1') as Resistor, [])).toBeUndefined();
  });

  it('solves to the whole circuit’s currents at every element it holds but the rail sources', () => {
    const text = cells('RX o1 o2 1meg');
    const circuit = circuitOf(text);
    const block = check(text, 'RR1', ['VCC', 'RR1', 'QR1', 'QO1', 'RL1', 'RR2', 'QR2', 'QO2', 'RL2', 'RX'])!;
    const whole = new DcSolver(circuit).solve({});
    const part = new DcSolver(block).solve({});
    expect(whole.op.converged && part.op.converged).toBe(true);
    for (const e of block.elements) {
      // A rail source carries every cell's current, not only the block's.
      if (e.kind === 'V') continue;
      const a = current(whole.op.devices[e.name]);
      const b = current(part.op.devices[e.name]);
      // Source: the decomposition above is exact; the tolerance is the solver's convergence, not the method's.
      expect(Math.abs(b - a)).toBeLessThanOrEqual(1e-6 * Math.abs(a) + 1e-12);
    }
    for (const name of ['r1', 'o1', 'o2']) expect(part.op.nodes[name]).toBeCloseTo(whole.op.nodes[name], 6);
  });

  it('gives the same standard values and currents whether sizing solves the block or the whole circuit', () => {
    const text = cells();
    const circuit = circuitOf(text);
    const solver = new DcSolver(circuit);
    const structure = recogniseStructures(circuit).find((s) => s.reference.elements.includes('RR2'));
    const args = { circuit, solver, structure, resistor: 'RR2', target: 1.2e-3, series: 'E96' as const };
    const onBlock = sizeResistorForCurrent({ ...args, scope: 'affected-block' });
    const onWhole = sizeResistorForCurrent({ ...args, scope: 'whole-circuit' });
    expect(onBlock.problem).toBeUndefined();
    expect(onBlock.candidates.map((c) => c.value)).toEqual(onWhole.candidates.map((c) => c.value));
    onBlock.candidates.forEach((c, i) => expect(Math.abs(c.current / onWhole.candidates[i].current - 1)).toBeLessThan(1e-6));
    expect(Math.abs(onBlock.ideal / onWhole.ideal - 1)).toBeLessThan(1e-4);
  });
});
