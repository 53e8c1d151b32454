// `KeyTable` (shared-analysis/src/elaborate/key-table.ts), the elaborator's table of element names, against a Map
// filled with the same keys in the same order (ECMAScript's Map: SameValueZero keys, a later set replaces the value).

import { describe, expect, it } from 'vitest';
import { KeyTable } from '../../../shared-analysis/src/elaborate/key-table';
import { rng } from '../../seeded-random';
import { elaborate } from '../../../shared-analysis/src/elaborate/index';
import { parse } from '../../../shared-analysis/src/syntax/parser';
import { MemoryWorkspace } from '../../../shared-analysis/src/types';
import { topologyOf } from '../../../shared-analysis/src/structures/topology';

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

describe('a netlist large enough for the table', () => {
  it('reports repeated names and answers the topology\'s name questions as for a small one', () => {
    // 60,000 resistors (past the 50,000 cards from which the elaborator keys names in a KeyTable), names in random
    // case, some written twice; the expectations are worked out here from the list of names.
    const random = rng(33);
    const lines = ['large names'];
    const written: string[] = [];
    for (let i = 0; i < 60000; i++) {
      const again = i > 10 && random() < 0.001;
      const base = again ? written[Math.floor(random() * written.length)]! : `R${i}`;
      const name = random() < 0.5 ? base.toLowerCase() : base.toUpperCase();
      written.push(base);
      lines.push(`${name} n${i % 500} 0 ${1 + (i % 9)}k`);
    }
    const text = lines.join('\n');
    const uri = 'file:///large.cir';
    const r = elaborate(parse(uri, text, { hasTitle: true }), new MemoryWorkspace({ [uri]: text }));
    // Names compared without case: each base name's first card is kept, every later one is reported.
    const seen = new Set<string>();
    let repeats = 0;
    for (const base of written) {
      if (seen.has(base)) repeats++;
      seen.add(base);
    }
    expect(repeats).toBeGreaterThan(10);
    expect(r.findings.filter((f) => f.code === 'element-duplicate-name')).toHaveLength(repeats);
    expect(r.circuit.elements).toHaveLength(seen.size);
    const topology = topologyOf(r.circuit);
    for (let k = 0; k < r.circuit.elements.length; k += 97) expect(topology.elementIndex.get(r.circuit.elements[k]!.name)).toBe(k);
    expect(topology.elementIndex.get('R999999')).toBeUndefined();
  });
});
