// The equilibration scale read from a double's bits against the library formula it replaces, 2^−round(log2 a) (Math.log2, Math.pow).

import { describe, expect, it } from 'vitest';
import { powerOfTwoInverse, powerOfTwoInverses } from '../../../shared-analysis/src/solve/newton';
import { rng } from '../../seeded-random';

/** The reference: the nearest power of two in the log scale, inverted, clamped to 2^±1000. */
function reference(a: number): number {
  if (!(a > 0) || !Number.isFinite(a)) return 1;
  const e = Math.round(Math.log2(a));
  return Math.pow(2, -Math.max(-1000, Math.min(1000, e)));
}

describe('powerOfTwoInverse', () => {
  it('equals 2^−round(log2 a) over the whole double range, subnormals and the √2 boundary included', () => {
    const r = rng(7);
    const samples: number[] = [0, -1, NaN, Infinity, 1, 2, 0.5, Math.SQRT2, Math.SQRT2 * (1 + 2e-16), Math.SQRT2 * (1 - 2e-16), 5e-324, 1e-310, Number.MAX_VALUE, Number.MIN_VALUE, 2 ** -1022];
    for (let i = 0; i < 20000; i++) samples.push(Math.exp((r() - 0.5) * 1400), 2 ** Math.floor((r() - 0.5) * 2000) * Math.SQRT2 * (1 + (r() - 0.5) * 1e-11));
    for (const a of samples) expect(powerOfTwoInverse(a)).toBe(reference(a));
    // The loop over a whole vector (what the equilibration runs), into another vector and in place.
    const from = Float64Array.from(samples);
    const into = new Float64Array(from.length);
    powerOfTwoInverses(from, into);
    powerOfTwoInverses(from, from);
    samples.forEach((a, k) => {
      expect(into[k]).toBe(reference(a));
      expect(from[k]).toBe(reference(a));
    });
  });
});
