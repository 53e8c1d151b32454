// A re-analysis after a value edit reuses the last analysis (its prepared solver, its structures, and the hand
// analysis of every structure the edit cannot have changed). The check: for many random value edits on several
// invented circuits, the incremental result equals a cold analysis of the edited text (the cold analysis is the
// independent computation): the point to 1e-12, every finding's code, place and text exactly, the structures'
// figures, and then the corner phase on both. A kept structure that should have changed fails the comparison.

import { describe, expect, it, vi } from 'vitest';
import { addCorners, AnalysisStopped, type AnalysisSession } from '../../../shared-analysis/src/service';
import type { CornerStats } from '../../../shared-analysis/src/checks/corners';
import { revertValueEdit, valueChanges } from '../../../shared-analysis/src/incremental';
import { DcSolver } from '../../../shared-analysis/src/solve/dc';
import { rng } from '../../seeded-random';
import { BJT_CELL } from '../checks/self-biased-cells';
import { coldSession, editedSession, expectSameAnalysis, expectSameCorners, randomValueEdit } from './same-analysis';

const URI = '/t/incremental.cir';
/** The server's first pass: corners later, in a phase of their own. */
const OPTIONS = { corners: { enabled: false } };

const cold = (text: string): AnalysisSession => coldSession(URI, text, OPTIONS);
const incremental = (text: string, previous?: AnalysisSession, shouldStop?: () => boolean): AnalysisSession => editedSession(URI, text, OPTIONS, previous, shouldStop);

/** Findings exactly (code, severity, place, text), then everything else as `expectSameAnalysis` compares it. */
function expectColdResult(got: AnalysisSession, want: AnalysisSession): void {
  const exact = (s: AnalysisSession) => s.analysis.findings.map((f) => ({ code: f.code, severity: f.severity, uri: f.uri, span: f.span, message: f.message, related: f.related, fixes: f.fixes }));
  expect(exact(got)).toEqual(exact(want));
  expectSameAnalysis(got, want, 1e-9);
}

// Invented: NPN sink cells on one rail (reference resistor, diode-connected device, output device, load); every
// fifth load is too large for the current, so that output saturates and has a finding; some outputs carry a target.
function sinkCells(cells: number): string {
  const L = ['incremental sink cells', 'VCC vcc 0 DC 5', '.model QN NPN (IS=1e-15 BF=120 VAF=80)'];
  for (let i = 0; i < cells; i++) {
    const target = i % 4 === 1 ? ' ; expect 0.35mA ±5%' : '';
    L.push(`RR${i} vcc r${i} ${10 + (i % 7)}k`, `QR${i} r${i} r${i} 0 QN`, `QO${i} o${i} r${i} 0 QN${target}`, `RL${i} vcc o${i} ${i % 5 === 3 ? 30 : 1 + (i % 3)}k`);
  }
  L.push('.end', '');
  return L.join('\n');
}

// Invented: mirrors that share nodes and feed each other. A three-output NPN mirror whose loads are chained
// (RLB hangs from RLA's node), a PNP mirror whose output feeds an NPN mirror's reference, which feeds a
// degenerated PNP mirror; a Widlar output; a divider and a lone resistor string no structure owns.
const SHARED = `incremental shared and chained mirrors
VCC vcc 0 DC 9
.model QN NPN (IS=2e-15 BF=150 VAF=70)
.model QP PNP (IS=1e-15 BF=80 VAF=50)
RREF vcc ref 15k
Q1 ref ref 0 QN
Q2 a ref 0 QN
Q3 b ref 0 QN ; expect 0.5mA ±10%
Q4 c ref e4 QN
RE4 e4 0 2.2k
RLA vcc a 4.7k
RLB a b 3.3k
RLC vcc c 8.2k
RPREF p 0 22k
QP1 p p vcc QP
QP2 n p vcc QP
QN1 n n 0 QN
QN2 m n 0 QN
RM1 m1 m 1k
QD1 m1 m1 d1 QP
RD1 d1 vcc 1k
QD2 out m1 dx QP
RD2 dx vcc 1.5k
ROUT out 0 5.6k
RDIV1 vcc div 10k
RDIV2 div 0 6.8k
RS1 vcc s1 1k
RS2 s1 s2 2k
RS3 s2 0 3k
.end
`;

