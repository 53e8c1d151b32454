// The solves a sizing block keeps (`sizingBlock`): read back only for the same circuit, temperature and start, so a block with two operating points never answers with the other state's.

import { describe, expect, it } from 'vitest';
import type { Circuit, Resistor } from '../../../shared-analysis/src/circuit';
import { sizingBlock } from '../../../shared-analysis/src/fixes/resistor-for-current';
import { DcSolver, type DcSolveResult } from '../../../shared-analysis/src/solve/dc';
import { circuitOf } from './elaborated';

// An invented cross-coupled NPN pair (a set–reset latch without its inputs) on a 5 V rail, beside
// five dividers on the same rail so that the latch is a block of its own. Each collector drives the
// other device's base through 22 kΩ. Source: the bistable multivibrator (from memory: any electronics
// text) — with loop gain above one it has two stable states, one device saturated and the other cut
// off, and an unstable balanced point between them.
const LATCH = [
  'latch beside dividers',
  'VCC vcc 0 DC 5',
  'RC1 vcc c1 2k',
  'RC2 vcc c2 2.2k',
  'RB1 c2 b1 22k',
  'RB2 c1 b2 22k',
  'Q1 c1 b1 0 qn',
  'Q2 c2 b2 0 qn',
  ...Array.from({ length: 5 }, (_, i) => `RA${i} vcc a${i} 1k\nRG${i} a${i} 0 ${i + 1}k`),
  '.model qn npn (IS=1e-15 BF=100)',
  '.end',
  '',
].join('\n');

/** A start for the block's unknowns with Q1 on (`q1On`) or off: its collector low and its base at a junction drop, or the reverse. */
function startIn(block: Circuit, q1On: boolean): Float64Array {
  const x = new Float64Array(new DcSolver(block).unknownCount);
  const volts: Record<string, number> = q1On ? { c1: 0.1, b1: 0.75, c2: 4.5, b2: 0.1, vcc: 5 } : { c1: 4.5, b1: 0.1, c2: 0.1, b2: 0.75, vcc: 5 };
  // The solver's first unknowns are the node voltages, node k at k − 1 (ground is node 0).
  block.nodes.forEach((name, k) => {
    if (k > 0) x[k - 1] = volts[name] ?? 0;
  });
  return x;
}

const collectorCurrent = (r: DcSolveResult, q: string): number => {
  const d = r.op.devices[q];
  return d?.type === 'bjt' ? d.ic : NaN;
};

describe('the solves a sizing block keeps', () => {
  it('tells two starts apart in a block with two stable states', () => {
    const circuit = circuitOf(LATCH);
    const rc1 = circuit.elements.find((e) => e.name === 'RC1') as Resistor;
    const block = sizingBlock(circuit, rc1, ['Q1', 'Q2']);
    expect(block?.circuit.elements.map((e) => e.name)).toEqual(['VCC', 'RC1', 'RC2', 'RB1', 'RB2', 'Q1', 'Q2']);
    const resistances = { RC1: 2.2e3 };
    const onStart = startIn(block!.circuit, true);
    const offStart = startIn(block!.circuit, false);
    const kept = [block!.solver.solve({ resistances, initialGuess: onStart }), block!.solver.solve({ resistances, initialGuess: offStart })];
    // Each answer against a solver of its own started at the same point (the plain path, nothing kept).
    const plain = [onStart, offStart].map((start) => new DcSolver(block!.circuit).solve({ resistances, initialGuess: start }));
    const ic = collectorCurrent;
    for (const r of [...kept, ...plain]) expect(r.op.converged).toBe(true);
    // The premise: the two starts settle in different states (Q1 carrying the current, then Q2).
    expect(ic(plain[0], 'Q1')).toBeGreaterThan(1e-3);
    expect(ic(plain[0], 'Q2')).toBeLessThan(1e-6);
    expect(ic(plain[1], 'Q2')).toBeGreaterThan(1e-3);
    expect(ic(plain[1], 'Q1')).toBeLessThan(1e-6);
    for (const i of [0, 1]) {
      for (const node of ['c1', 'c2', 'b1', 'b2']) expect(kept[i].op.nodes[node]).toBeCloseTo(plain[i].op.nodes[node], 9);
    }
    // The same start again is read back, not solved again.
    expect(block!.solver.solve({ resistances, initialGuess: offStart })).toBe(kept[1]);
  });

  it('starts the block in the state of the analysed point of the whole circuit', () => {
    const circuit = circuitOf(LATCH);
    const rc1 = circuit.elements.find((e) => e.name === 'RC1') as Resistor;
    const whole = new DcSolver(circuit);
    for (const q1On of [true, false]) {
      // The whole circuit solved in one state (its start built like the block's: node k at k − 1).
      const analysed = whole.solve({ initialGuess: startIn(circuit, q1On) });
      const on = q1On ? 'Q1' : 'Q2';
      const off = q1On ? 'Q2' : 'Q1';
      expect(collectorCurrent(analysed, on)).toBeGreaterThan(1e-3);
      const block = sizingBlock(circuit, rc1, ['Q1', 'Q2'], analysed.op)!;
      // Told no start, the block's solves start at the analysed point: the same state, the same currents.
      const unchanged = block.solver.solve({});
      expect(collectorCurrent(unchanged, on)).toBeCloseTo(collectorCurrent(analysed, on), 9);
      expect(collectorCurrent(unchanged, off)).toBeLessThan(1e-6);
    }
  });
});
