// Self-biased references against their published formulas and the DC solver: the ΔVBE cell, the beta multiplier and the bandgap core.

import { describe, expect, it } from 'vitest';
import { resolveOptions } from '../../shared-analysis/src/analysis';
import type { Circuit } from '../../shared-analysis/src/circuit';
import { analyseStructures } from '../../shared-analysis/src/checks/structures';
import { DcSolver } from '../../shared-analysis/src/solve/dc';
import type { BjtRecord, MosRecord } from '../../shared-analysis/src/solve/types';
import { recogniseStructures } from '../../shared-analysis/src/structures/recognise';
import type { Structure } from '../../shared-analysis/src/structures/types';
import { CircuitBuilder } from '../unit/structures/build';

// Source: k and q exact since the 2019 SI revision (BIPM SI Brochure, 9th ed.).
const K = 1.380649e-23;
const Q = 1.602176634e-19;
const vt = (c: number) => (K * (c + 273.15)) / Q;

/** The ΔVBE loop with near-ideal devices (beta 1e6, no Early effect), so the published forms apply exactly. */
function ptat(o: { n: number; r: number; temperatureC?: number; bandgapR2?: number }): Circuit {
  const b = new CircuitBuilder();
  if (o.temperatureC !== undefined) b.temperatureC = o.temperatureC;
  b.v('VCC', 'vcc', '0', 5).model('qn', 'npn', { BF: 1e6 }).model('qp', 'pnp', { BF: 1e6 });
  b.q('Q1', 'n1', 'n1', '0', 'qn').q('Q2', 'p', 'n1', 'x', 'qn', { area: o.n }).r('R', 'x', '0', o.r);
  b.q('QP1', 'p', 'p', 'vcc', 'qp').q('QP2', 'n1', 'p', 'vcc', 'qp');
  if (o.bandgapR2 !== undefined) b.q('QP3', 'vbg', 'p', 'vcc', 'qp').r('R2', 'vbg', 'y', o.bandgapR2).q('Q3', 'y', 'y', '0', 'qn');
  return b.build();
}

function analysed(circuit: Circuit, temperatureC?: number): { s: Structure; op: ReturnType<DcSolver['solve']>['op'] } {
  const op = new DcSolver(circuit).solve(temperatureC !== undefined ? { temperatureC } : {}).op;
  const structures = recogniseStructures(circuit);
  analyseStructures({ circuit, op, structures, options: resolveOptions({ temperatureC }) });
  return { s: structures.find((x) => x.kind === 'ptat-cell' || x.kind === 'bandgap-core' || x.kind === 'beta-multiplier')!, op };
}

describe('ΔVBE (PTAT) cell', () => {
  it('I = VT·ln(N)/R by hand and from the solver, near-ideal devices', () => {
    // Source: Gray, Hurst, Lewis, Meyer, 5th ed., ch. 4 — self-biased ΔVBE reference, I = VT·ln(N)/R (from memory).
    const want = (vt(27) * Math.log(8)) / 1e3;
    const { s, op } = analysed(ptat({ n: 8, r: 1e3 }));
    expect(s.kind).toBe('ptat-cell');
    const published = s.estimate!.steps.find((x) => x.quantity === 'IOUT(Q2), published form')!;
    expect(published.value).toBeCloseTo(want, 12);
    expect(s.estimate!.iout.Q2 / want - 1).toBeLessThan(1e-4);
    expect(Math.abs((op.devices.Q2 as BjtRecord).ic / want - 1)).toBeLessThan(1e-3);
  });

  it('is proportional to absolute temperature: about +3300 ppm/°C at 27 °C', () => {
    // Source: I ∝ VT = k·T/q with a resistor of no temperature coefficient, so (1/I)·dI/dT = 1/T (facts of the trade).
    const at = (t: number) => (new DcSolver(ptat({ n: 8, r: 1e3, temperatureC: t })).solve({ temperatureC: t }).op.devices.Q2 as BjtRecord).ic;
    const slope = (at(32) - at(22)) / 10 / at(27);
    expect(slope * 1e6).toBeGreaterThan(3300);
    expect(slope * 1e6).toBeLessThan(3360);
    const { s } = analysed(ptat({ n: 8, r: 1e3 }));
    const tc = s.estimate!.steps.find((x) => x.quantity.startsWith('TC of IOUT'))!.value;
    expect(tc).toBeCloseTo(1e6 / 300.15, 6);
  });
});

