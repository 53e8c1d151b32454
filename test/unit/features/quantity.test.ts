// Display formatting of quantities: zero of either sign reads as 0, and zero currents in hovers and inlay hints never show a minus sign.

import { describe, expect, it } from 'vitest';
import { formatNumber, formatPercent, formatQuantity } from '../../../shared-analysis/src/features/quantity';
import { hoverAt } from '../../../shared-analysis/src/features/hover';
import { inlayHints } from '../../../shared-analysis/src/features/inlay';
import { analyseText } from './fixture';

/** The one helper of this feature: the display text of `value` in each formatter. */
function check(value: number, expected: { quantity: string; number: string; percent: string }, unit = 'V'): void {
  expect(formatQuantity(value, unit)).toBe(expected.quantity);
  expect(formatNumber(value)).toBe(expected.number);
  expect(formatPercent(value)).toBe(expected.percent);
}

describe('zero in display text', () => {
  it('prints negative zero as 0', () => {
    // Source: IEEE 754-2019 §6.3 — −0 compares equal to +0; a reader sees no sign on zero (common practice).
    check(-0, { quantity: '0 V', number: '0', percent: '0 %' });
    check(-1 * 0, { quantity: '0 A', number: '0', percent: '0 %' }, 'A');
  });
  it('keeps the sign of small non-zero values', () => {
    check(-0.0004, { quantity: '−400 µV', number: '−0.0004', percent: '−0.04 %' });
    check(-2.5, { quantity: '−2.5 V', number: '−2.5', percent: '−250 %' });
  });
  it('shows no −0 in hovers and inlay hints of a netlist with zero-current branches', () => {
    // A grounded resistor with both ends at 0 V and a 0 A source carry exactly zero current (Ohm's law).
    const text = 't\nV1 a 0 DC 5\nR1 a b 1k\nR2 b 0 1k\nI1 c 0 DC 0\nR3 c 0 1k\nR4 0 d 1k\nR5 d 0 2k\n.end\n';
    const a = analyseText(text);
    const shown: string[] = inlayHints(a, '/t/main.cir', { start: 0, end: text.length }, 'full').map((h) => `${h.label} ${h.tooltip ?? ''}`);
    for (let off = 0; off < text.length; off++) {
      const h = hoverAt(a, '/t/main.cir', off);
      if (h) shown.push(h.markdown);
    }
    expect(shown.length).toBeGreaterThan(0);
    for (const t of shown) expect(t).not.toMatch(/[−-]0(?:\.0*)?\s*(?:[µmnpfkM]?[VAW%Ω]|$)/);
  });
});
