// The natural name order recognition tries devices in: the keyed sort against a sort by the collator alone.

import { describe, expect, it } from 'vitest';
import { compareNames, sortByName } from '../../../shared-analysis/src/structures/match';
import { rng } from '../../seeded-random';

/** The order a plain stable sort by `compareNames` (the Intl collator, outside the project) gives. */
function byCollator(names: string[]): string[] {
  return names.map((name) => ({ name })).sort((a, b) => compareNames(a.name, b.name)).map((x) => x.name);
}

function keyed(names: string[]): string[] {
  return sortByName(names.map((name) => ({ name }))).map((x) => x.name);
}

describe('natural name order', () => {
  it('orders numbers by value, letters case-insensitively, and digits before letters (Intl.Collator, numeric, base sensitivity)', () => {
    const names = ['QR10', 'q2', 'QR9', 'Q', 'QA', 'Q1', 'Q01', 'qr3', 'QR', 'Q10', 'Q5'];
    expect(keyed(names)).toEqual(byCollator(names));
    // Written out by hand: Q < Q1 = Q01 (leading zeros do not count) < Q2 < Q5 < Q10 < QA < QR < QR3 < QR9 < QR10.
    expect(keyed(names)).toEqual(['Q', 'Q1', 'Q01', 'q2', 'Q5', 'Q10', 'QA', 'QR', 'qr3', 'QR9', 'QR10']);
  });

  it('gives the collator order on random names, plain and not (seeded)', () => {
    const random = rng(20261203);
    const pick = (chars: string): string => chars[Math.floor(random() * chars.length)];
    const letters = 'QqRrMmJjOoAaZz';
    const others = '._-éÉ0123456789';
    for (let round = 0; round < 40; round++) {
      const names: string[] = [];
      for (let n = 0; n < 300; n++) {
        let name = '';
        const head = 1 + Math.floor(random() * 3);
        for (let i = 0; i < head; i++) name += pick(letters);
        // Mostly plain names (letters then digits, up to 17 of them, with leading zeros), some with other characters.
        const digits = Math.floor(random() * 18);
        for (let i = 0; i < digits; i++) name += pick('0123456789');
        if (random() < 0.2) name += pick(others) + (random() < 0.5 ? pick(letters) : '');
        names.push(name);
      }
      expect(keyed(names)).toEqual(byCollator(names));
    }
  });
});
