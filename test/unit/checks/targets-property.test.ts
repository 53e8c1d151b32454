// Property (seeded): any comment text after `expect` gives a target or a located finding, never an exception or a NaN.

import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { readTargets } from '../../../shared-analysis/src/checks/targets';
import { parse } from '../../../shared-analysis/src/syntax/parser';

const PIECES = ['expect', ' ', '=', 'Q2', 'R1', '1', '0', '.', '5', 'm', 'u', 'A', 'V', '%', '±', '+-', '+/-', 'corners', 'e-3', '-', ';', '$ ', '\t', 'µ', 'meg', 'X1.', '{', '}', "'", '\r\n', '\n'];

describe('readTargets on arbitrary annotations', () => {
  it('never throws and locates every finding inside its document', () => {
    fc.assert(
      fc.property(
        fc.array(fc.constantFrom(...PIECES), { maxLength: 14 }),
        fc.boolean(),
        fc.string({ maxLength: 6 }),
        (pieces, standalone, noise) => {
          const body = pieces.join('') + noise;
          const text = standalone ? `t\n* expect ${body}\nR1 a 0 1k\n` : `t\nQ2 c b 0 qn ; expect ${body}\nR1 a 0 1k\n`;
          const doc = parse('mem://p.cir', text, { hasTitle: true });
          const { targets, findings } = readTargets({ [doc.uri]: doc });
          for (const f of findings) {
            expect(f.span.start).toBeGreaterThanOrEqual(0);
            expect(f.span.end).toBeLessThanOrEqual(text.length);
            expect(f.span.end).toBeGreaterThan(f.span.start);
            expect(f.message).not.toMatch(/NaN|undefined|Infinity/);
            expect(f.message.endsWith('.')).toBe(true);
          }
          for (const t of targets) {
            expect(Number.isFinite(t.current) && t.current > 0).toBe(true);
            if (t.tolerance !== undefined) expect(t.tolerance > 0 && t.tolerance < 1).toBe(true);
          }
        },
      ),
      { seed: 4242, numRuns: 1500 },
    );
  });
});
