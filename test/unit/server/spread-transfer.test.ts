// The corner phase's spread result crosses to the main thread as the outputs whose record changed since the result
// the main thread holds. The check: through structured cloning (as postMessage does), after value edits, a tolerance
// edit and a result the main thread dropped, the result taken in equals the worker's whole result cloned (the plain
// path), and only the changed outputs crossed.

import { describe, expect, it } from 'vitest';
import { addCorners, type AnalysisSession } from '../../../shared-analysis/src/service';
import type { VariationResult } from '../../../shared-analysis/src/variation/types';
import { SpreadReceiver, SpreadSender } from '../../../server/src/spread-transfer';
import { editedSession } from '../solve/same-analysis';

const URI = '/t/spread-transfer.cir';

// Invented: NPN sink cells on a 2.5 V rail, 210 of them (past 400 unknowns: the spread comes with the corner phase).
function cells(reference: (i: number) => string): string {
  const L = ['sink cells', 'VP vp 0 DC 2.5', '.model QS NPN (IS=4e-15 BF=95 VAF=40)'];
  for (let i = 0; i < 210; i++) L.push(`RR${i} vp r${i} ${reference(i)}`, `QR${i} r${i} r${i} 0 QS`, `QO${i} o${i} r${i} 0 QS`, `RL${i} vp o${i} ${(0.8 + (i % 4) * 0.2).toFixed(1)}k`);
  L.push('.end', '');
  return L.join('\n');
}

/** The worker's side: an analysis after `previous` by value edits, with its corner phase, as the worker runs both. */
function analysed(text: string, previous?: AnalysisSession): AnalysisSession {
  const s = editedSession(URI, text, { corners: { enabled: false } }, previous);
  addCorners(s.analysis, { solver: s.solver!, nominal: s.nominal!, incremental: s.incremental });
  return s;
}

describe('the spread result crosses to the main thread as its changed outputs', () => {
  it('equals the whole result cloned after edits, a tolerance edit and a dropped result', () => {
    const sender = new SpreadSender('7');
    const receiver = new SpreadReceiver();
    const versions = [
      cells((i) => `${(1.5 + (i % 5) * 0.1).toFixed(1)}k`),
      cells((i) => (i === 3 ? '1.35k' : `${(1.5 + (i % 5) * 0.1).toFixed(1)}k`)),
      cells((i) => (i === 3 ? '1.35k' : i === 150 ? '1.95k' : `${(1.5 + (i % 5) * 0.1).toFixed(1)}k`)),
      // A tolerance note: that resistor's source changes figure, so the sources cross again.
      cells((i) => (i === 3 ? '1.35k' : i === 150 ? '1.95k ; tol 0.5%' : `${(1.5 + (i % 5) * 0.1).toFixed(1)}k`)),
      cells((i) => (i === 3 ? '1.3k' : i === 150 ? '1.95k ; tol 0.5%' : `${(1.5 + (i % 5) * 0.1).toFixed(1)}k`)),
      cells((i) => (i === 3 ? '1.3k' : i === 150 ? '1.95k ; tol 0.2%' : `${(1.5 + (i % 5) * 0.1).toFixed(1)}k`)),
    ];
    let session: AnalysisSession | undefined;
    const crossed: number[] = [];
    const withSources: boolean[] = [];
    versions.forEach((text, v) => {
      session = analysed(text, session);
      const result = session.analysis.variation!;
      const msg = structuredClone(sender.message(URI, result, receiver.heldId(URI)));
      crossed.push(msg.outputs.filter((o) => o !== null).length);
      withSources.push(msg.sources !== undefined);
      // The main thread drops the third result (its version was superseded): the next one must not be told against it.
      if (v === 2) return;
      const taken = receiver.takeIn(URI, msg);
      expect(plain(taken!)).toEqual(plain(structuredClone(result)));
    });
    const outputs = session!.analysis.variation!.outputs.length;
    expect(outputs).toBe(420);
    // Whole at first; then the edited cell's two outputs; whole again after the dropped result (told against nothing
    // held); the edited cell's two; the two of the cell whose tolerance changed, with the sources.
    expect(crossed).toEqual([outputs, 2, 2, outputs, 2, 2]);
    expect(withSources).toEqual([true, false, false, true, false, true]);
  });

  it('takes in nothing told against a result it does not hold', () => {
    const receiver = new SpreadReceiver();
    expect(receiver.takeIn(URI, { id: '1.2', base: '1.1', outputs: [null], stats: { adjointSolves: 0, parameters: 0, ms: 0 } })).toBeUndefined();
    expect(receiver.heldId(URI)).toBeUndefined();
  });
});

/** The result without its timing (`stats.ms` differs between the two paths only in being a time). */
function plain(r: VariationResult): unknown {
  return { outputs: r.outputs, sources: r.sources, adjointSolves: r.stats.adjointSolves, parameters: r.stats.parameters };
}
