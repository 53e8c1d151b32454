// End-of-line bias labels on inline netlists, in each detail level.

import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { inlayHints, MAX_LABEL_LENGTH, OUT_OF_REGION_MARK, type InlayDetail, type InlayPlacement } from '../../../shared-analysis/src/features/inlay';
import { analyseText, quantityAfter, relErr } from './fixture';

/** Expected label per device line: the line's first word, and a pattern the label must match. */
type Expected = Record<string, RegExp | undefined>;

/** The one helper of this feature: labels for the whole document, keyed by the first word of the line they end. */
function check(text: string, detail: InlayDetail, expected: Expected, placement: InlayPlacement = 'afterCode'): Record<string, string> {
  const analysis = analyseText(text);
  const hints = inlayHints(analysis, '/t/main.cir', { start: 0, end: text.length }, detail, placement);
  const byLine: Record<string, string> = {};
  for (const h of hints) {
    const lineStart = text.lastIndexOf('\n', h.offset - 1) + 1;
    const lineEnd = text.indexOf('\n', lineStart);
    const line = text.slice(lineStart, lineEnd < 0 ? undefined : lineEnd);
    // The label sits at the end of the card's fields, before any comment; or after the comment when asked.
    if (placement === 'afterCode') expect(text.slice(h.offset, lineEnd < 0 ? undefined : lineEnd)).toMatch(/^\s*(;.*)?$/);
    else expect(text.slice(h.offset, lineEnd < 0 ? undefined : lineEnd)).toMatch(/^\s*$/);
    // Never longer than the editor shows uncut (VS Code's editor.inlayHints.maximumLength default, 43).
    expect([...h.label].length).toBeLessThanOrEqual(MAX_LABEL_LENGTH);
    byLine[line.split(/\s+/)[0]] = h.label;
    expect(h.label).not.toMatch(/NaN|undefined/);
  }
  for (const [name, pattern] of Object.entries(expected)) {
    if (pattern === undefined) expect(byLine[name], `${name} has no label`).toBeUndefined();
    else expect(byLine[name], `${name}`).toMatch(pattern);
  }
  return byLine;
}

const MIRROR = `NPN mirror for label checks
VCC vcc 0 DC 10
RREF vcc ref 9.3k
Q1 ref ref 0 QN
Q2 out ref 0 QN   ; mirror output
RL vcc out 1k
C1 out 0 1n
.model QN NPN (BF=100)
.end
`;

