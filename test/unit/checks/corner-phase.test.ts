// The editor's two-phase analysis: a first pass without corners, then addCorners; and resistor sizing on demand from a finding's marker.

import { describe, expect, it } from 'vitest';
import type { AnalysisOptions } from '../../../shared-analysis/src/analysis';
import { seriesTolerance } from '../../../shared-analysis/src/fixes/e-series';
import { sizingFixes, sizingRequest } from '../../../shared-analysis/src/fixes/index';
import { addCorners, analyse, analyseSession, sizingFixesOf, attachAllSizingFixes } from '../../../shared-analysis/src/service';
import type { BjtRecord } from '../../../shared-analysis/src/solve/types';
import { MemoryWorkspace, type Finding, type TextEdit } from '../../../shared-analysis/src/types';

const URI = '/phase.cir';

const CORNER_CODES = ['corner-output-out-of-region', 'corner-headroom-low', 'corner-current-spread', 'corner-no-convergence', 'target-missed-at-corner'];

function apply(text: string, edits: TextEdit[]): string {
  let out = text;
  for (const e of [...edits].sort((a, b) => b.span.start - a.span.start)) out = out.slice(0, e.span.start) + e.newText + out.slice(e.span.end);
  return out;
}

function analyseText(text: string, options: AnalysisOptions = {}) {
  return analyseSession({ uri: URI, text }, new MemoryWorkspace({ [URI]: text }), options);
}

/** Codes, spans and messages: what the editor shows of a finding. */
const shown = (fs: Finding[]) => fs.map((f) => ({ code: f.code, severity: f.severity, span: f.span, message: f.message }));

/**
 * The one helper for the corner phase: the first pass (corners off) plus addCorners must show
 * exactly what the one-pass analysis shows, and fill the same structure corners.
 */
function check(text: string, expected: { cornerCodes: string[] }, options: AnalysisOptions = {}): void {
  const one = analyseText(text, options).analysis;
  const first = analyseText(text, { ...options, corners: { ...(options.corners ?? {}), enabled: false } });
  expect(first.analysis.findings.filter((f) => CORNER_CODES.includes(f.code))).toEqual([]);
  expect(first.analysis.structures.every((s) => s.corners.length === 0)).toBe(true);
  expect(first.solver && first.nominal).toBeTruthy();
  const extra = addCorners(first.analysis, { solver: first.solver!, nominal: first.nominal! });
  expect(extra.map((f) => f.code)).toEqual(expected.cornerCodes);
  // Source: (common practice) a result split across two calls must equal the result of one call.
  expect(shown(extra)).toEqual(shown(one.findings.filter((f) => CORNER_CODES.includes(f.code))));
  expect(first.analysis.structures.map((s) => s.corners)).toEqual(one.structures.map((s) => s.corners));
  // The first pass's findings are those of the one pass minus the corner ones (indices a host published stay valid).
  expect(shown(first.analysis.findings)).toEqual(shown(one.findings.filter((f) => !CORNER_CODES.includes(f.code))));
}

// An invented bias cell (as in corners.test.ts): a 1 mA reference into a 1.5 kΩ divider feeds the
// mirror through R1, so IREF rises with temperature as VBE falls (about −2 mV/°C at constant current,
// Horowitz and Hill, 3rd ed., ch. 2); the output's load hangs from a separate 2.2 V supply.
const cell = (rl: string, extra = ''): string => `sensor bias cell, output load from a 2.2 V rail
IREF 0 na DC 1m
RA na 0 1.5k
R1 na b 2k
Q1 b b 0 qn
Q2 out b 0 qn
VLOAD vload 0 DC 2.2
RL vload out ${rl}
${extra}.model qn npn (IS=1e-16 BF=100)
.end
`;

