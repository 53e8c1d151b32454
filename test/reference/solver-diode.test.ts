// The diode with series resistance against the exact Lambert-W closed form (Banwell and Jayakumar, 2000).

import { describe, expect, it } from 'vitest';
import { solveOperatingPoint } from '../../shared-analysis/src/solve/dc';
import type { DiodeRecord } from '../../shared-analysis/src/solve/types';
import { circuit, model } from '../unit/solve/build';

// Source: BIPM SI Brochure, 9th ed. (2019): k and q are exact by definition.
const K = 1.380649e-23;
const Q = 1.602176634e-19;

/**
 * Principal Lambert W of z = exp(lnZ) for z > 0, by Halley iteration on
 * f(w) = w + ln(w) − lnZ (the log form of w·e^w = z, so huge z never overflows).
 */
function lambertWFromLog(lnZ: number): number {
  let w = lnZ > 1 ? lnZ - Math.log(lnZ) : Math.exp(lnZ) / (1 + Math.exp(lnZ));
  for (let i = 0; i < 100; i++) {
    const f = w + Math.log(w) - lnZ;
    const f1 = 1 + 1 / w;
    const f2 = -1 / (w * w);
    const step = (2 * f * f1) / (2 * f1 * f1 - f * f2);
    let next = w - step;
    if (!(next > 0)) next = w / 2;
    if (Math.abs(next - w) <= 1e-15 * Math.abs(next)) return next;
    w = next;
  }
  return w;
}

/** I = (N·VT/R)·W((IS·R/(N·VT))·exp((V + IS·R)/(N·VT))) − IS. Source: T. C. Banwell and A. Jayakumar, Electronics Letters 36(4), 2000. */
function exactCurrent(v: number, r: number, is: number, n: number, tempC: number): number {
  const nvt = (n * K * (tempC + 273.15)) / Q;
  const lnZ = Math.log((is * r) / nvt) + (v + is * r) / nvt;
  return (nvt / r) * lambertWFromLog(lnZ) - is;
}

type Case = { v: number; r: number; is: number; n: number; tempC: number };

/** Solves the diode both with RS inside the model and with an external resistor; both must match the closed form to 1e-6. */
function check(c: Case): void {
  const expected = exactCurrent(c.v, c.r, c.is, c.n, c.tempC);
  const internal = solveOperatingPoint(
    circuit([
      ['V', 'V1', 'a', '0', c.v],
      ['D', 'D1', 'a', '0', model('DRS', 'd', { IS: c.is, N: c.n, RS: c.r })],
    ], { temperatureC: c.tempC, tnomC: c.tempC }),
  );
  const external = solveOperatingPoint(
    circuit([
      ['V', 'V1', 'a', '0', c.v],
      ['R', 'R1', 'a', 'k', c.r],
      ['D', 'D1', 'k', '0', model('DPLAIN', 'd', { IS: c.is, N: c.n })],
    ], { temperatureC: c.tempC, tnomC: c.tempC }),
  );
  for (const r of [internal, external]) {
    expect(r.op.converged).toBe(true);
    const id = (r.op.devices.D1 as DiodeRecord).id;
    expect(Math.abs(id - expected) / expected).toBeLessThan(1e-6);
  }
  expect((internal.op.devices.D1 as DiodeRecord).vd).toBeCloseTo(c.v, 12);
}

describe('diode with series resistance, exact Lambert-W solution', () => {
  // Source: Banwell and Jayakumar 2000 closed form, W computed above by Halley iteration.
  it('1 V into 100 Ω', () => check({ v: 1, r: 100, is: 1e-14, n: 1, tempC: 27 }));
  it('5 V into 1 kΩ', () => check({ v: 5, r: 1000, is: 1e-14, n: 1, tempC: 27 }));
  it('0.8 V into 10 Ω with N = 1.5', () => check({ v: 0.8, r: 10, is: 1e-12, n: 1.5, tempC: 27 }));
  it('2 V into 1 Ω (high current, steep exponential)', () => check({ v: 2, r: 1, is: 1e-15, n: 1, tempC: 27 }));
  // Currents are kept well above the 1e-12 S junction conductance's ~1 pA contribution, which the closed form omits.
  it('1.5 V into 10 kΩ with N = 2 at 85 °C', () => check({ v: 1.5, r: 1e4, is: 1e-14, n: 2, tempC: 85 }));
  it('50 V into 47 kΩ', () => check({ v: 50, r: 47e3, is: 1e-14, n: 1, tempC: 27 }));

  it('the closed-form helper itself satisfies w·e^w = z', () => {
    // Source: definition of the Lambert W function (Corless et al., Adv. Comput. Math. 5, 1996).
    for (const z of [0.5, 1, 10, 1e5]) {
      const w = lambertWFromLog(Math.log(z));
      expect(Math.abs(w * Math.exp(w) - z) / z).toBeLessThan(1e-13);
    }
    // W(1) = Ω ≈ 0.5671432904097838 (the omega constant, from memory).
    expect(lambertWFromLog(0)).toBeCloseTo(0.5671432904097838, 14);
  });
});
