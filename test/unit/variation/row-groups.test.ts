// Contributors summed by group within one output's row: sources with the same group name are one contributor, whatever
// string objects hold the names, in short rows and in long ones.
// Source: independent errors add in quadrature, σ² = Σ (∂y/∂p · σ_k)² over every source k (first-order propagation of
// uncertainty; Taylor, "An Introduction to Error Analysis", ch. 3); a group's variance is the sum over its sources, its
// share that sum over the output's σ², and a mismatch group is named by its devices carrying at least 1 % of it
// (docs/VARIATION.md). The ranking below is written out in the test on its own.

import { describe, expect, it } from 'vitest';
import { spreadOf } from '../../../shared-analysis/src/variation/index';
import { rankOf } from '../../../shared-analysis/src/variation/rank';
import type { ToleranceSource } from '../../../shared-analysis/src/variation/sources';

/** A resistor's tolerance source (a group of its own, named by the resistor). */
function resistor(name: string, element: number, sigma: number): ToleranceSource {
  return { label: name, group: name, aspect: undefined, element: name, parameter: { kind: 'resistance', element }, nominal: 1e3, sigma, bound: 3 * sigma, from: 'series', figure: 0.01, partSpread: undefined };
}

/** A device's mismatch source in group `group` (a name made afresh each time: equal names are separate string objects). */
function mismatch(device: string, element: number, group: string, aspect: string, sigma: number): ToleranceSource {
  const made = [group.slice(0, 1), group.slice(1)].join('');
  return { label: `${device} ${aspect}`, group: made, aspect, element: device, parameter: { kind: 'model', element, param: 'IS' }, nominal: 1e-15, sigma, bound: 3 * sigma, from: 'default', figure: 5e-4, partSpread: undefined };
}

/** The spread of one row computed plainly: groups by name in first-met order, ranked by rounded share then name, 8 kept. */
function plain(sources: ToleranceSource[], index: number[], value: number[]): { sigma: number; worstCase: number; names: string[]; shares: number[] } {
  const groups = new Map<string, { variance: number; worst: number; entries: number[]; aspect?: string }>();
  let variance = 0;
  let worstCase = 0;
  index.forEach((k, q) => {
    const a = Math.abs(value[q] * sources[k].sigma);
    const w = Math.abs(value[q] * sources[k].bound);
    variance += a * a;
    worstCase += w;
    const g = groups.get(sources[k].group) ?? { variance: 0, worst: 0, entries: [], aspect: sources[k].aspect };
    g.variance += a * a;
    g.worst += w;
    g.entries.push(q);
    groups.set(sources[k].group, g);
  });
  const ranked = [...groups.entries()]
    .filter(([, g]) => g.variance > 0)
    .map(([name, g]) => {
      if (!g.aspect) return { name, share: g.variance / variance };
      const members = g.entries.filter((q) => (value[q] * sources[index[q]].sigma) ** 2 >= 0.01 * g.variance).map((q) => sources[index[q]].element);
      return { name: `${members.join('/')} ${g.aspect}`, share: g.variance / variance };
    });
  ranked.sort((a, b) => rankOf(b.share) - rankOf(a.share) || (a.name < b.name ? -1 : a.name > b.name ? 1 : 0));
  const kept = ranked.slice(0, 8);
  return { sigma: Math.sqrt(variance), worstCase, names: kept.map((c) => c.name), shares: kept.map((c) => c.share) };
}

function check(sources: ToleranceSource[], index: number[], value: number[]): void {
  const got = spreadOf(sources, { index: Int32Array.from(index), value: Float64Array.from(value) });
  const want = plain(sources, index, value);
  expect(got.sigma).toBeCloseTo(want.sigma, 15);
  expect(got.worstCase).toBeCloseTo(want.worstCase, 15);
  expect(got.contributors.map((c) => c.name)).toEqual(want.names);
  got.contributors.forEach((c, i) => expect(c.share).toBeCloseTo(want.shares[i], 12));
}

describe('contributors grouped within a row', () => {
  it('sums the sources of one mismatch group in a short row, naming the devices that matter', () => {
    const sources = [
      resistor('RREF', 0, 10),
      mismatch('Q1', 1, 'simple-mirror:Q1 VBE', 'VBE', 1e-17),
      mismatch('Q2', 2, 'simple-mirror:Q1 VBE', 'VBE', 1e-17),
      mismatch('Q3', 3, 'simple-mirror:Q1 VBE', 'VBE', 1e-17),
      resistor('RLOAD', 4, 5),
    ];
    // Q3 carries far less than 1 % of the group's variance: the group is named Q1/Q2 VBE.
    check(sources, [0, 1, 2, 3, 4], [1e-6, 4e9, -3e9, 1e7, 2e-7]);
    // Q1 alone matters.
    check(sources, [1, 2, 4], [5e9, 1e7, 1e-7]);
  });

  it('tells groups apart by name in a long row (more than a handful of entries)', () => {
    const sources: ToleranceSource[] = [];
    const index: number[] = [];
    const value: number[] = [];
    for (let k = 0; k < 30; k++) {
      sources.push(resistor(`R${k}`, k, 1 + k));
      index.push(sources.length - 1);
      value.push(1e-6 * (k % 7 ? 1 : -2));
    }
    for (let d = 0; d < 12; d++) {
      sources.push(mismatch(`Q${d}`, 100 + d, `mirror:Q0 ${d % 2 ? 'β' : 'VBE'}`, d % 2 ? 'β' : 'VBE', 1e-17 * (1 + d)));
      index.push(sources.length - 1);
      value.push(2e8 * (d % 3 ? 1 : -1));
    }
    check(sources, index, value);
    // The same row in another order: the groups are met in another order, the ranking is the same.
    const order = index.map((_, q) => q).reverse();
    check(
      sources,
      order.map((q) => index[q]),
      order.map((q) => value[q]),
    );
  });
});