describe('a mirror whose reference carries nothing', () => {
  // No feed on the reference node: the nominal error says so (reference-unfed); its output's leakage, which moves by
  // orders of magnitude with temperature, is no bias-current spread to report at the corners.
  it('gets its nominal error and no corner-current-spread', () => {
    const text = 'unfed\nVCC vcc 0 5\nQ1 r r 0 QN\nQ2 o r 0 QN\nRL vcc o 1k\n.model QN NPN (IS=1e-15 BF=120)\n.end\n';
    const a = analyseText(text).analysis;
    expect(a.findings.map((f) => f.code)).toContain('reference-unfed');
    expect(a.findings.filter((f) => f.code === 'corner-current-spread')).toEqual([]);
    // A fed mirror's spread is still reported (the 6k cell below, 'corner-current-spread' among its corner codes).
  });
});

describe('addCorners after a first pass without corners', () => {
  it('reports the output that leaves forward-active at a corner, as the one pass does', () =>
    check(cell('6k'), { cornerCodes: ['corner-current-spread', 'corner-output-out-of-region'] }));

  it('reports a target met at nominal but missed at the corners, as the one pass does', () => {
    // The target is the nominal current itself, so it is met at nominal; the corner clause is tight.
    const nominal = analyseText(cell('2k')).analysis.operatingPoint!.devices['Q2'] as BjtRecord;
    const text = cell('2k', `* expect Q2 = ${(Math.abs(nominal.ic) * 1e3).toPrecision(4)}mA ±5% corners ±2%\n`);
    check(text, { cornerCodes: ['corner-current-spread', 'target-missed-at-corner'] });
  });

  it('maps severities through the options, as the one pass does', () =>
    check(cell('6k'), { cornerCodes: ['corner-output-out-of-region'] }, { severities: { 'corner-current-spread': 'off', 'corner-output-out-of-region': 'error' } }));

  it('gives a self-biased loop the same start-up record and finding as the one pass, the corner solves’ chosen states included', () => {
    // An invented ΔVBE cell without a start-up path (as in startup.test.ts): it can rest at zero current everywhere.
    const text = `ΔVBE cell\nVCC vcc 0 5\nQ1 n1 n1 0 qn\nQ2 p n1 x qn 8\nR x 0 1k\nQP1 p p vcc qp\nQP2 n1 p vcc qp\n.model qn npn (BF=100)\n.model qp pnp (BF=50)\n.end\n`;
    const one = analyseText(text).analysis;
    const first = analyseText(text, { corners: { enabled: false } });
    addCorners(first.analysis, { solver: first.solver!, nominal: first.nominal! });
    const startup = (a: typeof one) => a.structures.map((s) => s.startup);
    expect(startup(first.analysis)).toEqual(startup(one));
    expect(one.structures.find((s) => s.kind === 'ptat-cell')!.startup!.corners!.every((c) => c.solvedCurrent! > 0)).toBe(true);
    const loop = (fs: Finding[]) => shown(fs.filter((f) => f.code === 'bias-loop-can-stay-off'));
    expect(loop(first.analysis.findings)).toHaveLength(1);
    expect(loop(first.analysis.findings)).toEqual(loop(one.findings));
  });

  it('adds nothing and does not throw when the nominal point did not converge', () => {
    const s = analyseText(cell('2k'));
    const broken = { ...s.nominal!, op: { ...s.nominal!.op, converged: false } };
    expect(addCorners(s.analysis, { solver: s.solver!, nominal: broken })).toEqual([]);
  });

  it('adds nothing for a circuit without structures', () => {
    const s = analyseText('divider\nV1 a 0 5\nR1 a b 1k\nR2 b 0 1k\n.end\n', { corners: { enabled: false } });
    expect(addCorners(s.analysis, { solver: s.solver!, nominal: s.nominal! })).toEqual([]);
  });
});

// An invented 12 V reference mirror whose reference resistor is deliberately off for its 1 mA target.
const missed = `12 V reference mirror, resistor off target
VPOS vpos 0 DC 12
R1 vpos ref 22k
Q1 ref ref 0 qn
Q2 out ref 0 qn ; expect 1mA ±2%
RLOAD vpos out 3.3k
.model qn npn (IS=1e-16 BF=150)
.end
`;

