// Engineering-notation formatting in both styles, and the netlist style's round trip through the number reader.

import fc from 'fast-check';
import { describe, expect, it } from 'vitest';
import { parseNumber } from '../../../shared-analysis/src/elaborate/units';
import { formatEngineering, formatMeasured, formatPercent, formatSigned, type FormatOptions } from '../../../shared-analysis/src/fixes/format';

/** The one helper that touches the formatter. */
function check(value: number, options: FormatOptions, expected: string): void {
  expect(formatEngineering(value, options)).toBe(expected);
}

describe('netlist style', () => {
  const netlist: FormatOptions = { style: 'netlist' };
  // Netlist suffix conventions (the README, "The netlist dialect"): K, MEG, M = milli, U, N, P, F.
  it.each([
    [8200, '8.2k'],
    [1.5e6, '1.5meg'],
    [470, '470'],
    [2.2e-6, '2.2u'],
    [0.1, '100m'],
    [4.7e3, '4.7k'],
    [1e9, '1g'],
    [33e-12, '33p'],
    [-5, '-5'],
    [0, '0'],
    [1e-16, '1e-16'],
    [999.96, '1k'],
    [10e3, '10k'],
    [2.5e13, '25t'],
  ])('%s → %s', (v, text) => check(v, netlist, text));

  it('never writes the resistor-marking form or a unit that would read as a prefix', () => {
    expect(formatEngineering(4700, { style: 'netlist', unit: 'Ω' })).toBe('4.7k');
    expect(formatEngineering(1e-12, { style: 'netlist', unit: 'F' })).toBe('1p');
  });

  it('keeps the requested significant digits', () => {
    check(12345, { style: 'netlist', digits: 3 }, '12.3k');
    check(12345, { style: 'netlist', digits: 5 }, '12.345k');
  });

  it('writes nothing for a value that is not finite', () => {
    check(Number.NaN, netlist, '');
    check(Infinity, netlist, '');
  });
});

describe('display style', () => {
  it.each([
    [8200, 'Ω', '8.2 kΩ'],
    [1.02e-3, 'A', '1.02 mA'],
    [-0.21, 'V', '−0.21 V'],
    [0.05, 'V', '50 mV'],
    [2.2e-6, 'A', '2.2 µA'],
    [0, 'V', '0 V'],
    [1.5e6, 'Ω', '1.5 MΩ'],
    [12, '', '12'],
  ])('%s %s → %s', (v, unit, text) => check(v, { unit }, text));

  it('shows infinity and NaN without the letters NaN', () => {
    check(Infinity, { unit: 'Ω' }, '∞ Ω');
    check(-Infinity, {}, '−∞');
    check(Number.NaN, { unit: 'A' }, '—');
  });

  it('formats percentages with a sign', () => {
    expect(formatPercent(0.021)).toBe('+2.1 %');
    expect(formatPercent(-0.12)).toBe('−12 %');
    expect(formatPercent(0)).toBe('0 %');
  });
});

describe('the noise floor and percentages', () => {
  // docs/DEVICE-MODELS.md "Regions": a current below 1 pA is off; solver noise such as 3.49e-18 fV must not read as a number.
  it.each([
    [3.49e-33, 'V', '≈ 0 V'],
    [1.39e-18, 'A', '≈ 0 A'],
    [-4e-13, 'A', '≈ 0 A'],
    [2e-7, 'V', '≈ 0 V'],
    [1.2e-12, 'A', '1.2 pA'],
    [0.617, 'V', '0.617 V'],
    [1e30, 'Ω', '∞ Ω'],
    [4.84e-3, 'W', '4.84 mW'],
  ])('%s %s → %s', (v, unit, text) => expect(formatMeasured(v, unit)).toBe(text));

  it('signs voltages above the floor only', () => {
    expect(formatSigned(0.617, 'V')).toBe('+0.617 V');
    expect(formatSigned(-8.7, 'V')).toBe('−8.7 V');
    expect(formatSigned(3e-18, 'V')).toBe('≈ 0 V');
  });

  it('writes percentages with at most three significant figures and never an exponent', () => {
    expect(formatPercent(88888.33)).toBe('+8890000 %');
    expect(formatPercent(1.234)).toBe('+123 %');
    expect(formatPercent(2.8e-9)).toBe('≈ 0 %');
    expect(formatPercent(-0.27)).toBe('−27 %');
    expect(formatPercent(0.0015)).toBe('+0.15 %');
    for (const r of [1e-7, 3.3e-4, 0.05, 7.77, 1e6, -2.5e9]) expect(formatPercent(r)).not.toMatch(/e|×/);
  });
});

describe('round trip through parseNumber', () => {
  // Property (seeded): netlist text read back by the elaborator's number reader gives the value
  // to the printed precision (relative difference below half a unit in the last printed digit).
  it('reads back every netlist-style value', () => {
    fc.assert(
      fc.property(
        fc.double({ min: -30, max: 13, noNaN: true }),
        fc.boolean(),
        fc.integer({ min: 1, max: 6 }),
        (exp10, negative, digits) => {
          const value = (negative ? -1 : 1) * 10 ** exp10;
          const text = formatEngineering(value, { style: 'netlist', digits });
          const back = parseNumber(text);
          expect(back.ok, text).toBe(true);
          if (!back.ok) return;
          const rel = Math.abs(back.value - value) / Math.abs(value);
          expect(rel, `${value} → ${text} → ${back.value}`).toBeLessThanOrEqual(0.5 * 10 ** (1 - digits) * 1.0000001);
        },
      ),
      { seed: 60063, numRuns: 2000 },
    );
  });

  it('reads back E24 resistor values exactly', () => {
    for (const v of [1, 10, 8.2e3, 4.7e5, 1.5e6, 2.2e-3, 9.1e8]) {
      const back = parseNumber(formatEngineering(v, { style: 'netlist' }));
      expect(back.ok && back.value).toBeCloseTo(v, 12 - Math.ceil(Math.log10(v)));
    }
  });
});
