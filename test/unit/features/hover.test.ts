// Hover text on inline netlists: resistors, nodes, transistors with their structure's estimate, models, parameters, subcircuit instances.

import { describe, expect, it } from 'vitest';
import { analyse } from '../../../shared-analysis/src/service';
import { MemoryWorkspace } from '../../../shared-analysis/src/types';
import { hoverAt, prepareHoverSteps, splitSource, structuresOf } from '../../../shared-analysis/src/features/hover';
import { analyseText, quantityAfter, relErr, withCursor } from './fixture';

interface HoverExpectation {
  /** Substrings the hover must contain. */
  contains?: (string | RegExp)[];
  /** Numbers read back from the hover: label, unit, expected value, relative tolerance, source. */
  numbers?: { label: string; unit: string; value: number | ((md: string) => number); tol: number }[];
  /** The text the hover's span must cover. */
  spanText?: string;
  /** No hover at all. */
  none?: boolean;
}

/** The one helper of this feature: hover at the cursor marker and compare. */
function check(marked: string, expected: HoverExpectation, files: Record<string, string> = {}): string {
  const { text, offset } = withCursor(marked);
  const analysis = analyseText(text, files);
  const h = hoverAt(analysis, '/t/main.cir', offset);
  if (expected.none) {
    expect(h).toBeUndefined();
    return '';
  }
  expect(h, 'a hover is expected here').toBeDefined();
  const md = h!.markdown;
  expect(md).not.toMatch(/NaN|undefined/);
  for (const c of expected.contains ?? []) {
    if (typeof c === 'string') expect(md).toContain(c);
    else expect(md).toMatch(c);
  }
  for (const n of expected.numbers ?? []) {
    const want = typeof n.value === 'function' ? n.value(md) : n.value;
    const got = quantityAfter(md, n.label, n.unit);
    expect(relErr(got, want), `${n.label}: got ${got}, expected ${want}`).toBeLessThan(n.tol);
  }
  if (expected.spanText !== undefined) expect(text.slice(h!.span.start, h!.span.end)).toBe(expected.spanText);
  return md;
}

const DIVIDER = `Divider for hover checks
V1 in 0 DC 10
R1 in mid 1k
R2 mid 0 1k
.end
`;

const MIRROR = `NPN mirror for hover checks
VCC vcc 0 DC 10
RREF vcc ref 9.3k
Q1 ref ref 0 QN
Q2 out ref 0 QN
RL vcc out 1k
.model QN NPN (BF=100 IS=1e-16)
.end
`;

function mark(text: string, before: string, inset = 1): string {
  const i = text.indexOf(before);
  if (i < 0) throw new Error(`"${before}" not in the netlist`);
  return text.slice(0, i + inset) + '|' + text.slice(i + inset);
}

describe('hover on a resistor divider', () => {
  it('shows the resistor current, voltage and power', () => {
    // Source: Ohm's law and P = V·I (fact of the trade): 10 V across 2 kΩ → 5 mA, 5 V and 25 mW per resistor.
    check(mark(DIVIDER, 'R1 in'), {
      spanText: 'R1',
      numbers: [
        { label: 'Current', unit: 'A', value: 5e-3, tol: 1e-3 },
        { label: 'Voltage', unit: 'V', value: 5, tol: 1e-3 },
        { label: 'Power', unit: 'W', value: 25e-3, tol: 1e-3 },
      ],
    });
  });

  it('shows a node voltage and what connects to it', () => {
    // Source: equal-resistor divider gives half the supply (fact of the trade).
    check(mark(DIVIDER, 'mid 0'), {
      spanText: 'mid',
      contains: ['R1 (end 2)', 'R2 (end 1)'],
      numbers: [{ label: 'Node **mid**:', unit: 'V', value: 5, tol: 1e-3 }],
    });
  });

  it('says nothing on blank space or the title', () => {
    check('Divider |title\nV1 in 0 DC 10\nR1 in 0 1k\n.end\n', { none: true });
  });
});

