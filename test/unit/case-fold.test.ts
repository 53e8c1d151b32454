// `lowerCase` and `upperCase` (shared-analysis/src/names.ts) against String.prototype.toLowerCase/toUpperCase (ECMAScript).

import { describe, expect, it } from 'vitest';
import { lowerCase, upperCase } from '../../shared-analysis/src/names';
import { rng } from '../seeded-random';

describe('case folding without a new string', () => {
  it('gives what toLowerCase and toUpperCase give, for ASCII names and names beyond ASCII (seeded)', () => {
    const random = rng(11);
    // ASCII letters of both cases, digits, punctuation found in names, and characters whose case mappings are not one to one
    // (Unicode's UnicodeData.txt and SpecialCasing.txt: KELVIN SIGN, sharp s, dotted capital I, final sigma, micro sign).
    const alphabet = [...'abcxyzABCXYZ0129._-[]@', '\u212A', 'ß', '\u0130', 'Σ', 'σ', 'µ', 'Ω'];
    for (let n = 0; n < 3000; n++) {
      const length = 1 + Math.floor(random() * 8);
      const ascii = random() < 0.7;
      let s = '';
      for (let i = 0; i < length; i++) s += alphabet[Math.floor(random() * (ascii ? 22 : alphabet.length))];
      expect(lowerCase(s), s).toBe(s.toLowerCase());
      expect(upperCase(s), s).toBe(s.toUpperCase());
    }
    expect(lowerCase('')).toBe('');
    expect(upperCase('')).toBe('');
  });
});
