// The output characteristic of a mirror output: a swept output node with the load removed.

import { describe, expect, it } from 'vitest';
import { outputCharacteristic } from '../../../shared-analysis/src/features/sweep';
import type { Analysis } from '../../../shared-analysis/src/analysis';
import { analyseText, relErr } from './fixture';

const MIRROR = `NPN mirror for the sweep
VCC vcc 0 DC 10
RREF vcc ref 9.3k
Q1 ref ref 0 QN
Q2 out ref 0 QN
RL vcc out 1k
.model QN NPN (BF=100 VAF=50)
.end
`;

/** The one helper of this feature: sweep `device` and hand the result to `expectations`, or expect an error matching a pattern. */
function check(text: string, device: string, points: number, expectations: RegExp | ((r: Exclude<ReturnType<typeof outputCharacteristic>, { error: string }>, analysis: Analysis) => void)): void {
  const analysis = analyseText(text, {}, true);
  const r = outputCharacteristic(analysis, device, points);
  if (expectations instanceof RegExp) {
    expect('error' in r && r.error).toMatch(expectations);
    return;
  }
  if ('error' in r) throw new Error(r.error);
  for (const p of r.points) {
    expect(Number.isFinite(p.v) && Number.isFinite(p.i)).toBe(true);
  }
  expectations(r, analysis);
}