describe('hover on a bipolar mirror', () => {
  it('shows the output transistor with region, currents and the mirror estimate', () => {
    const md = check(mark(MIRROR, 'Q2 out'), {
      spanText: 'Q2',
      contains: ['forward-active', 'VBE', 'VCE', 'gm', 'rπ', 'Output resistance', 'Simple current mirror', 'this is its mirror output.'],
    });
    // Source: Gray, Hurst, Lewis, Meyer, 5th ed., ch. 4 — with matched devices and no Early effect
    // IOUT = IREF/(1 + 2/β) with IREF = (VCC − VBE)/RREF; β = BF = 100 (given in the model).
    const vbe = quantityAfter(md, 'VBE', 'V');
    const iref = (10 - vbe) / 9.3e3;
    const ic = quantityAfter(md, 'IC', 'A');
    expect(relErr(ic, iref / (1 + 2 / 100))).toBeLessThan(0.01);
    // gm = IC/VT (Gray et al., ch. 1); VT ≈ 25.865 mV at 27 °C (CODATA 2018 constants).
    const gm = quantityAfter(md, 'gm', 'S');
    expect(relErr(gm, ic / 0.025865)).toBeLessThan(0.01);
  });

  it('shows the reference device with the hand estimate steps', () => {
    check(mark(MIRROR, 'Q1 ref'), { contains: ['reference (diode-connected) device', 'IREF', 'Hand estimate'] });
  });

  it('lists model parameters with the given ones marked and the defaults filled in', () => {
    // Defaults: docs/DEVICE-MODELS.md device equations (VAF = ∞, BR = 1, NF = 1 when not given).
    check(mark(MIRROR, 'QN\nQ2'), {
      spanText: 'QN',
      contains: [/\| BF \| 100 \| given \|/, /\| VAF \| unbounded \(∞\) \| default \|/, /\| BR \| 1 \| default \|/],
    });
  });

  it('shows the model on its own .model card', () => {
    check(mark(MIRROR, 'QN NPN', 1), { contains: ['Model **QN**', 'NPN'] });
  });
});

describe('hover on parameters and expressions', () => {
  const PARAMS = `Parameters for hover checks
.param rtop=2k rbot={rtop*3}
V1 a 0 DC 8
R1 a b {rtop}
R2 b 0 {rbot}
.end
`;
  it('shows a parameter value where it is used inside braces', () => {
    check(mark(PARAMS, 'rtop}'), { spanText: 'rtop', contains: ['Parameter **rtop**', '= 2000'] });
  });
  it('shows a derived parameter value at its definition', () => {
    check(mark(PARAMS, 'rbot='), { contains: ['Parameter **rbot**', '= 6000', 'rtop*3'] });
  });
  it('shows what an expression evaluates to', () => {
    check(mark(PARAMS, '{rbot}', 0), { contains: ['evaluates to 6 kΩ'] });
  });
});

describe('hover inside subcircuit bodies', () => {
  const SUB = `Two instances of one cell
VDD vdd 0 DC 5
.subckt cell top
RA top mid 1k
RB mid 0 3k
.ends cell
X1 vdd cell
X2 half cell
RH vdd half 4k
.end
`;
  it('shows every instance of a device', () => {
    // Source: Ohm's law. X1 sits across 5 V: 5 V/4 kΩ = 1.25 mA. X2 is in series with 4 kΩ: 5 V/8 kΩ = 0.625 mA.
    const md = check(mark(SUB, 'RA top'), { contains: ['X1.RA', 'X2.RA'] });
    const [first, second] = md.split('---');
    expect(relErr(quantityAfter(first, 'Current', 'A'), 1.25e-3)).toBeLessThan(1e-3);
    expect(relErr(quantityAfter(second, 'Current', 'A'), 0.625e-3)).toBeLessThan(1e-3);
  });
  it('shows an internal node per instance', () => {
    // Source: divider ratio 3k/(1k+3k) = 0.75 of each instance's top voltage (5 V and 2.5 V).
    const md = check(mark(SUB, 'mid 0'), { contains: ['X1.mid', 'X2.mid'] });
    expect(md).toMatch(/X1\.mid\*\*: 3\.75 V/);
    expect(md).toMatch(/X2\.mid\*\*: 1\.88 V/);
  });
});

