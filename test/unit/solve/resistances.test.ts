// Per-solve resistance overrides: applied to the prepared matrix, equal to rebuilding the circuit, refused with a located finding when impossible.

import { describe, expect, it } from 'vitest';
import { DcSolver } from '../../../shared-analysis/src/solve/dc';
import type { DcSolveResult } from '../../../shared-analysis/src/solve/dc';
import type { TwoTerminalRecord } from '../../../shared-analysis/src/solve/types';
import type { Spec } from './build';
import { circuit, model } from './build';

/** `specs` with resistor `name` rewritten to `ohms`: the rebuilt circuit an override must match. */
function rewritten(specs: Spec[], name: string, ohms: number): Spec[] {
  return specs.map((s) => (s[0] === 'R' && s[1] === name ? (['R', s[1], s[2], s[3], ohms] as Spec) : s));
}

/**
 * Solves `specs` with `resistances` on a solver prepared once, and checks every node against
 * `nodes` (volts, within `tol`) and against a solver built from the rewritten netlist.
 */
function check(specs: Spec[], resistances: Record<string, number>, expected: { nodes: Record<string, number>; tol: number }): DcSolveResult {
  const solver = new DcSolver(circuit(specs));
  const r = solver.solve({ resistances });
  expect(r.op.converged).toBe(true);
  expect(r.findings.filter((f) => f.code === 'dc-override-refused')).toEqual([]);
  let rebuiltSpecs = specs;
  for (const [name, ohms] of Object.entries(resistances)) rebuiltSpecs = rewritten(rebuiltSpecs, name, ohms);
  const rebuilt = new DcSolver(circuit(rebuiltSpecs)).solve();
  for (const [node, volts] of Object.entries(expected.nodes)) {
    expect(Math.abs(r.op.nodes[node] - volts), node).toBeLessThanOrEqual(expected.tol);
    expect(Math.abs(r.op.nodes[node] - rebuilt.op.nodes[node]), `${node} vs rebuilt`).toBeLessThanOrEqual(expected.tol);
  }
  return r;
}

const divider: Spec[] = [
  ['V', 'V1', 'a', '0', 10],
  ['R', 'R1', 'a', 'b', 1000],
  ['R', 'R2', 'b', '0', 1000],
];