describe('beta-multiplier reference', () => {
  it('I = 2/(β1·R²)·(1 − 1/√K)² by hand and from the solver', () => {
    // Source: Razavi, Design of Analog CMOS Integrated Circuits, ch. 12 — supply-independent biasing (from memory).
    const b = new CircuitBuilder()
      .v('VDD', 'vdd', '0', 3.3)
      .model('n', 'nmos', { KP: 200e-6, VTO: 0.45 })
      .model('p', 'pmos', { KP: 80e-6, VTO: -0.5 })
      .mos('M1', 'n1', 'n1', '0', '0', 'n', { w: 5e-6, l: 1e-6 })
      .mos('M2', 'p', 'n1', 's', '0', 'n', { w: 20e-6, l: 1e-6 })
      .r('RS', 's', '0', 4e3)
      .mos('M3', 'p', 'p', 'vdd', 'vdd', 'p', { w: 10e-6, l: 1e-6 })
      .mos('M4', 'n1', 'p', 'vdd', 'vdd', 'p', { w: 10e-6, l: 1e-6 });
    const beta1 = 200e-6 * 5;
    const want = (2 / (beta1 * 4e3 * 4e3)) * (1 - 1 / Math.sqrt(4)) ** 2;
    const { s, op } = analysed(b.build());
    expect(s.kind).toBe('beta-multiplier');
    expect(s.estimate!.iout.M2).toBeCloseTo(want, 12);
    expect(Math.abs((op.devices.M2 as MosRecord).id / want - 1)).toBeLessThan(1e-4);
  });
});

describe('bandgap core', () => {
  it('VBG = VBE3 + I·R2 by hand, by an independent junction-law sum and from the solver', () => {
    // Source: Gray, Hurst, Lewis, Meyer, 5th ed., ch. 4 — bandgap reference VBG = VBE + (R2/R1)·VT·ln(N) (from memory);
    // the junction law VBE = VT·ln(I/IS) of docs/DEVICE-MODELS.md with IS = 1e-16 A.
    const i = (vt(27) * Math.log(8)) / 1e3;
    const want = vt(27) * Math.log(i / 1e-16 + 1) + i * 10e3;
    const { s, op } = analysed(ptat({ n: 8, r: 1e3, bandgapR2: 10e3 }));
    expect(s.kind).toBe('bandgap-core');
    const v = s.voltages!.find((x) => x.name === 'VBG')!;
    expect(v.node).toBe('vbg');
    expect(Math.abs(v.estimate! / want - 1)).toBeLessThan(1e-4);
    expect(Math.abs(op.nodes.vbg / want - 1)).toBeLessThan(1e-3);
    expect(v.solved).toBeCloseTo(op.nodes.vbg, 12);
  });

  it('the R2 it gives for zero TC flattens VBG at the analysis temperature', () => {
    // Source: dVBG/dT = (VBG − EG − (XTI − 1)·VT)/T for a PTAT current and IS(T) ∝ T^XTI·exp(−EG/VT) (Gray et al., ch. 4,
    // VBG ≈ VG0 + (η − α)·VT at zero TC; from memory). Checked here by the solver's own slope around 27 °C.
    const { s } = analysed(ptat({ n: 8, r: 1e3, bandgapR2: 10e3 }));
    const r2Zero = s.estimate!.steps.find((x) => x.quantity === 'R2 for zero TC')!.value;
    expect(r2Zero).toBeGreaterThan(5e3);
    expect(r2Zero).toBeLessThan(15e3);
    const slope = (r2: number) => {
      const v = (t: number) => new DcSolver(ptat({ n: 8, r: 1e3, bandgapR2: r2, temperatureC: t })).solve({ temperatureC: t }).op.nodes.vbg;
      return (v(29) - v(25)) / 4;
    };
    // A plain VBE falls by about 2 mV/°C (Horowitz and Hill, 3rd ed., ch. 2, common practice); the zero-TC sum is flat to a few µV/°C.
    expect(Math.abs(slope(r2Zero))).toBeLessThan(5e-6);
    expect(Math.abs(slope(r2Zero * 0.7))).toBeGreaterThan(100e-6);
    const tcByHand = s.voltages![0].tempcoByHandPpmPerC!;
    expect(Math.sign(tcByHand)).toBe(Math.sign(slope(10e3)));
  });
});