describe('hover inside an included file', () => {
  it('answers for a device defined in the included file', () => {
    const files = { '/t/cells.inc': 'RIN vcc 0 2k\n' };
    const text = 'Includer\n.include "cells.inc"\nVCC vcc 0 DC 4\n.end\n';
    const analysis = analyseText(text, files);
    const inc = analysis.documents['/t/cells.inc'];
    expect(inc).toBeDefined();
    const h = hoverAt(analysis, '/t/cells.inc', 1);
    // Source: Ohm's law, 4 V / 2 kΩ = 2 mA.
    expect(relErr(quantityAfter(h!.markdown, 'Current', 'A'), 2e-3)).toBeLessThan(1e-3);
  });

  it('shows the state of a target written in capitals in an included file, the including text having none', () => {
    // Only documents whose text has the target word are read for targets: the word in any case, in any document.
    const files = { '/t/cells.inc': 'RIN vcc 0 2k ; EXPECTED 2mA ±5%\nRLO vcc 0 4k ; EXPECTS 3mA ±5%\n' };
    const analysis = analyseText('Includer\n.include "cells.inc"\nVCC vcc 0 DC 4\n.end\n', files);
    // Source: Ohm's law, 4 V / 2 kΩ = 2 mA (on the 2 mA target) and 4 V / 4 kΩ = 1 mA (about 67 % below 3 mA).
    expect(hoverAt(analysis, '/t/cells.inc', 1)!.markdown).toContain('on target 2 mA ±5 %');
    expect(hoverAt(analysis, '/t/cells.inc', 'RIN vcc 0 2k ; EXPECTED 2mA ±5%\n'.length + 1)!.markdown).toMatch(/6[67](\.\d+)? % below target 3 mA ±5 %/);
  });
});

describe('hover robustness', () => {
  it('answers nothing for offsets outside the text and unknown documents', () => {
    const analysis = analyseText(DIVIDER);
    expect(hoverAt(analysis, '/t/main.cir', -5)).toBeUndefined();
    expect(hoverAt(analysis, '/t/main.cir', 1e9)).toBeUndefined();
    expect(hoverAt(analysis, '/t/main.cir', NaN)).toBeUndefined();
    expect(hoverAt(analysis, '/t/other.cir', 3)).toBeUndefined();
  });
});

describe('hover focus on one device of a multi-output mirror', () => {
  // Source: Gray, Hurst, Lewis, Meyer, 5th ed., ch. 4 — a mirror with outputs of areas 1 and 2 copies IREF in those ratios;
  // each output's IOUT belongs on that output's hover, IREF (structure-wide) on every device's.
  const MULTI = `Mirror with two outputs
VCC vcc 0 DC 10
RREF vcc ref 9.3k
Q1 ref ref 0 QN
Q2 out2 ref 0 QN
Q3 out3 ref 0 QN 2
RL2 vcc out2 1k
RL3 vcc out3 1k
.model QN NPN (BF=100 IS=1e-16)
.end
`;
  const estimateOf = (md: string) => md.split('Hand estimate:')[1]?.split('\n\n')[1] ?? '';
  it('shows the structure-wide steps and only this output’s own steps', () => {
    const q2 = estimateOf(check(mark(MULTI, 'Q2 out2'), { contains: ['Hand estimate:'] }));
    const q3 = estimateOf(check(mark(MULTI, 'Q3 out3'), { contains: ['Hand estimate:'] }));
    expect(q2).toMatch(/IREF/);
    expect(q3).toMatch(/IREF/);
    expect(q2).toMatch(/Q2/);
    expect(q2).not.toMatch(/Q3/);
    expect(q3).toMatch(/Q3/);
    expect(q3).not.toMatch(/Q2/);
  });
  it('shows the reference device no output’s steps', () => {
    const q1 = estimateOf(check(mark(MULTI, 'Q1 ref'), { contains: ['Hand estimate:'] }));
    expect(q1).toMatch(/IREF/);
    expect(q1).not.toMatch(/Q2|Q3/);
  });
});

