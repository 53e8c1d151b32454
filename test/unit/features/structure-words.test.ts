// The voltages a structure produces and the kind of each output, said in words in hover, inlay hints and JSON.

import { describe, expect, it } from 'vitest';
import { hoverAt } from '../../../shared-analysis/src/features/hover';
import { inlayHints } from '../../../shared-analysis/src/features/inlay';
import { derivedVoltageLines, outputWords } from '../../../shared-analysis/src/features/structure-words';
import { formatTempco } from '../../../shared-analysis/src/view/format';
import { analyseText, quantityAfter, withCursor } from './fixture';

/** A VBE multiplier on a 1 mA current source: V = VBE·(1 + R1/R2) across collector and emitter. */
const MULTIPLIER = `VBE multiplier
VCC vcc 0 12
IB vcc c 1m
R1 c b 4.7k
R2 b e 2.2k
Q|1 c b e QN
VE e 0 2
.model QN NPN (IS=1e-15 BF=150 VAF=80)
.end
`;

/** A simple mirror with a Widlar output and a 1:2 plain output. */
const MIRROR = `Mirror with a Widlar output
VCC vcc 0 5
RREF vcc ref 4.3k
Q1 ref ref 0 QN
Q2 a ref e2 QN
RE e2 0 1k
Q3 b ref 0 QN 2
RA vcc a 1k
RB vcc b 1k
.model QN NPN (IS=1e-15 BF=100 VAF=80)
.end
`;

