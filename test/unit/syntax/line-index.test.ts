// Unit tests of LineIndex: line breaks, the three LSP position encodings, clamping and round trips.

import { describe, expect, it } from 'vitest';
import fc from 'fast-check';
import { LineIndex } from '../../../shared-analysis/src/syntax/line-index';
import type { PositionEncoding } from '../../../shared-analysis/src/syntax/line-index';

type Case = [offset: number, encoding: PositionEncoding, line: number, character: number];

/** Checks offset → position for each case, and position → offset back to the same offset. */
function check(text: string, cases: Case[]): void {
  const index = new LineIndex(text);
  for (const [offset, encoding, line, character] of cases) {
    expect(index.positionAt(offset, encoding), `positionAt(${offset}, ${encoding})`).toEqual({ line, character });
    expect(index.offsetAt({ line, character }, encoding), `offsetAt(${line}:${character}, ${encoding})`).toBe(offset);
  }
}

/** Independent counts of a string's length per encoding. */
function lengthIn(s: string, encoding: PositionEncoding): number {
  // Source: WHATWG Encoding Standard, TextEncoder (UTF-8 bytes; lone surrogates become U+FFFD, 3 bytes).
  if (encoding === 'utf-8') return new TextEncoder().encode(s).length;
  // Source: ECMAScript string iterator, which yields one item per code point (a lone surrogate is one item).
  if (encoding === 'utf-32') return [...s].length;
  return s.length;
}

describe('line breaks', () => {
  it('breaks at LF', () => {
    const index = new LineIndex('a\nbc\n');
    expect(index.lineCount).toBe(3);
    expect([0, 1, 2].map((l) => index.lineStart(l))).toEqual([0, 2, 5]);
    check('a\nbc\n', [
      [0, 'utf-16', 0, 0],
      [1, 'utf-16', 0, 1],
      [2, 'utf-16', 1, 0],
      [4, 'utf-16', 1, 2],
      [5, 'utf-16', 2, 0],
    ]);
  });

  it('treats CRLF as one break', () => {
    const index = new LineIndex('R1 a 0 1k\r\nR2 b 0 2k\r\n');
    expect(index.lineCount).toBe(3);
    expect(index.lineStart(1)).toBe(11);
    expect(index.lineEnd(0)).toBe(9);
    // An offset between CR and LF lies inside the break: it maps to the end of the line.
    expect(index.positionAt(10)).toEqual({ line: 0, character: 9 });
    check('R1 a 0 1k\r\nR2 b 0 2k\r\n', [
      [9, 'utf-16', 0, 9],
      [11, 'utf-16', 1, 0],
      [20, 'utf-16', 1, 9],
      [22, 'utf-16', 2, 0],
    ]);
  });

  it('treats a lone CR as a break', () => {
    const index = new LineIndex('a\rb\r\rc');
    expect(index.lineCount).toBe(4);
    expect([0, 1, 2, 3].map((l) => index.lineStart(l))).toEqual([0, 2, 4, 5]);
    check('a\rb\r\rc', [
      [2, 'utf-16', 1, 0],
      [4, 'utf-16', 2, 0],
      [5, 'utf-16', 3, 0],
      [6, 'utf-16', 3, 1],
    ]);
  });

  it('finds the same line starts in a text of LF breaks only as a count of the lines split at LF', () => {
    // The LF-only text takes another path: lines at its start and end, empty ones in a row, a last line with and without a break.
    for (const text of ['\n\nR1 a 0 1k\n\n\nR2 b 0 2k', 'R1 a 0 1k\nR2 b 0 2k\n', '\n', 'no break at all']) {
      const index = new LineIndex(text);
      const lines = text.split('\n');
      expect(index.lineCount).toBe(lines.length);
      let start = 0;
      lines.forEach((line, l) => {
        expect(index.lineStart(l)).toBe(start);
        start += line.length + 1;
      });
    }
  });

  it('reads LF CR as two breaks', () => {
    expect(new LineIndex('a\n\rb').lineCount).toBe(3);
  });

  it('has one empty line for empty text', () => {
    const index = new LineIndex('');
    expect(index.lineCount).toBe(1);
    expect(index.lineStart(0)).toBe(0);
    expect(index.positionAt(0)).toEqual({ line: 0, character: 0 });
    expect(index.offsetAt({ line: 0, character: 5 })).toBe(0);
    expect(index.offsetAt({ line: 3, character: 0 })).toBe(0);
  });
});

