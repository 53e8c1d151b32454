// Nearest standard values on both sides of a resistance, across decade boundaries and at the range ends.

import { describe, expect, it } from 'vitest';
import { closestStandardValue, nearestStandardValues, type SeriesName } from '../../../shared-analysis/src/fixes/e-series';

/** The one helper: expected below/above/exact for a value in a series. */
function check(value: number, series: SeriesName, expected: { below: number; above: number; exact: boolean } | undefined): void {
  const got = nearestStandardValues(value, series);
  if (expected === undefined) {
    expect(got).toBeUndefined();
    return;
  }
  expect(got).toBeDefined();
  expect(got!.exact).toBe(expected.exact);
  expect(got!.below).toBeCloseTo(expected.below, 9);
  expect(got!.above).toBeCloseTo(expected.above, 9);
}

// Neighbours read from the IEC 60063:2015 tables (E24: … 8.2 9.1 | 10 …; E96: … 9.76 | 10.0).
describe('nearestStandardValues', () => {
  it('9.9 kΩ in E24 sits between 9.1 kΩ and 10 kΩ', () => check(9.9e3, 'E24', { below: 9.1e3, above: 10e3, exact: false }));
  it('1.05 kΩ in E24 sits between 1.0 kΩ and 1.1 kΩ', () => check(1.05e3, 'E24', { below: 1e3, above: 1.1e3, exact: false }));
  it('an exact standard value is reported as exact', () => check(8.2e3, 'E24', { below: 8.2e3, above: 8.2e3, exact: true }));
  it('a power of ten is exact in every series', () => check(1e5, 'E96', { below: 1e5, above: 1e5, exact: true }));
  it('9.9 Ω in E96 sits between 9.76 Ω and 10 Ω', () => check(9.9, 'E96', { below: 9.76, above: 10, exact: false }));
  it('just above a decade: 1.01 MΩ in E12 → 1 MΩ / 1.2 MΩ', () => check(1.01e6, 'E12', { below: 1e6, above: 1.2e6, exact: false }));
  it('just below a decade: 0.099 Ω in E12 → 82 mΩ / 100 mΩ', () => check(0.099, 'E12', { below: 0.082, above: 0.1, exact: false }));
  it('E192 keeps the standard 9.20 entry', () => check(9.195e3, 'E192', { below: 9.09e3, above: 9.2e3, exact: false }));
  it('is clamped to 1 mΩ … 1 GΩ', () => {
    check(1e-6, 'E24', { below: 1e-3, above: 1e-3, exact: true });
    check(5e12, 'E24', { below: 1e9, above: 1e9, exact: true });
  });
  it('rejects zero, negatives and non-finite values', () => {
    check(0, 'E24', undefined);
    check(-100, 'E24', undefined);
    check(Number.NaN, 'E24', undefined);
    check(Infinity, 'E24', undefined);
  });
});

describe('closestStandardValue', () => {
  it('picks the log-nearer neighbour', () => {
    expect(closestStandardValue(9.9e3, 'E24')).toBeCloseTo(10e3, 6);
    expect(closestStandardValue(8.5e3, 'E24')).toBeCloseTo(8.2e3, 6);
  });
});
