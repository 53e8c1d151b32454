// Position conversion in UTF-8 and UTF-32 on long lines: the same answers as a plain scan, at a cost that does not grow with the line.
import { describe, expect, it, vi } from 'vitest';
import { LineIndex, type PositionEncoding } from '../../../shared-analysis/src/syntax/line-index';
import { rng as seededRandom } from '../../seeded-random';

/** Reference: encoded units of the text of one line up to `offset`, by a scan from the line start (Unicode: UTF-8 is 1–4 bytes per code point). */
function unitsBefore(line: string, upTo: number, encoding: PositionEncoding): number {
  let units = 0;
  for (let i = 0; i < upTo; ) {
    const cp = line.codePointAt(i)!;
    const w = cp > 0xffff ? 2 : 1;
    if (i + w > upTo) break;
    units += encoding === 'utf-32' ? 1 : cp < 0x80 ? 1 : cp < 0x800 ? 2 : cp >= 0xd800 && cp <= 0xdfff ? 3 : cp < 0x10000 ? 3 : 4;
    i += w;
  }
  return units;
}

const PIECES = ['a', 'R1 ', 'µ', 'Ω', '€', '😀', '𝛽', ' ', '{', '1k'];

describe('LineIndex on long lines', () => {
  it('agrees with a plain scan in UTF-8 and UTF-32, both ways', () => {
    const rnd = seededRandom(1234);
    for (let trial = 0; trial < 20; trial++) {
      let line = '';
      const len = 200 + Math.floor(rnd() * 3000);
      while (line.length < len) line += PIECES[Math.floor(rnd() * PIECES.length)]!;
      const text = `Title\n${line}\nend`;
      const index = new LineIndex(text);
      for (const encoding of ['utf-8', 'utf-32'] as const) {
        for (let k = 0; k < 200; k++) {
          const off = Math.floor(rnd() * line.length);
          const pos = index.positionAt(6 + off, encoding);
          expect(pos.line).toBe(1);
          expect(pos.character).toBe(unitsBefore(line, off, encoding));
          const back = index.offsetAt(pos, encoding) - 6;
          // Back to the same offset, or to the start of the code point the offset was inside.
          expect(unitsBefore(line, back, encoding)).toBe(pos.character);
          expect(back).toBeLessThanOrEqual(off);
        }
      }
    }
  });

  it('converts many positions on one 200,000-character line without scanning the line each time', () => {
    const line = 'R1 a b 1k µ '.repeat(16_667);
    const index = new LineIndex(`T\n${line}\n`);
    const spy = vi.spyOn(String.prototype, 'codePointAt');
    for (let k = 0; k < 2000; k++) {
      const p = index.positionAt(2 + ((k * 7919) % line.length), 'utf-8');
      index.offsetAt(p, 'utf-8');
    }
    const calls = spy.mock.calls.length;
    spy.mockRestore();
    // One pass to place checkpoints (~200k) plus a short scan per conversion; a scan from the line start would be ~2000 × 100k.
    expect(calls).toBeLessThan(line.length + 2000 * 2 * 200);
  });
});
