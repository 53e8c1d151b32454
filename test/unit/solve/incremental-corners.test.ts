// The corner phase after a value edit keeps the last phase's figures and findings of every structure in a part of the
// circuit the edit cannot reach (parts joined only through rails held by ideal sources), and measures the others again.
// The check: after seeded random value edits on invented circuits, with a corner phase after most edits (some edits
// pile up before one), the incremental corner phase's findings (code, place, text) and every structure's corner
// figures equal a cold analysis's of the edited text (the independent computation); and structures were kept, so the
// comparison judged kept ones. Leaving a reached structure unmeasured, or a kept finding unmoved, fails it.

import { describe, expect, it } from 'vitest';
import type { AnalysisSession } from '../../../shared-analysis/src/service';
import type { CornerStats } from '../../../shared-analysis/src/checks/corners';
import { rng } from '../../seeded-random';
import { coldSession, editedSession, expectSameCorners, randomValueEdit } from './same-analysis';

const URI = '/t/incremental-corners.cir';
const OPTIONS = { corners: { enabled: false } };

const cold = (text: string): AnalysisSession => coldSession(URI, text, OPTIONS);
const incremental = (text: string, previous?: AnalysisSession): AnalysisSession => editedSession(URI, text, OPTIONS, previous);

// Invented: NPN sink cells on two rails. On the 1.8 V rail the reference current (VCC − VBE)/R moves by more than
// ±20 % across supply ±10 % and the temperature corners (VBE about −2 mV/°C, common practice), so those outputs carry
// a corner spread finding; loads near the current's limit leave forward-active at low supply or when cold.
function twoRailCells(cells: number): string {
  const L = ['two-rail sink cells', 'VA va 0 DC 1.8', 'VB vb 0 DC 5', '.model QN NPN (IS=1e-15 BF=120 VAF=80)'];
  for (let i = 0; i < cells; i++) {
    const rail = i % 2 === 0 ? 'va' : 'vb';
    const rr = i % 2 === 0 ? 4.7 + (i % 3) : 10 + (i % 5);
    const rl = i % 2 === 0 ? 3 + (i % 4) * 1.5 : 3 + (i % 3) * 6;
    L.push(`RR${i} ${rail} r${i} ${rr}k`, `QR${i} r${i} r${i} 0 QN`, `QO${i} o${i} r${i} 0 QN`, `RL${i} ${rail} o${i} ${rl}k`);
  }
  L.push('.end', '');
  return L.join('\n');
}

// Invented: coupled parts beside decoupled ones. A PNP mirror on a 3.3 V rail whose two outputs feed one NPN
// mirror's reference and a degenerated NPN output through a shared node (one part: an edit anywhere in it reaches
// all three structures); a resistor between the rails alone (a part of its own); and low-voltage sink cells.
const COUPLED = `coupled mirrors beside sink cells
VCC vcc 0 DC 3.3
VL vl 0 DC 1.8
.model QN NPN (IS=2e-15 BF=150 VAF=70)
.model QP PNP (IS=1e-15 BF=80 VAF=50)
RP p 0 12k
QP1 p p vcc QP
QP2 n p vcc QP
QP3 s p vcc QP
QN1 n n 0 QN
QN2 m n 0 QN
RM vcc m 6.8k
QN3 s2 n e3 QN
RE3 e3 0 470
RS s s2 1.5k
RX vcc vl 10k
RR0 vl r0 5.6k
QR0 r0 r0 0 QN
QO0 o0 r0 0 QN
RL0 vl o0 4.7k
RR1 vl r1 4.7k
QR1 r1 r1 0 QN
QO1 o1 r1 0 QN
RL1 vl o1 3.9k
RR2 vcc r2 8.2k
QR2 r2 r2 0 QN
QO2 o2 r2 0 QN
RL2 vcc o2 9.1k
.end
`;

describe('the corner phase after value edits keeps the structures the edit cannot reach', () => {
  for (const [name, text, edits] of [
    ['sink cells on two rails', twoRailCells(12), 12],
    ['coupled mirrors beside sink cells', COUPLED, 12],
  ] as const) {
    it(`equals a cold corner phase after random value edits, some piled up between phases: ${name}`, () => {
      const random = rng(20261204);
      let current = text;
      let session = incremental(current);
      const first = { got: {} as CornerStats, want: {} as CornerStats };
      expectSameCorners(session, cold(current), first);
      // Nothing to keep from before the first phase.
      expect(first.got.keptFigures).toBe(0);
      let keptFigures = 0;
      let keptFindings = 0;
      let partCorners = 0;
      let cornerFindings = 0;
      for (let k = 0; k < edits; k++) {
        current = randomValueEdit(current, random);
        const next = incremental(current, session);
        expect(next.solver).toBe(session.solver);
        session = next;
        // Every third edit is superseded before its corner phase: the next phase keeps what the one before left.
        if (k % 3 === 1) continue;
        const want = cold(current);
        const stats = { got: {} as CornerStats, want: {} as CornerStats };
        expectSameCorners(next, want, stats);
        keptFigures += stats.got.keptFigures;
        keptFindings += stats.got.keptFindings;
        partCorners += stats.got.partCorners;
        cornerFindings += want.analysis.structures.length > 0 ? countCornerFindings(next) : 0;
      }
      // Structures and their findings were kept, and there were corner findings to keep, so the comparison judged them.
      expect(keptFigures).toBeGreaterThan(0);
      expect(keptFindings).toBeGreaterThan(0);
      // Corners were measured on the point of the edited parts solved alone, so the comparison judged that point too.
      expect(partCorners).toBeGreaterThan(0);
      expect(cornerFindings).toBeGreaterThan(0);
    });
  }

  it('keeps every cell but the edited one: the edit moves the rail source’s current, which no structure reads', () => {
    const text = twoRailCells(6);
    const first = incremental(text);
    expectSameCorners(first, cold(text));
    const edited = text.replace('RR2 va r2 6.7k', 'RR2 va r2 6.2k');
    expect(edited).not.toBe(text);
    const next = incremental(edited, first);
    const stats = { got: {} as CornerStats, want: {} as CornerStats };
    expectSameCorners(next, cold(edited), stats);
    // One cell of six reached, and measured at every corner on its own point (the cell and the rail sources).
    expect(stats.got.keptFigures).toBe(5);
    expect(stats.got.partCorners).toBe(stats.got.converged);
    expect(stats.got.iterations).toBe(0);
  });
});

/** The corner findings the last corner phase of `s` recorded. */
function countCornerFindings(s: AnalysisSession): number {
  return s.incremental?.cornerRecord?.record.findings.reduce((n, list) => n + list.length, 0) ?? 0;
}