describe('resistance overrides', () => {
  it('changes a divider leg without rebuilding', () => {
    // Source: voltage divider (Ohm's law): V(b) = 10·3k/(1k + 3k) = 7.5 V; I(R2) = 7.5 V / 3 kΩ = 2.5 mA.
    const r = check(divider, { R2: 3000 }, { nodes: { a: 10, b: 7.5 }, tol: 1e-9 });
    expect((r.op.devices.R2 as TwoTerminalRecord).current).toBeCloseTo(2.5e-3, 12);
    expect((r.op.devices.R1 as TwoTerminalRecord).current).toBeCloseTo(2.5e-3, 12);
  });

  it('matches names without regard to case and leaves the next solve at the netlist values', () => {
    const solver = new DcSolver(circuit(divider));
    // Source: voltage divider: 10·1k/(1k + 9k) = 1 V, then 10·1k/2k = 5 V with the netlist values.
    expect(solver.solve({ resistances: { r1: 9000 } }).op.nodes.b).toBeCloseTo(1, 10);
    const back = solver.solve();
    expect(back.op.nodes.b).toBeCloseTo(5, 10);
    expect((back.op.devices.R1 as TwoTerminalRecord).current).toBeCloseTo(5e-3, 12);
  });

  it('gives a 0 Ω resistor a value', () => {
    // Source: voltage divider: R0 = 1 kΩ in series with R2 = 1 kΩ from 10 V gives 5 V and 5 mA.
    const specs: Spec[] = [
      ['V', 'V1', 'a', '0', 10],
      ['R', 'R0', 'a', 'b', 0],
      ['R', 'R2', 'b', '0', 1000],
    ];
    const r = check(specs, { R0: 1000 }, { nodes: { b: 5 }, tol: 1e-9 });
    expect((r.op.devices.R0 as TwoTerminalRecord).current).toBeCloseTo(5e-3, 12);
  });

  it('breaks a source loop closed by a 0 Ω resistor', () => {
    // Source: Ohm's law, 5 V across 1 kΩ is 5 mA.
    const specs: Spec[] = [
      ['V', 'V1', 'a', '0', 5],
      ['R', 'R0', 'a', '0', 0],
    ];
    const solver = new DcSolver(circuit(specs));
    expect(solver.solve().op.converged).toBe(false);
    const r = solver.solve({ resistances: { R0: 1000 } });
    expect(r.op.converged).toBe(true);
    expect(r.findings.some((f) => f.data?.kind === 'voltage-loop')).toBe(false);
    expect((r.op.devices.R0 as TwoTerminalRecord).current).toBeCloseTo(5e-3, 12);
  });

  it('connects a node behind an open resistor, so it is no longer tied', () => {
    // Source: voltage divider: 10·1k/(1k + 1k) = 5 V once R1 conducts.
    const specs: Spec[] = [
      ['V', 'V1', 'a', '0', 10],
      ['R', 'R1', 'a', 'b', Infinity],
      ['R', 'R2', 'b', 'c', 1000],
      ['C', 'C1', 'c', '0'],
    ];
    const solver = new DcSolver(circuit(specs));
    expect(solver.solve().op.tiedNodes).toEqual(['b', 'c']);
    const r = solver.solve({ resistances: { R1: 1000, R2: 1000 } });
    expect(r.op.tiedNodes).toBeUndefined();
    // No DC current flows into C1, so b = c = 10 V (Ohm's law, zero current).
    expect(r.op.nodes.c).toBeCloseTo(10, 9);
  });

  it('moves a diode bias point exactly as a rebuilt circuit does', () => {
    // Source: a rebuilt netlist solved from scratch (the override must be indistinguishable); the diode
    // current is also checked against the Shockley law at the solved voltage (docs/DEVICE-MODELS.md diode equation).
    const D = model('DX', 'd', { IS: 1e-14 });
    const specs: Spec[] = [
      ['V', 'V1', 'a', '0', 5],
      ['R', 'R1', 'a', 'd', 1000],
      ['D', 'D1', 'd', '0', D],
    ];
    const r = check(specs, { R1: 10e3 }, { nodes: { a: 5 }, tol: 1e-9 });
    const vd = r.op.nodes.d;
    const vt = (1.380649e-23 * 300.15) / 1.602176634e-19;
    expect((5 - vd) / 10e3).toBeCloseTo(1e-14 * Math.expm1(vd / vt) + 1e-12 * vd, 12);
  });
});

describe('refused overrides', () => {
  /** Solves with `resistances`, expects one dc-override-refused finding on element `at` matching `message`, and the netlist values used. */
  function refused(resistances: Record<string, number>, at: number, message: RegExp): void {
    const solver = new DcSolver(circuit(divider));
    const r = solver.solve({ resistances });
    const f = r.findings.filter((x) => x.code === 'dc-override-refused');
    expect(f).toHaveLength(1);
    expect(f[0].severity).toBe('warning');
    expect(f[0].span).toEqual({ start: 100 * at, end: 100 * at + 50 });
    expect(f[0].message).toMatch(message);
    expect(f[0].message).toMatch(/\.$/);
    // Source: voltage divider with the netlist values, 10·1k/2k = 5 V.
    expect(r.op.nodes.b).toBeCloseTo(5, 10);
  }

  it('a change from a value to 0 Ω', () => refused({ R2: 0 }, 2, /R2 is written as 1 kΩ.*0 Ω short/));
  it('an element that does not exist', () => refused({ R7: 100 }, 0, /no element named R7/));
  it('an element that is not a resistor', () => refused({ V1: 100 }, 0, /V1 is not a resistor/));
  it('a value that is not finite', () => refused({ R1: Number.NaN }, 1, /not a finite number/));
  it('an infinite value', () => refused({ R1: Infinity }, 1, /not a finite number/));
});
