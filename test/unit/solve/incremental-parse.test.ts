// Re-reading only the edited card (`reparsedDocument`) against the parser's own reading of the whole edited text.

import { describe, expect, it } from 'vitest';
import { reparsedDocument } from '../../../shared-analysis/src/incremental';
import { parse } from '../../../shared-analysis/src/syntax/parser';

const URI = 'file:///edits.cir';

/** An invented netlist with every kind of card around the element cards an edit lands on: comments, continuations, a subcircuit, blocks, problems elsewhere, an end card with text after it. */
const NETLIST = [
  'Edits on a bias network',
  '* supply',
  'VCC vcc 0 DC 5',
  '.param rb=22k',
  'R1 vcc b1 {rb} ; expect 0.2mA ±10%',
  'R2 b1 0 4.7k',
  'Q1 c1 b1 e1 QN',
  'RE e1 0 1k',
  'RC vcc c1',
  '+ 3.3k',
  'R3 c1 x 1meg $ a note',
  '.subckt cell a b',
  'RS a b 10k',
  '.ends cell',
  'X1 vcc c1 cell',
  'R4 x 0 ((2k)',
  '.model QN NPN (IS=1e-15 BF=120 VAF=80)',
  '.control',
  'op',
  '.endc',
  'D1 x 0 DN',
  '.model DN D',
  '.end',
  'text after the end',
  '',
].join('\n');

/** Deterministic pseudo-random numbers (fixed seed). */
function rng(seed: number): () => number {
  let s = seed >>> 0;
  return () => {
    s = (s * 1664525 + 1013904223) >>> 0;
    return s / 2 ** 32;
  };
}

/** What an edit puts in: digits and suffixes (value edits), names, separators, comment and line-break characters, an unclosed brace. */
const INSERTS = ['1', '7', '.5', 'k', 'meg', 'x', ' ', '  ', '=', '{', '}', "'", ';', '*', '+', '\n', 'm=2', ' 0', 'QN', ''];

describe('reading only the edited card again', () => {
  it('gives the parser’s own cards and problems for every random edit, and leaves the earlier parse as it was (seeded)', () => {
    const random = rng(20261203);
    let text = NETLIST;
    let previous = parse(URI, text, { hasTitle: true });
    let reread = 0;
    for (let n = 0; n < 600; n++) {
      // Mostly edits inside a line (where an element card may take them), some anywhere.
      const at = Math.floor(random() * text.length);
      const cut = random() < 0.5 ? 0 : Math.floor(random() * 4);
      const insert = INSERTS[Math.floor(random() * INSERTS.length)]!;
      const edited = text.slice(0, at) + insert + text.slice(Math.min(text.length, at + cut));
      const snapshot = structuredClone(previous);
      const fast = reparsedDocument(previous, edited);
      const whole = parse(URI, edited, { hasTitle: true });
      if (fast) {
        reread++;
        expect(fast, JSON.stringify({ at, cut, insert })).toEqual(whole);
      }
      expect(previous).toEqual(snapshot);
      text = edited;
      previous = fast ?? whole;
      // Now and then start again from the original, so the text does not drift into noise.
      if (n % 50 === 49) {
        text = NETLIST;
        previous = parse(URI, text, { hasTitle: true });
      }
    }
    // The shortcut must be taken often enough to be tested (it fails if every edit falls back to the whole parse).
    expect(reread).toBeGreaterThan(60);
  });

  it('re-reads a value edit of one card and shares the cards before it', () => {
    const previous = parse(URI, NETLIST, { hasTitle: true });
    const edited = NETLIST.replace('R2 b1 0 4.7k', 'R2 b1 0 5.15k');
    const fast = reparsedDocument(previous, edited);
    expect(fast).toEqual(parse(URI, edited, { hasTitle: true }));
    const k = previous.cards.findIndex((c) => c.span.start === NETLIST.indexOf('R2 b1'));
    expect(fast!.cards[k - 1]).toBe(previous.cards[k - 1]);
    expect(fast!.cards[k + 1]).not.toBe(previous.cards[k + 1]);
    // An edit that adds a line, or one in a dot card, is read whole.
    expect(reparsedDocument(previous, NETLIST.replace('R2 b1 0 4.7k', 'R2 b1 0 4.7k\nR9 b1 0 1k'))).toBeUndefined();
    expect(reparsedDocument(previous, NETLIST.replace('.param rb=22k', '.param rb=27k'))).toBeUndefined();
  });
});
