// Bad input to the DC solver: every case returns, carries a located finding, and leaves nothing non-finite in the operating point.

import { describe, expect, it } from 'vitest';
import { DcSolver, solveOperatingPoint } from '../../../shared-analysis/src/solve/dc';
import type { DcSolveResult } from '../../../shared-analysis/src/solve/dc';
import type { BjtRecord, DiodeRecord, TwoTerminalRecord } from '../../../shared-analysis/src/solve/types';
import type { Spec } from './build';
import { SOLVER_CODES } from '../../../shared-analysis/src/solve/codes';
import { circuit, model } from './build';
import { ModelReads, modelParam, type ParamIssue, type ParamRule } from '../../../shared-analysis/src/devices/params';

/** Every number in the operating point and the finding data is finite (JSON-safe). */
function allFinite(r: DcSolveResult): boolean {
  let ok = true;
  const visit = (v: unknown): void => {
    if (typeof v === 'number') ok &&= Number.isFinite(v);
    else if (v && typeof v === 'object') for (const w of Object.values(v)) visit(w);
  };
  visit(r.op);
  visit(r.findings.map((f) => f.data ?? {}));
  for (const v of r.x) ok &&= Number.isFinite(v);
  return ok;
}

/**
 * Solves `specs`; expects a finding `code` located on element number `at` (builder spans are
 * 100·i … 100·i + 50), the convergence flag `converged`, and an all-finite result.
 */
function check(specs: Spec[], expected: { code: string; at: number; converged: boolean; message?: RegExp }): DcSolveResult {
  const r = solveOperatingPoint(circuit(specs));
  const f = r.findings.find((x) => x.code === expected.code);
  expect(f, `finding ${expected.code} in ${JSON.stringify(r.findings.map((x) => x.code))}`).toBeDefined();
  expect(f!.span).toEqual({ start: 100 * expected.at, end: 100 * expected.at + 50 });
  expect(f!.uri).toBe('test.cir');
  expect(f!.message).toMatch(/\.$/);
  if (expected.message) expect(f!.message).toMatch(expected.message);
  expect(r.op.converged).toBe(expected.converged);
  expect(allFinite(r)).toBe(true);
  expect(() => JSON.stringify(r.op)).not.toThrow();
  // Every code reported is catalogued with the severity it is reported at.
  for (const x of r.findings) expect(SOLVER_CODES[x.code]?.severity, x.code).toBe(x.severity);
  return r;
}

const D = model('DGEN', 'd');
const Q = model('QGEN', 'npn', { IS: 1e-15 });

describe('element values', () => {
  it('a zero-ohm resistor is solved as a short and reported', () => {
    const r = check(
      [
        ['V', 'V1', 'a', '0', 5],
        ['R', 'R0', 'a', 'b', 0],
        ['R', 'R1', 'b', '0', 1000],
      ],
      { code: 'dc-zero-resistance', at: 1, converged: true },
    );
    expect((r.op.devices.R0 as TwoTerminalRecord).current).toBeCloseTo(5e-3, 15);
  });

  it('a negative resistor is used as written and reported', () => {
    const r = check(
      [
        ['V', 'V1', 'a', '0', 5],
        ['R', 'R1', 'a', 'b', 1000],
        ['R', 'R2', 'b', '0', -500],
      ],
      { code: 'dc-negative-resistance', at: 2, converged: true, message: /-500 Ω/ },
    );
    // Source: voltage divider with R2 = −500 Ω: V(b) = 5·(−500)/(1000 − 500) = −5 V (Ohm's law).
    expect(r.op.nodes.b).toBeCloseTo(-5, 12);
  });

  it('a negative resistor that cancels a positive one makes the node undetermined', () => {
    check(
      [
        ['I', 'I1', '0', 'a', 1e-3],
        ['R', 'R1', 'a', '0', 1000],
        ['R', 'R2', 'a', '0', -1000],
      ],
      { code: 'dc-singular-matrix', at: 0, converged: false, message: /node a/ },
    );
  });

  it('a NaN source value is replaced by 0 and reported', () => {
    check(
      [
        ['V', 'V1', 'a', '0', NaN],
        ['R', 'R1', 'a', '0', 1],
      ],
      { code: 'dc-value-unusable', at: 0, converged: true },
    );
  });

  it('a controlled source naming a missing control is reported', () => {
    check(
      [
        ['V', 'V1', 'a', '0', 1],
        ['R', 'R1', 'a', '0', 1],
        ['F', 'F1', 'b', '0', 'VNONE', 2],
        ['R', 'R2', 'b', '0', 1],
      ],
      { code: 'dc-unknown-control', at: 2, converged: true, message: /VNONE/ },
    );
  });

  it('element nodes outside the circuit are reported and the element is left out', () => {
    const c = circuit([
      ['V', 'V1', 'a', '0', 1],
      ['R', 'R1', 'a', '0', 1],
    ]);
    c.elements.push({ kind: 'R', name: 'RBAD', nodes: [1, 99], resistance: 10, origin: { uri: 'test.cir', span: { start: 200, end: 250 }, instances: [] } });
    const r = solveOperatingPoint(c);
    expect(r.findings.find((f) => f.code === 'dc-bad-node')?.span).toEqual({ start: 200, end: 250 });
    expect(r.op.converged).toBe(true);
  });
});

