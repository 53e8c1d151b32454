// The fast comparison of plain device names against the collator that defines the natural name order.

import { describe, expect, it } from 'vitest';
import { comparePlainNames, compareNames, Matcher } from '../../../shared-analysis/src/structures/match';
import { CircuitBuilder } from './build';
import { rng } from '../../seeded-random';

/** A random name of ASCII letters (either case) and digits, with runs of digits and leading zeros (seeded). */
function plainName(random: () => number): string {
  const letters = 'QqMmRrAaBbZz';
  let name = '';
  const parts = 1 + Math.floor(random() * 4);
  for (let p = 0; p < parts; p++) {
    if (random() < 0.5) for (let k = 0; k < 1 + random() * 3; k++) name += letters[Math.floor(random() * letters.length)];
    else {
      if (random() < 0.3) name += '0'.repeat(1 + Math.floor(random() * 2));
      // Up to 25 digits: past the integers a double holds exactly, where only a digit-by-digit comparison is right.
      const digits = Math.floor(random() * (random() < 0.1 ? 25 : 3));
      for (let k = 0; k < digits; k++) name += String(Math.floor(random() * 10));
    }
  }
  return name.length > 0 ? name : 'Q';
}

describe('comparePlainNames', () => {
  it('gives the sign the collator gives for every pair of plain names (seeded)', () => {
    const random = rng(7);
    const names = Array.from({ length: 250 }, () => plainName(random));
    // Pairs the collator holds equal (case, leading zeros) must come up, or ties are not checked.
    let ties = 0;
    for (const a of names) {
      for (const b of names) {
        const want = Math.sign(compareNames(a, b));
        expect(Math.sign(comparePlainNames(a, b)), `${a} vs ${b}`).toBe(want);
        if (want === 0 && a !== b) ties++;
      }
    }
    expect(ties).toBeGreaterThan(0);
  });

  it('keeps examples the collator orders (from the collator, run here): Q2 < Q10, Q01 = Q1, q1 = Q1, digits before letters, a prefix first', () => {
    for (const [a, b] of [['Q2', 'Q10'], ['Q01', 'Q1'], ['q1', 'Q1'], ['Q1', 'QA'], ['Q', 'Q0'], ['Q1', 'Q1a'], ['QR9', 'QR10']]) {
      expect(Math.sign(comparePlainNames(a, b))).toBe(Math.sign(compareNames(a, b)));
    }
  });

  it("puts a matcher's transistors in the order a sort by the collator alone gives, hierarchical names among plain ones (seeded)", () => {
    const random = rng(11);
    const b = new CircuitBuilder();
    b.model('qn', 'npn');
    b.v('VCC', 'vcc', '0', 5);
    const names: string[] = [];
    for (let k = 0; k < 300; k++) {
      const plain = plainName(random);
      // Names written twice in other cases, and some in subcircuit instances (a dot: the collator's path).
      const name = random() < 0.2 ? `X${k % 7}.${plain}` : random() < 0.1 && names.length > 0 ? names[Math.floor(random() * names.length)].toLowerCase() : plain;
      names.push(name);
      b.q(name, `c${k}`, `b${k % 13}`, '0', 'qn');
    }
    const m = new Matcher(b.build());
    const byCollator = m.ordered.slice().sort((x, y) => x.index - y.index).sort((x, y) => compareNames(x.name, y.name));
    expect(m.ordered.map((t) => t.index)).toEqual(byCollator.map((t) => t.index));
  });
});
