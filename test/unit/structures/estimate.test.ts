// The recorded hand-analysis steps (what hovers and reports show) and the number formatting they use.

import { describe, expect, it } from 'vitest';
import type { Circuit } from '../../../shared-analysis/src/circuit';
import { estimateStructure, type EstimateAt } from '../../../shared-analysis/src/structures/estimate';
import { eng, percent, sig } from '../../../shared-analysis/src/structures/format';
import { recogniseStructures } from '../../../shared-analysis/src/structures/recognise';
import { CircuitBuilder } from './build';
import { fixture } from './fixtures';
import { analyse } from '../../../shared-analysis/src/service';
import { MemoryWorkspace } from '../../../shared-analysis/src/types';
import { FUZZ_ROOT, SEED_LIBRARY, SEED_NETLISTS } from '../../fuzz/seeds';

/** The one entry point: estimate the first structure and compare its steps (quantity, substituted text) in order. */
function check(circuit: Circuit, at: EstimateAt, expected: [string, RegExp][]): void {
  const s = recogniseStructures(circuit)[0];
  const e = estimateStructure(circuit, s, at);
  expect(e.steps.map((x) => x.quantity)).toEqual(expected.map((x) => x[0]));
  e.steps.forEach((st, i) => {
    expect(st.substituted).toMatch(expected[i][1]);
    expect(Number.isFinite(st.value)).toBe(true);
    expect(st.formula.length).toBeGreaterThan(5);
  });
}

describe('estimate steps', () => {
  it('resistor-fed NPN simple mirror: VT, VBE, IREF, the 0.7 V shortcut, IOUT, compliance edge', () => {
    check(fixture('simple-mirror', 'npn').circuit, { temperatureC: 27 }, [
      ['VT', /300\.15 K/],
      ['VBE(Q1)', /0\.02586 V × ln\(964 µA\/1e-16 A \+ 1\)/],
      ['IREF', /^\(5 V − 0 V − 0\.773 V\)\/4\.3 kΩ$/],
      ['IREF (0.7 V shortcut)', /^\(5 V − 0 V − 0\.7 V\)\/4\.3 kΩ$/],
      ['IOUT(Q2)', /^1 × 983 µA\/\(1 \+ 2\/100\)$/],
      ['Compliance edge V(out)', /^0 V \+ 0\.773 V$/],
    ]);
  });

  it('the Early factor appears once an output voltage is given', () => {
    check(fixture('simple-mirror', 'npn', { model: { VAF: 50 } }).circuit, { temperatureC: 27, outputVolts: { Q2: 4 } }, [
      ['VT', /K/],
      ['VBE(Q1)', /ln/],
      ['IREF', /4\.3 kΩ/],
      ['IREF (0.7 V shortcut)', /0\.7 V/],
      ['IOUT(Q2)', /× \(1 \+ \(4 V − 0\.773 V\)\/50 V\)$/],
      ['Compliance edge V(out)', /0\.773 V/],
    ]);
  });

  it('PMOS mirror fed by a current source: no shortcut, square-law VGS, edge below the top rail', () => {
    const b = new CircuitBuilder()
      .v('VDD', 'vdd', '0', 3.3)
      .model('pch', 'pmos', { KP: 4e-5, VTO: -0.6 })
      .i('IB', 'g', '0', 20e-6)
      .mos('M1', 'g', 'g', 'vdd', 'vdd', 'pch', { w: 10e-6, l: 1e-6 })
      .mos('M2', 'd', 'g', 'vdd', 'vdd', 'pch', { w: 20e-6, l: 1e-6 });
    check(b.build(), { temperatureC: 27 }, [
      ['VT', /K/],
      ['IREF', /^IB = 20 µA$/],
      // Source: square law — VSG = |VTH| + sqrt(2·ID/(KP·W/L)) = 0.6 V + sqrt(40 µA/400 µA/V²) = 0.916 V.
      ['VGS(M1)', /^0\.6 V \+ sqrt\(2 × 20 µA\/400 µA\/V²\)$/],
      ['IOUT(M2)', /^2 × 20 µA$/],
      ['Compliance edge V(d)', /^3\.3 V − 0\.316 V$/],
    ]);
  });

  it('a Widlar source shows the equation it solves', () => {
    check(fixture('widlar-source', 'npn').circuit, { temperatureC: 27 }, [
      ['VT', /K/],
      ['VBE(Q1)', /ln/],
      ['IREF', /4\.3 kΩ/],
      ['IREF (0.7 V shortcut)', /0\.7 V/],
      // IC1 = IREF/(1 + 1/β) when the only output is degenerated: 983 µA/1.01 = 973 µA.
      ['IOUT(Q2)', /^0\.02586 V × ln\(1 × 973 µA\/IOUT\) = IOUT × 1\.01 × 5 kΩ$/],
      ['Compliance edge V(out)', /^0 V \+ 0\.774 V$/],
    ]);
  });
});

