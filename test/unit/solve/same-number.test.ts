// `sameNumber`, the BJT table's test for an instance whose nominal IS equals the last one's, against ECMAScript's
// SameValue for numbers (ECMA-262, 7.2.10 SameValue and Number::sameValue: NaN is NaN, +0 is not −0), which
// Object.is implements, and `unbounded()` against the constant it stands for.

import { describe, expect, it } from 'vitest';
import { sameNumber, unbounded, UNBOUNDED } from '../../../shared-analysis/src/devices/physics';
import { rng } from '../../seeded-random';

describe('sameNumber', () => {
  it('answers as Object.is over zeros of both signs, NaN, infinities, subnormals and random doubles', () => {
    const r = rng(11);
    const values = [0, -0, NaN, Infinity, -Infinity, 5e-324, -5e-324, 1e-16, 1, -1, Number.MAX_VALUE];
    for (let i = 0; i < 200; i++) values.push((r() - 0.5) * 10 ** Math.floor((r() - 0.5) * 40));
    for (const a of values) for (const b of values) expect(sameNumber(a, b)).toBe(Object.is(a, b));
  });
});

describe('unbounded', () => {
  it('is UNBOUNDED', () => {
    expect(unbounded()).toBe(UNBOUNDED);
  });
});