describe('derived voltages', () => {
  it('hover on the multiplier shows its voltage by hand and solved, where it is measured and its drift', () => {
    const { text, offset } = withCursor(MULTIPLIER);
    const a = analyseText(text, {}, true);
    const md = hoverAt(a, '/t/main.cir', offset)!.markdown;
    expect(md).toMatch(/VBE multiplier voltage/);
    expect(md).toMatch(/on c, above e/);
    // Source: VBE·(1 + R1/R2) with VBE ≈ 0.7 V at 1 mA (Gray et al., ch. 5, from memory): about 0.71·(1 + 4.7/2.2) ≈ 2.2 V.
    const solved = quantityAfter(md, 'solved', 'V');
    expect(solved).toBeGreaterThan(2.0);
    expect(solved).toBeLessThan(2.45);
    // A junction voltage falls with temperature (about −2 mV/°C, common practice), so the drift is negative.
    expect(md).toMatch(/drift −\d[\d.]* ppm\/°C from the cold and hot corners/);
  });

  it('hover on the node it appears on says the voltage and which structure produces it', () => {
    const { text } = withCursor(MULTIPLIER);
    const a = analyseText(text);
    const md = hoverAt(a, '/t/main.cir', text.indexOf('IB vcc c') + 'IB vcc '.length)!.markdown;
    expect(md).toMatch(/Node \*\*c\*\*/);
    expect(md).toMatch(/VCE \(VBE multiplier voltage.*\) on c, above e: hand estimate 2\.\d+ V, solved 2\.\d+ V.* — from the VBE multiplier on Q1/);
  });

  it('the multiplier device is its pass device, not a diode-connected reference', () => {
    const { text, offset } = withCursor(MULTIPLIER);
    const md = hoverAt(analyseText(text), '/t/main.cir', offset)!.markdown;
    expect(md).toMatch(/\*\*VBE multiplier\*\* \(NPN\) — this is its pass device\./);
    expect(md).not.toMatch(/diode-connected/);
  });

  it('the inlay label of the multiplier device carries its voltage', () => {
    const { text } = withCursor(MULTIPLIER);
    const a = analyseText(text);
    const hints = inlayHints(a, '/t/main.cir', { start: 0, end: text.length }, 'terse');
    const q1 = hints.find((h) => text.slice(text.lastIndexOf('\n', h.offset - 1) + 1).startsWith('Q1'))!;
    expect(q1.label).toMatch(/VCE 2\.\d+ V/);
  });

  it('JSON carries them as structures[].voltages with the solved value', () => {
    const { text } = withCursor(MULTIPLIER);
    const a = analyseText(text);
    const json = JSON.parse(JSON.stringify(a.structures));
    expect(json[0].voltages[0]).toMatchObject({ name: 'VCE', node: 'c', from: 'e' });
    expect(Math.abs(json[0].voltages[0].solved - (a.operatingPoint!.nodes.c - a.operatingPoint!.nodes.e))).toBeLessThan(1e-9);
    expect(derivedVoltageLines(a.structures[0])[0]).toMatch(/^VCE \(VBE multiplier voltage/);
  });

  it('tempco text has a sign and no exponent', () => {
    expect(formatTempco(-2261.4)).toBe('−2260 ppm/°C');
    expect(formatTempco(52.44)).toBe('+52.4 ppm/°C');
    expect(formatTempco(0)).toBe('0 ppm/°C');
    // A drift far below any part's (a JFET source with no temperature coefficients solves to about 1e-6 ppm/°C of rounding).
    expect(formatTempco(-1.67e-6)).toBe('≈ 0 ppm/°C');
    expect(formatTempco(0.012)).toBe('+0.012 ppm/°C');
    expect(formatTempco(Number.NaN)).toBe('— ppm/°C');
  });
});

describe('the kind of each output in words', () => {
  it('a source whose device is its own output says so, not "reference"', () => {
    const text = `Zener-referenced sink
VCC vcc 0 12
RB vcc b 4.7k
DZ 0 b DZ56
Q1 out b e QN
RE e 0 2.2k
RL vcc out 1k
.model DZ56 d (IS=1e-14 BV=5.6 IBV=1m)
.model QN npn (BF=150)
.end
`;
    const md = hoverAt(analyseText(text), '/t/main.cir', text.indexOf('Q1 out') + 1)!.markdown;
    expect(md).toMatch(/\*\*Diode-referenced current source\*\* \(NPN\) — this is its diode-referenced output\./);
    expect(md).toMatch(/VREF \(reference voltage of the zener string\) on b: hand estimate 5\.6\d* V/);
  });

  it('a degenerated output of a simple mirror is a Widlar output; a 1:2 output says its ratio; a 1:1 says none', () => {
    const a = analyseText(MIRROR);
    const s = a.structures[0];
    const words = Object.fromEntries(s.outputs.map((o) => [o.device, outputWords(s, o)]));
    expect(words.Q2).toBe('Widlar output');
    expect(words.Q3).toBe('mirror output, intended ratio 1:2');
    const at = (name: string) => hoverAt(a, '/t/main.cir', MIRROR.indexOf(`\n${name} `) + 2)!.markdown;
    expect(at('Q2')).toMatch(/this is its Widlar output\./);
    expect(at('Q2')).not.toMatch(/intended ratio/);
    expect(at('Q3')).toMatch(/this is its mirror output, intended ratio 1:2\./);
  });
});

describe('start-up in the hover', () => {
  // An invented ΔVBE cell, with or without a start-up resistor into its reference node.
  const cell = (startup: string) => `ΔVBE cell
VCC vcc 0 5
Q1 n1 n1 0 QN
Q2 p n1 x QN 8
R x 0 1k
QP1 p p vcc QP
QP2 n1 p vcc QP
${startup}
.model QN npn (BF=100)
.model QP pnp (BF=50)
.end
`;
  const hoverQ1 = (text: string, corners = false) => hoverAt(analyseText(text, {}, corners), '/t/main.cir', text.indexOf('Q1 n1') + 1)!.markdown;

  it('with a start-up resistor, says which element drives which node and that the loop cannot stay off', () => {
    const md = hoverQ1(cell('RSU vcc n1 1meg'));
    expect(md).toMatch(/Start-up: RSU drives n1 to [\d.]+ V with the loop off, which turns on Q1, so the loop cannot stay off at power-up; solved from an all-off start it reaches ([\d.]+) µA in Q1; the solver settled at ([\d.]+) µA in Q1\./);
    // The all-off start reaches the state the nominal solve chose (same current in the hover's three digits).
    const m = md.match(/reaches ([\d.]+) µA in Q1; the solver settled at ([\d.]+) µA/)!;
    expect(m[1]).toBe(m[2]);
  });

  it('says how many corners were checked and what an all-off start reaches at the hardest, the state that corner’s solve shows', () => {
    const text = cell('RSU vcc n1 1meg');
    const md = hoverQ1(text, true);
    const m = md.match(/Checked at (\d+) corners; at the hardest \(supply −5 %, −40 °C\) an all-off start reaches IREF ([\d.]+) µA\./)!;
    expect(m).not.toBeNull();
    const ptat = analyseText(text, {}, true).structures.find((s) => s.kind === 'ptat-cell')!;
    expect(Number(m[1])).toBe(ptat.corners.length);
    // Three figures of the corner table's own IREF at that corner.
    const row = ptat.corners.find((c) => c.label === 'supply −5 %, −40 °C')!;
    expect(m[2]).toBe((row.iref * 1e6).toPrecision(3));
  });

  it('without one, names the corners where it can also rest at zero and the currents the corner solves chose there', () => {
    const md = hoverQ1(cell(''), true);
    expect(md).toMatch(/also at (\d+) of the \1 corners, where the corner solves settled at IREF [\d.]+ µA to [\d.]+ µA\)/);
  });

  it('without one, says the loop can rest at zero current and which state the solver chose', () => {
    const md = hoverQ1(cell(''));
    expect(md).toMatch(/Start-up: the loop can rest at zero current at power-up.*; no start-up path; the solver settled at [\d.]+ µA in Q1\./);
  });
});