describe('device parameters', () => {
  it('a zero-area BJT passed directly is reported and carries no junction current', () => {
    const r = check(
      [
        ['V', 'V1', 'a', '0', 5],
        ['R', 'R1', 'a', 'b', 1000],
        ['Q', 'Q1', 'b', 'b', '0', Q, { area: 0 }],
      ],
      { code: 'dc-parameter-unusable', at: 2, converged: true, message: /AREA = 0/ },
    );
    expect(Math.abs((r.op.devices.Q1 as BjtRecord).ic)).toBeLessThan(1e-10);
  });

  it('a zero-area diode and a zero-length MOSFET are reported', () => {
    check(
      [
        ['V', 'V1', 'a', '0', 5],
        ['R', 'R1', 'a', 'b', 1000],
        ['D', 'D1', 'b', '0', D, { area: 0 }],
      ],
      { code: 'dc-parameter-unusable', at: 2, converged: true },
    );
    check(
      [
        ['V', 'V1', 'a', '0', 5],
        ['R', 'R1', 'a', 'd', 1000],
        ['M', 'M1', 'd', 'a', '0', '0', model('NZ', 'nmos', { VTO: 1 }), { l: 0 }],
      ],
      { code: 'dc-parameter-unusable', at: 2, converged: true, message: /L = 0/ },
    );
  });

  it('an unusable model parameter falls back to its default with the model as related location', () => {
    const r = check(
      [
        ['V', 'V1', 'a', '0', 5],
        ['R', 'R1', 'a', 'b', 4700],
        ['Q', 'Q1', 'b', 'b', '0', model('QNEG', 'npn', { BF: -5, NF: 0 })],
      ],
      { code: 'dc-parameter-unusable', at: 2, converged: true, message: /BF = -5/ },
    );
    const f = r.findings.find((x) => x.code === 'dc-parameter-unusable')!;
    expect(f.related?.[0].span).toEqual({ start: 9000, end: 9010 });
  });

  it('reads a model shared by several devices once, and reports its unusable values for each of them as one by one', () => {
    const bad = model('QNEG', 'npn', { BF: -5, NF: 0, RB: -1 });
    const good = model('QOK', 'npn', { IS: 2e-15, BF: 150 });
    const c = circuit([
      ['V', 'V1', 'a', '0', 5],
      ['R', 'R1', 'a', 'b', 4700],
      ['Q', 'Q1', 'b', 'b', '0', bad],
      ['Q', 'Q2', 'c', 'b', '0', bad, { area: 0 }],
      ['R', 'R2', 'a', 'c', 2200],
      ['Q', 'Q3', 'd', 'b', '0', good],
      ['R', 'R3', 'a', 'd', 2200],
      ['Q', 'Q4', 'e', 'b', '0', bad],
      ['R', 'R4', 'a', 'e', 2200],
    ]);
    const issues: ParamIssue[] = [];
    const reads = new ModelReads(READS);
    const plain: ParamIssue[] = [];
    for (const el of c.elements) {
      if (el.kind !== 'Q') continue;
      const values = reads.of(el, el.model, issues);
      // Source: the plain path — each parameter read for each element with modelParam.
      READS.forEach(([name, rule], k) => expect(values[k]).toBe(modelParam(el, el.model, name, rule, plain)));
    }
    expect(issues).toEqual(plain);
    expect(issues.map((i) => `${i.element.name} ${i.name}`)).toEqual(['Q1 BF', 'Q1 NF', 'Q1 RB', 'Q2 BF', 'Q2 NF', 'Q2 RB', 'Q4 BF', 'Q4 NF', 'Q4 RB']);
    // The solver's findings name each device on its own card, as before.
    const r = solveOperatingPoint(c);
    const named = r.findings.filter((f) => f.code === 'dc-parameter-unusable').map((f) => f.span.start / 100);
    expect(new Set(named)).toEqual(new Set([2, 3, 7]));
  });
});

