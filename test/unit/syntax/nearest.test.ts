// "Did you mean": the edit distance and the choice of the nearest known name.

import { describe, expect, it } from 'vitest';
import { editDistance, nearestName } from '../../../shared-analysis/src/syntax/nearest';

describe('editDistance', () => {
  // Source: F. J. Damerau, Comm. ACM 7(3), 1964 — a transposition of two neighbouring letters is one edit;
  // the optimal-string-alignment values below are worked by hand.
  it.each([
    ['', '', 0],
    ['abc', '', 3],
    ['model', 'modle', 1],
    ['kitten', 'sitting', 3],
    ['ca', 'abc', 3],
    ['.param', '.parm', 1],
  ])('%s ↔ %s = %s', (a, b, d) => {
    expect(editDistance(a, b)).toBe(d);
    expect(editDistance(b, a)).toBe(d);
  });
});

describe('nearestName', () => {
  const cards = ['.model', '.param', '.subckt', '.ends', '.end', '.include', '.lib', '.temp', '.op'];

  it('finds the one close name, case-insensitively', () => {
    expect(nearestName('.modle', cards)).toBe('.model');
    expect(nearestName('.SUBCKTT', cards)).toBe('.subckt');
    expect(nearestName('QNPM1', ['QNPN1', 'QPNP1'])).toBe('QNPN1');
  });

  it('says nothing when the word is known, too far from anything, or equally near two names', () => {
    expect(nearestName('.model', cards)).toBeUndefined();
    expect(nearestName('.frobnicate', cards)).toBeUndefined();
    // Short words allow one edit only: `.ed` is one edit from `.end` and two from `.op`.
    expect(nearestName('.ed', cards)).toBe('.end');
    expect(nearestName('QN2', ['QN1', 'QN3'])).toBeUndefined();
  });
});
