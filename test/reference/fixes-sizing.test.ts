// Fix round trip: a missed target current on a resistor-fed NPN mirror, the offered standard value applied to the text, re-elaborated and re-solved.

import { describe, expect, it } from 'vitest';
import { resolveOptions, type ResistorSeries } from '../../shared-analysis/src/analysis';
import { analyseStructures } from '../../shared-analysis/src/checks/structures';
import { checkTargets, readTargets } from '../../shared-analysis/src/checks/targets';
import { elaborate } from '../../shared-analysis/src/elaborate/index';
import { nearestStandardValues, seriesTolerance, seriesValues } from '../../shared-analysis/src/fixes/e-series';
import { attachFixes, attachSizingFixes } from '../../shared-analysis/src/fixes/index';
import { sizeResistorForCurrent } from '../../shared-analysis/src/fixes/resistor-for-current';
import { DcSolver } from '../../shared-analysis/src/solve/dc';
import type { BjtRecord } from '../../shared-analysis/src/solve/types';
import { recogniseStructures } from '../../shared-analysis/src/structures/recognise';
import { parse } from '../../shared-analysis/src/syntax/parser';
import { MemoryWorkspace, type Finding, type TextEdit } from '../../shared-analysis/src/types';

const URI = '/mirror.cir';
const BF = 100;

// Physical constants, exact since the 2019 SI revision (BIPM SI Brochure, 9th ed.).
const K = 1.380649e-23;
const Q = 1.602176634e-19;
const VT27 = (K * 300.15) / Q;

/** Everything from text to targets, as the facade runs it (without the facade). */
function analyse(text: string, series: ResistorSeries) {
  const doc = parse(URI, text, { hasTitle: true });
  const { circuit, documents } = elaborate(doc, new MemoryWorkspace({ [URI]: text }), {});
  const solver = new DcSolver(circuit);
  const nominal = solver.solve({});
  const structures = recogniseStructures(circuit);
  const options = resolveOptions({ resistorSeries: series, corners: { enabled: false } });
  analyseStructures({ circuit, op: nominal.op, structures, options });
  const { targets } = readTargets(documents);
  const findings = checkTargets({ circuit, op: nominal.op, structures, targets, options });
  return { circuit, documents, solver, nominal, structures, options, findings };
}

function apply(text: string, edits: TextEdit[]): string {
  let out = text;
  for (const e of [...edits].sort((a, b) => b.span.start - a.span.start)) out = out.slice(0, e.span.start) + e.newText + out.slice(e.span.end);
  return out;
}

// An invented bias mirror (V+ = 12 V) whose reference resistor is deliberately off for the target.
const netlist = (r1: string, target: string, extra = ''): string => `12 V reference mirror for a sensor front end
VPOS vpos 0 DC 12
R1 vpos ref   ${r1}   ; reference resistor
Q1 ref ref 0 qn
Q2 out ref 0 qn ; expect ${target}
RLOAD vpos out 3.3k
${extra}.model qn npn (IS=1e-16 BF=${BF})
.end
`;

/**
 * The one helper: analyse, take the target-missed finding's preferred fix, apply it to the
 * text, re-elaborate and re-solve; the output current must land within the series' tolerance.
 */
function check(r1: string, targetText: string, target: number, series: ResistorSeries): { fixed: string; iout: number; finding: Finding } {
  const text = netlist(r1, targetText);
  const a = analyse(text, series);
  const finding = a.findings.find((f) => f.code === 'target-missed');
  expect(finding, 'the wrong resistor misses the target').toBeDefined();
  attachFixes(a.findings, { documents: a.documents, circuit: a.circuit, structures: a.structures, options: a.options });
  // The sizing fix is computed on demand, as for the editor's code-action request.
  attachSizingFixes(a.findings, { documents: a.documents, circuit: a.circuit, structures: a.structures, options: a.options, solver: a.solver });
  const fixes = finding!.fixes ?? [];
  expect(fixes.length).toBeGreaterThanOrEqual(1);
  const preferred = fixes.filter((f) => f.preferred);
  expect(preferred).toHaveLength(1);
  const fixed = apply(text, preferred[0].edits);
  // Only the value field changed: the rest of the card (spacing, comment) is kept.
  expect(fixed.replace(/R1 vpos ref {3}\S+ {3}; reference resistor/, 'R1')).toBe(text.replace(/R1 vpos ref {3}\S+ {3}; reference resistor/, 'R1'));

  const again = analyse(fixed, series);
  expect(again.nominal.op.converged).toBe(true);
  const iout = Math.abs((again.nominal.op.devices['Q2'] as BjtRecord).ic);
  // Source: the series' tolerance (common practice: E24 ±5 %, E96 ±1 %) bounds the miss of the preferred value.
  expect(Math.abs(iout / target - 1)).toBeLessThanOrEqual(seriesTolerance(series));
  expect(again.findings.filter((f) => f.code === 'target-missed')).toEqual([]);
  return { fixed, iout, finding: finding! };
}