const READS: [string, ParamRule][] = [
  ['IS', 'non-negative'],
  ['BF', 'positive'],
  ['NF', 'positive'],
  ['VAF', 'positive-or-infinite'],
  ['RB', 'non-negative'],
];

describe('structure', () => {
  it('a 0 V source directly across a junction is reported', () => {
    check(
      [
        ['V', 'V1', 'a', '0', 5],
        ['R', 'R1', 'a', 'b', 1000],
        ['D', 'D1', 'b', '0', D],
        ['V', 'V0', 'b', '0', 0],
      ],
      { code: 'dc-junction-shorted', at: 2, converged: true, message: /V0/ },
    );
  });

  it('a source directly across a forward junction converges and warns that the current is not physical', () => {
    const r = check(
      [
        ['V', 'V1', 'a', '0', 5],
        ['D', 'D1', 'a', '0', D],
      ],
      { code: 'dc-junction-overdriven', at: 1, converged: true, message: /5 V/ },
    );
    expect((r.op.devices.D1 as DiodeRecord).vd).toBeCloseTo(5, 12);
  });

  it('a voltage-source loop names both sources', () => {
    check(
      [
        ['V', 'V1', 'a', '0', 5],
        ['R', 'R1', 'a', '0', 10],
        ['V', 'V2', 'a', '0', 3],
      ],
      { code: 'dc-singular-matrix', at: 2, converged: false, message: /V1 and V2 form a loop/ },
    );
  });

  it('a loop through an inductor and a zero-ohm resistor is a source loop too', () => {
    check(
      [
        ['V', 'V1', 'a', '0', 5],
        ['L', 'L1', 'a', 'b'],
        ['R', 'R0', 'b', '0', 0],
      ],
      { code: 'dc-singular-matrix', at: 2, converged: false, message: /L1, V1 and R0 form a loop/ },
    );
  });

  it('a floating node behind a capacitor is named, tied, and the rest solves', () => {
    check(
      [
        ['V', 'V1', 'a', '0', 5],
        ['R', 'R1', 'a', 'b', 1000],
        ['C', 'C1', 'b', 'c'],
        ['R', 'R2', 'c', 'd', 100],
      ],
      { code: 'dc-singular-matrix', at: 2, converged: true, message: /Nodes c and d have no DC path to ground/ },
    );
  });

  it('a MOSFET gate with nothing else on it is a floating node, tied, and the rest solves', () => {
    check(
      [
        ['V', 'V1', 'a', '0', 5],
        ['R', 'R1', 'a', 'd', 1000],
        ['M', 'M1', 'd', 'g', '0', '0', model('NG', 'nmos', { VTO: 1 })],
      ],
      { code: 'dc-singular-matrix', at: 2, converged: true, message: /Node g .*gate/ },
    );
  });

  it('two different current sources in series are reported; the node is tied and the rest solves', () => {
    check(
      [
        ['I', 'I1', '0', 'a', 1e-3],
        ['I', 'I2', 'a', '0', 2e-3],
        ['R', 'R1', 'b', '0', 1],
        ['V', 'V1', 'b', '0', 1],
      ],
      { code: 'dc-singular-matrix', at: 0, converged: true, message: /Node a/ },
    );
  });

  it('a controlled source that defines its own input is unsolvable and the undetermined node is named', () => {
    check(
      [
        ['V', 'V1', 'a', '0', 1],
        ['R', 'R1', 'a', 'o', 1000],
        ['E', 'E1', 'o', '0', 'o', '0', 1],
      ],
      { code: 'dc-singular-matrix', at: 2, converged: false, message: /node o is not fixed/ },
    );
  });

  it('a current forced into a reverse-biased junction gives an implausible-voltage warning', () => {
    check(
      [
        ['I', 'I1', 'a', '0', 1e-3],
        ['D', 'D1', 'a', '0', D],
      ],
      { code: 'dc-implausible-voltage', at: 0, converged: true },
    );
  });
});

