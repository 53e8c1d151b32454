// End-of-line bias labels on inline netlists, in each detail level.

import { describe, expect, it } from 'vitest';
import { inlayHints, type InlayDetail } from '../../../shared-analysis/src/features/inlay';
import { analyseText, quantityAfter, relErr } from './fixture';

/** Expected label per device line: the line's first word, and a pattern the label must match. */
type Expected = Record<string, RegExp | undefined>;

/** The one helper of this feature: labels for the whole document, keyed by the first word of the line they end. */
function check(text: string, detail: InlayDetail, expected: Expected): Record<string, string> {
  const analysis = analyseText(text);
  const hints = inlayHints(analysis, '/t/main.cir', { start: 0, end: text.length }, detail);
  const byLine: Record<string, string> = {};
  for (const h of hints) {
    const lineStart = text.lastIndexOf('\n', h.offset - 1) + 1;
    const lineEnd = text.indexOf('\n', lineStart);
    const line = text.slice(lineStart, lineEnd < 0 ? undefined : lineEnd);
    // The label sits at the end of the card's fields, before any comment.
    expect(text.slice(h.offset, lineEnd < 0 ? undefined : lineEnd)).toMatch(/^\s*(;.*)?$/);
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
  it('full labels give current, terminal voltage and region', () => {
    const labels = check(MIRROR, 'full', {
      Q2: /^IC [0-9.]+ µA · VCE [0-9.]+ V · forward-active · [0-9.]+ mW$/,
      Q1: /^IC [0-9.]+ µA · VCE [0-9.]+ m?V · forward-active · [0-9.]+ [µm]W$/,
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
    expect(relErr(quantityAfter(labels.Q2, 'forward-active ·', 'W'), iout * vce + (iout / 100) * vbe)).toBeLessThan(0.01);
    expect(relErr(quantityAfter(labels.RL, 'across ·', 'W'), iout * iout * 1e3)).toBeLessThan(0.01);
  });

  it('terse labels give the current only while the device is in its active region', () => {
    check(MIRROR, 'terse', { Q2: /^[0-9.]+ µA$/, RL: /^[0-9.]+ µA$/, VCC: undefined });
  });

  it('a saturated output says so even in terse labels', () => {
    // RL = 100 kΩ cannot carry ~1 mA from 10 V, so Q2 saturates (fact of the trade).
    const text = MIRROR.replace('RL vcc out 1k', 'RL vcc out 100k');
    check(text, 'terse', { Q2: /^[0-9.]+ µA · saturation$/ });
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
    check(text, 'full', { M2: /^ID [0-9.]+ µA · VDS [0-9.]+ V · saturation · [0-9.]+ [µm]W$/ });
  });

  it('a device in a subcircuit used twice gets one label with both instances', () => {
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
    check(text, 'terse', { RA: /^X1: 5 mA \| X2: 5 mA$/ });
  });
});