describe('output characteristic', () => {
  it('carries the drift with temperature from the cold to the hot corner, and the predicted spread', () => {
    check(MIRROR, 'Q2', 11, (r) => {
      const d = r.drift!;
      expect(d[0].t).toBe(-40);
      expect(d[d.length - 1].t).toBe(125);
      // Source: a resistor-fed mirror's IREF = (VCC − VBE)/R rises as VBE falls with temperature (about −2 mV/°C,
      // Horowitz and Hill, 3rd ed., ch. 2), so the output current rises from cold to hot.
      expect(d[d.length - 1].i).toBeGreaterThan(d[0].i);
      expect(r.spread!.tempcoPpmPerC).toBeGreaterThan(0);
      expect(r.spread!.sigmaRelative).toBeGreaterThan(0);
    });
  });

  it('gives each output the drift of its own solves when one temperature sweep serves every output of the analysis', () => {
    const two = MIRROR.replace('RL vcc out 1k', 'RL vcc out 1k\nQ3 out3 ref 0 QN\nRL3 vcc out3 4.7k');
    const shared = analyseText(two, {}, true);
    const q2 = outputCharacteristic(shared, 'Q2', 5);
    const q3 = outputCharacteristic(shared, 'Q3', 5);
    // Independent computation: a fresh analysis of the same netlist asked for Q3 alone.
    const alone = outputCharacteristic(analyseText(two, {}, true), 'Q3', 5);
    if ('error' in q2 || 'error' in q3 || 'error' in alone) throw new Error('no sweep');
    expect(q3.drift).toEqual(alone.drift);
    expect(q3.drift!.length).toBeGreaterThan(2);
    // Equal devices on one reference, but Q3's larger load leaves it a lower VCE, so less Early-effect
    // current (IC ∝ 1 + VCE/VA; Gray, Hurst, Lewis, Meyer, 5th ed., ch. 4): the two drifts are the outputs' own.
    expect(q3.drift![0]!.i).toBeLessThan(q2.drift![0]!.i);
  });

  it('sweeps rail to rail, finds the saturation edge and follows the Early slope', () => {
    check(MIRROR, 'Q2', 41, (r, analysis) => {
      expect(r.node).toBe('out');
      expect(r.points.length).toBeGreaterThan(35);
      expect(r.points[0].v).toBeCloseTo(0, 9);
      expect(r.points[r.points.length - 1].v).toBeCloseTo(10, 9);
      // Source: Sedra & Smith, "Microelectronic Circuits", BJT modes of operation — forward-active needs the
      // collector-base junction not forward biased, so the edge sits where VCE = VBE (VBC = 0). VBE of a small
      // device near 1 mA is 0.6–0.8 V (Horowitz & Hill, ch. 2, common practice).
      const rec = analysis.operatingPoint!.devices.Q2;
      const vbe = rec.type === 'bjt' ? rec.vbe : NaN;
      expect(Math.abs(r.edgeV - vbe)).toBeLessThan(0.03);
      // Source: Gray, Hurst, Lewis, Meyer, 5th ed., ch. 4 — in the active region IC grows as (1 + VCE/VA);
      // between VCE = 5 V and 10 V the ratio is (1 + 10/50)/(1 + 5/50) = 1.0909.
      const at = (v: number) => r.points.reduce((b, p) => (Math.abs(p.v - v) < Math.abs(b.v - v) ? p : b)).i;
      expect(relErr(at(10) / at(5), 1.2 / 1.1)).toBeLessThan(0.01);
      // The operating point lies on the swept curve (RL only set where on the curve the circuit sits).
      expect(r.operatingV).toBeGreaterThan(r.edgeV);
      expect(r.cornerSpread.length).toBeGreaterThan(0);
      // The chart's title says what the output is, in words.
      expect(r.outputKind).toBe('mirror output of the simple current mirror on Q1');
    });
  });

  it('sweeps a PMOS output over its own cell rails, with the active side below the edge and a signed current', () => {
    // A 3.3 V PMOS cell on a 12 V board: the cell hangs from vdd and ground, so the sweep spans 0–3.3 V, not 0–12 V.
    const text = `PMOS cell on a 12 V board
VCC vcc 0 DC 12
VDD vdd 0 DC 3.3
MREF g g vdd vdd PM W=20u L=2u
MOUT out g vdd vdd PM W=40u L=2u
RSET g 0 47k
RL out 0 10k
RBIG vcc 0 10k
.model PM PMOS (VTO=-0.6 KP=50u LAMBDA=0.05)
.end
`;
    check(text, 'MOUT', 34, (r, analysis) => {
      expect(r.range.low).toBeCloseTo(0, 9);
      expect(r.range.high).toBeCloseTo(3.3, 9);
      expect(r.points.at(-1)!.v).toBeCloseTo(3.3, 9);
      expect(r.activeSide).toBe('below');
      expect(r.technology).toBe('pmos');
      expect(r.title).toBe('Mirror output MOUT of the simple current mirror on MREF (PMOS)');
      // Source: Razavi, Design of Analog CMOS Integrated Circuits, ch. 5 — a PMOS output stays saturated while
      // VSD ≥ VSG − |VTH|, i.e. V(out) ≤ V(g) + |VTH|: the edge is the gate voltage plus 0.6 V.
      const g = analysis.operatingPoint!.nodes.g;
      expect(Math.abs(r.edgeV - (g + 0.6))).toBeLessThan(0.02);
      // The operating current is the solve's, not a point read off the sweep.
      const rec = analysis.operatingPoint!.devices.MOUT;
      expect(r.operatingI).toBe(rec.type === 'mosfet' ? -rec.id : NaN);
      // Positive in the output's own direction (out of the PMOS drain) where it works as a source.
      expect(r.points[0]!.i).toBeGreaterThan(0);
    });
  });

  it('sweeps a P-channel JFET self-biased source, with the linear region beyond V(gate) − VP and the solved current on the curve', () => {
    // IDSS = 1m × 2² = 4 mA, RS = 500 Ω: the self-bias quadratic (Boylestad and Nashelsky, ch. 7, from memory).
    const text = `P-channel JFET current source
VCC vcc 0 DC 15
J1 d vcc s JP
RS vcc s 500
RL d 0 3.3k
.model JP PJF (VTO=-2 BETA=1m LAMBDA=0.01)
.end
`;
    check(text, 'J1', 61, (r, analysis) => {
      expect(r.technology).toBe('pjf');
      expect(r.activeSide).toBe('below');
      expect(r.title).toBe('Self-biased JFET output J1 of the JFET self-biased current source on J1 (P-channel JFET)');
      // docs/DEVICE-MODELS.md: saturation while VSD ≥ VSG + VP, i.e. V(d) ≤ V(gate) + VP = 15 − 2 = 13 V.
      expect(Math.abs(r.edgeV - 13)).toBeLessThan(0.05);
      const rec = analysis.operatingPoint!.devices.J1;
      expect(r.operatingI).toBe(rec.type === 'jfet' ? -rec.id : NaN);
      // The self-bias quadratic computed here with IDSS·(1 + λ·VSD) at the solved drain: ID = 2·IDSS/((2k + 1) + sqrt(4k + 1)), k = IDSS·RS/|VP|.
      const n = analysis.operatingPoint!.nodes;
      const idss = 4e-3 * (1 + 0.01 * (n.s - n.d));
      const k = (idss * 500) / 2;
      expect(relErr(r.operatingI!, (2 * idss) / (2 * k + 1 + Math.sqrt(4 * k + 1)))).toBeLessThan(1e-6);
      // Where the drain sits well inside saturation the curve carries the solved current within λ's slope.
      const at = (v: number) => r.points.reduce((b, p) => (Math.abs(p.v - v) < Math.abs(b.v - v) ? p : b)).i;
      expect(relErr(at(5), r.operatingI!)).toBeLessThan(0.03);
      // Past the edge (the linear region) the current falls away.
      expect(at(14.5)).toBeLessThan(0.8 * r.operatingI!);
    });
  });

  it('marks the reversed current of an NPN output driven below its emitter rail', () => {
    // Emitters on a −5 V rail; sweeping the collector down to −5 V and the base node above it forward-biases
    // the collector-base junction hard, which drives current out of the collector (reverse of a sink's).
    const text = `NPN mirror on split rails
VCC vcc 0 DC 5
VEE vee 0 DC -5
RREF vcc ref 9.3k
Q1 ref ref vee QN
Q2 out ref vee QN
RL vcc out 1k
.model QN NPN (BF=100 VAF=50)
.end
`;
    check(text, 'Q2', 41, (r) => {
      expect(r.range.low).toBeCloseTo(-5, 9);
      expect(r.range.high).toBeCloseTo(5, 9);
      expect(r.activeSide).toBe('above');
      // Source: Ebers–Moll (Sedra & Smith, BJT modes) — at VCE = 0 with the base forward-biased the collector
      // junction conducts forward too, so IC is negative at the bottom of the sweep.
      expect(r.points[0]!.i).toBeLessThan(0);
      expect(r.points.at(-1)!.i).toBeGreaterThan(0);
    });
  });

  it('explains what cannot be swept', () => {
    check(MIRROR, 'Q1', 41, /not the output of a recognised mirror; the outputs are Q2/);
    check(MIRROR, 'Q9', 41, /not the output/);
    check(MIRROR, 'Q2', 1, /number of sweep points/);
    check(MIRROR, 'Q2', 2.5, /number of sweep points/);
  });
});
