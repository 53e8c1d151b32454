// The BJT table's parameter rows are worked out again only when the conditions move: a table prepared for A, then B,
// then A again evaluates every instance to the same bits as a fresh table prepared for A alone, and a table prepared twice
// for the same conditions as one prepared once. Evaluated into reused columns, every value, region and flag is the fresh one.

import { describe, expect, it } from 'vitest';
import type { DeviceColumns, DeviceConditions } from '../../../shared-analysis/src/devices/device';
import { thermalVoltage } from '../../../shared-analysis/src/devices/physics';
import { MnaLayout } from '../../../shared-analysis/src/solve/mna';
import { rng } from '../../seeded-random';
import { circuit, model, type Spec } from './build';

const QN = model('QN', 'npn', { IS: 1e-15, BF: 120, VAF: 60, XTI: 3, EG: 1.11, ISE: 1e-14, NE: 1.6 });
const QW = model('QW', 'npn', { IS: 4e-14, BF: 80, NF: 1.2, NR: 1.5, XTB: 1.7, IKF: 0.01 });
const QP = model('QP', 'pnp', { IS: 2e-15, BF: 60, ISC: 1e-13, NC: 1.8 });
/** No Early voltage: its ro is unbounded (a flag) in forward-active and not beyond it. */
const QX = model('QX', 'npn', { IS: 1e-16, BF: 150 });

const SPECS: Spec[] = [
  ['Q', 'Q1', 'c1', 'b1', 'e1', QN, { area: 2 }],
  ['Q', 'Q2', 'c2', 'b2', 'e2', QW],
  ['Q', 'Q3', 'c3', 'b3', 'e3', QP, { m: 3 }],
  ['Q', 'Q4', 'c4', 'b4', 'e4', QX],
  ['Q', 'Q5', 'c5', 'b5', 'e5', QN],
];
const C = circuit(SPECS);

function conditions(temperatureC: number, betaScale: number, junctionGmin = 1e-12): DeviceConditions {
  return { temperatureC, tnomC: 27, vt: thermalVoltage(temperatureC), betaScale, junctionGmin };
}

/** Node voltages in [−0.9, 0.9] V: each junction forward, reverse or off as the draw falls. */
function voltages(n: number, seed: number): Float64Array {
  const r = rng(seed);
  return Float64Array.from({ length: n }, () => 1.8 * r() - 0.9);
}

/** A fresh layout's BJT table prepared for each of `sequence` in turn, then evaluated at x (into `into` when given). */
function evaluated(sequence: DeviceConditions[], x: Float64Array, into?: DeviceColumns): DeviceColumns {
  const table = new MnaLayout(C).tables[0];
  for (const c of sequence) table.prepare(c);
  return table.evaluate(x, into);
}

/** Every number of the columns as its bits (Object.is: −0 apart from +0), with the regions and flags. */
function bitsOf(cols: DeviceColumns): unknown[] {
  return [cols.values.map((v) => Array.from(v, (a) => (Object.is(a, -0) ? '-0' : a))), Array.from(cols.region), Array.from(cols.flags)];
}

describe('BJT parameter rows under repeated conditions', () => {
  const A = conditions(27, 1);
  const B = conditions(125, 2);
  const D = conditions(-40, 0.5);

  it('evaluates as a fresh table after the conditions move and come back', () => {
    for (let seed = 1; seed <= 20; seed++) {
      const x = voltages(C.nodes.length - 1, seed);
      for (const [target, other] of [[A, B], [B, D], [D, A]]) {
        expect(bitsOf(evaluated([target, other, target], x))).toEqual(bitsOf(evaluated([target], x)));
        expect(bitsOf(evaluated([target, target], x))).toEqual(bitsOf(evaluated([target], x)));
      }
    }
  });

  it('tells conditions apart that differ in one field only, +0 and −0 included', () => {
    const x = voltages(C.nodes.length - 1, 7);
    const variants = [conditions(27, 1.5), conditions(85, 1), { ...A, tnomC: 25 }, { ...A, vt: A.vt * 1.01 }, conditions(27, 1, 1e-9), conditions(27, 1, 0), conditions(27, 1, -0)];
    for (const v of variants) {
      expect(bitsOf(evaluated([A, v], x))).toEqual(bitsOf(evaluated([v], x)));
      expect(bitsOf(evaluated([v, A], x))).toEqual(bitsOf(evaluated([A], x)));
    }
    // The last two differ only in the sign of a zero gmin, which can reach the sign of a zero current: each kept apart.
    expect(bitsOf(evaluated([conditions(27, 1, 0), conditions(27, 1, -0)], x))).toEqual(bitsOf(evaluated([conditions(27, 1, -0)], x)));
  });

  it('writes every value, region and flag into reused columns', () => {
    // Columns filled at one bias (some instances flagged, in other regions), then overwritten at another: the same as fresh ones.
    for (let seed = 1; seed <= 20; seed++) {
      const first = voltages(C.nodes.length - 1, seed);
      const second = voltages(C.nodes.length - 1, seed + 100);
      const reused = evaluated([A], first);
      const before = bitsOf(reused);
      const again = evaluated([B], second, reused);
      expect(again).toBe(reused);
      expect(bitsOf(again)).toEqual(bitsOf(evaluated([B], second)));
      if (seed === 1) expect(bitsOf(again)).not.toEqual(before);
    }
  });
});
