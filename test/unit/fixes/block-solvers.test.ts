// Sizing blocks of equal shape share one prepared solver (`blockSolver`): its answers under another block's names must be that block's own solver's.

import { describe, expect, it } from 'vitest';
import type { Circuit, Resistor } from '../../../shared-analysis/src/circuit';
import { blockShape, blockSolver } from '../../../shared-analysis/src/fixes/block-solvers';
import { affectedBlock } from '../../../shared-analysis/src/fixes/resistor-for-current';
import { DcSolver, type DcSolveResult } from '../../../shared-analysis/src/solve/dc';
import { circuitOf } from './elaborated';

// Invented: four NPN current sinks on a 5 V rail (reference resistor, diode-connected device, output
// device, load). Cells 0–2 are equal but for their names; cell 3 has another reference resistor, and
// cell 4 the same values as cell 0 with a model card of its own that reads the same.
const cell = (i: number, rr: string, model = 'qn') => [`RR${i} vcc r${i} ${rr}`, `QR${i} r${i} r${i} 0 ${model}`, `QO${i} o${i} r${i} 0 ${model}`, `RL${i} vcc o${i} 2k`];
const CELLS = [
  'four sink cells',
  'VCC vcc 0 DC 5',
  ...cell(0, '12k'),
  ...cell(1, '12k'),
  ...cell(2, '12k'),
  ...cell(3, '15k'),
  ...cell(4, '12k', 'qm'),
  '.model qn npn (IS=1e-15 BF=120 VAF=80)',
  '.model qm npn (IS=1e-15 BF=120 VAF=80)',
  '.end',
  '',
].join('\n');

function blockOf(circuit: Circuit, i: number): Circuit {
  const rr = circuit.elements.find((e) => e.name === `RR${i}`) as Resistor;
  const block = affectedBlock(circuit, rr, [`QO${i}`, `QR${i}`]);
  if (!block) throw new Error(`cell ${i} is not a block of its own`);
  return block;
}

/** Every number of two solves' points and unknowns agrees to 1e-12 relative, under the same names. */
function expectSameAnswer(shared: DcSolveResult, own: DcSolveResult): void {
  expect(shared.op.converged).toBe(true);
  expect(own.op.converged).toBe(true);
  expect(Object.keys(shared.op.nodes)).toEqual(Object.keys(own.op.nodes));
  expect(Object.keys(shared.op.devices)).toEqual(Object.keys(own.op.devices));
  const close = (a: number, b: number) => expect(Math.abs(a - b)).toBeLessThanOrEqual(1e-12 * Math.max(Math.abs(a), Math.abs(b), 1e-30));
  for (const [name, v] of Object.entries(own.op.nodes)) close(shared.op.nodes[name], v);
  for (const [name, record] of Object.entries(own.op.devices)) {
    const other = shared.op.devices[name] as unknown as Record<string, unknown>;
    for (const [key, v] of Object.entries(record)) {
      if (typeof v === 'number') close(other[key] as number, v);
      else expect(other[key]).toEqual(v);
    }
  }
  expect(shared.x.length).toBe(own.x.length);
  shared.x.forEach((v, k) => close(v, own.x[k]));
}

describe('solvers shared between sizing blocks of equal shape', () => {
  it('gives blocks equal but for their names one shape, and blocks with another value or model object another', () => {
    const circuit = circuitOf(CELLS);
    const shapes = [0, 1, 2, 3, 4].map((i) => blockShape(blockOf(circuit, i)));
    expect(shapes[0]).toBeDefined();
    expect(shapes[1]).toBe(shapes[0]);
    expect(shapes[2]).toBe(shapes[0]);
    expect(shapes[3]).not.toBe(shapes[0]);
    expect(shapes[4]).not.toBe(shapes[0]);
  });

  it('answers for another block of the shape as that block’s own solver does, under its names', () => {
    const circuit = circuitOf(CELLS);
    const first = blockSolver(circuit, blockOf(circuit, 0));
    expect(first).toBeInstanceOf(DcSolver);
    const block = blockOf(circuit, 2);
    const shared = blockSolver(circuit, block);
    expect(shared).not.toBeInstanceOf(DcSolver);
    const own = new DcSolver(block);
    // The plain path: the block's own solver, with the same options (a trial value given in another letter case, then a warm start from it).
    const trial = shared.solve({ resistances: { rr2: 9.1e3 } });
    const ownTrial = own.solve({ resistances: { rr2: 9.1e3 } });
    expectSameAnswer(trial, ownTrial);
    expect(trial.op.devices['QO2']?.type).toBe('bjt');
    // The trial value took effect: the output runs higher than at the card's 12 kΩ.
    const unchanged = own.solve();
    const ic = (r: DcSolveResult) => (r.op.devices['QO2']?.type === 'bjt' ? r.op.devices['QO2'].ic : NaN);
    expect(ic(trial)).toBeGreaterThan(1.2 * ic(unchanged));
    expectSameAnswer(shared.solve({ resistances: { RR2: 8.2e3 }, initialGuess: trial.x }), own.solve({ resistances: { RR2: 8.2e3 }, initialGuess: ownTrial.x }));
    expectSameAnswer(shared.solve({ temperatureC: 85 }), own.solve({ temperatureC: 85 }));
  });

  it('solves a block of another shape on a solver of its own', () => {
    const circuit = circuitOf(CELLS);
    blockSolver(circuit, blockOf(circuit, 0));
    const other = blockOf(circuit, 3);
    const solver = blockSolver(circuit, other);
    expect(solver).toBeInstanceOf(DcSolver);
    expectSameAnswer(solver.solve({ resistances: { RR3: 10e3 } }), new DcSolver(other).solve({ resistances: { RR3: 10e3 } }));
  });
});
