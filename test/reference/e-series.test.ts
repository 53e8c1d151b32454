// The IEC 60063 series tables against the standard: counts, entries, the values the rounding formula misses, nesting.

import { describe, expect, it } from 'vitest';
import {
  SERIES_NAMES,
  nearestStandardValues,
  seriesTolerance,
  seriesValues,
  type SeriesName,
} from '../../shared-analysis/src/fixes/e-series';

/** One check per series: the count per decade and a set of entries that must be present. */
function check(series: SeriesName, expected: { count: number; contains: number[]; absent?: number[] }): void {
  const values = seriesValues(series);
  expect(values.length).toBe(expected.count);
  for (const v of expected.contains) expect(values.some((x) => Math.abs(x - v) < 1e-12), `${series} has ${v}`).toBe(true);
  for (const v of expected.absent ?? []) expect(values.some((x) => Math.abs(x - v) < 1e-12), `${series} lacks ${v}`).toBe(false);
}

const has = (series: SeriesName, v: number): boolean => seriesValues(series).some((x) => Math.abs(x - v) < 1e-12);

describe('IEC 60063:2015 tables', () => {
  // Source: IEC 60063:2015, Table 1 (E12, E24 two-significant-figure series); values from memory,
  // also listed in REFERENCES.md.
  it('E12 has 12 values per decade', () =>
    check('E12', { count: 12, contains: [1.0, 1.2, 1.5, 1.8, 2.2, 2.7, 3.3, 3.9, 4.7, 5.6, 6.8, 8.2], absent: [1.1, 9.1] }));

  // Source: IEC 60063:2015, Table 1; from memory.
  it('E24 has 24 values per decade', () =>
    check('E24', { count: 24, contains: [1.1, 1.3, 1.6, 2.0, 2.4, 3.0, 3.6, 4.3, 5.1, 6.2, 7.5, 9.1], absent: [2.6, 2.9, 8.3] }));

  // Source: IEC 60063:2015, Table 2 (three-significant-figure series); entries from memory.
  it('E48 has 48 values per decade', () =>
    check('E48', { count: 48, contains: [1.0, 1.05, 1.1, 1.21, 1.47, 2.15, 3.32, 4.64, 6.81, 9.53], absent: [1.02, 9.76] }));

  // Source: IEC 60063:2015, Table 2 (from memory); the run 1.00 1.02 1.05 1.07 1.10 … 9.53 9.76 is also in REFERENCES.md.
  it('E96 has 96 values per decade', () =>
    check('E96', { count: 96, contains: [1.0, 1.02, 1.05, 1.07, 1.1, 2.49, 4.99, 8.06, 9.53, 9.76], absent: [1.01, 9.88] }));

  // Source: IEC 60063:2015, Table 2; from memory.
  it('E192 has 192 values per decade', () =>
    check('E192', { count: 192, contains: [1.0, 1.01, 1.04, 1.09, 4.48, 9.2, 9.88], absent: [9.19] }));

  it('the first entry of every decade is 1.0 and every value lies in [1, 10)', () => {
    for (const s of SERIES_NAMES) {
      const v = seriesValues(s);
      expect(v[0]).toBe(1);
      expect(Math.max(...v)).toBeLessThan(10);
    }
  });
});

describe('the table is normative, not the rounding formula', () => {
  // Source: IEC 60063:2015, Table 1 (from memory); REFERENCES.md lists the same eight values as the
  // ones the rounding formula does not give.
  it('E24 differs from round(10^(i/24), 1) exactly at 2.7 3.0 3.3 3.6 3.9 4.3 4.7 8.2', () => {
    const v = seriesValues('E24');
    const differing = v.filter((x, i) => Math.abs(Math.round(10 ** (i / 24) * 10) / 10 - x) > 1e-9);
    expect(differing).toEqual([2.7, 3.0, 3.3, 3.6, 3.9, 4.3, 4.7, 8.2]);
  });

  // Source: IEC 60063:2015, Table 2 (E192 entry 9.20, where the formula gives 9.19); from memory.
  it('E192 differs from round(10^(i/192), 2) only at 9.20', () => {
    const v = seriesValues('E192');
    const differing = v.filter((x, i) => Math.abs(Math.round(10 ** (i / 192) * 100) / 100 - x) > 1e-9);
    expect(differing).toEqual([9.2]);
  });

  // Source: IEC 60063:2015 — E48 and E96 follow round(10^(i/N), 2) throughout (the 9.20 exception is E192-only); from memory.
  it('E48 and E96 follow the three-figure formula', () => {
    for (const s of ['E48', 'E96'] as const) {
      const v = seriesValues(s);
      v.forEach((x, i) => expect(x).toBeCloseTo(Math.round(10 ** (i / v.length) * 100) / 100, 9));
    }
  });
});

describe('order and nesting', () => {
  it('every series is strictly increasing', () => {
    for (const s of SERIES_NAMES) {
      const v = seriesValues(s);
      for (let i = 1; i < v.length; i++) expect(v[i]).toBeGreaterThan(v[i - 1]);
    }
  });

  // Source: IEC 60063:2015 — each series is every second value of the next finer one within a family; from memory.
  it('E12 ⊂ E24 and E48 ⊂ E96 ⊂ E192', () => {
    for (const v of seriesValues('E12')) expect(has('E24', v)).toBe(true);
    for (const v of seriesValues('E48')) expect(has('E96', v)).toBe(true);
    for (const v of seriesValues('E96')) expect(has('E192', v)).toBe(true);
    expect(seriesValues('E24').filter((_, i) => i % 2 === 0)).toEqual([...seriesValues('E12')]);
  });

  // Source: IEC 60063:2015 — E24 and E96 are distinct families: 1.3 is in both, but E96 has 1.58/1.62
  // and 9.09 where E24 has 1.6 and 9.1 (from memory).
  it('E24 is not a subset of E96', () => {
    expect(has('E96', 1.3)).toBe(true);
    expect(has('E96', 1.6)).toBe(false);
    expect(has('E96', 9.1)).toBe(false);
  });
});

describe('tolerances', () => {
  // Common practice: E12 ±10 %, E24 ±5 %, E48 ±2 %, E96 ±1 %, E192 ±0.5 %.
  it('gives the tolerance each series is sold with', () => {
    expect(seriesTolerance('E12')).toBe(0.1);
    expect(seriesTolerance('E24')).toBe(0.05);
    expect(seriesTolerance('E48')).toBe(0.02);
    expect(seriesTolerance('E96')).toBe(0.01);
    expect(seriesTolerance('E192')).toBe(0.005);
  });
});