describe('hover on a node with no DC path to ground', () => {
  it('says the voltage is arbitrary, on the node and on the device that touches it', () => {
    // Source: Kirchhoff's current law — a node reached only by a MOSFET gate carries no DC current,
    // so its voltage is not determined by the circuit (common practice).
    const text = 'Floating gate\nV1 vdd 0 5\nR1 vdd d 10k\nM1 d g 0 0 NM W=10u L=1u\n.model NM NMOS (VTO=0.5 KP=100u)\n.end\n';
    const uri = '/w/float.cir';
    const analysis = analyse({ uri, text }, new MemoryWorkspace({ [uri]: text }), { corners: { enabled: false } });
    expect(analysis.operatingPoint?.tiedNodes).toEqual(['g']);
    const gate = text.indexOf(' g ') + 1;
    expect(hoverAt(analysis, uri, gate)?.markdown).toMatch(/No DC path to ground.*arbitrary/s);
    const device = text.indexOf('M1') + 1;
    expect(hoverAt(analysis, uri, device)?.markdown).toMatch(/Arbitrary values:.*g has no DC path/s);
    // A node with a DC path gets no such note.
    expect(hoverAt(analysis, uri, text.indexOf(' d ') + 1)?.markdown).not.toMatch(/arbitrary/);
  });
});

describe('hover on the newer device kinds', () => {
  it('shows a JFET’s region, currents, gm and ro', () => {
    // Source: docs/DEVICE-MODELS.md JFET saturation law; with the gate at the source ID = BETA·VTO²·(1 + LAMBDA·VDS) = 1m·4·(1 + 0.1) = 4.4 mA.
    check(`JFET hover\nVD d 0 10\nJ|1 d 0 0 JN\n.model JN NJF (VTO=-2 BETA=1m LAMBDA=0.01)\n.end\n`, {
      contains: [/^\*\*J1\*\* · ID [0-9.]+ mA · saturation/, 'N-channel', 'gm', 'ro', 'pinch-off VTO −2 V'],
      numbers: [{ label: 'ID', unit: 'A', value: 4.4e-3, tol: 1e-3 }],
    });
  });
  it('says a JFET past VDS = VGS − VP is in its linear region, as the engine names it, never in triode', () => {
    // Source: docs/DEVICE-MODELS.md JFET law. With the gate at 0 V and the source at 0 V, VGS − VTO = 2 V; the 10 V supply through
    // 20 kΩ cannot keep VDS ≥ 2 V at any current near IDSS = 4 mA, so J1 sits in the linear region (Ohm's law: 4 mA × 20 kΩ = 80 V ≫ 10 V).
    const md = check(`JFET in its linear region\nVD vdd 0 10\nRD vdd d 20k\nJ|1 d 0 0 JN\n.model JN NJF (VTO=-2 BETA=1m)\n.end\n`, {
      contains: [/\*\*linear\*\*/, /V into the linear region/],
    });
    expect(md).not.toMatch(/triode/);
  });
  it('words a JFET self-biased source pushed out of saturation in the linear region, in its hover and its finding', () => {
    // IDSS = 1m × 2² = 4 mA, RS = 500 Ω: ID = 1.53 mA by the self-bias quadratic (Boylestad and Nashelsky, ch. 7, from memory);
    // 1.53 mA × 9.1 kΩ = 13.9 V leaves the drain 1.1 V above ground, under the 2 V edge V(gate) − VP.
    const text = `JFET source too heavily loaded\nVCC vcc 0 15\nJ1 d 0 s JN\nRS s 0 500\nRL vcc d 9.1k\n.model JN NJF (VTO=-2 BETA=1m)\n.end\n`;
    const md = check(mark(text, 'J1 d', 1), { contains: [/into the linear region/, /\*\*JFET self-biased current source\*\* \(N-channel JFET\)/] });
    expect(md).not.toMatch(/triode/);
    const a = analyseText(text);
    const f = a.findings.find((x) => x.code === 'mirror-output-out-of-region');
    expect(f?.message).toMatch(/J1 .*is in the linear region at the operating point: VDS is [0-9.]+ m?V below VGS − VP/);
    expect(f?.message).not.toMatch(/triode/);
  });
  it('shows a diode’s dynamic resistance', () => {
    // Source: rd = N·VT/ID for the ideal diode law (common practice): about 25.9 mV/1 mA ≈ 25.9 Ω at 27 °C.
    check(`Diode hover\nI1 0 a 1m\nD|1 a 0 DN\n.model DN D (IS=1e-14)\n.end\n`, {
      contains: ['Dynamic resistance rd'],
      numbers: [{ label: 'rd', unit: 'Ω', value: 25.865, tol: 2e-3 }],
    });
  });
  it('shows a switch’s state and resistance', () => {
    check(`Switch hover\nV1 a 0 5\nR1 a b 1k\nS|1 b 0 c 0 SM\nVC c 0 3\n.model SM SW (RON=10 ROFF=1meg VT=1)\n.end\n`, {
      contains: ['switch **on**', 'Resistance 10 Ω', 'Control 3 V'],
    });
  });
});

