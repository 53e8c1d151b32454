// The spread analysis through the whole pipeline: card tolerances, the yield finding with its cause and fix, and its absence on a well-specified circuit.

import { describe, expect, it } from 'vitest';
import { analyse, analyseSession, attachAllSizingFixes } from '../../../shared-analysis/src/service';
import { MemoryWorkspace, type Fix } from '../../../shared-analysis/src/types';
import { elementCurrent } from '../../../shared-analysis/src/variation/outputs';
import { variationOfElement } from '../../../shared-analysis/src/variation/text';
import { derivativeOf, sensitivities } from '../../../shared-analysis/src/variation/sensitivity';

function run(text: string) {
  return analyse({ uri: 'mem://y.cir', text }, new MemoryWorkspace({}), { corners: { enabled: false } });
}

/** A resistor-fed NPN mirror whose output is 1 mA within a percent or so at nominal. */
const mirror = (rrefCard: string, target: string) => `yield check
VCC vcc 0 10 ; tol 0.5%
${rrefCard}
Q1 ref ref 0 qn
Q2 out ref 0 qn ${target}
RL vcc out 2k
.model qn npn(IS=1e-15 BF=200)
.end
`;

describe('yield against targets', () => {
  it('flags a target whose window is narrower than the 5 % resistor and supply spread, on the annotation, naming the contributor and the fix', () => {
    const text = mirror('RREF vcc ref 9.1k', '; expect 1mA ±6%');
    const a = run(text);
    const f = a.findings.filter((x) => x.code === 'target-yield-low');
    expect(f).toHaveLength(1);
    expect(f[0].severity).toBe('warning');
    expect(text.slice(f[0].span.start, f[0].span.end)).toBe('expect 1mA ±6%');
    expect(f[0].message).toMatch(/Predicted yield of Q2 against 1 mA ±6 % is/);
    // 5 % RREF (σ 1.67 %) and the default 0.5 mV VBE mismatch (σ ≈ 1.9 % of the output) against a ±6 % window.
    expect(f[0].message).toMatch(/largest contributor is Q1\/Q2 VBE \(\d+(\.\d+)? % of the variance\)\. Making Q1, Q2 \d+ times larger .* and give \d/);
    expect(a.findings.some((x) => x.code === 'target-missed')).toBe(false);
    const y = f[0].data!['yield'] as number;
    expect(y).toBeGreaterThan(0.3);
    expect(y).toBeLessThan(0.997);
  });

  it('stays quiet when the card tolerances make the window safe', () => {
    const text = mirror('RREF vcc ref 9.1k ; tol 0.1%', '; expect 1mA ±10%');
    const a = run(text);
    expect(a.findings.filter((x) => x.code === 'target-yield-low')).toEqual([]);
    const v = a.variation!.outputs.find((o) => o.element === 'Q2' && o.target)!;
    expect(v.target!.yield).toBeGreaterThan(0.997);
    // The card's 0.1 % is read: RREF is then a small contributor next to the 5 % supply.
    const rref = a.variation!.sources.find((s) => s.name === 'RREF')!;
    expect(rref).toMatchObject({ figure: 0.001, from: 'card' });
  });

  it('reads the series tolerance when no card says otherwise', () => {
    const a = analyse({ uri: 'mem://y.cir', text: mirror('RREF vcc ref 9.1k', '') }, new MemoryWorkspace({}), { corners: { enabled: false }, resistorSeries: 'E96' });
    expect(a.variation!.sources.find((s) => s.name === 'RREF')).toMatchObject({ figure: 0.01, from: 'series' });
    const s = a.structures[0];
    expect(s.variation?.iout['Q2']?.sigmaRelative).toBeGreaterThan(0);
    expect(s.variation?.iref?.contributors[0].name).toBe('RREF');
  });
});

