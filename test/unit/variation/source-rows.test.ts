// Sources that share one varied parameter: each is its own independent term of the spread.
// Source: independent errors add in quadrature, σ² = Σ (∂y/∂p · σ_k)² over every source k
// (first-order propagation of uncertainty; Taylor, "An Introduction to Error Analysis", ch. 3).

import { describe, expect, it } from 'vitest';
import { sourceRowOf, sourceRowsOf, spreadOf } from '../../../shared-analysis/src/variation/index';
import type { SensitivityResult } from '../../../shared-analysis/src/variation/sensitivity';
import type { ToleranceSource } from '../../../shared-analysis/src/variation/sources';

/** A source on model parameter `param` of element `element`, σ given, no group of its own beyond its label. */
function source(label: string, element: number, param: string, sigma: number): ToleranceSource {
  return { label, group: label, aspect: undefined, element: `J${element}`, parameter: { kind: 'model', element, param }, nominal: -2, sigma, bound: 3 * sigma, from: 'default', figure: sigma, partSpread: true };
}

// Two outputs over three parameters: output 0 depends on p0 and p2, output 1 on p1 and p2.
const sens: SensitivityResult = {
  value: new Float64Array([1e-3, 2e-3]),
  rowStart: new Int32Array([0, 2, 4]),
  index: new Int32Array([0, 2, 1, 2]),
  derivative: new Float64Array([0.5, -0.25, 2, 0.125]),
  adjointSolves: 2,
  devicesDerived: 0,
};

describe('source rows when several sources vary one parameter', () => {
  // Sources 1 and 2 both vary parameter 2 (a JFET's own VTO spread and its VTO mismatch, say); source 0 varies p0, source 3 p1.
  const sources = [source('J0 VTO', 0, 'VTO', 0.01), source('J2 VTO spread', 2, 'VTO', 0.4), source('J2 VTO', 2, 'VTO', 0.003), source('J1 BETA', 1, 'BETA', 0.02)];
  const sourceParam = [0, 2, 2, 1];
  const rows = sourceRowsOf(sens, sourceParam, 3, sources.length);

  it('lists every source of a shared parameter with that parameter derivative', () => {
    const row0 = sourceRowOf(rows, 0);
    expect(Array.from(row0.index)).toEqual([0, 1, 2]);
    expect(Array.from(row0.value)).toEqual([0.5, -0.25, -0.25]);
    const row1 = sourceRowOf(rows, 1);
    expect(Array.from(row1.index)).toEqual([3, 1, 2]);
    expect(Array.from(row1.value)).toEqual([2, 0.125, 0.125]);
  });

  it('adds both terms in quadrature to the spread (neither is dropped)', () => {
    // Written out by hand from the rows above: σ² = (0.5·0.01)² + (0.25·0.4)² + (0.25·0.003)².
    const expected0 = Math.sqrt((0.5 * 0.01) ** 2 + (0.25 * 0.4) ** 2 + (0.25 * 0.003) ** 2);
    expect(spreadOf(sources, sourceRowOf(rows, 0)).sigma).toBeCloseTo(expected0, 15);
    const expected1 = Math.sqrt((2 * 0.02) ** 2 + (0.125 * 0.4) ** 2 + (0.125 * 0.003) ** 2);
    expect(spreadOf(sources, sourceRowOf(rows, 1)).sigma).toBeCloseTo(expected1, 15);
  });

  it('gives one entry per parameter when no parameter is shared', () => {
    const single = sourceRowsOf(sens, [0, 2, 1], 3, 3);
    expect(Array.from(single.start)).toEqual([0, 2, 4]);
    expect(Array.from(single.index)).toEqual([0, 1, 2, 1]);
  });
});
