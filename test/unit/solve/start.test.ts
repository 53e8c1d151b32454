// How Newton starts: the cold-start junction bias and the temperature predictor for warm starts land on the same operating point as before, in no more iterations.

import { describe, expect, it } from 'vitest';
import { DcSolver, saturationCurrentAt, thermalVoltage } from '../../../shared-analysis/src/solve/dc';
import { shiftJunction } from '../../../shared-analysis/src/devices/physics';
import type { DcSolveResult } from '../../../shared-analysis/src/solve/dc';
import type { DiodeRecord } from '../../../shared-analysis/src/solve/types';
import type { Spec } from './build';
import { circuit, model } from './build';

const Q = model('QS', 'npn', { IS: 1e-16, BF: 100, VAF: 80 });
const NM = model('NS', 'nmos', { VTO: 0.7, KP: 1e-4, LAMBDA: 0.02 });

const bjtMirror: Spec[] = [
  ['V', 'VCC', 'vcc', '0', 5],
  ['R', 'RREF', 'vcc', 'ref', 4300],
  ['Q', 'Q1', 'ref', 'ref', '0', Q],
  ['Q', 'Q2', 'out', 'ref', '0', Q],
  ['R', 'RL', 'vcc', 'out', 2000],
];
const mosMirror: Spec[] = [
  ['V', 'VDD', 'vdd', '0', 5],
  ['R', 'RREF', 'vdd', 'g', 20e3],
  ['M', 'M1', 'g', 'g', '0', '0', NM],
  ['M', 'M2', 'out', 'g', '0', '0', NM],
  ['R', 'RL', 'vdd', 'out', 10e3],
];

/** Two results agree node by node within `tol` volts. */
function same(a: DcSolveResult, b: DcSolveResult, tol: number): void {
  expect(a.op.converged && b.op.converged).toBe(true);
  for (const [node, v] of Object.entries(a.op.nodes)) expect(Math.abs(v - b.op.nodes[node]), node).toBeLessThanOrEqual(tol);
}

/** Cold start (no guess) against an explicit all-zero guess, used as given: same point, no more iterations. */
function checkCold(specs: Spec[]): void {
  const solver = new DcSolver(circuit(specs));
  const cold = solver.solve();
  const zero = solver.solve({ initialGuess: new Float64Array(solver.unknownCount) });
  same(cold, zero, 1e-9);
  expect(cold.op.iterations).toBeLessThanOrEqual(zero.op.iterations);
}

describe('cold start', () => {
  it('a BJT mirror reaches the same point as from 0 V', () => checkCold(bjtMirror));
  it('a MOS mirror reaches the same point as from 0 V', () => checkCold(mosMirror));
  it('a diode string reaches the same point as from 0 V', () =>
    checkCold([
      ['V', 'V1', 'top', '0', 3],
      ['R', 'R1', 'top', 'a', 100],
      ['D', 'D1', 'a', 'b', model('DX', 'd', { IS: 1e-14 })],
      ['D', 'D2', 'b', '0', model('DX', 'd', { IS: 1e-14 })],
    ]));
});

describe('temperature predictor', () => {
  it('keeps the current of a junction when moving it to another temperature', () => {
    // Source: Shockley diode law I = IS·exp(V/(n·VT)) (docs/DEVICE-MODELS.md), solved for V at fixed I.
    const is0 = 1e-14;
    const is1 = saturationCurrentAt(is0, 3, 1.11, 125, 27);
    const n0 = 1.0 * thermalVoltage(27);
    const n1 = 1.0 * thermalVoltage(125);
    const v1 = shiftJunction(0.65, n0, n1, is0, is1);
    expect(is1 * Math.exp(v1 / n1)).toBeCloseTo(is0 * Math.exp(0.65 / n0), 15);
    expect(v1).toBeLessThan(0.65); // a junction at fixed current gets lower with heat (fact of the trade: about −2 mV/K)
    expect(shiftJunction(0.65, n0, n1, is0, 0)).toBe(0.65); // no finite answer: unchanged
  });

  it('a diode fed by 1 mA lands on the diode law at 125 °C from the 27 °C point', () => {
    const specs: Spec[] = [
      ['I', 'I1', '0', 'a', 1e-3],
      ['D', 'D1', 'a', '0', model('DT', 'd', { IS: 1e-14, N: 1 })],
    ];
    const solver = new DcSolver(circuit(specs));
    const nominal = solver.solve();
    const predicted = solver.solve({ temperatureC: 125, initialGuess: nominal.x });
    const unhinted = solver.solve({ temperatureC: 125, initialGuess: Float64Array.from(nominal.x) });
    const explicit = solver.solve({ temperatureC: 125, initialGuess: Float64Array.from(nominal.x), initialGuessTemperatureC: 27 });
    // Source: Shockley diode law with IS(T) = IS·(T/Tnom)^XTI·exp(EG·q/k·(1/Tnom − 1/T)) (docs/DEVICE-MODELS.md;
    // XTI = 3, EG = 1.11 eV are the model defaults): VD = VT·ln(I/IS(T) + 1), less the 1 pS junction
    // conductance's share, which at 1 mA is below 1e-9 relative.
    const isT = saturationCurrentAt(1e-14, 3, 1.11, 125, 27);
    const vd = thermalVoltage(125) * Math.log(1e-3 / isT + 1);
    expect((predicted.op.devices.D1 as DiodeRecord).vd).toBeCloseTo(vd, 8);
    same(predicted, unhinted, 1e-9);
    same(predicted, explicit, 1e-9);
    expect(predicted.op.iterations).toBeLessThanOrEqual(unhinted.op.iterations);
    expect(explicit.op.iterations).toBe(predicted.op.iterations);
  });

  it('BJT mirror corners from the nominal point match cold solves at those temperatures', () => {
    const solver = new DcSolver(circuit(bjtMirror));
    const nominal = solver.solve();
    for (const t of [-40, 125]) {
      const warm = solver.solve({ temperatureC: t, initialGuess: nominal.x });
      const cold = solver.solve({ temperatureC: t });
      same(warm, cold, 1e-9);
    }
  });
});
