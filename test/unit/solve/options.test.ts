// Per-solve options of a prepared DcSolver: temperature, beta scale, source overrides, warm starts and statistics.

import { describe, expect, it } from 'vitest';
import { DcSolver } from '../../../shared-analysis/src/solve/dc';
import type { BjtRecord, TwoTerminalRecord } from '../../../shared-analysis/src/solve/types';
import { circuit, model } from './build';

const q = model('QM', 'npn', { IS: 1e-15, BF: 100 });
const mirror = circuit([
  ['V', 'VCC', 'vcc', '0', 5],
  ['R', 'RREF', 'vcc', 'ref', 4300],
  ['Q', 'Q1', 'ref', 'ref', '0', q],
  ['Q', 'Q2', 'out', 'ref', '0', q],
  ['V', 'VOUT', 'out', '0', 2],
]);

/** IOUT/IREF of the mirror solved with `options`. */
function check(solver: DcSolver, options: Parameters<DcSolver['solve']>[0], expectedRatio: number): void {
  const r = solver.solve(options);
  expect(r.op.converged).toBe(true);
  const iref = (r.op.devices.RREF as TwoTerminalRecord).current;
  // Tolerance 5e-9: the 1e-12 S across Q2's reverse-biased base-collector junction adds about 1.3 pA to 1 mA.
  expect((r.op.devices.Q2 as BjtRecord).ic / iref).toBeCloseTo(expectedRatio, 8);
}

describe('DcSolver options', () => {
  const solver = new DcSolver(mirror);

  it('betaScale multiplies BF', () => {
    // Source: Gray, Hurst, Lewis, Meyer, 5th ed., ch. 4 — IOUT = IREF/(1 + 2/β).
    check(solver, {}, 1 / (1 + 2 / 100));
    check(solver, { betaScale: 0.5 }, 1 / (1 + 2 / 50));
    check(solver, { betaScale: 2 }, 1 / (1 + 2 / 200));
  });

  it('temperature moves VBE by about −2 mV/°C and is echoed in the result', () => {
    const cold = solver.solve({ temperatureC: -40 });
    const hot = solver.solve({ temperatureC: 125 });
    expect(cold.op.temperatureC).toBe(-40);
    const slope = ((hot.op.devices.Q1 as BjtRecord).vbe - (cold.op.devices.Q1 as BjtRecord).vbe) / 165;
    // Source: Horowitz and Hill, 3rd ed., ch. 2 (common practice): about −2 mV/°C; loose −1.5 … −2.5 mV/°C.
    expect(slope).toBeLessThan(-1.5e-3);
    expect(slope).toBeGreaterThan(-2.5e-3);
  });

  it('sourceValues override a source by name, case-insensitively', () => {
    const r = solver.solve({ sourceValues: { vcc: 10 } });
    expect(r.op.nodes.vcc).toBe(10);
    const iref = (r.op.devices.RREF as TwoTerminalRecord).current;
    // Source: IREF = (V+ − VBE)/R (REFERENCES.md), with the solved VBE.
    expect(iref).toBeCloseTo((10 - r.op.nodes.ref) / 4300, 15);
    expect(solver.solve().op.nodes.vcc).toBe(5);
  });

  it('a warm start from the previous x converges in one iteration to the same point', () => {
    const first = solver.solve();
    const again = solver.solve({ initialGuess: first.x });
    expect(again.op.iterations).toBe(1);
    expect(again.op.nodes.ref).toBeCloseTo(first.op.nodes.ref, 12);
    expect(first.x.length).toBe(solver.unknownCount);
  });

  it('a linear circuit is factored once', () => {
    const lin = new DcSolver(circuit([['V', 'V1', 'a', '0', 1], ['R', 'R1', 'a', 'b', 1], ['R', 'R2', 'b', '0', 1]]));
    const r = lin.solve();
    expect(r.stats.factorizations).toBe(1);
    expect(r.stats.iterations).toBe(2);
    expect(r.stats.ms).toBeGreaterThanOrEqual(0);
  });

  it('an empty circuit solves to ground only', () => {
    const r = new DcSolver(circuit([])).solve();
    expect(r.op.converged).toBe(true);
    expect(r.op.nodes).toEqual({ '0': 0 });
  });
});

describe('unusable options', () => {
  it('a non-positive beta scale is reported at the first BJT and ignored; a NaN iteration cap falls back to the default', () => {
    const s = new DcSolver(mirror);
    const r = s.solve({ betaScale: 0, maxIterations: NaN });
    expect(r.op.converged).toBe(true);
    expect(r.findings.find((f) => f.code === 'dc-value-unusable')?.span).toEqual({ start: 200, end: 250 });
    const iref = (r.op.devices.RREF as TwoTerminalRecord).current;
    // Source: Gray et al., 5th ed., ch. 4 — IOUT = IREF/(1 + 2/β) with the unscaled β = 100.
    expect((r.op.devices.Q2 as BjtRecord).ic / iref).toBeCloseTo(1 / (1 + 2 / 100), 8);
  });
});