describe('inlay labels', () => {
  it('full labels give current, terminal voltage and power, and the region only when it is not the active one', () => {
    const labels = check(MIRROR, 'full', {
      Q2: /^IC [0-9.]+ µA · VCE [0-9.]+ V · [0-9.]+ mW$/,
      Q1: /^IC [0-9.]+ µA · VCE [0-9.]+ m?V · [0-9.]+ [µm]W$/,
      RL: /^I [0-9.]+ µA · [0-9.]+ m?V across · [0-9.]+ [µm]W$/,
      VCC: /^delivers /,
      C1: undefined,
    });
    // Source: Gray, Hurst, Lewis, Meyer, 5th ed., ch. 4 — IOUT = IREF/(1 + 2/β) for a matched pair;
    // a diode-connected device has VCE = VBE, so IREF ≈ (10 V − VCE(Q1))/9.3 kΩ.
    const vbe = quantityAfter(labels.Q1, 'VCE', 'V');
    const iout = quantityAfter(labels.Q2, 'IC', 'A');
    expect(relErr(iout, (10 - vbe) / 9.3e3 / 1.02)).toBeLessThan(0.01);
    // Source: Ohm's law — RL drops IOUT·1 kΩ.
    expect(relErr(quantityAfter(labels.RL, '·', 'V'), iout * 1e3)).toBeLessThan(0.01);
    // Power in the full label: IC·VCE + IB·VBE for the BJT, I²·R for the resistor (Joule's law).
    const vce = quantityAfter(labels.Q2, 'VCE', 'V');
    expect(relErr(quantityAfter(labels.Q2.replace(/VCE [^·]+· /, ''), '·', 'W'), iout * vce + (iout / 100) * vbe)).toBeLessThan(0.01);
    expect(relErr(quantityAfter(labels.RL, 'across ·', 'W'), iout * iout * 1e3)).toBeLessThan(0.01);
  });

  it('terse labels give the current only while the device is in its active region', () => {
    check(MIRROR, 'terse', { Q2: /^[0-9.]+ µA$/, RL: /^[0-9.]+ µA$/, VCC: undefined });
  });

  it('a saturated output says so even in terse labels', () => {
    // RL = 100 kΩ cannot carry ~1 mA from 10 V, so Q2 saturates (fact of the trade).
    const text = MIRROR.replace('RL vcc out 1k', 'RL vcc out 100k');
    check(text, 'terse', { Q2: new RegExp(`^${OUT_OF_REGION_MARK} saturation · [0-9.]+ µA$`) });
    check(text, 'full', { Q2: new RegExp(`^${OUT_OF_REGION_MARK} saturation · IC [0-9.]+ µA · VCE [0-9.]+ mV`), Q1: /^IC [0-9.]+ µA · VCE/ });
  });

  it('off gives no labels, and a range outside the devices gives none', () => {
    check(MIRROR, 'off', { Q1: undefined, Q2: undefined });
    const analysis = analyseText(MIRROR);
    expect(inlayHints(analysis, '/t/main.cir', { start: 0, end: 5 }, 'full')).toEqual([]);
  });

  it('labels MOSFETs with ID, VDS and region', () => {
    const text = `NMOS mirror for label checks
VDD vdd 0 DC 5
RREF vdd g 20k
M1 g g 0 0 NM W=10u L=1u
M2 d g 0 0 NM W=10u L=1u
RL vdd d 5k
.model NM NMOS (KP=100u VTO=0.7)
.end
`;
    check(text, 'full', { M2: /^ID [0-9.]+ µA · VDS [0-9.]+ V · [0-9.]+ [µm]W$/ });
  });

  it('a device in a subcircuit used twice, alike in both, gets one label with the count', () => {
    const text = `Two instances
VDD vdd 0 DC 5
.subckt cell top
RA top 0 1k
.ends cell
X1 vdd cell
X2 vdd cell
.end
`;
    // Source: Ohm's law, 5 V / 1 kΩ = 5 mA in each instance.
    check(text, 'terse', { RA: /^×2: 5 mA$/ });
  });

  it('a subcircuit used three times is labelled by its worst instance and a count, never cut, all instances in the tooltip', () => {
    // Three copies of a PMOS cell with different loads; the 40 kΩ load cannot take the mirrored ~100 µA
    // from a 3.3 V rail without pulling the drain up into triode (Ohm's law: 100 µA × 40 kΩ = 4 V > 3.3 V).
    const text = `PMOS cell three times
VDD vdd 0 DC 3.3
.subckt pbias out vdd
MREF g g vdd vdd PM W=20u L=2u
MOUT out g vdd vdd PM W=40u L=2u
RSET g 0 47k
.ends pbias
XADC_FIRST_CHANNEL adc1 vdd pbias
XADC_SECOND_CHANNEL adc2 vdd pbias
XADC_THIRD_CHANNEL adc3 vdd pbias
R1 adc1 0 10k
R2 adc2 0 40k
R3 adc3 0 12k
.model PM PMOS (VTO=-0.6 KP=50u LAMBDA=0.05)
.end
`;
    const analysis = analyseText(text);
    const hints = inlayHints(analysis, '/t/main.cir', { start: 0, end: text.length }, 'full');
    const mout = hints.find((h) => text.slice(text.lastIndexOf('\n', h.offset - 1) + 1).startsWith('MOUT'))!;
    expect(mout.label).toMatch(new RegExp(`^×3, worst( XADC_SECOND_CHANNEL)?: ${OUT_OF_REGION_MARK} triode · ID`));
    expect([...mout.label].length).toBeLessThanOrEqual(MAX_LABEL_LENGTH);
    expect(mout.tooltip).toMatch(/XADC_FIRST_CHANNEL\.MOUT: ID/);
    expect(mout.tooltip).toMatch(/▸ XADC_SECOND_CHANNEL\.MOUT: ◆ triode/);
    expect(mout.tooltip).toMatch(/XADC_THIRD_CHANNEL\.MOUT: ID/);
  });

  it('places labels after the end-of-line comment when asked, so comments stay aligned', () => {
    const analysis = analyseText(MIRROR);
    const after = inlayHints(analysis, '/t/main.cir', { start: 0, end: MIRROR.length }, 'full', 'afterComment');
    const q2 = after.find((h) => MIRROR.slice(0, h.offset).endsWith('; mirror output'));
    expect(q2, 'Q2 labelled after its comment').toBeDefined();
    check(MIRROR, 'full', { Q2: /^IC/ }, 'afterComment');
  });

  it('keeps every label of the bundled example within the editor limit', () => {
    const text = readFileSync(join(__dirname, '../../../examples/sensor-bias.cir'), 'utf8');
    const models = readFileSync(join(__dirname, '../../../examples/models/front-end-models.inc'), 'utf8');
    for (const detail of ['terse', 'full'] as const) {
      const hints = inlayHints(analyseText(text, { '/t/models/front-end-models.inc': models }), '/t/main.cir', { start: 0, end: text.length }, detail);
      expect(hints.length).toBeGreaterThan(10);
      for (const h of hints) expect([...h.label].length, h.label).toBeLessThanOrEqual(MAX_LABEL_LENGTH);
    }
  });
});
