// Resistor temperature coefficients and sheet-resistance models, switches and behavioural sources at DC, each against a closed form or an independent computation written in the test (docs/DEVICE-MODELS.md).

import { describe, expect, it } from 'vitest';
import { analyseNetlist } from '../unit/checks/netlist-check';
import type { Analysis } from '../../shared-analysis/src/analysis';
import type { TwoTerminalRecord } from '../../shared-analysis/src/solve/types';

function solved(text: string, temperatureC?: number): Analysis {
  const a = analyseNetlist(text, temperatureC === undefined ? {} : { temperatureC });
  expect(a.operatingPoint?.converged, a.findings.map((f) => `${f.code}: ${f.message}`).join('\n')).toBe(true);
  return a;
}

const current = (a: Analysis, name: string): number => (a.operatingPoint!.devices[name] as TwoTerminalRecord).current;

describe('resistor temperature coefficients', () => {
  it('scales R by 1 + TC1·ΔT + TC2·ΔT² from the instance card', () => {
    // Source: the quadratic temperature law of a resistor, R(T) = R0·(1 + α·ΔT + β·ΔT²) (common practice, from memory; the
    // TC1/TC2 names are the shared model-parameter names). 10 V across 1 kΩ with TC1 = 1e-3/K, TC2 = 1e-5/K² at ΔT = 100 K:
    // R = 1 kΩ·(1 + 0.1 + 0.1) = 1.2 kΩ, I = 8.333… mA.
    const text = 'tc\nV1 a 0 10\nR1 a 0 1k TC1=1e-3 TC2=1e-5\n.end\n';
    expect(current(solved(text, 127), 'R1')).toBeCloseTo(10 / 1200, 15);
    expect(current(solved(text, 27), 'R1')).toBeCloseTo(10 / 1000, 15);
    expect(current(solved(text, -73), 'R1')).toBeCloseTo(10 / (1000 * (1 - 0.1 + 0.1)), 15);
  });

  it('reads TC=a,b as TC1 and TC2, and takes the model’s coefficients when the card gives none', () => {
    const a = solved('tc pair\nV1 a 0 10\nR1 a 0 2k TC=2e-3,1e-6\nR2 a 0 2k RTC\nR3 a 0 2k RTC TC1=0\n.model RTC R (TC1=3e-3)\n.end\n', 77);
    // ΔT = 50 K: R1 = 2k·(1 + 0.1 + 0.0025), R2 = 2k·(1 + 0.15), R3 has its own TC1 = 0.
    expect(current(a, 'R1')).toBeCloseTo(10 / (2000 * 1.1025), 15);
    expect(current(a, 'R2')).toBeCloseTo(10 / (2000 * 1.15), 15);
    expect(current(a, 'R3')).toBeCloseTo(10 / 2000, 15);
    expect(a.findings.filter((f) => f.code === 'unexpected-field')).toEqual([]);
  });

  it('moves a divider’s output with the two resistors’ different coefficients', () => {
    // Independent computation: V(out) = V·R2(T)/(R1(T) + R2(T)).
    const text = 'drift\nV1 a 0 5\nR1 a out 10k TC1=-500e-6\nR2 out 0 10k TC1=2000e-6\n.end\n';
    for (const t of [-40, 27, 125]) {
      const dt = t - 27;
      const r1 = 10e3 * (1 - 500e-6 * dt);
      const r2 = 10e3 * (1 + 2000e-6 * dt);
      expect(solved(text, t).operatingPoint!.nodes.out).toBeCloseTo((5 * r2) / (r1 + r2), 12);
    }
  });
});

describe('resistor models with a sheet resistance', () => {
  it('takes R = RSH·L/W when the card gives no value', () => {
    // Source: sheet resistance of a rectangular film, R = Rs·L/W (common practice). 200 Ω/□, L = 50 µm, W = 2 µm: 5 kΩ.
    const a = solved('poly\nV1 a 0 5\nR1 a 0 RPOLY L=50u W=2u\n.model RPOLY R (RSH=200)\n.end\n');
    expect(current(a, 'R1')).toBeCloseTo(5 / 5000, 15);
  });

  it('reports a model resistor without W and leaves it out', () => {
    const a = analyseNetlist('poly\nV1 a 0 5\nR1 a b RPOLY L=50u\nR2 b 0 1k\n.model RPOLY R (RSH=200)\n.end\n');
    const f = a.findings.find((x) => x.code === 'element-value-missing');
    expect(f?.message).toMatch(/RSH·L\/W.*no usable W/);
  });
});
