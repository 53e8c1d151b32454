// An output's %/V table (`supplyPercentPerVolt`) is keyed by supply names, so it has no prototype, as every table keyed
// by a netlist's names (docs/RELIABILITY.md): reading a missing `constructor` gives undefined. Its values are checked
// against an independent computation in test/reference/variation-spread-plain.test.ts; here, its form on an invented
// netlist with two supplies, one of them named after an Object.prototype member.

import { describe, expect, it } from 'vitest';
import { coldSession } from '../solve/same-analysis';

const TEXT = [
  'two supplies',
  'VCC vcc 0 DC 5',
  'Vconstructor vb 0 DC 3',
  '.model QN NPN (IS=2e-15 BF=120 VAF=70)',
  'RR vcc r 4.7k',
  'QR r r 0 QN',
  'QO o r 0 QN',
  'RL vb o 1k',
  '.end',
  '',
].join('\n');

describe('an output\u2019s %/V table', () => {
  it('has no prototype and lists each supply once, in netlist order', () => {
    const v = coldSession('/t/supply-table.cir', TEXT, {}).analysis.variation;
    expect(v?.outputs.length).toBeGreaterThan(0);
    for (const o of v!.outputs) {
      const table = o.supplyPercentPerVolt;
      expect(Object.getPrototypeOf(table)).toBe(null);
      expect(Object.keys(table)).toEqual(['VCC', 'Vconstructor']);
      expect((table as Record<string, unknown>)['toString']).toBeUndefined();
      for (const key of Object.keys(table)) expect(Number.isFinite(table[key])).toBe(true);
    }
  });
});