describe('resistor sizing for a target current (fix round trip)', () => {
  it('E24: 1 mA from a 12 V rail', () => {
    const { fixed } = check('22k', '1mA ±2%', 1e-3, 'E24');
    // Source: Gray, Hurst, Lewis, Meyer, 5th ed., ch. 4 — IREF = (V+ − V− − VBE)/R and IOUT = IREF/(1 + 2/β):
    // with VBE ≈ 0.77 V at 1 mA, R ≈ (12 − 0.77)/(1 mA · 1.02) ≈ 11 kΩ, which is an E24 value.
    expect(fixed).toContain('R1 vpos ref   11k   ; reference resistor');
  });

  it('E96: 250 µA from a 12 V rail', () => {
    check('10k', '250uA ±0.5%', 250e-6, 'E96');
  });

  it('E12: 2 mA from a 12 V rail', () => {
    check('1k', '2mA ±10%', 2e-3, 'E12');
  });

  it('the ideal value meets the formula, and the candidates are its standard neighbours', () => {
    const a = analyse(netlist('22k', '1mA ±2%'), 'E24');
    const s = a.structures[0];
    const result = sizeResistorForCurrent({ circuit: a.circuit, solver: a.solver, structure: s, resistor: 'R1', target: 1e-3, series: 'E24' });
    expect(result.problem).toBeUndefined();
    expect(result.device).toBe('Q2');
    // Source: Gray, Hurst, Lewis, Meyer, 5th ed., ch. 4 — IOUT = IREF/(1 + 2/β) with IREF = (V+ − VBE1)/R,
    // and VBE1 = VT·ln(IC1/IS) (forward-active Ebers–Moll, docs/DEVICE-MODELS.md) evaluated at the target IC1 = IOUT.
    const vbe = VT27 * Math.log(1e-3 / 1e-16);
    const rFormula = (12 - vbe) / (1e-3 * (1 + 2 / BF));
    expect(result.ideal / rFormula - 1).toBeLessThan(1e-4);
    expect(result.ideal / rFormula - 1).toBeGreaterThan(-1e-4);
    const n = nearestStandardValues(result.ideal, 'E24')!;
    expect(result.candidates.map((c) => c.value)).toEqual(n.exact ? [n.below] : [n.below, n.above]);
    // Lower resistance, more current (Ohm's law).
    if (result.candidates.length === 2) expect(result.candidates[0].current).toBeGreaterThan(result.candidates[1].current);
    // The few-solve budget: baseline, first value, a couple of secant steps, two candidates.
    expect(result.solves).toBeLessThanOrEqual(10);
  });

  it('sizes a Widlar emitter resistor with VT·ln(IREF/IOUT) = IOUT·R2', () => {
    const text = `Widlar source for a 50 µA bias line
VPOS vpos 0 DC 12
R1 vpos ref 11k
Q1 ref ref 0 qn
Q2 out ref e2 qn ; expect 50uA ±1%
R2 e2 0 1k
RLOAD vpos out 10k
.model qn npn (IS=1e-16 BF=1e6)
.end
`;
    const a = analyse(text, 'E96');
    const s = a.structures.find((x) => x.kind === 'widlar-source');
    expect(s, 'recognised as a Widlar source').toBeDefined();
    const f = a.findings.find((x) => x.code === 'target-missed');
    expect(f?.data?.['resistor']).toBe('R2');
    const result = sizeResistorForCurrent({ circuit: a.circuit, solver: a.solver, structure: s, resistor: 'R2', target: 50e-6, series: 'E96' });
    expect(result.firstValueFrom).toBe('widlar-formula');
    // Source: R. J. Widlar, IEEE Trans. Circuit Theory, 1965 — VT·ln(IREF/IOUT) = IOUT·R2 (base currents
    // neglected; β = 1e6 here makes that exact to about 1e-5).
    const iref = Math.abs((a.nominal.op.devices['Q1'] as BjtRecord).ic);
    const r2Formula = (VT27 * Math.log(iref / 50e-6)) / 50e-6;
    expect(Math.abs(result.ideal / r2Formula - 1)).toBeLessThan(2e-3);
    for (const c of result.candidates) expect(Math.abs(c.error)).toBeLessThan(0.05);
    // Source: same relation — ln(IREF/IOUT) must be positive, so a Widlar output above IREF has no R2 ≥ 0.
    const tooHigh = sizeResistorForCurrent({ circuit: a.circuit, solver: a.solver, structure: s, resistor: 'R2', target: 2e-3, series: 'E96' });
    expect(tooHigh.candidates).toEqual([]);
    expect(tooHigh.problem).toContain('change the reference resistor instead');
  });

  it('sizes a parameterised value through its .param when only this resistor uses it, and explains a resistor it cannot find', () => {
    const text = netlist('{rref}', '1mA ±2%', '').replace('VPOS', '.param rref=22k\nVPOS');
    const a = analyse(text, 'E24');
    attachFixes(a.findings, { documents: a.documents, circuit: a.circuit, structures: a.structures, options: a.options });
    // The sizing fix is computed on demand, as for the editor's code-action request.
    attachSizingFixes(a.findings, { documents: a.documents, circuit: a.circuit, structures: a.structures, options: a.options, solver: a.solver });
    const f = a.findings.find((x) => x.code === 'target-missed')!;
    const preferred = f.fixes!.find((x) => x.preferred)!;
    expect(preferred.title).toMatch(/in \.param rref, which only R1 uses/);
    const fixed = apply(text, preferred.edits);
    // The card keeps its {rref}; the definition carries the new value.
    expect(fixed).toContain('R1 vpos ref   {rref}');
    expect(fixed).toMatch(/\.param rref=\d+(\.\d+)?k\n/);
    const iout = Math.abs((analyse(fixed, 'E24').nominal.op.devices['Q2'] as BjtRecord).ic);
    // Source: the series' tolerance (common practice: E24 ±5 %) bounds the miss of the preferred value.
    expect(Math.abs(iout / 1e-3 - 1)).toBeLessThanOrEqual(seriesTolerance('E24'));
    // Sizing a resistor that does not exist is a sentence, not an exception.
    const w = sizeResistorForCurrent({ circuit: a.circuit, solver: a.solver, resistor: 'R9', target: 1e-3, series: 'E24' });
    expect(w.problem).toContain('no resistor named R9');
    expect(w.candidates).toEqual([]);
    expect(Number.isFinite(w.ideal)).toBe(true);
  });

  it('replaces a shared parameter on this card only, and says the parameter is shared', () => {
    const text = netlist('{rref}', '1mA ±2%', 'RX vpos x {rref}\nRY x 0 1k\n').replace('VPOS', '.param rref=22k\nVPOS');
    const a = analyse(text, 'E24');
    attachFixes(a.findings, { documents: a.documents, circuit: a.circuit, structures: a.structures, options: a.options });
    attachSizingFixes(a.findings, { documents: a.documents, circuit: a.circuit, structures: a.structures, options: a.options, solver: a.solver });
    const f = a.findings.find((x) => x.code === 'target-missed')!;
    const preferred = f.fixes!.find((x) => x.preferred)!;
    expect(preferred.title).toMatch(/replaces \{rref\} on this card; the parameter rref is shared with 1 other use and keeps its value/);
    const fixed = apply(text, preferred.edits);
    expect(fixed).toContain('.param rref=22k');
    expect(fixed).toContain('RX vpos x {rref}');
    expect(fixed).toMatch(/R1 vpos ref {3}\d+(\.\d+)?k {3};/);
  });

  it('E24 has the values the round trip relies on', () => {
    // Source: IEC 60063:2015 Table 1 — 1.1 is an E24 value (so 11 kΩ is offered above).
    expect(seriesValues('E24')).toContain(1.1);
  });
});