// Invented: a chain where each mirror's output is the next one's reference, alternating NPN and PNP.
const CHAIN = `incremental mirror chain
VCC vcc 0 DC 12
.model QN NPN (IS=1e-15 BF=100 VAF=60)
.model QP PNP (IS=1e-15 BF=60 VAF=40)
R0 vcc n0 20k
QA1 n0 n0 0 QN
QA2 p1 n0 0 QN
QB1 p1 p1 vcc QP
QB2 n2 p1 vcc QP
QC1 n2 n2 0 QN
QC2 p3 n2 e3 QN
RC3 e3 0 500
QD1 p3 p3 vcc QP
QD2 o4 p3 vcc QP ; expect 0.2mA ±5%
RL4 o4 0 6.8k
.end
`;

// Invented: devices no structure owns, each with a device finding in a part of its own (joined to the others only
// through rails): a current sink held by a bias rail whose load is too large (it saturates), a healthy one beside it,
// a reversed diode that blocks its branch, resistors over their power rating between the rails and through a node;
// and a sink cell (a structure) beside them. A value edit moves one part; the others keep their judgements.
const DEVICES = `incremental device judgements
VCC vcc 0 DC 5
VB vb 0 DC 1.2
.model QN NPN (IS=1e-15 BF=120 VAF=80)
.model DN D (IS=1e-14)
Q5 c5 vb e5 QN
RE5 e5 0 1k
RC5 vcc c5 20k
Q6 c6 vb e6 QN
RE6 e6 0 1k
RC6 vcc c6 2k
R7 vcc n7 10k
D7 0 n7 DN
RP vcc 0 47
RQ1 vcc q 22
RQ2 q 0 33
RR vcc r 12k
QR r r 0 QN
QO o r 0 QN
RL vcc o 1k
.end
`;

/** How many structures of `next` were kept from `previous` (their estimate is the same object, not computed again). */
function keptCount(previous: AnalysisSession, next: AnalysisSession): number {
  const before = new Set(previous.analysis.structures.map((s) => s.estimate));
  return next.analysis.structures.filter((s) => s.estimate !== undefined && before.has(s.estimate)).length;
}

/**
 * A sequence of seeded edits, each compared with a cold analysis and its corner phase: 2–10 s alone, several times
 * that beside other test files on a loaded machine. The limit only stops a hang; it states no speed.
 */
const SEEDED_EDITS_TIMEOUT_MS = 120_000;

