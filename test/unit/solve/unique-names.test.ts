// hasUniqueNames answers once per list of elements and again when the list grows (the server's take-in appends).

import { describe, expect, it } from 'vitest';
import type { Circuit, Element } from '../../../shared-analysis/src/circuit';
import { hasUniqueNames } from '../../../shared-analysis/src/solve/solved-point';

/** A circuit holding only what the answer reads: its elements' names. */
function circuitOf(elements: { name: string }[]): Circuit {
  return { title: '', nodes: ['0'], elements: elements as unknown as Element[], models: {}, temperatureC: 27, tnomC: 27, params: {} };
}

describe('hasUniqueNames', () => {
  it('answers for the list as it is now, after elements are appended', () => {
    const c = circuitOf([{ name: 'R1' }, { name: 'Q1' }]);
    expect(hasUniqueNames(c)).toBe(true);
    // Names differ by case only: two names (the netlist's own check is case-insensitive; the tables' keys are not).
    c.elements.push({ name: 'r1' } as unknown as Element);
    expect(hasUniqueNames(c)).toBe(true);
    c.elements.push({ name: 'Q1' } as unknown as Element);
    expect(hasUniqueNames(c)).toBe(false);
    // A copy of the circuit sharing the list shares the answer; a list of its own is looked at on its own.
    expect(hasUniqueNames({ ...c })).toBe(false);
    expect(hasUniqueNames(circuitOf(c.elements.slice(0, 3)))).toBe(true);
  });

  it('agrees with a count of distinct names over lists grown at random', () => {
    // Independent computation: the number of distinct names, by sorting a copy.
    const distinct = (names: string[]): number => [...names].sort().filter((n, i, s) => i === 0 || s[i - 1] !== n).length;
    let seed = 20261204;
    const random = (): number => ((seed = (seed * 1103515245 + 12345) % 2 ** 31) / 2 ** 31);
    for (let trial = 0; trial < 50; trial++) {
      const c = circuitOf([]);
      for (let step = 0; step < 20; step++) {
        c.elements.push({ name: `E${Math.floor(random() * 40)}` } as unknown as Element);
        const names = c.elements.map((e) => e.name);
        expect(hasUniqueNames(c)).toBe(distinct(names) === names.length);
      }
    }
  });
});
