// A solve that asks for the point alone (`pointOnly`, what the corner phase asks) lands on the same point, in the same
// iterations, as a full solve, and leaves out the findings a full solve makes after Newton.

import { describe, expect, it } from 'vitest';
import { DcSolver } from '../../../shared-analysis/src/solve/dc';
import type { SolveOptions } from '../../../shared-analysis/src/solve/types';
import { circuit, model, type Spec } from './build';

const Q = model('QN', 'npn', { IS: 1e-15, BF: 100, VAF: 60 });
const D = model('DX', 'd', { IS: 1e-14 });

/** A mirror with, beside it, a diode straight across a 3 V source: forward far past where its law is evaluated (3 V is 116·VT). */
const OVERDRIVEN: Spec[] = [
  ['V', 'VCC', 'vcc', '0', 5],
  ['R', 'RREF', 'vcc', 'ref', 4700],
  ['Q', 'Q1', 'ref', 'ref', '0', Q],
  ['Q', 'Q2', 'out', 'ref', '0', Q],
  ['R', 'RL', 'vcc', 'out', 2000],
  ['V', 'VD', 'a', '0', 3],
  ['D', 'D1', 'a', '0', D],
];
/** A 1e300 V source into a 1e-300 Ω resistor: results past ±1e300, which a full solve reports (dc-value-overflow) and clamps. */
const OVERFLOWING: Spec[] = [
  ['V', 'V1', 'a', '0', 1e300],
  ['R', 'R1', 'a', '0', 1e-300],
  ...OVERDRIVEN.slice(0, 5),
];
/** A node with no DC path (a static finding every full solve repeats) beside a mirror. */
const FLOATING: Spec[] = [...OVERDRIVEN.slice(0, 5), ['C', 'C1', 'out', 'f', 1e-9], ['R', 'RF', 'f', 'g', 1e3]];

function compare(specs: Spec[], options: SolveOptions, absentCodes: string[]): void {
  const solver = new DcSolver(circuit(specs));
  const full = solver.solve(options);
  const fullX = Float64Array.from(full.x);
  const fullDevices = JSON.stringify(full.op.devices);
  const fullNodes = JSON.stringify(full.op.nodes);
  const lean = solver.solve({ ...options, pointOnly: true });
  expect(lean.op.converged).toBe(full.op.converged);
  expect(lean.stats.iterations).toBe(full.stats.iterations);
  expect(Array.from(lean.x)).toEqual(Array.from(fullX));
  expect(JSON.stringify(lean.op.nodes)).toBe(fullNodes);
  expect(JSON.stringify(lean.op.devices)).toBe(fullDevices);
  for (const code of absentCodes) {
    expect(full.findings.some((f) => f.code === code), `a full solve finds ${code}`).toBe(true);
    expect(lean.findings.some((f) => f.code === code), `a point-only solve leaves out ${code}`).toBe(false);
  }
}

describe('a solve for the point alone', () => {
  it('lands where a full solve does and leaves out the overdriven-junction finding', () => compare(OVERDRIVEN, {}, ['dc-junction-overdriven']));
  it('does so at a corner started from the nominal point, with its vectors reused', () => {
    const nominal = new DcSolver(circuit(OVERDRIVEN)).solve();
    compare(OVERDRIVEN, { temperatureC: 125, betaScale: 0.5, sourceValues: { VCC: 5.25 }, initialGuess: nominal.x, reuseResult: true }, ['dc-junction-overdriven']);
  });
  it('leaves out the overflow finding, its point and tables clamped as a full solve clamps them', () => compare(OVERFLOWING, {}, ['dc-value-overflow']));
  it('leaves out the static findings a full solve repeats', () => {
    const solver = new DcSolver(circuit(FLOATING));
    const codes = solver.solve().findings.map((f) => f.code);
    expect(codes.length).toBeGreaterThan(0);
    compare(FLOATING, {}, [...new Set(codes)]);
  });
});
