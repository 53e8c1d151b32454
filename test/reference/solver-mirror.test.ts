// Solved current mirrors against the published finite-beta mirror formulas, including an output driven into saturation.

import { describe, expect, it } from 'vitest';
import { solveOperatingPoint } from '../../shared-analysis/src/solve/dc';
import type { BjtRecord, MosRecord, TwoTerminalRecord } from '../../shared-analysis/src/solve/types';
import type { Spec } from '../unit/solve/build';
import { circuit, model } from '../unit/solve/build';

/** Solves `specs` and returns the reference resistor current and the output device record. */
function check(specs: Spec[], out: string): { iref: number; rec: BjtRecord } {
  const r = solveOperatingPoint(circuit(specs));
  expect(r.op.converged).toBe(true);
  return { iref: (r.op.devices.RREF as TwoTerminalRecord).current, rec: r.op.devices[out] as BjtRecord };
}

describe('BJT mirrors', () => {
  const q = model('QM', 'npn', { IS: 1e-15, BF: 50 });

  it('simple matched mirror: IOUT = IREF/(1 + 2/β)', () => {
    const { iref, rec } = check(
      [
        ['V', 'VCC', 'vcc', '0', 5],
        ['R', 'RREF', 'vcc', 'ref', 4300],
        ['Q', 'Q1', 'ref', 'ref', '0', q],
        ['Q', 'Q2', 'out', 'ref', '0', q],
        ['V', 'VOUT', 'out', '0', 2.5],
      ],
      'Q2',
    );
    // Source: Gray, Hurst, Lewis, Meyer, 5th ed., ch. 4 — simple mirror IOUT = IREF/(1 + 2/β) (exact without Early effect).
    expect(rec.ic / (iref / (1 + 2 / 50))).toBeCloseTo(1, 8);
    expect(rec.region).toBe('forward-active');
  });

  it('ratioed output (area 3): IOUT = m·IREF/(1 + (1 + m)/β)', () => {
    const { iref, rec } = check(
      [
        ['V', 'VCC', 'vcc', '0', 5],
        ['R', 'RREF', 'vcc', 'ref', 10e3],
        ['Q', 'Q1', 'ref', 'ref', '0', q],
        ['Q', 'Q2', 'out', 'ref', '0', q, { area: 3 }],
        ['V', 'VOUT', 'out', '0', 3],
      ],
      'Q2',
    );
    // Source: REFERENCES.md / Gray et al., 5th ed., ch. 4 — output scaled by m.
    expect(rec.ic / ((3 * iref) / (1 + 4 / 50))).toBeCloseTo(1, 8);
  });

  it('a large load resistor drives the output into saturation while the reference stays forward-active', () => {
    const r = solveOperatingPoint(
      circuit([
        ['V', 'VCC', 'vcc', '0', 5],
        ['R', 'RREF', 'vcc', 'ref', 4300],
        ['Q', 'Q1', 'ref', 'ref', '0', q],
        ['Q', 'Q2', 'out', 'ref', '0', q],
        ['R', 'RLOAD', 'vcc', 'out', 100e3],
      ]),
    );
    expect(r.op.converged).toBe(true);
    const q2 = r.op.devices.Q2 as BjtRecord;
    const q1 = r.op.devices.Q1 as BjtRecord;
    expect(q1.region).toBe('forward-active');
    expect(q2.region).toBe('saturation');
    // The load caps the current at about (5 V − VCE(sat))/100 kΩ, well below the ~1 mA the mirror wants (common practice).
    expect(q2.ic).toBeLessThan(5 / 100e3);
    expect(q2.vce).toBeLessThan(0.3);
  });

  it('PNP mirror from the positive rail', () => {
    const p = model('QP', 'pnp', { IS: 1e-15, BF: 40 });
    const r = solveOperatingPoint(
      circuit([
        ['V', 'VCC', 'vcc', '0', 9],
        ['Q', 'Q1', 'ref', 'ref', 'vcc', p],
        ['Q', 'Q2', 'out', 'ref', 'vcc', p],
        ['R', 'RREF', 'ref', '0', 8200],
        ['R', 'RLOAD', 'out', '0', 2000],
      ]),
    );
    expect(r.op.converged).toBe(true);
    const iref = (r.op.devices.RREF as TwoTerminalRecord).current;
    const q2 = r.op.devices.Q2 as BjtRecord;
    // Source: Gray et al., 5th ed., ch. 4 — the same formula with every sign mirrored; collector current flows out of a PNP.
    // Tolerance 5e-8: the 1e-12 S junction conductance across Q2's reverse-biased base-collector junction adds ~5 pA.
    expect(-q2.ic / (iref / (1 + 2 / 40))).toBeCloseTo(1, 7);
    expect(q2.region).toBe('forward-active');
  });
});

describe('MOS mirrors', () => {
  it('ratio (W/L)2/(W/L)1 · (1 + λVDS2)/(1 + λVDS1)', () => {
    const n = model('NM', 'nmos', { KP: 1e-4, VTO: 0.6, LAMBDA: 0.04 });
    const r = solveOperatingPoint(
      circuit([
        ['V', 'VDD', 'vdd', '0', 3.3],
        ['R', 'RREF', 'vdd', 'ref', 20e3],
        ['M', 'M1', 'ref', 'ref', '0', '0', n, { w: 10e-6, l: 1e-6 }],
        ['M', 'M2', 'out', 'ref', '0', '0', n, { w: 20e-6, l: 1e-6 }],
        ['V', 'VOUT', 'out', '0', 2],
      ]),
    );
    expect(r.op.converged).toBe(true);
    const m1 = r.op.devices.M1 as MosRecord;
    const m2 = r.op.devices.M2 as MosRecord;
    // Source: Razavi, Design of Analog CMOS Integrated Circuits, ch. 5 — mirror ratio with channel-length modulation.
    const ratio = (2 * (1 + 0.04 * m2.vds)) / (1 + 0.04 * m1.vds);
    expect(m2.id / m1.id).toBeCloseTo(ratio, 8);
    expect(m2.region).toBe('saturation');
  });
});