describe('incremental re-analysis of a value edit', () => {
  // In the chain every edit moves every node after it, so nothing is kept there: the feeds are what it tests.
  for (const [name, text, edits, keeps] of [
    ['sink cells', sinkCells(16), 20, true],
    ['shared and chained mirrors', SHARED, 30, true],
    ['a mirror chain', CHAIN, 20, false],
    ['device judgements', DEVICES, 30, true],
  ] as const) {
    it(`equals a cold analysis after random value edits: ${name}`, () => {
      const random = rng(20261202);
      let current = text;
      let session = incremental(current);
      expect(session.incremental).toBeDefined();
      let kept = 0;
      for (let k = 0; k < edits; k++) {
        current = randomValueEdit(current, random);
        const next = incremental(current, session);
        const want = cold(current);
        // The prepared solver was taken over (the edit changed values only), not built again.
        expect(next.solver).toBe(session.solver);
        expectColdResult(next, want);
        // Counted, not timed: the nominal start is solved anew in the parts the edit reached (`nominalStart`), so the
        // whole circuit's Newton confirms it at the first iteration; from the last solution alone it takes three to five.
        expect(next.nominal!.stats.iterations, `edit ${k}`).toBe(1);
        kept += keptCount(session, next);
        // Every few edits the corner phase runs on the result, as the server runs it; the next edit starts from its analysis all the same.
        if (k % 3 === 0) expectSameCorners(next, want);
        session = next;
      }
      // Structures were kept, so the comparison above judged the kept ones too.
      if (keeps) expect(kept).toBeGreaterThan(0);
    }, SEEDED_EDITS_TIMEOUT_MS);
  }

  it('judges again only the devices of the part an edit moves, and keeps the other parts’ findings moved past the edit', () => {
    const codes = (a: AnalysisSession) => new Set(a.analysis.findings.map((f) => f.code));
    const first = incremental(DEVICES);
    // The circuit has the findings the kept judgements must reproduce.
    for (const code of ['current-source-out-of-region', 'branch-blocked', 'power-over-rating']) expect(codes(first), code).toContain(code);
    const edited = DEVICES.replace('RC6 vcc c6 2k', 'RC6 vcc c6 2.25k');
    const next = incremental(edited, first);
    expectColdResult(next, cold(edited));
    // The saturated sink's finding lies after the edit in another part: kept (moved), not judged again.
    const device = (a: AnalysisSession, name: string) => a.incremental!.devices!.find((list) => list?.some((f) => f.data?.['device'] === name));
    expect(device(next, 'D7')![0]!.span.start).toBe(device(first, 'D7')![0]!.span.start + 3);
    expect(device(next, 'D7')![0]).not.toBe(device(first, 'D7')![0]);
    // The edited part is judged again: its load's new value makes the sink saturate.
    const saturating = incremental(DEVICES.replace('RC6 vcc c6 2k', 'RC6 vcc c6 25k'), first);
    expectColdResult(saturating, cold(DEVICES.replace('RC6 vcc c6 2k', 'RC6 vcc c6 25k')));
    expect(device(saturating, 'Q6')).toBeDefined();
  });

  it('keeps every structure of a large array but the edited cell and moves the findings after the edit', () => {
    const text = sinkCells(40);
    const first = incremental(text);
    const edited = text.replace('RR2 vcc r2 12k', 'RR2 vcc r2 12.75k');
    const next = incremental(edited, first);
    expectColdResult(next, cold(edited));
    expect(keptCount(first, next)).toBe(next.analysis.structures.length - 1);
  });

  it('starts the corner solves after a value edit from the last corner solutions moved by the nominal change: the same corners in fewer iterations', () => {
    const text = sinkCells(40);
    let session = incremental(text);
    expectSameCorners(session, cold(text));
    let current = text;
    for (const [from, to] of [
      ['RR2 vcc r2 12k', 'RR2 vcc r2 12.75k'],
      ['RL7 vcc o7 2k', 'RL7 vcc o7 1.8k'],
      ['RR2 vcc r2 12.75k', 'RR2 vcc r2 12.5k'],
    ]) {
      current = current.replace(from, to);
      const next = incremental(current, session);
      const stats = { got: {} as CornerStats, want: {} as CornerStats };
      expectSameCorners(next, cold(current), stats);
      expect(stats.got.converged).toBe(stats.want.converged);
      // Newton iterations are counted, not timed. From the nominal start each corner needs four or five here, and four
      // from the last corner solutions not moved by the nominal change (104 and 87 over the 26 corners of the first and
      // last edit); moved, at most three.
      expect(stats.got.iterations).toBeLessThan(stats.want.iterations);
      expect(stats.got.iterations).toBeLessThanOrEqual(3 * stats.got.converged);
      session = next;
    }
  });

  // Every edit's corner phase from the last one's solutions, each corner's start solved anew in the parts the edit
  // reached (`PartStarts`): sink cells on one rail, mirrors sharing nodes, a chain that is one part, and parts on two
  // rails with resistors between the rails alone.
  for (const [name, text] of [
    ['sink cells', sinkCells(24)],
    ['shared and chained mirrors', SHARED],
    ['a mirror chain', CHAIN],
    ['device judgements', DEVICES],
  ] as const) {
    it(`confirms every corner of an edited circuit in one Newton iteration, and equals a cold corner phase: ${name}`, () => {
      const random = rng(20261203);
      let current = text;
      let session = incremental(current);
      expectSameCorners(session, cold(current));
      for (let k = 0; k < 8; k++) {
        current = randomValueEdit(current, random);
        const next = incremental(current, session);
        const stats = { got: {} as CornerStats, want: {} as CornerStats };
        // Without the last phase's figures every corner is solved whole (with them, a corner is measured on the parts'
        // point alone: test/unit/solve/incremental-corners.test.ts), so the start's exactness shows in the iterations.
        next.incremental!.cornerRecord = undefined;
        expectSameCorners(next, cold(current), stats);
        expect(stats.got.converged).toBe(stats.want.converged);
        expect(stats.got.partCorners).toBe(0);
        // Counted, not timed: the start passes the whole circuit's convergence test (an update and a residual within
        // the solver's tolerances) at the first iteration. A part solved wrongly, or a rail source's current left at its
        // last value, takes two or more.
        expect(stats.got.iterations).toBe(stats.got.converged);
        session = next;
      }
    }, SEEDED_EDITS_TIMEOUT_MS);
  }

  it('reuses nothing but the warm start when the edit is not a value edit', () => {
    const first = incremental(SHARED);
    for (const edited of [
      SHARED.replace('RS3 s2 0 3k', 'RS3 s2 0 3k\nRS4 s2 0 3k'), // a new element
      SHARED.replace('RLC vcc c 8.2k', 'RLC vcc b 8.2k'), // a node moved
      SHARED.replace('VAF=70', 'VAF=75'), // a model card
      SHARED.replace('VCC vcc 0 DC 9', 'VCC vcc 0 DC 10'), // a rail, which recognition reads
      SHARED.replace('RS3 s2 0 3k', 'RS3 s2 0 0'), // a resistor to 0 Ω, solved with a current unknown
      SHARED.replace('RS3 s2 0 3k', 'RS3 s2 0 -3k'), // a negative resistor, which recognition does not count
    ]) {
      const next = incremental(edited, first);
      expect(next.solver).not.toBe(first.solver);
      expectColdResult(next, cold(edited));
    }
  });

  it('reuses everything for an edit of a comment, and re-reads its target', () => {
    const first = incremental(CHAIN);
    const edited = CHAIN.replace('; expect 0.2mA ±5%', '; expect 0.25mA ±5%');
    const next = incremental(edited, first);
    expect(next.solver).toBe(first.solver);
    expectColdResult(next, cold(edited));
    expect(keptCount(first, next)).toBe(next.analysis.structures.length);
  });

  it("keeps or makes again the solver's static findings and the connectivity findings after value edits: floating nodes, a shorted junction, a value out of range, a dangling node", () => {
    // Invented: a mirror, a resistor pair that reaches ground only through a capacitor (a floating group), a diode
    // whose two ends are one node, a resistor across the supply whose value the edits push out of range and back,
    // and a resistor to a node nothing else reaches (the connectivity check's findings, kept across value edits).
    const text = `incremental static findings
VCC vcc 0 DC 5
.model QN NPN (IS=1e-15 BF=120 VAF=80)
.model DX D (IS=1e-14)
RR vcc r 12k
Q1 r r 0 QN
Q2 o r 0 QN
RL vcc o 2k
RLONE vcc x 4.7k
RX x 0 10k
RBIG vcc 0 100k
RF1 f1 f2 1k
RF2 f2 f3 1k
CF f3 0 1u
D1 x x DX
RDANGLE x open 3.3k
.end
`;
    let session = incremental(text);
    let current = text;
    for (const [from, to] of [
      ['RR vcc r 12k', 'RR vcc r 12.75k'], // moves every finding after it
      ['RBIG vcc 0 100k', 'RBIG vcc 0 1e200'], // out of range
      ['RR vcc r 12.75k', 'RR vcc r 9k'], // the out-of-range finding moves
      ['RBIG vcc 0 1e200', 'RBIG vcc 0 100k'], // back in range
      ['RDANGLE x open 3.3k', 'RDANGLE x open 3.35k'], // the card of the dangling node's finding
      ['RF2 f2 f3 1k', 'RF2 f2 f3 1.5k'], // a resistor of the floating group
    ]) {
      current = current.replace(from, to);
      const next = incremental(current, session);
      expect(next.solver).toBe(session.solver);
      const want = cold(current);
      expectColdResult(next, want);
      // The solver's own findings too: the netlist checks' finding on the same value hides its out-of-range one in the analysis.
      const solverFindings = (x: AnalysisSession) => x.nominal!.findings.map((f) => ({ code: f.code, span: f.span, message: f.message, related: f.related }));
      expect(solverFindings(next)).toEqual(solverFindings(want));
      expect(solverFindings(want).map((f) => f.code).sort()).toEqual([...(current.includes('1e200') ? ['dc-value-out-of-range'] : []), 'dc-junction-shorted', 'dc-singular-matrix'].sort());
      session = next;
    }
  });

  it('keeps no state for a circuit with a self-biased loop', () => {
    const loop = BJT_CELL('RSTART vcc n1 1meg');
    expect(incremental(loop).incremental).toBeUndefined();
  });

  it('stays usable after an analysis that took it as its start was stopped', () => {
    const first = incremental(CHAIN);
    const edited = CHAIN.replace('R0 vcc n0 20k', 'R0 vcc n0 25k');
    let asked = 0;
    // Stop at the third check: after the solver took the new values.
    expect(() => incremental(edited, first, () => ++asked >= 3)).toThrow();
    revertValueEdit(first.incremental!);
    const again = CHAIN.replace('R0 vcc n0 20k', 'R0 vcc n0 18k');
    const next = incremental(again, first);
    expect(next.solver).toBe(first.solver);
    expectColdResult(next, cold(again));
  });

  it('moves the part solvers of the nominal start on while edits keep to the same parts, and each result equals a cold analysis', () => {
    // Counted, not timed: an edit whose part solvers are moved on calls DcSolver.adoptValues twice (the whole circuit's
    // solver and the part's); one that builds them afresh, once.
    const adopt = vi.spyOn(DcSolver.prototype, 'adoptValues');
    try {
      const text = sinkCells(8);
      let session = incremental(text);
      let current = text;
      const edit = (card: string, value: string, stop?: () => boolean): number => {
        current = current.replace(new RegExp(`^${card} (\\S+ \\S+) \\S+`, 'm'), `${card} $1 ${value}`);
        adopt.mockClear();
        const next = incremental(current, session, stop);
        const calls = adopt.mock.calls.length;
        expectColdResult(next, cold(current));
        expect(next.nominal!.stats.iterations, `${card} = ${value}`).toBe(1);
        session = next;
        return calls;
      };
      // One value again and again, then the load of the same cell (the same part), then another cell's, then back.
      const calls = [edit('RR2', '12.5k'), edit('RR2', '11k'), edit('RR2', '13.3k'), edit('RL2', '2.7k'), edit('RR5', '9.1k'), edit('RR5', '10k'), edit('RR2', '12k')];
      expect(calls).toEqual([1, 2, 2, 2, 1, 2, 1]);
      // An analysis stopped at any check, after its nominal start took the solvers or before: the state the worker goes
      // back to (`revertValueEdit`) builds them afresh or moves them on, and the next edit still equals a cold analysis.
      let stops = 0;
      for (let stopAt = 1; ; stopAt++) {
        stops = stopAt;
        const before = current;
        let asked = 0;
        const stopped = (() => {
          try {
            edit('RR5', `${9 + stopAt / 10}k`, () => ++asked >= stopAt);
            return false;
          } catch (e) {
            if (!(e instanceof AnalysisStopped)) throw e;
            return true;
          }
        })();
        if (!stopped) break;
        current = before;
        revertValueEdit(session.incremental!);
        edit('RR5', `${11 + stopAt / 10}k`);
      }
      // Every stage's check and the Newton iteration's were a stop (the nominal start runs before the iteration's).
      expect(stops).toBeGreaterThan(5);
    } finally {
      adopt.mockRestore();
    }
  });

  it('keeps the corner solutions of a corner phase stopped half-way, and the next corner phase equals a cold one', () => {
    const text = sinkCells(12);
    const first = incremental(text);
    addCorners(first.analysis, { solver: first.solver!, nominal: first.nominal!, incremental: first.incremental });
    const edited = text.replace('RR5 vcc r5 15k', 'RR5 vcc r5 14k');
    const next = incremental(edited, first);
    let asked = 0;
    // Stopped after a few corners: those have new solutions, the others keep the last phase's.
    expect(() => addCorners(next.analysis, { solver: next.solver!, nominal: next.nominal!, incremental: next.incremental, shouldStop: () => ++asked > 5 })).toThrow(AnalysisStopped);
    const again = edited.replace('RR5 vcc r5 14k', 'RR5 vcc r5 13.5k');
    const last = incremental(again, next);
    expect(last.solver).toBe(first.solver);
    expectSameCorners(last, cold(again));
  });

  it('finds the resistors whose values changed and nothing else', () => {
    const a = cold(SHARED).analysis.circuit!;
    const b = cold(SHARED.replace('RLB a b 3.3k', 'RLB a b 3.9k').replace('RD2 dx vcc 1.5k', 'RD2 dx vcc 1.2k')).analysis.circuit!;
    expect(valueChanges(a, b)!.map((i) => b.elements[i].name)).toEqual(['RLB', 'RD2']);
    expect(valueChanges(a, a)).toEqual([]);
    expect(valueChanges(a, cold(SHARED.replace('Q3 b ref 0 QN', 'Q3 b ref 0 QN area=2')).analysis.circuit!)).toBeUndefined();
  });
});
