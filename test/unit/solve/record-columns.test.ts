// Every number of a device kind's record is one of the instance's column values (or a constant): the solver
// clamps records only when a column is out of range, so a kind whose record computed a number would escape it.

import { describe, expect, it } from 'vitest';
import { DEVICE_KINDS } from '../../../shared-analysis/src/devices/registry';
import { allocateColumns, type DeviceColumns, type DeviceInstances } from '../../../shared-analysis/src/devices/device';
import { rng } from '../../seeded-random';

const COUNT = 3;

/** Columns of `quantities` quantities for COUNT instances, filled with distinct random numbers (seeded). */
function filled(quantities: number, seed: number): DeviceColumns {
  const random = rng(seed);
  const cols = allocateColumns(quantities, COUNT);
  for (const q of cols.values) for (let i = 0; i < COUNT; i++) q[i] = (random() - 0.5) * 10 ** Math.floor(random() * 12 - 6);
  return cols;
}

/** Instances whose elements carry what a record reads of them besides the columns (the model's kind, for the polarity). */
function instances(modelKind: string): DeviceInstances {
  return { elements: Array.from({ length: COUNT }, () => ({ model: { kind: modelKind } })) } as unknown as DeviceInstances;
}

describe('device records and their columns', () => {
  for (const kind of DEVICE_KINDS) {
    it(`${kind.letter}: each number of the record is a column value of its instance, or the same constant at any columns`, () => {
      const inst = instances('npn');
      const a = filled(kind.quantities.length, 11);
      const b = filled(kind.quantities.length, 12);
      for (let i = 0; i < COUNT; i++) {
        const ra = kind.record(a, inst, i) as unknown as Record<string, unknown>;
        const rb = kind.record(b, inst, i) as unknown as Record<string, unknown>;
        const numbers = Object.keys(ra).filter((k) => typeof ra[k] === 'number');
        expect(numbers.length).toBeGreaterThan(0);
        for (const k of numbers) {
          const fromColumns = a.values.some((q) => q[i] === ra[k]) && b.values.some((q) => q[i] === rb[k]);
          const constant = ra[k] === rb[k];
          expect(fromColumns || constant, `${kind.letter} record field ${k}`).toBe(true);
        }
      }
    });
  }
});