describe('sizing fixes and yield', () => {
  it('say the predicted yield of each value in their titles', () => {
    const text = `yield in the sizing titles
VCC vcc 0 10 ; tol 0.5%
RREF vcc ref 12k ; tol 0.1%
Q1 ref ref 0 qn
Q2 out ref 0 qn ; expect 1mA ±10%
RL vcc out 2k
.model qn npn(IS=1e-15 BF=200)
.end
`;
    const s = analyseSession({ uri: 'mem://s.cir', text }, new MemoryWorkspace({}), { corners: { enabled: false } });
    attachAllSizingFixes(s);
    const f = s.analysis.findings.find((x) => x.code === 'target-missed')!;
    expect(f.fixes!.length).toBeGreaterThan(0);
    for (const fix of f.fixes!) expect(fix.title).toMatch(/; predicted yield \d+(\.\d+)? %/);
  });

  it('are flagged, as information, for a target that writes no tolerance of its own (the series tolerance is its window)', () => {
    const text = mirror('RREF vcc ref 9.1k', '; expect 1mA');
    const a = run(text);
    const f = a.findings.filter((x) => x.code === 'target-yield-low');
    expect(f).toHaveLength(1);
    expect(f[0].severity).toBe('info');
    expect(text.slice(f[0].span.start, f[0].span.end)).toBe('expect 1mA');
    // The default series is E24, whose tolerance is 5 % (IEC 60063 series; the tolerance is common practice).
    expect(f[0].message).toMatch(/against 1 mA ±5 % \(the default window: .*series' tolerance\) is \d/);
    expect(f[0].data).toMatchObject({ tolerance: 0.05, windowFrom: 'default' });
    expect(f[0].message).toMatch(/largest contributor is /);
    const v = a.variation!.outputs.find((o) => o.element === 'Q2' && o.target)!;
    expect(v.target!.tolerance).toBe(0.05);
    expect(f[0].data!['yield']).toBe(v.target!.yield);
    expect(v.target!.yield).toBeLessThan(0.997);
  });

  it('read a target on a mirror output from that output, listed once', () => {
    const a = run(mirror('RREF vcc ref 9.1k', '; expect 1mA ±10%'));
    const q2 = a.variation!.outputs.filter((o) => o.element === 'Q2');
    expect(q2).toHaveLength(1);
    expect(q2[0].key).toMatch(/ out Q2$/);
    expect(q2[0].target).toMatchObject({ current: 1e-3, tolerance: 0.1 });
  });

  it('give every target its predicted yield, with or without its own tolerance', () => {
    const a = run(`two targets
VCC vcc 0 10 ; tol 0.5%
RREF vcc ref 9.1k ; tol 0.1%
Q1 ref ref 0 qn
Q2 out ref 0 qn ; expect 1mA
Q3 out3 ref 0 qn ; expect 1mA ±10%
RL vcc out 2k
RL3 vcc out3 2k
.model qn npn(IS=1e-15 BF=200)
.end
`);
    const yields = ['Q2', 'Q3'].map((d) => a.variation!.outputs.find((o) => o.element === d && o.target)?.target);
    expect(yields[0]).toMatchObject({ current: 1e-3, tolerance: 0.05 });
    expect(yields[1]).toMatchObject({ current: 1e-3, tolerance: 0.1 });
    for (const y of yields) expect(y!.yield).toBeGreaterThan(0);
  });

});

/** The text with every edit of a fix applied (edits of one document, applied from the end). */
function applied(text: string, fix: Fix): string {
  let out = text;
  for (const e of [...fix.edits].sort((a, b) => b.span.start - a.span.start)) out = out.slice(0, e.span.start) + e.newText + out.slice(e.span.end);
  return out;
}

/** A mirror whose spread comes from its reference resistor: matched devices (MATCHVBE 0.05 mV) and a 0.1 % supply. */
const resistorLed = (rrefCard: string, target: string) => `resistor-led spread
VCC vcc 0 10 ; tol 0.1%
${rrefCard}
Q1 ref ref 0 qm
Q2 out ref 0 qm ${target}
RL vcc out 2k
.model qm npn(IS=1e-15 BF=200 MATCHVBE=0.05m MATCHBF=0.001)
.end
`;

describe('the yield fix as an edit', () => {
  it('writes the tighter tolerance on the resistor card, and the edited netlist re-analysed meets the yield the title says', () => {
    const text = resistorLed('RREF vcc ref 9.1k', '; expect 1mA ±4%');
    const f = run(text).findings.find((x) => x.code === 'target-yield-low')!;
    expect(f.message).toMatch(/largest contributor is RREF/);
    expect(f.fixes).toHaveLength(1);
    const fix = f.fixes![0];
    expect(fix.title).toMatch(/^Write `; tol 2%` on RREF's card \(a 2 % part\): predicted yield (\d+(\.\d+)?) %$/);
    const after = applied(text, fix);
    expect(after).toContain('RREF vcc ref 9.1k ; tol 2%\n');
    // The check outside the fix: the whole analysis of the edited text (its own solve and spread).
    const again = run(after);
    expect(again.findings.filter((x) => x.code === 'target-yield-low')).toEqual([]);
    const y = again.variation!.outputs.find((o) => o.element === 'Q2' && o.target)!.target!.yield;
    expect(y).toBeGreaterThanOrEqual(0.997);
    expect(fix.title).toContain(`${+(y * 100).toPrecision(3)} %`);
  });

  it('replaces the figure of a tolerance note the card already has, keeping the rest of its comment', () => {
    const text = resistorLed('RREF vcc ref 9.1k ; metal film, tol 5% from stock', '; expect 1mA ±4%');
    const fix = run(text).findings.find((x) => x.code === 'target-yield-low')!.fixes![0];
    expect(applied(text, fix)).toContain('RREF vcc ref 9.1k ; metal film, tol 2% from stock\n');
  });

  it('leaves a card whose comment holds a target without an edit (text after a target makes it unreadable)', () => {
    const text = `target on the resistor
VCC vcc 0 10 ; tol 0.1%
RREF vcc ref 9.1k ; expect 1mA ±4%
Q1 ref ref 0 qm
.model qm npn(IS=1e-15 BF=200 MATCHVBE=0.05m MATCHBF=0.001)
.end
`;
    const f = run(text).findings.find((x) => x.code === 'target-yield-low')!;
    expect(f.message).toMatch(/write `; tol 2%` on its card/);
    expect(f.fixes ?? []).toEqual([]);
  });

  it('holds a supply that dominates to a tighter tolerance on its card', () => {
    const text = resistorLed('RREF vcc ref 9.1k ; tol 0.1%', '; expect 1mA ±4%').replace('VCC vcc 0 10 ; tol 0.1%', 'VCC vcc 0 10');
    const f = run(text).findings.find((x) => x.code === 'target-yield-low')!;
    expect(f.message).toMatch(/largest contributor is VCC/);
    const fix = f.fixes![0];
    expect(fix.title).toMatch(/^Write `; tol \d+(\.\d+)?%` on VCC's card \(held to ±\d+(\.\d+)? %\): predicted yield/);
    const again = run(applied(text, fix));
    expect(again.findings.filter((x) => x.code === 'target-yield-low')).toEqual([]);
  });
});

describe('every kind of current carrier', () => {
  it('reads the drain current of a JFET as its output, with its derivatives', () => {
    const s = analyseSession({ uri: 'mem://j.cir', text: `jfet source
VDD vdd 0 12
RD vdd d 2k
J1 d 0 s nj
RS s 0 1k
.model nj njf (VTO=-2 BETA=1m)
.end
` }, new MemoryWorkspace({}), { corners: { enabled: false } });
    const c = s.analysis.circuit!;
    const j = c.elements.findIndex((e) => e.name === 'J1');
    const rs = c.elements.findIndex((e) => e.name === 'RS');
    const r = sensitivities(s.solver!.linearise(s.nominal!)!, [elementCurrent(c, j)!], [{ kind: 'resistance', element: rs }]);
    const rec = s.nominal!.op.devices['J1'] as { id: number };
    expect(r.value[0]).toBeCloseTo(Math.abs(rec.id), 12);
    // More source resistance, less drain current (self-bias: VGS = −ID·RS).
    expect(derivativeOf(r, 0, 0)).toBeLessThan(0);
  });
});

describe('Monte Carlo in the output characteristic', () => {
  it('carries the output\'s histogram of the runs, the same figures as the spread analysis', async () => {
    const { monteCarloOf } = await import('../../../shared-analysis/src/service');
    const { outputCharacteristic } = await import('../../../shared-analysis/src/features/sweep');
    const s = analyseSession({ uri: 'mem://m.cir', text: mirror('RREF vcc ref 9.1k', '; expect 1mA ±6%') }, new MemoryWorkspace({}), { corners: { enabled: false } });
    const before = outputCharacteristic(s.analysis, 'Q2', 11);
    expect('error' in before || before.monteCarlo === undefined).toBe(true);
    monteCarloOf(s, { runs: 200, seed: 3 });
    const r = outputCharacteristic(s.analysis, 'Q2', 11);
    if ('error' in r) throw new Error(r.error);
    const v = s.analysis.structures[0].variation!.iout['Q2']!;
    expect(r.monteCarlo).toMatchObject({ runs: 200, converged: v.monteCarlo!.converged, mean: v.monteCarlo!.mean, sigma: v.monteCarlo!.sigma, linearSigma: v.sigma });
    expect(r.monteCarlo!.histogram.reduce((a, b) => a + b, 0)).toBe(r.monteCarlo!.converged);
    expect(r.monteCarlo!.target).toEqual({ low: 1e-3 * 0.94, high: 1e-3 * 1.06 });
  });
});

describe('the variation of an element, as the hover reads it', () => {
  it('is the output a plain scan of every output finds, for every element name in any case, and follows a list that grew', () => {
    // Two mirrors, one with a target: outputs of structure currents, a target current and the references.
    const text = `two mirrors
VCC vcc 0 10
RREF vcc ref 9.1k
Q1 ref ref 0 qn
Q2 out ref 0 qn ; expect 1mA ±6%
RL vcc out 2k
RREF2 vcc ref2 18k
Q3 ref2 ref2 0 qn
Q4 out2 ref2 0 qn
RL2 vcc out2 2k
.model qn npn(IS=1e-15 BF=200)
.end
`;
    const a = run(text);
    const list = a.variation!.outputs;
    // The independent computation: the rule written out as a scan of the list.
    const scan = (name: string) => {
      const mine = list.filter((o) => o.element?.toLowerCase() === name.toLowerCase());
      return mine.find((o) => o.key.includes(' out ')) ?? mine.find((o) => o.key.startsWith('element ')) ?? mine.find((o) => o.key.endsWith(' iref'));
    };
    const names = a.circuit!.elements.flatMap((e) => [e.name, e.name.toLowerCase(), e.name.toUpperCase()]);
    expect(names.filter((n) => scan(n) !== undefined).length).toBeGreaterThan(3);
    for (const name of [...names, 'nothing']) expect(variationOfElement(a, name), name).toBe(scan(name));
    // An output added to the list after the first look-up is found too.
    const extra = { ...list[0]!, key: 'element extra out ', element: 'QX' };
    list.push(extra);
    expect(variationOfElement(a, 'qx')).toBe(extra);
  });
});