describe('targets no resistor can reach', () => {
  it('offers nothing when the target is beyond any resistance from 1 mΩ to 1 GΩ', () => {
    // Source: Ohm's law — a 12 V rail through at least 1 mΩ cannot drive a resistor's own current
    // past 12 kA, and a load resistor in series with a 3.3 kΩ resistor cannot exceed 12 V/3.3 kΩ ≈ 3.6 mA.
    const a = analyse(netlist('22k', '1mA ±2%'), 'E24');
    const r = sizeResistorForCurrent({ circuit: a.circuit, solver: a.solver, resistor: 'R1', device: 'RLOAD', target: 10e-3, series: 'E24' });
    expect(r.candidates).toEqual([]);
    expect(r.problem).toContain('No resistance between 1 mΩ and 1 GΩ');
    expect(r.problem).not.toMatch(/NaN|undefined/);
  });
});

describe('MOS mirror sizing', () => {
  // An invented 3.3 V NMOS bias mirror, no channel-length modulation, so IOUT = IREF exactly.
  const mos = (r: string) => `3.3 V NMOS mirror
VDD vdd 0 DC 3.3
RREF vdd g ${r}
M1 g g 0 0 nch W=10u L=1u
M2 out g 0 0 nch W=10u L=1u ; expect 100uA ±1%
RL vdd out 10k
.model nch nmos (KP=100u VTO=0.5)
.end
`;
  it('finds R = (VDD − VGS)/ID with VGS from the square law', () => {
    const a = analyse(mos('47k'), 'E96');
    const s = a.structures[0];
    expect(s?.technology).toBe('nmos');
    const result = sizeResistorForCurrent({ circuit: a.circuit, solver: a.solver, structure: s, resistor: 'RREF', target: 100e-6, series: 'E96' });
    // Source: Razavi, Design of Analog CMOS Integrated Circuits, ch. 5 (Shichman–Hodges square law):
    // ID = (KP/2)(W/L)(VGS − VTH)² → VGS = VTH + √(2·ID/(KP·W/L)) = 0.5 + √(2·100µ/(100µ·10)) ≈ 0.947 V.
    const vgs = 0.5 + Math.sqrt((2 * 100e-6) / (100e-6 * 10));
    const rFormula = (3.3 - vgs) / 100e-6;
    expect(Math.abs(result.ideal / rFormula - 1)).toBeLessThan(1e-4);
    // Source: IEC 60063:2015 — 23.5 kΩ lies between the E96 values 23.2k and 23.7k.
    expect(result.candidates.map((c) => c.valueText)).toEqual(['23.2k', '23.7k']);
  });
});
