// An output's largest normalised sensitivities, ranked when its list is first read, against the
// list written out here: every shown derivative of the row normalised as docs/VARIATION.md says
// (value · factor / |y|), ordered by magnitude rounded to 6 significant digits, equal magnitudes in
// parameter order (a stable sort), the ten largest kept.

import { describe, expect, it } from 'vitest';
import { TopSensitivities, type ShownForms } from '../../../shared-analysis/src/variation/index';
import type { SensitivityResult } from '../../../shared-analysis/src/variation/sensitivity';

/** Parameters 0 … count − 1, every third one not shown, each named `P<j>` with factor 1 + j/10. */
function forms(count: number): ShownForms {
  const f: ShownForms = { isShown: new Uint8Array(count), factor: new Float64Array(count), name: [], unit: [] };
  for (let j = 0; j < count; j++) {
    f.isShown[j] = j % 3 === 2 ? 0 : 1;
    f.factor[j] = 1 + j / 10;
    f.name.push(`P${j}`);
    f.unit.push('%/%');
  }
  return f;
}

/** One row per list of derivatives, over parameters 0, 1, 2, … in order. */
function rowsOf(lists: number[][]): SensitivityResult {
  const rowStart = new Int32Array(lists.length + 1);
  const index: number[] = [];
  const derivative: number[] = [];
  lists.forEach((list, o) => {
    list.forEach((d, j) => {
      index.push(j);
      derivative.push(d);
    });
    rowStart[o + 1] = index.length;
  });
  return { value: new Float64Array(lists.length), rowStart, index: Int32Array.from(index), derivative: Float64Array.from(derivative), adjointSolves: lists.length, devicesDerived: 0 };
}

/** The plain list of finite figures: normalised, stably sorted by magnitude to 6 digits, the ten largest. */
function plainList(derivatives: number[], shown: ShownForms, scale: number): { parameter: string; value: number }[] {
  const six = (v: number): number => Number(Math.abs(v).toPrecision(6));
  const all = derivatives.flatMap((d, j) => (shown.isShown[j] ? [{ parameter: shown.name[j], value: (d * shown.factor[j]) / scale }] : []));
  return all.sort((a, b) => six(b.value) - six(a.value)).slice(0, 10);
}

describe('an output\u2019s largest sensitivities, ranked on first read', () => {
  // Seeded figures (a linear congruential generator), some equal to 6 digits so the order of ties shows.
  let seed = 12345;
  const next = (): number => ((seed = (seed * 1103515245 + 12345) % 2147483648) / 2147483648 - 0.5) * 1e-3;
  const count = 40;
  const shown = forms(count);
  const lists = [0, 1, 2, 3].map((o) => Array.from({ length: count - 7 * o }, (_, j) => (j % 5 === 0 ? 2e-4 : next())));
  const scales = [1e-3, 2.5e-4, 1, 7e-6];

  it('equals the plain list for every output, whatever order the outputs are read in', () => {
    const top = new TopSensitivities(10, lists.length, shown, rowsOf(lists));
    lists.forEach((_, o) => top.add(o, scales[o]));
    for (const o of [2, 0, 3, 1, 2]) {
      const list = top.listOf(o).map(({ parameter, value }) => ({ parameter, value }));
      expect(list).toEqual(plainList(lists[o], shown, scales[o]));
      expect(top.finite(o)).toBe(true);
    }
  });

  it('says a list is not finite when it keeps a figure that is not, and finite when such a figure is not kept', () => {
    // Row 0: an overflowing figure ranks first and is kept. Row 1: a NaN offered after ten shown figures is not kept
    // (a NaN never ranks above a figure). Row 2: a NaN offered first is kept (the list is not full yet).
    const full = Array.from({ length: 15 }, (_, j) => 1e-3 * (j + 1));
    const rows = [[1e-3, 1e308, 2e-3], [...full, NaN], [NaN, 1e-3, 2e-3]];
    const top = new TopSensitivities(10, rows.length, shown, rowsOf(rows));
    rows.forEach((_, o) => top.add(o, 1e-300));
    expect(top.finite(0)).toBe(false);
    expect(top.listOf(0)[0].value).toBe(Infinity);
    expect(top.finite(1)).toBe(true);
    expect(top.listOf(1).some((s) => Number.isNaN(s.value))).toBe(false);
    expect(top.finite(2)).toBe(false);
    expect(top.listOf(2).some((s) => Number.isNaN(s.value))).toBe(true);
  });
});