describe('position encodings', () => {
  // Source: LSP 3.17 specification, "Position" and PositionEncodingKind: 'utf-16' counts UTF-16 code
  // units, 'utf-8' bytes, 'utf-32' Unicode code points. Byte lengths per RFC 3629: U+0000–U+007F one,
  // U+0080–U+07FF two, U+0800–U+FFFF three, U+10000 and above four.
  const text = '* β≈𝛃 x\nQ1';
  // Offsets (UTF-16): '*'0 ' '1 'β'2 '≈'3 '𝛃'4–5 ' '6 'x'7 '\n'8 'Q'9
  it('counts an astral character as 2 UTF-16 units, 1 code point and 4 UTF-8 bytes', () => {
    check(text, [
      [4, 'utf-16', 0, 4],
      [6, 'utf-16', 0, 6],
      [4, 'utf-32', 0, 4],
      [6, 'utf-32', 0, 5],
      [8, 'utf-32', 0, 7],
      // '*' 1 + ' ' 1 + 'β' 2 + '≈' 3 = 7 bytes before '𝛃'; 11 after it.
      [4, 'utf-8', 0, 7],
      [6, 'utf-8', 0, 11],
      [8, 'utf-8', 0, 13],
      [10, 'utf-8', 1, 1],
    ]);
  });

  it('agrees with independent length counts at every code-point boundary', () => {
    const sample = 'V1 vcc 0 5 ; 5 V rail\r\n* 𝛃=100, ΔVBE≈60 mV/dec 🙂\rQ1 c b e QN\n\n';
    const index = new LineIndex(sample);
    for (let o = 0; o <= sample.length; o++) {
      const c = sample.charCodeAt(o);
      if (c >= 0xdc00 && c <= 0xdfff) continue; // between the halves of a pair
      for (const enc of ['utf-16', 'utf-8', 'utf-32'] as const) {
        const pos = index.positionAt(o, enc);
        const lineStart = index.lineStart(pos.line);
        const clamped = Math.min(o, index.lineEnd(pos.line));
        expect(pos.character, `offset ${o} in ${enc}`).toBe(lengthIn(sample.slice(lineStart, clamped), enc));
        if (clamped === o) expect(index.offsetAt(pos, enc), `round trip of ${o} in ${enc}`).toBe(o);
      }
    }
  });

  it('rounds a position inside a code point down to its start', () => {
    const index = new LineIndex('a𝛃b');
    expect(index.offsetAt({ line: 0, character: 2 }, 'utf-16')).toBe(1);
    expect(index.offsetAt({ line: 0, character: 3 }, 'utf-8')).toBe(1);
    expect(index.offsetAt({ line: 0, character: 5 }, 'utf-8')).toBe(3);
    expect(index.positionAt(2, 'utf-8')).toEqual({ line: 0, character: 1 });
    expect(index.positionAt(2, 'utf-32')).toEqual({ line: 0, character: 1 });
  });

  it('counts a lone surrogate as one code point and three UTF-8 bytes', () => {
    const lone = 'a\ud800b';
    const index = new LineIndex(lone);
    expect(index.positionAt(3, 'utf-8')).toEqual({ line: 0, character: lengthIn(lone, 'utf-8') });
    expect(index.positionAt(3, 'utf-32')).toEqual({ line: 0, character: 3 });
    expect(index.offsetAt({ line: 0, character: 4 }, 'utf-8')).toBe(2);
  });
});

describe('clamping', () => {
  const text = 'R1 a 0 1k\nQ1';
  const index = new LineIndex(text);

  it('clamps offsets into the text', () => {
    expect(index.positionAt(-5)).toEqual({ line: 0, character: 0 });
    expect(index.positionAt(999)).toEqual({ line: 1, character: 2 });
    expect(index.positionAt(Number.NaN)).toEqual({ line: 0, character: 0 });
    expect(index.positionAt(2.7)).toEqual({ line: 0, character: 2 });
  });

  it('maps a character past the line end to the line end and a line past the last to the text end', () => {
    expect(index.offsetAt({ line: 0, character: 50 })).toBe(9);
    expect(index.offsetAt({ line: 0, character: 50 }, 'utf-8')).toBe(9);
    expect(index.offsetAt({ line: 7, character: 0 })).toBe(text.length);
    expect(index.offsetAt({ line: -1, character: 3 })).toBe(0);
    expect(index.offsetAt({ line: 1, character: -4 })).toBe(10);
    expect(index.offsetAt({ line: Number.POSITIVE_INFINITY, character: 0 })).toBe(text.length);
    expect(index.lineStart(99)).toBe(10);
    expect(index.lineStart(-2)).toBe(0);
  });
});

describe('round trips on generated text', () => {
  // Text built from line breaks of every kind, astral characters, lone surrogates and ASCII.
  const pieces = ['a', 'Q1 ', '\n', '\r\n', '\r', '𝛃', 'β', '≈', '\ud800', '\udc00', '🙂', ' '];
  const text = fc.array(fc.constantFrom(...pieces), { maxLength: 60 }).map((p) => p.join(''));

  it('maps every offset outside a surrogate pair and line break to a position and back', () => {
    fc.assert(
      fc.property(text, fc.constantFrom<PositionEncoding>('utf-16', 'utf-8', 'utf-32'), (t, enc) => {
        const index = new LineIndex(t);
        // Source: the line count is one more than the number of breaks, counting CRLF once (LSP 3.17, "Text Documents").
        expect(index.lineCount).toBe(t.split(/\r\n|\r|\n/).length);
        for (let o = 0; o <= t.length; o++) {
          const pos = index.positionAt(o, enc);
          const end = index.lineEnd(pos.line);
          const insidePair = o > 0 && /[\ud800-\udbff]/.test(t[o - 1]) && /[\udc00-\udfff]/.test(t[o] ?? '');
          if (o > end || insidePair) continue;
          expect(pos.character).toBe(lengthIn(t.slice(index.lineStart(pos.line), o), enc));
          expect(index.offsetAt(pos, enc)).toBe(o);
        }
      }),
      { seed: 424242, numRuns: 300 },
    );
  });
});
