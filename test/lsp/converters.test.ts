// The converter cache keeps the held text's converter and the new text's side by side (a large take-in asks for both in turn).

import { describe, expect, it } from 'vitest';
import { Converters } from '../../server/src/to-lsp';

/** The LSP position of `offset` worked out independently: lines counted by '\n' (LSP: a position is a zero-based line and a UTF-16 character). */
function positionByCounting(text: string, offset: number): { line: number; character: number } {
  const before = text.slice(0, offset);
  const line = before.split('\n').length - 1;
  return { line, character: offset - (before.lastIndexOf('\n') + 1) };
}

/** Builds texts of `lines` lines each, differing in one value, as two versions of an edited netlist do. */
function version(value: string, lines = 2000): string {
  return ['* array', `R1 a b ${value}`, ...Array.from({ length: lines }, (_, i) => `R${i + 2} n${i} 0 1k`)].join('\n');
}

describe('Converters', () => {
  it('answers the held text and the new one alternately with the converters it made first', () => {
    const converters = new Converters();
    const held = version('10k');
    const next = version('21k');
    const first = converters.get('file:///a.cir', held);
    const second = converters.get('file:///a.cir', next);
    expect(converters.get('file:///a.cir', held)).toBe(first);
    expect(converters.get('file:///a.cir', next)).toBe(second);
    expect(converters.get('file:///a.cir', held)).toBe(first);
    // Each still reads its own text.
    for (const offset of [0, 25, held.length - 3]) expect(first.toPosition(offset)).toEqual(positionByCounting(held, offset));
    for (const offset of [0, 25, next.length - 3]) expect(second.toPosition(offset)).toEqual(positionByCounting(next, offset));
  });

  it('keeps two texts per document: a third lets go of the one asked for longest ago', () => {
    const converters = new Converters();
    const [a, b, c] = [version('1k'), version('2k'), version('3k')];
    const ca = converters.get('file:///a.cir', a);
    const cb = converters.get('file:///a.cir', b);
    converters.get('file:///a.cir', c);
    expect(converters.get('file:///a.cir', b)).toBe(cb);
    expect(converters.get('file:///a.cir', a)).not.toBe(ca);
    // Another document's texts are its own.
    expect(converters.get('file:///b.cir', b)).not.toBe(cb);
  });

  it('makes a new converter when the encoding changed (LSP 3.17: the position encoding is negotiated at initialisation)', () => {
    const converters = new Converters();
    const text = 'R1 a b 1k ; \u00b5\nR2 b 0 2k';
    const utf16 = converters.get('file:///a.cir', text);
    converters.encoding = 'utf-8';
    const utf8 = converters.get('file:///a.cir', text);
    expect(utf8).not.toBe(utf16);
    // '\u00b5' is one UTF-16 unit and two UTF-8 bytes (RFC 3629): the offset after it differs by one.
    const after = text.indexOf('\n');
    expect(utf16.toPosition(after)).toEqual({ line: 0, character: after });
    expect(utf8.toPosition(after)).toEqual({ line: 0, character: after + 1 });
  });
});
