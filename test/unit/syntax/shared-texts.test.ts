// `SharedTexts` (shared-analysis/src/syntax/shared-texts.ts), the table the parser keeps each repeated field text in
// once, against independent computations written here: String.prototype.slice for the text of a range (ECMAScript)
// and a Set of those slices for the number of distinct texts.

import { describe, expect, it } from 'vitest';
import { LARGE_TEXT, MAX_SHARED_TEXTS, SharedTexts } from '../../../shared-analysis/src/syntax/shared-texts';
import { parse } from '../../../shared-analysis/src/syntax/parser';
import { rng } from '../../seeded-random';

/** FNV-1a, 32-bit, over UTF-16 code units: offset basis 2166136261 and prime 16777619 (from memory of the published constants). */
function fnv1a(s: string): number {
  let h = 2166136261;
  for (let i = 0; i < s.length; i++) {
    h ^= s.charCodeAt(i);
    // Multiply modulo 2^32 in two halves, so no product passes 2^53 (exact in doubles).
    h = ((h * (16777619 & 0xffff)) + (((h * (16777619 >>> 16)) % 65536) * 65536)) % 4294967296;
  }
  return h;
}

describe('the field texts one parse shares', () => {
  it.each([true, false])('reads every range as its slice, and holds each distinct text once (seeded; open table: %s)', (large) => {
    const random = rng(5);
    // ASCII names, digits and characters beyond ASCII, a surrogate pair among them (U+1D11E).
    const alphabet = [...'abrvcxo0129._', 'µ', 'Ω', '\u{1D11E}'];
    let text = '';
    const ranges: [number, number][] = [];
    for (let n = 0; n < 20000; n++) {
      const length = 1 + Math.floor(random() * 4);
      let word = '';
      for (let i = 0; i < length; i++) word += alphabet[Math.floor(random() * alphabet.length)];
      ranges.push([text.length, text.length + word.length]);
      text += word + ' ';
    }
    const words = new SharedTexts(MAX_SHARED_TEXTS, large);
    const distinct = new Set<string>();
    for (const [start, end] of ranges) {
      const expected = text.slice(start, end);
      distinct.add(expected);
      expect(words.of(text, start, end)).toBe(expected);
    }
    expect(words.size).toBe(distinct.size);
    // A second pass finds every text and adds none.
    for (const [start, end] of ranges) expect(words.of(text, start, end)).toBe(text.slice(start, end));
    expect(words.size).toBe(distinct.size);
  });

  it('still reads as written when many texts fall on one slot, and stops holding them there', () => {
    // Texts whose FNV-1a hashes share their low 8 bits start their probe at one slot of the first table (256 slots).
    const same: string[] = [];
    for (let n = 0; same.length < 60; n++) {
      const word = `n${n}`;
      if ((fnv1a(word) & 255) === 7) same.push(word);
    }
    const text = same.join(' ');
    const words = new SharedTexts();
    let at = 0;
    for (const word of same) {
      expect(words.of(text, at, at + word.length)).toBe(word);
      at += word.length + 1;
    }
    // The run is cut short (the table does not fill past its probe limit), and every text still reads as written.
    expect(words.size).toBeGreaterThan(0);
    expect(words.size).toBeLessThan(same.length);
    at = 0;
    for (const word of same) {
      expect(words.of(text, at, at + word.length)).toBe(word);
      at += word.length + 1;
    }
  });

  it.each([3000, 60000])('gives every token of a parsed netlist of %i lines the text of its span', (count) => {
    const random = rng(9);
    const lines = ['shared texts'];
    for (let i = 0; i < count; i++) {
      const a = `n${Math.floor(random() * 400)}`;
      const b = random() < 0.3 ? 'vcc' : `N${Math.floor(random() * 400)}`;
      lines.push(random() < 0.5 ? `R${i} ${a} ${b} ${1 + Math.floor(random() * 9)}k` : `Q${i} ${a} ${b} 0 QN`);
    }
    const text = lines.join('\n');
    // The smaller netlist shares its texts through a Map, the larger through the open table.
    expect(text.length >= LARGE_TEXT).toBe(count > 3000);
    const doc = parse('file:///t.cir', text, { hasTitle: true });
    for (const card of doc.cards) for (const t of card.tokens ?? []) expect(t.text).toBe(text.slice(t.span.start, t.span.end));
  });
});