describe('1e300-valued parameters', () => {
  it('IS = 1e300 is reported where it is written and the solve returns', () => {
    check(
      [
        ['V', 'V1', 'a', '0', 5],
        ['R', 'R1', 'a', 'b', 1000],
        ['D', 'D1', 'b', '0', model('DHUGE', 'd', { IS: 1e300 })],
      ],
      { code: 'dc-value-out-of-range', at: 2, converged: false, message: /IS = 1\.00e\+300/ },
    );
  });

  it('a 1e300 V source into a 1e-300 Ω resistor overflows and is located', () => {
    const r = check(
      [
        ['V', 'V1', 'a', '0', 1e300],
        ['R', 'R1', 'a', '0', 1e-300],
      ],
      { code: 'dc-value-overflow', at: 0, converged: false },
    );
    expect(r.findings.filter((f) => f.code === 'dc-value-out-of-range').map((f) => f.span.start)).toEqual([0, 100]);
  });

  it('a 1e300 gain is reported', () => {
    check(
      [
        ['V', 'V1', 'a', '0', 1],
        ['R', 'R1', 'a', '0', 1],
        ['E', 'E1', 'o', '0', 'a', '0', 1e300],
        ['R', 'R2', 'o', '0', 1e-300],
      ],
      { code: 'dc-value-out-of-range', at: 2, converged: false },
    );
  });

  it('a 1e300 Ω resistor is reported but the circuit still solves', () => {
    check(
      [
        ['V', 'V1', 'a', '0', 5],
        ['R', 'R1', 'a', 'b', 1e300],
        ['D', 'D1', 'b', '0', D],
      ],
      { code: 'dc-value-out-of-range', at: 1, converged: true },
    );
  });
});

describe('options', () => {
  it('an impossible temperature is reported and the netlist temperature used', () => {
    const s = new DcSolver(circuit([['V', 'V1', 'a', '0', 1], ['R', 'R1', 'a', '0', 1]], { temperatureC: 50 }));
    const r = s.solve({ temperatureC: -300 });
    expect(r.findings.map((f) => f.code)).toContain('dc-temperature-unusable');
    expect(r.op.temperatureC).toBe(50);
  });

  it('a non-finite source override is reported at that source', () => {
    const s = new DcSolver(circuit([['V', 'V1', 'a', '0', 1], ['R', 'R1', 'a', '0', 1]]));
    const r = s.solve({ sourceValues: { v1: Infinity } });
    expect(r.findings.find((f) => f.code === 'dc-value-unusable')?.span).toEqual({ start: 0, end: 50 });
    expect(r.op.nodes.a).toBe(1);
  });

  it('a wrong-length initial guess is ignored', () => {
    const s = new DcSolver(circuit([['V', 'V1', 'a', '0', 1], ['R', 'R1', 'a', '0', 1]]));
    const r = s.solve({ initialGuess: new Float64Array(7).fill(NaN) });
    expect(r.op.converged).toBe(true);
    expect(r.op.nodes.a).toBe(1);
  });
});

describe('singular systems beyond the dense diagnosis size', () => {
  it('a 600-node ladder with a self-defining controlled source still names the undetermined quantity', () => {
    const specs: Spec[] = [['V', 'V1', 'n0', '0', 1]];
    for (let i = 1; i <= 600; i++) specs.push(['R', `RS${i}`, `n${i - 1}`, `n${i}`, 100], ['R', `RP${i}`, `n${i}`, '0', 1e4]);
    specs.push(['R', 'RO', 'n600', 'o', 1000], ['E', 'E1', 'o', '0', 'o', '0', 1]);
    const r = solveOperatingPoint(circuit(specs));
    const f = r.findings.find((x) => x.code === 'dc-singular-matrix');
    expect(f).toBeDefined();
    // Shifted inverse iteration finds the undetermined node first and the finding sits on E1 (element 1202).
    expect(f!.message).toMatch(/singular: node o, /);
    expect(f!.span).toEqual({ start: 120200, end: 120250 });
    expect(r.op.converged).toBe(false);
    expect(allFinite(r)).toBe(true);
  });
});

describe('malformed circuits passed directly', () => {
  it('an empty node list and an element of unknown kind do not crash the solver', () => {
    const c = circuit([['V', 'V1', 'a', '0', 1], ['R', 'R1', 'a', '0', 1]]);
    (c.elements as unknown[]).push({ kind: 'Z', name: 'Z1', nodes: [1, 0], origin: { uri: 'test.cir', span: { start: 200, end: 250 }, instances: [] } });
    const r = solveOperatingPoint(c);
    expect(r.findings.find((f) => f.code === 'dc-bad-node')?.span).toEqual({ start: 200, end: 250 });
    expect(r.op.nodes.a).toBe(1);
    const empty = solveOperatingPoint({ ...circuit([]), nodes: [] });
    expect(empty.op.converged).toBe(true);
    expect(allFinite(empty)).toBe(true);
  });
});
