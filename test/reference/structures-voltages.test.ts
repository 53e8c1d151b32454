// Voltage-producing and cascode kinds against their published formulas and the DC solver: the VBE multiplier and the wide-swing cascode.

import { describe, expect, it } from 'vitest';
import { resolveOptions } from '../../shared-analysis/src/analysis';
import type { Circuit } from '../../shared-analysis/src/circuit';
import { analyseStructures } from '../../shared-analysis/src/checks/structures';
import { DcSolver } from '../../shared-analysis/src/solve/dc';
import type { BjtRecord, MosRecord } from '../../shared-analysis/src/solve/types';
import { recogniseStructures } from '../../shared-analysis/src/structures/recognise';
import type { Structure } from '../../shared-analysis/src/structures/types';
import { multiplier, wideSwing } from '../unit/structures/kinds/circuits';

const vt = (c: number) => (1.380649e-23 * (c + 273.15)) / 1.602176634e-19;

function analysed(circuit: Circuit, kind: Structure['kind']) {
  const op = new DcSolver(circuit).solve().op;
  const structures = recogniseStructures(circuit);
  const findings = analyseStructures({ circuit, op, structures, options: resolveOptions() });
  return { s: structures.find((x) => x.kind === kind)!, op, findings };
}

describe('VBE multiplier', () => {
  it('V = VBE·(1 + R1/R2) + IB·R1 from the solved VBE and IB, and the hand value beside it', () => {
    // Source: Gray, Hurst, Lewis, Meyer, 5th ed., ch. 5 (VBE multiplier biasing a class AB stage); Horowitz and Hill, 3rd ed., ch. 2 (from memory).
    const { s, op } = analysed(multiplier('npn'), 'vbe-multiplier');
    const q = op.devices.Q1 as BjtRecord;
    const fromSolve = q.vbe * (1 + 2.2e3 / 1e3) + q.ib * 2.2e3;
    expect(op.nodes.c).toBeCloseTo(fromSolve, 9);
    const v = s.voltages![0];
    expect(v.name).toBe('VCE');
    expect(v.solved).toBeCloseTo(op.nodes.c, 12);
    expect(Math.abs(v.estimate! / v.solved! - 1)).toBeLessThan(1e-3);
  });

  it('drifts by (1 + R1/R2) times a VBE: about −2 mV/°C each at constant current', () => {
    // Source: Horowitz and Hill, 3rd ed., ch. 2 — VBE falls about 2 mV/°C (common practice); the multiplier scales it.
    // A current source feed keeps IC nearly constant, so the solver's slope is the multiplied VBE drift.
    const at = (t: number) => {
      const c = multiplier('npn', { feed: 1e9, temperatureC: t });
      const withSource = { ...c, elements: [...c.elements.filter((e) => e.name !== 'RF'), { kind: 'I' as const, name: 'IF', nodes: [c.nodes.indexOf('vcc'), c.nodes.indexOf('c')], dc: 1e-3, origin: c.elements[0].origin }] };
      return new DcSolver(withSource).solve({ temperatureC: t }).op.nodes.c;
    };
    const slope = (at(37) - at(17)) / 20;
    // Per VBE: between −1.2 and −2.5 mV/°C (this VBE is a high 0.77 V at 1 mA with IS = 1e-16 A, which drifts less).
    expect(slope).toBeLessThan(-3.2 * 1.2e-3);
    expect(slope).toBeGreaterThan(-3.2 * 2.5e-3);
    const { s } = analysed(multiplier('npn'), 'vbe-multiplier');
    const byHand = s.estimate!.steps.find((x) => x.quantity.startsWith('dVCE/dT'))!.value * 1e-3;
    // The hand drift holds IC constant; the resistor feed's IC varies a little with VCE, so within 15 %.
    expect(Math.abs(byHand / slope - 1)).toBeLessThan(0.15);
  });
});

describe('wide-swing cascode', () => {
  it('the minimum output voltage by hand is VDS2 + VOV4 of the solved point, near 2·VOV', () => {
    // Source: Johns and Martin, Analog Integrated Circuit Design, ch. 6 — the wide-swing cascode keeps its output
    // saturated down to about 2·VOV (from memory); the edge itself is VDS2 + (VGS4 − VTH4) of the square law.
    const { s, op } = analysed(wideSwing('nmos', { biasW: 1.5e-6 }), 'wide-swing-cascode');
    const m4 = op.devices.M4 as MosRecord;
    const edgeSolved = op.nodes.x2 + m4.vov;
    const edgeHand = s.estimate!.outputEdge!.M4;
    expect(Math.abs(edgeHand - edgeSolved)).toBeLessThan(2e-3);
    const m2 = op.devices.M2 as MosRecord;
    expect(edgeHand).toBeGreaterThan(2 * m2.vov);
    expect(edgeHand).toBeLessThan(2 * m2.vov + 0.15);
  });

  it('reports bottom devices in triode, and not when they are saturated', () => {
    // Source: the triode law ID = β·((VGS − VTH)·VDS − VDS²/2) of Shichman and Hodges (IEEE JSSC, 1968), as the solver uses it.
    const triode = analysed(wideSwing('nmos', { biasW: 5e-6 }), 'wide-swing-cascode');
    expect((triode.op.devices.M1 as MosRecord).region).toBe('triode');
    expect(triode.findings.filter((f) => f.code === 'cascode-bottom-in-triode')).toHaveLength(1);
    expect(Math.abs(triode.s.estimate!.iout.M4 / triode.s.solved!.iout.M4 - 1)).toBeLessThan(1e-3);
    const sat = analysed(wideSwing('nmos', { biasW: 1.5e-6 }), 'wide-swing-cascode');
    expect(sat.findings.filter((f) => f.code === 'cascode-bottom-in-triode')).toEqual([]);
  });

  it('VT sanity: the thermal voltage the estimate uses', () => {
    const { s } = analysed(wideSwing('pmos'), 'wide-swing-cascode');
    expect(s.estimate!.steps[0].value).toBeCloseTo(vt(27), 12);
  });
});