describe('engineering formatting (SI prefixes, BIPM SI Brochure, 9th ed.)', () => {
  it('prefixes, volts kept plain, unbounded and signs', () => {
    expect(eng(0.00102, 'A')).toBe('1.02 mA');
    expect(eng(4300, 'Ω')).toBe('4.3 kΩ');
    expect(eng(0.652, 'V')).toBe('0.652 V');
    expect(eng(0.002, 'V')).toBe('2 mV');
    expect(eng(2.2e6, 'Ω')).toBe('2.2 MΩ');
    expect(eng(1e30, 'Ω')).toBe('unbounded');
    expect(eng(-0.0005, 'A')).toBe('−500 µA');
    expect(sig(2e-16)).toBe('2e-16');
    expect(percent(-0.394)).toBe('−39 %');
    expect(percent(0.052)).toBe('+5.2 %');
  });
});

describe('estimate without steps', () => {
  // A zener-referenced NPN sink (invented): its kind keeps the string current of the final evaluation for VREF.
  const ZENER_SINK = `Zener-referenced NPN current sink
VCC vcc 0 12
RB vcc b 4.7k
DZ 0 b dz
Q1 c b e qn
RE e 0 1.5k
RL vcc c 2k
.model dz D (IS=1e-14 BV=3.9 IBV=1m)
.model qn NPN (IS=1e-15 BF=150 VAF=80)
.end
`;

  it('gives the same numbers and findings with the steps left out, on every seed netlist and a diode-referenced source', () => {
    let compared = 0;
    for (const text of [...SEED_NETLISTS, ZENER_SINK]) {
      const files = { ...SEED_LIBRARY, [FUZZ_ROOT]: text };
      const run = (steps: boolean) => analyse({ uri: FUZZ_ROOT, text }, new MemoryWorkspace(files), { corners: { enabled: false }, handAnalysisSteps: steps });
      const withSteps = run(true);
      const without = run(false);
      expect(without.findings).toEqual(withSteps.findings);
      expect(without.structures.length).toBe(withSteps.structures.length);
      without.structures.forEach((s, i) => {
        const full = withSteps.structures[i];
        expect(s.estimate?.steps ?? []).toEqual([]);
        if (full.estimate) {
          expect(full.estimate.steps.length).toBeGreaterThan(0);
          expect({ ...s.estimate, steps: undefined }).toEqual({ ...full.estimate, steps: undefined });
          compared++;
        }
        expect(s.voltages).toEqual(full.voltages);
      });
    }
    // The VREF left without steps is still the string's voltage at its current: the breakdown law
    // V = BV + VT·ln(I/IBV) (docs/DEVICE-MODELS.md) at I ≈ (12 V − 3.9 V)/4.7 kΩ = 1.72 mA gives
    // 3.9 V + 25.9 mV × ln(1.72) = 3.914 V (the base current, about 14 µA, moves it by under 0.3 mV).
    const zener = analyse({ uri: FUZZ_ROOT, text: ZENER_SINK }, new MemoryWorkspace({ [FUZZ_ROOT]: ZENER_SINK }), { corners: { enabled: false }, handAnalysisSteps: false }).structures[0];
    expect(zener.kind).toBe('diode-referenced-source');
    expect(zener.estimate!.voltages!['VREF']).toBeCloseTo(3.9 + 0.025865 * Math.log((12 - 3.9) / 4.7e3 / 1e-3), 2);
    expect(compared).toBeGreaterThan(5);
  });
});
