// The JSON document's escaping as bytes: the fast path (a byte search of the encoded text) against the plain path
// (the regular expression over every character, then UTF-8 as Node encodes a string, WHATWG Encoding Standard).

import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { escapedJsonChunk, escapeJsonText } from '../../server/src/escape';

/** The plain path: escape every character, then encode; as hexadecimal, which compares long texts quickly. */
const plain = (text: string): string => Buffer.from(escapeJsonText(text), 'utf8').toString('hex');
const fast = (text: string): string => escapedJsonChunk(Buffer.from(text, 'utf8')).toString('hex');

// Each character the escape rewrites (DEL, the C1 controls, the bidirectional marks, embeddings, overrides and
// isolates, the line and paragraph separators), and characters whose UTF-8 shares a lead byte or a second byte
// with one of them but which are left as they are: U+0080–U+00BF start with c2 like the C1 controls, U+2000–U+20FF
// with e2 80 / e2 81 / e2 82, and the document's own U+2212 (e2 88 92), °, µ, ×, Ω and β.
const ESCAPED = ['\u007f', '\u0080', '\u0085', '\u009b', '\u009f', '\u200e', '\u200f', '\u2028', '\u2029', '\u202a', '\u202e', '\u2066', '\u2069'];
const KEPT = ['\u007e', '\u00a0', '\u00b0', '\u00b5', '\u00d7', '\u2010', '\u200d', '\u2027', '\u202f', '\u2030', '\u2065', '\u206a', '\u2080', '\u2212', '\u03a9', '\u03b2', '\ud83d\ude00', '\ud800'];

describe('escapedJsonChunk', () => {
  it('gives the bytes of the escaped text for text that needs no escape and for each character that does', () => {
    expect(fast('{"a":[1,2.5e-7,"Q1 VBE"]}')).toBe(plain('{"a":[1,2.5e-7,"Q1 VBE"]}'));
    for (const c of [...ESCAPED, ...KEPT]) {
      for (const text of [c, `"x${c}"`, `${'0'.repeat(70000)}${c}`, `${c}${'\u2212'.repeat(5)}`]) expect(fast(text)).toBe(plain(text));
    }
    // The escape is written as \uXXXX and the characters kept are kept (the check above could pass on two wrong paths).
    expect(escapedJsonChunk(Buffer.from('a\u202eb')).toString('utf8')).toBe('a\\u202eb');
    expect(escapedJsonChunk(Buffer.from('−40 °C')).toString('utf8')).toBe('−40 °C');
  });

  it('gives the bytes of the escaped text for any text, near misses included', () => {
    const character = fc.oneof(fc.constantFrom(...ESCAPED, ...KEPT), fc.string({ unit: 'binary', minLength: 1, maxLength: 1 }), fc.constantFrom('"', '\\', '0', ','));
    fc.assert(
      fc.property(fc.array(character, { maxLength: 60 }), (chars) => {
        const text = chars.join('');
        expect(fast(text)).toBe(plain(text));
      }),
      { seed: 21, numRuns: 2000 },
    );
  });
});
