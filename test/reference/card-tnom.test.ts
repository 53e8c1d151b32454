// A model card's TNOM: every temperature law of its device runs from it, in the solver and in the hand analysis, against
// the temperature laws worked out here.

import { describe, expect, it } from 'vitest';
import { analyseNetlist } from '../unit/checks/netlist-check';

// Source: BIPM SI Brochure, 9th ed. (2019): k and q are exact by definition.
const K = 1.380649e-23;
const Q = 1.602176634e-19;
const kelvin = (c: number): number => c + 273.15;
const vt = (c: number): number => (K * kelvin(c)) / Q;

/**
 * IS(T) = IS·(T/Tnom)^XTI·exp(EG·q/k·(1/Tnom − 1/T)): the junction's saturation current moved from the card's
 * temperature (the Gummel–Poon and junction-diode temperature law; P. Antognetti and G. Massobrio, "Semiconductor
 * Device Modeling with SPICE", 2nd ed., McGraw-Hill 1993, ch. 1 and 2, from memory).
 */
function isAt(is: number, xti: number, eg: number, tC: number, tnomC: number): number {
  const t = kelvin(tC);
  const tn = kelvin(tnomC);
  return is * Math.pow(t / tn, xti) * Math.exp(((eg * Q) / K) * (1 / tn - 1 / t));
}

const volts = (text: string, node: string): number => {
  const a = analyseNetlist(text);
  expect(a.operatingPoint?.converged).toBe(true);
  return a.operatingPoint!.nodes[node]!;
};

describe('a card with TNOM, analysed at 27 °C', () => {
  it('a diode at 100 µA: V = N·VT·ln(I/IS(27 °C) + 1), IS moved from the card at 25 °C', () => {
    const card = (tnom: string) => `diode\nI1 0 a DC 100u\nD1 a 0 DX\n.model DX D (IS=1e-14 N=1${tnom})\n.end\n`;
    const expected = vt(27) * Math.log(1e-4 / isAt(1e-14, 3, 1.11, 27, 25) + 1);
    expect(volts(card(' TNOM=25'), 'a')).toBeCloseTo(expected, 6);
    // Without TNOM the card is read at the analysis's nominal temperature: IS as written.
    expect(volts(card(''), 'a')).toBeCloseTo(vt(27) * Math.log(1e-4 / 1e-14 + 1), 6);
    // `.option tnom=25` moves every card the same way as the card's own TNOM=25.
    expect(volts(`diode\n.option tnom=25\nI1 0 a DC 100u\nD1 a 0 DX\n.model DX D (IS=1e-14 N=1)\n.end\n`, 'a')).toBeCloseTo(expected, 9);
  });

  it('a diode-connected NPN at 100 µA: VBE = VT·ln(IC/IS(27 °C) + 1), IC = I·BF/(BF + 1)', () => {
    const text = `npn\nI1 0 c DC 100u\nQ1 c c 0 QN\n.model QN NPN (IS=1e-15 BF=200 TNOM=-10)\n.end\n`;
    const ic = (1e-4 * 200) / 201;
    expect(volts(text, 'c')).toBeCloseTo(vt(27) * Math.log(ic / isAt(1e-15, 3, 1.11, 27, -10) + 1), 6);
  });

  it('a diode-connected NMOS at 50 µA: VGS = VTO(T) + √(2·I/(KP(T)·W/L)), KP(T) = KP·(T/Tnom)^BEX, VTO(T) = VTO − TCV·ΔT', () => {
    // The level-1 temperature terms of docs/DEVICE-MODELS.md (BEX −1.5 and TCV 1 mV/K: common practice, from memory).
    const text = `nmos\nI1 0 g DC 50u\nM1 g g 0 0 NX W=10u L=1u\n.model NX NMOS (VTO=0.5 KP=100u TNOM=0)\n.end\n`;
    const kp = 100e-6 * Math.pow(kelvin(27) / kelvin(0), -1.5);
    const vto = 0.5 - 1e-3 * (27 - 0);
    expect(volts(text, 'g')).toBeCloseTo(vto + Math.sqrt((2 * 50e-6) / (kp * 10)), 6);
  });

  it('the hand analysis reads the card TNOM as the solver does: a mirror on a card characterised at −20 °C', () => {
    // At 47 K from the card's temperature IS(27 °C) is hundreds of times IS, and VBE falls by about 0.15 V: a hand
    // analysis that read IS as written would miss the solved VBE by that much.
    const text = `mirror\nVCC vcc 0 5\nRR vcc r 10k\nQ1 r r 0 QN\nQ2 o r 0 QN\nRL vcc o 1k\n.model QN NPN (IS=1e-15 BF=200 TNOM=-20)\n.end\n`;
    const a = analyseNetlist(text);
    const s = a.structures[0]!;
    const solvedVbe = a.operatingPoint!.nodes['r']!;
    expect(Math.abs(s.estimate!.vControl! - solvedVbe)).toBeLessThan(2e-3);
    expect(a.findings.filter((f) => f.code === 'estimate-differs-from-solved')).toEqual([]);
    // And the solved VBE is the law's: IREF from the resistor, VBE at IC = IREF·β/(β + 2) (two bases on the node).
    const iref = (5 - solvedVbe) / 10e3;
    expect(solvedVbe).toBeCloseTo(vt(27) * Math.log((iref * 200) / 202 / isAt(1e-15, 3, 1.11, 27, -20) + 1), 4);
  });

  it('reads TNOM as a parameter of every device card (no unknown-parameter warning), and refuses one below absolute zero', () => {
    const ok = analyseNetlist(`cards\nVCC vcc 0 5\nRR vcc r 10k\nQ1 r r 0 QN\nQ2 o r 0 QN\nRL vcc o 1k\n.model QN NPN (IS=1e-15 TNOM=25)\n.end\n`);
    expect(ok.findings.filter((f) => /unknown-parameter|parameter-ignored/.test(f.code))).toEqual([]);
    const bad = analyseNetlist(`cards\nI1 0 a DC 100u\nD1 a 0 DX\n.model DX D (IS=1e-14 TNOM=-300)\n.end\n`);
    const f = bad.findings.find((x) => x.code === 'model-parameter-invalid');
    expect(f?.message).toMatch(/TNOM=-300 .* must be a temperature above absolute zero/);
    // Left unset: the card is read at the analysis's nominal temperature.
    expect(bad.operatingPoint!.nodes['a']!).toBeCloseTo(vt(27) * Math.log(1e-4 / 1e-14 + 1), 6);
  });
});