describe('sources of the hand steps, listed last', () => {
  it('takes a closing citation off a formula and leaves closing mathematics alone', () => {
    expect(splitSource('IREF = (V+ − V− − VBE)/R (Gray, Hurst, Lewis, Meyer, 5th ed., ch. 4)')).toEqual({
      formula: 'IREF = (V+ − V− − VBE)/R',
      source: 'Gray, Hurst, Lewis, Meyer, 5th ed., ch. 4',
    });
    expect(splitSource('m·IREF × (1 + (VCE2 − VBE)/VA)')).toEqual({ formula: 'm·IREF × (1 + (VCE2 − VBE)/VA)' });
    expect(splitSource('(V+ − V− − 0.7 V)/R (common practice)').source).toBe('common practice');
  });
});

describe("the hover's table of structures by device", () => {
  it('built in steps, with hovers asked between them, gives what a scan of every structure gives', () => {
    // Invented NPN sinks, 1,200 cells (more structures than one step takes), names of mixed case.
    const lines = ['steps', 'VCC vcc 0 DC 5', '.model QN NPN (IS=1e-15 BF=120 VAF=80)'];
    for (let i = 0; i < 1200; i++) lines.push(`RR${i} vcc r${i} ${10 + (i % 7)}k`, `QR${i} r${i} r${i} 0 QN`, `qo${i} o${i} r${i} 0 QN`, `RL${i} vcc o${i} 1k`);
    lines.push('.end', '');
    const text = lines.join('\n');
    const a = analyse({ uri: '/s.cir', text }, new MemoryWorkspace({ '/s.cir': text }), { corners: { enabled: false } });
    expect(a.structures.length).toBe(1200);
    // The plain path: every structure whose devices name the device, whatever the case.
    const scan = (device: string) => a.structures.filter((s) => s.devices.some((d) => d.toLowerCase() === device.toLowerCase()));
    const steps = prepareHoverSteps(a);
    steps.next();
    // Asked after one step: the hover finishes the table, and the steps left add nothing twice.
    expect(structuresOf(a, 'QO1100')).toEqual(scan('QO1100'));
    for (const _ of steps);
    for (const device of ['QR0', 'qo0', 'QO499', 'qr500', 'QR1199', 'RR7', 'nothing']) expect(structuresOf(a, device), device).toEqual(scan(device));
  });
});