describe('sizing fixes on demand', () => {
  it('leaves the target-missed finding without fixes but marked, and sizes it on demand after a JSON round trip', () => {
    const s = analyseText(missed);
    const f = s.analysis.findings.find((x) => x.code === 'target-missed')!;
    expect(f.fixes).toBeUndefined();
    expect(sizingRequest(f)).toEqual({ resistor: 'R1', device: 'Q2', target: 1e-3, tolerance: 0.02, series: 'E24', structureId: expect.any(String) });
    // The finding as the editor gets it back: through JSON, as across the worker boundary.
    const copy = JSON.parse(JSON.stringify(f)) as Finding;
    const fixes = sizingFixesOf(s, copy);
    expect(fixes.length).toBeGreaterThanOrEqual(1);
    const preferred = fixes.filter((x) => x.preferred);
    expect(preferred).toHaveLength(1);
    const fixed = apply(missed, preferred[0].edits);
    const again = analyse({ uri: URI, text: fixed }, new MemoryWorkspace({ [URI]: fixed }), {});
    const iout = Math.abs((again.operatingPoint!.devices['Q2'] as BjtRecord).ic);
    // Source: IEC 60063 — E24 values are spaced for ±5 %, so the nearest one lands within that of the target.
    expect(Math.abs(iout / 1e-3 - 1)).toBeLessThanOrEqual(seriesTolerance('E24'));
  });

  it('gives the same fixes one at a time as all at once', () => {
    const s = analyseText(missed);
    const f = s.analysis.findings.find((x) => x.code === 'target-missed')!;
    const one = sizingFixesOf(s, f);
    attachAllSizingFixes(s);
    // Source: (common practice) computing on demand must not change the answer.
    expect(f.fixes).toEqual(one);
  });

  it('sizes nothing when the operating point did not converge (no nominal solution to re-solve from)', () => {
    const s = analyseText(missed);
    let solves = 0;
    const solver = s.solver!;
    const solve = solver.solve.bind(solver);
    solver.solve = ((...args: Parameters<typeof solve>) => {
      solves++;
      return solve(...args);
    }) as typeof solver.solve;
    // A session without a converged nominal solution is what analyseSession returns when Newton fails.
    attachAllSizingFixes({ ...s, nominal: undefined });
    expect(solves).toBe(0);
    expect(s.analysis.findings.find((x) => x.code === 'target-missed')!.fixes).toBeUndefined();
  });

  it('offers nothing for a malformed marker, another code, or a session without a solver', () => {
    const s = analyseText(missed);
    const f = s.analysis.findings.find((x) => x.code === 'target-missed')!;
    const sizing = f.data!['sizing'] as Record<string, unknown>;
    const ctx = { circuit: s.analysis.circuit!, solver: s.solver!, structures: s.analysis.structures, documents: s.analysis.documents, options: s.analysis.options };
    for (const bad of [{ ...sizing, target: Number.NaN }, { ...sizing, target: -1e-3 }, { ...sizing, series: 'E7' }, { ...sizing, resistor: 'R404' }, { ...sizing, resistor: 'Q1' }, 'R1', null]) {
      expect(sizingFixes({ ...f, data: { ...f.data, sizing: bad } }, ctx)).toEqual([]);
    }
    expect(sizingFixes({ ...f, code: 'something-else', data: {} }, ctx)).toEqual([]);
    expect(sizingFixesOf({ analysis: s.analysis }, f)).toEqual([]);
  });

  it('marks a resistor whose value is a parameter too (it is sized through the parameter)', () => {
    const text = missed.replace('R1 vpos ref 22k', '.param rset=22k\nR1 vpos ref {rset}');
    const f = analyseText(text).analysis.findings.find((x) => x.code === 'target-missed')!;
    expect(f).toBeDefined();
    expect(sizingRequest(f)).toMatchObject({ resistor: 'R1', device: 'Q2' });
  });
});
