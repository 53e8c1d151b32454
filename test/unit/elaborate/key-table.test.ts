// `KeyTable` (shared-analysis/src/elaborate/key-table.ts), the elaborator's table of element names, against a Map
// filled with the same keys in the same order (ECMAScript's Map: SameValueZero keys, a later set replaces the value).

import { describe, expect, it } from 'vitest';
import { KeyTable } from '../../../shared-analysis/src/elaborate/key-table';
import { rng } from '../../seeded-random';

describe('the elaborator\'s table of names', () => {
  it('answers every key as a Map filled in the same order does, for present and absent keys (seeded)', () => {
    const random = rng(21);
    const alphabet = [...'QRMXqrmx0129._', 'ß', '\u212A', 'Ω', '\u{1D11E}'];
    const word = (): string => {
      const length = 1 + Math.floor(random() * 6);
      let s = '';
      for (let i = 0; i < length; i++) s += alphabet[Math.floor(random() * alphabet.length)];
      return s;
    };
    const table = new KeyTable();
    const map = new Map<string, number>();
    // Names a prototype would answer for, and the empty text.
    const special = ['__proto__', 'constructor', 'toString', 'hasOwnProperty', ''];
    for (let n = 0; n < 30000; n++) {
      const key = n < special.length ? special[n]! : word();
      const value = Math.floor(random() * 1_000_000);
      // Mostly new keys (as the elaborator adds them), now and then a key set again.
      table.set(key, value);
      map.set(key, value);
    }
    expect(table.size).toBe(map.size);
    for (const [key, value] of map) expect(table.get(key), key).toBe(value);
    for (let n = 0; n < 20000; n++) {
      const key = word() + '#';
      expect(table.get(key), key).toBe(map.get(key));
    }
    // A key made by concatenation (another string object of the same text) finds the same entry.
    table.set('QR12', 5);
    expect(table.get(['QR', '12'].join(''))).toBe(5);
  });
});
