// The worker's "size this resistor for a target current" answer, on analyses built in memory: M= cards, Widlar emitter resistors, expressions.

import { describe, expect, it } from 'vitest';
import { analyse } from '../../shared-analysis/src/service';
import { MemoryWorkspace } from '../../shared-analysis/src/types';
import { sizeResistor } from '../../server/src/sizing';

/** The one helper: sizes `resistor` of `text` for `target` and returns the answer. */
function check(text: string, resistor: string, target: string) {
  const a = analyse({ uri: '/t/main.cir', text, version: 1 }, new MemoryWorkspace({ '/t/main.cir': text }), { corners: { enabled: false } });
  const toRange = () => ({ start: { line: 0, character: 0 }, end: { line: 0, character: 1 } });
  return { analysis: a, result: sizeResistor(a, resistor, target, { documents: a.documents, toRange }) };
}

describe('sizing a resistor for a target current', () => {
  it('writes the value through the card’s M= multiplier', () => {
    // Two paralleled resistors (M=2) of value R give R/2 (Ohm's law): an effective value E is written as 2·E.
    const text = '5 V mirror\nVCC vcc 0 DC 5\nR1 vcc b 8.6k m=2\nQ1 b b 0 qn\nQ2 out b 0 qn\nRL vcc out 2k\n.model qn npn (IS=1e-16 BF=100)\n.end\n';
    const { result } = check(text, 'R1', '1m');
    if ('error' in result) throw new Error(result.error);
    expect(result.candidates.length).toBeGreaterThan(0);
    for (const c of result.candidates) {
      const written = Number(c.valueText.replace(/k$/i, 'e3'));
      expect(c.edit.newText).toBe(c.valueText);
      // Source: Gray, Hurst, Lewis, Meyer, 5th ed., ch. 4 — IREF = (VCC − VBE)/R, IOUT = IREF/(1 + 2/β): ≈ 4.2 kΩ effective for 1 mA.
      expect(written / 2).toBeGreaterThan(3.5e3);
      expect(written / 2).toBeLessThan(5e3);
    }
    expect(result.ideal).toBeGreaterThan(3.9e3);
    expect(result.ideal).toBeLessThan(4.5e3);
  });

  it('sizes a Widlar emitter resistor for the output current of its structure', () => {
    // Source: Gray, Hurst, Lewis, Meyer, 5th ed., ch. 4 — Widlar source: IOUT·RE = VT·ln(IREF/IOUT).
    // IREF ≈ (5 − 0.7)/4.3k ≈ 1 mA; for IOUT = 100 µA, RE ≈ 0.0259·ln(10)/100µ ≈ 600 Ω.
    const text = 'Widlar source\nVCC vcc 0 DC 5\nRREF vcc ref 4.3k\nQ1 ref ref 0 qn\nQ2 out ref e2 qn\nRE e2 0 1k\nRL vcc out 10k\n.model qn npn (IS=1e-16 BF=200)\n.end\n';
    const { analysis, result } = check(text, 'RE', '100u');
    expect(analysis.structures.some((s) => s.outputs.some((o) => o.degeneration?.resistor.toLowerCase() === 're'))).toBe(true);
    if ('error' in result) throw new Error(result.error);
    expect(result.candidates[0].label).toMatch(/current of Q2/);
    expect(result.ideal).toBeGreaterThan(450);
    expect(result.ideal).toBeLessThan(750);
  });

  it('refuses a resistor whose value is a parameter, and a bad target, with sentences', () => {
    const text = 'Param\n.param r=1k\nV1 a 0 DC 1\nR1 a 0 {r}\n.end\n';
    expect(check(text, 'R1', '1m').result).toEqual({ error: expect.stringMatching(/not a plain number.*does not overwrite/) });
    expect(check(text, 'R1', '-0').result).toEqual({ error: expect.stringMatching(/positive number of amperes/) });
    expect(check(text, 'V1', '1m').result).toEqual({ error: expect.stringMatching(/not a resistor/) });
  });
});
