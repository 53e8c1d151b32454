// Splitting an analysis into parts for the thread boundary and putting it back together loses nothing.

import { describe, expect, it } from 'vitest';
import { adoptKeptCards, mergePart, splitAnalysis, splitAnalysisLazily } from '../../server/src/analysis-transfer';
import type { Analysis } from '../../shared-analysis/src/analysis';
import { analyse } from '../../shared-analysis/src/service';
import { hoverAt } from '../../shared-analysis/src/features/hover';
import { indexBuilder, indexOf } from '../../shared-analysis/src/features/document-index';
import { MemoryWorkspace } from '../../shared-analysis/src/types';

/** The one helper: split, pass every message through a structured clone (as postMessage does), merge, compare. */
function check(text: string, hoverAtText: string[]): void {
  const ws = new MemoryWorkspace({ '/t/main.cir': text });
  const original = analyse({ uri: '/t/main.cir', text, version: 3 }, ws, { corners: { enabled: false } });
  const { header, parts } = splitAnalysis(original);
  // The header is small whatever the circuit's size: the point's node and device tables come in parts.
  expect(Object.keys(header.operatingPoint!.nodes)).toEqual([]);
  expect(Object.keys(header.operatingPoint!.devices)).toEqual([]);
  expect(parts.filter((p) => p.kind === 'nodes').length).toBeGreaterThan(1);
  const copy = structuredClone(header);
  const builder = indexBuilder(copy.circuit!);
  for (const p of parts) {
    const before = copy.circuit!.elements.length;
    mergePart(copy, structuredClone(p));
    if (p.kind === 'elements') builder.add(copy.circuit!.elements, before);
  }
  builder.finish(copy);
  expect(copy).toEqual(original);
  // The tables built part by part are the ones built in one go.
  expect(indexOf(copy)).toEqual(indexOf(original));
  expect(indexOf(copy).elementByName.get('q2')).toBe(copy.circuit!.elements.find((e) => e.name === 'Q2'));
  // Models are shared objects again, as the elaborator made them.
  for (const e of copy.circuit!.elements) if ('model' in e) expect(Object.values(copy.circuit!.models)).toContain(e.model);
  for (const needle of hoverAtText) {
    const at = text.indexOf(needle) + 1;
    expect(hoverAt(copy, '/t/main.cir', at)).toEqual(hoverAt(original, '/t/main.cir', at));
  }
}

describe('analysis transfer', () => {
  it('round-trips a mirror with an unbounded Early voltage and many cards', () => {
    // Q3's card goes on past a comment line: the comment is kept inside the card (`comments`), a card within a card.
    const lines = ['Transfer check', 'VCC vcc 0 DC 10', 'RREF vcc ref 9.3k', 'Q1 ref ref 0 QN', 'Q2 out ref 0 QN', 'Q3 out3 ref 0', '* the model follows', '+ QN', 'RL vcc out 1k', 'RL3 vcc out3 1k', '.model QN NPN (BF=100)'];
    // Enough resistors to need several parts of each kind.
    for (let k = 0; k < 4000; k++) lines.push(`RX${k} vcc x${k} 1k`, `RY${k} x${k} 0 2k`);
    lines.push('.end', '');
    const text = lines.join('\n');
    expect(analyse({ uri: '/t/main.cir', text }, new MemoryWorkspace({ '/t/main.cir': text })).documents['/t/main.cir']!.cards[5]!.comments).toHaveLength(1);
    check(text, ['Q2 out', 'QN\nRL', 'RX17 ', 'x3999 0']);
  });

  it('keeps the held cards an edit leaves alone, moved past the edit, and equals a full transfer', () => {
    const lines = ['Kept cards', 'VCC vcc 0 DC 10', 'RREF vcc ref 9.3k ; the reference', 'Q1 ref ref 0 QN', 'Q2 out ref 0 QN', 'RL vcc out 1k', '.model QN NPN (BF=100)', '* a comment line'];
    for (let k = 0; k < 600; k++) lines.push(`RX${k} vcc x${k} ${1 + (k % 9)}k`, `RY${k} x${k} 0 2k`);
    lines.push('.end', '');
    const before = lines.join('\n');
    // Each edit against the text above: a value made longer and shorter, a digit at a token's start, a
    // comment's text, a card added, the title, the first and the last character, no change at all.
    const edits: [string, string, boolean][] = [
      ['RREF vcc ref 9.3k', 'RREF vcc ref 10.25k', true],
      ['RY599 x599 0 2k', 'RY599 x599 0 2', true],
      ['RX300 vcc x300 4k', 'RX300 vcc x300 5k', true],
      ['RX300 vcc x300 4k', 'RX300 vcc x300 14k', true],
      ['; the reference', '; the new reference', true],
      ['* a comment line', '* a comment line that grew', true],
      ['RL vcc out 1k\n', 'RL vcc out 1k\nRZ out 0 1meg\n', false],
      ['Kept cards', 'Kept cardz', true],
      ['.end\n', '.end', true],
      ['Q2 out', 'Q2 out', true],
    ];
    const uri = '/t/main.cir';
    const run = (text: string): Analysis => analyse({ uri, text, version: 1 }, new MemoryWorkspace({ [uri]: text }), { corners: { enabled: false } });
    const first = splitAnalysisLazily(run(before));
    const sent = first.prepare();
    // What the main thread holds: the first analysis taken in whole.
    const firstHeld = structuredClone(first.header);
    for (const make of first.parts) mergePart(firstHeld, structuredClone(make()));
    const heldCopy = structuredClone(firstHeld);
    for (const [from, to, keeps] of edits) {
      // What the main thread holds (a fresh copy each time: adopting a result moves the held cards past the edit).
      const held = structuredClone(heldCopy);
      expect(before.includes(from), from).toBe(true);
      const after = before.replace(from, to);
      const original = run(after);
      const next = splitAnalysisLazily(original, sent);
      next.prepare();
      const parts = next.parts.map((make) => structuredClone(make()));
      const kept = parts.filter((p) => p.kind === 'cards-kept').length;
      const cardParts = parts.filter((p) => p.kind === 'cards' || p.kind === 'cards-kept').length;
      // Only the part(s) holding the edited card travel as JSON; a card added moves every later card into another part.
      if (keeps) expect(kept, to).toBeGreaterThan(0);
      expect(kept, to).toBeLessThanOrEqual(cardParts);
      const copy = structuredClone(next.header);
      for (const p of parts) mergePart(copy, p, held);
      // The held analysis is left as it was until the result is adopted (it answers requests meanwhile).
      expect(held).toEqual(heldCopy);
      adoptKeptCards(copy);
      // The independent computation: the parser's own cards of the edited text.
      expect(copy.documents[uri], to).toEqual(original.documents[uri]);
      // Kept cards are the held objects themselves, moved or not: no second copy.
      const shared = copy.documents[uri]!.cards.filter((c, k) => c === held.documents[uri]!.cards[k]).length;
      if (keeps) expect(shared, to).toBeGreaterThan(0);
    }
    const held = structuredClone(heldCopy);
    // The same text again: every card is kept, and the very same objects are shared.
    const again = splitAnalysisLazily(run(before), sent);
    again.prepare();
    const parts = again.parts.map((make) => make());
    expect(parts.filter((p) => p.kind === 'cards').length).toBe(0);
    const copy = structuredClone(again.header);
    for (const p of parts) mergePart(copy, p, held);
    expect(copy.documents[uri]!.cards[5]).toBe(held.documents[uri]!.cards[5]);
  });
});
