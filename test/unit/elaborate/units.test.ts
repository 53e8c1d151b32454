// Checks the netlist number reader against the trade's engineering-suffix convention.
import { describe, expect, it } from 'vitest';
import { parseNumber } from '../../../shared-analysis/src/elaborate/units';

/** Reads `text` and compares with an expected value (relative tolerance 1e-12) or an expected message fragment. */
function check(text: string, expected: number | { error: RegExp }): void {
  const r = parseNumber(text);
  if (typeof expected === 'number') {
    expect(r, text).toEqual({ ok: true, value: expect.any(Number) });
    if (r.ok) expect(Math.abs(r.value - expected)).toBeLessThanOrEqual(Math.abs(expected) * 1e-12);
  } else {
    expect(r.ok, text).toBe(false);
    if (!r.ok) expect(r.message).toMatch(expected.error);
  }
}

// Source: the trade's engineering-suffix convention as written in the README, "The netlist dialect", Numbers
// (common practice): T G MEG K M U N P F MIL, M is milli, MEG is mega, unit letters ignored.
describe('parseNumber', () => {
  it('reads plain decimal forms', () => {
    check('1', 1);
    check('.5', 0.5);
    check('1.', 1);
    check('2.2e-3', 2.2e-3);
    check('-3.3', -3.3);
    check('+7', 7);
    check('1E3', 1000);
  });

  it('applies every scale suffix, case-insensitively', () => {
    check('1T', 1e12);
    check('1g', 1e9);
    check('1MEG', 1e6);
    check('1Meg', 1e6);
    check('1meg', 1e6);
    check('1k', 1e3);
    check('2.2k', 2200);
    check('1m', 1e-3);
    check('1M', 1e-3); // M is milli, not mega (common practice)
    check('1mil', 25.4e-6); // 1 mil = 1/1000 inch = 25.4 µm (exact by the 1959 inch definition)
    check('1u', 1e-6);
    check('1µ', 1e-6);
    check('1n', 1e-9);
    check('1p', 1e-12);
    check('1F', 1e-15); // F is femto, not farad (common practice)
    check('1e3k', 1e6);
    // X (either case) is mega in the dialects that write it so (README, "The netlist dialect"; common practice, from memory).
    check('1X', 1e6);
    check('2.2x', 2.2e6);
    // µ as Windows-1252/Latin-1 decode it (U+00B5) and as the Greek letter (U+03BC).
    check('1\u00b5', 1e-6);
    check('4.7\u03bcF', 4.7e-6);
  });

  it('ignores trailing unit letters', () => {
    check('10kOhm', 1e4);
    check('1uA', 1e-6);
    check('5V', 5);
    check('1MegOhm', 1e6);
    check('3.3mV', 3.3e-3);
    check('100Ohm', 100);
    // The ohm sign after a value, as the Greek capital omega (U+03A9) and as the ohm sign (U+2126).
    check('4.7k\u03a9', 4700);
    check('10\u2126', 10);
    check('1MEG\u03a9', 1e6);
  });

  it('rejects the resistor-marking style with the decimal form', () => {
    check('4k7', { error: /write 4\.7k\b/ });
    check('4u7', { error: /write 4\.7u\b/ });
    check('2R2', { error: /write 2\.2\b/ });
    check('1MEG5', { error: /write 1\.5MEG\b/ });
    check('4.7k7', { error: /digit after its letters/ });
  });

  it('rejects garbage and non-finite values', () => {
    check('', { error: /empty/ });
    check('abc', { error: /not a number/ });
    check('k10', { error: /not a number/ });
    check('-', { error: /not a number/ });
    check('1k-2', { error: /cannot follow/ });
    check('1..2', { error: /cannot follow/ });
    check('1e400', { error: /too large/ });
    check('1e308k', { error: /too large/ });
  });
});
