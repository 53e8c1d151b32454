// BJT and MOSFET operating points against the docs/DEVICE-MODELS.md equations written out independently here, plus VT and junction rules of thumb.

import { describe, expect, it } from 'vitest';
import { solveOperatingPoint, thermalVoltage } from '../../shared-analysis/src/solve/dc';
import type { BjtRecord, MosRecord } from '../../shared-analysis/src/solve/types';
import { circuit, model } from '../unit/solve/build';
import { mosDrainCurrent, type MosP } from './level1-mosfet';

// Source: BIPM SI Brochure, 9th ed. (2019): k and q exact.
const VT27 = (1.380649e-23 * 300.15) / 1.602176634e-19;

describe('thermal voltage', () => {
  it('is 25.865 mV at 300.15 K', () => {
    // Source: k = 1.380649e-23 J/K, q = 1.602176634e-19 C exact (SI 2019); kT/q at 300.15 K ≈ 25.865 mV.
    expect(thermalVoltage(27)).toBeCloseTo(0.025865, 6);
    expect(Math.abs(thermalVoltage(27) - VT27)).toBeLessThan(1e-15);
    // At 300 K ≈ 25.852 mV (REFERENCES.md).
    expect(thermalVoltage(26.85)).toBeCloseTo(0.025852, 6);
  });
});

type BjtP = { IS: number; BF: number; BR: number; NF: number; NR: number; VAF: number };

/** docs/DEVICE-MODELS.md Gummel–Poon (forward Early only), NPN sense, written out for the test. */
function gummelPoon(vbe: number, vbc: number, p: BjtP, vt = VT27): { ic: number; ib: number } {
  const icc = p.IS * (Math.exp(vbe / (p.NF * vt)) - 1);
  const iec = p.IS * (Math.exp(vbc / (p.NR * vt)) - 1);
  const it = (icc - iec) * (1 - vbc / p.VAF);
  return { ic: it - iec / p.BR, ib: icc / p.BF + iec / p.BR };
}

/**
 * Biases one BJT with ideal sources (own-polarity VBE and VCE; emitter grounded) and
 * compares IC and IB to the written-out equations within `rel`, and the region.
 */
function checkBjt(polarity: 'npn' | 'pnp', vbe: number, vce: number, p: Partial<BjtP>, region: string, opt: { area?: number; m?: number; rel?: number } = {}): BjtRecord {
  const full: BjtP = { IS: 1e-16, BF: 100, BR: 1, NF: 1, NR: 1, VAF: Infinity, ...p };
  const s = polarity === 'npn' ? 1 : -1;
  const c = circuit([
    ['V', 'VB', 'b', '0', s * vbe],
    ['V', 'VC', 'c', '0', s * vce],
    ['Q', 'Q1', 'c', 'b', '0', model('QX', polarity, p), { area: opt.area, m: opt.m }],
  ]);
  const r = solveOperatingPoint(c);
  expect(r.op.converged).toBe(true);
  const q = r.op.devices.Q1 as BjtRecord;
  const m = opt.m ?? 1;
  const e = gummelPoon(vbe, vbe - vce, { ...full, IS: full.IS * (opt.area ?? 1) });
  const rel = opt.rel ?? 1e-6;
  expect(Math.abs(q.ic - s * m * e.ic)).toBeLessThanOrEqual(rel * Math.abs(m * e.ic));
  expect(Math.abs(q.ib - s * m * e.ib)).toBeLessThanOrEqual(rel * Math.abs(m * e.ib));
  expect(q.ie).toBeCloseTo(-(q.ic + q.ib), 15);
  expect(q.region).toBe(region);
  expect(q.vbe).toBeCloseTo(s * vbe, 12);
  expect(q.vce).toBeCloseTo(s * vce, 12);
  return q;
}

describe('BJT equations (docs/DEVICE-MODELS.md, written out in the test)', () => {
  it('forward-active NPN with Early effect, and its small-signal parameters', () => {
    const q = checkBjt('npn', 0.7, 5, { IS: 1e-15, BF: 150, VAF: 60 }, 'forward-active');
    // Source: Gray, Hurst, Lewis, Meyer, 5th ed., ch. 1 — gm = IC/VT (with the Early factor), rπ = β/gm, and
    // ro = (VA + VCB)/IC, the slope of IC = IS·e^(VBE/VT)·(1 + VCB/VA) at the operating point.
    const icc = 1e-15 * Math.exp(0.7 / VT27);
    const early = 1 - (0.7 - 5) / 60;
    expect(q.gm).toBeCloseTo((icc / VT27) * early, 9);
    expect(q.rpi / (150 / (icc / VT27))).toBeCloseTo(1, 9);
    expect(q.ro / ((60 + (5 - 0.7)) / q.ic)).toBeCloseTo(1, 7); // gmin·VCB in IC is the 1e-8 left
    expect(q.roInfinite).toBeUndefined();
  });

  it('saturated NPN: ro is the slope ∂VCE/∂IC with VBE held, far below VA/IC', () => {
    // Source: the equations of docs/DEVICE-MODELS.md differentiated here: with BR = 2 and VBC = 0.6 V,
    // ∂IC/∂VCE = −∂IC/∂VBC = IS·e^(VBC/VT)/VT·(1/qb + 1/BR) + IT/(VA·d) (qb = 1/d, d = 1 − VBC/VA).
    const q = checkBjt('npn', 0.75, 0.15, { IS: 1e-15, BF: 80, BR: 2, VAF: 60 }, 'saturation');
    const vbc = 0.75 - 0.15;
    const d = 1 - vbc / 60;
    const ibe = 1e-15 * (Math.exp(0.75 / VT27) - 1);
    const ibc = 1e-15 * (Math.exp(vbc / VT27) - 1);
    const gbc = (1e-15 * Math.exp(vbc / VT27)) / VT27;
    const go = gbc * d + gbc / 2 + (ibe - ibc) / 60;
    expect(q.ro * go).toBeCloseTo(1, 6);
    expect(q.ro).toBeLessThan(60 / q.ic / 10);
    // gμ = ∂IB/∂VBC = IS·e^(VBC/VT)/(BR·VT).
    expect(q.gmu / (gbc / 2)).toBeCloseTo(1, 6);
  });

  it('forward-active NPN without Early effect reports ro = 1e30 and roInfinite', () => {
    const q = checkBjt('npn', 0.65, 3, { IS: 1e-14 }, 'forward-active');
    expect(q.ro).toBe(1e30);
    expect(q.roInfinite).toBe(true);
  });

  it('saturation: both junctions forward', () => checkBjt('npn', 0.75, 0.1, { IS: 1e-15, BF: 80, BR: 2 }, 'saturation'));
  it('reverse-active: collector below base, emitter junction reverse', () => checkBjt('npn', -0.5, -1.2, { IS: 1e-15, BR: 3 }, 'reverse-active'));
  it('cutoff: both junctions reverse, currents at leakage level', () => {
    const c = circuit([
      ['V', 'VB', 'b', '0', -1],
      ['V', 'VC', 'c', '0', 5],
      ['Q', 'Q1', 'c', 'b', '0', model('QX', 'npn')],
    ]);
    const q = solveOperatingPoint(c).op.devices.Q1 as BjtRecord;
    expect(q.region).toBe('cutoff');
    // Leakage is IS/BR-level plus the 1e-12 S robustness conductance times a few volts (solver design, common practice).
    expect(Math.abs(q.ic)).toBeLessThan(1e-11);
    expect(Math.abs(q.ib)).toBeLessThan(1e-11);
    expect(q.rpi).toBe(1e30);
  });
  it('PNP forward-active mirrors every sign', () => checkBjt('pnp', 0.68, 4, { IS: 2e-15, BF: 60, VAF: 40 }, 'forward-active'));
  it('PNP saturation', () => checkBjt('pnp', 0.72, 0.05, { IS: 2e-15, BF: 60 }, 'saturation'));
  it('area multiplies IS and M multiplies every current', () => checkBjt('npn', 0.68, 2, { IS: 1e-15, VAF: 80 }, 'forward-active', { area: 4, m: 3 }));
});

/** Biases one MOSFET with ideal sources (own polarity, source grounded) and compares ID (into the drain) and region. */
function checkMos(polarity: 'nmos' | 'pmos', vgs: number, vds: number, vbs: number, p: Partial<MosP>, region: string): MosRecord {
  const full: MosP = { KP: 2e-5, VTO: 0, LAMBDA: 0, GAMMA: 0, PHI: 0.6, ...p };
  const s = polarity === 'nmos' ? 1 : -1;
  const c = circuit([
    ['V', 'VG', 'g', '0', s * vgs],
    ['V', 'VD', 'd', '0', s * vds],
    ['V', 'VBULK', 'b', '0', s * vbs],
    ['M', 'M1', 'd', 'g', '0', 'b', model('MX', polarity, { ...p, VTO: s * full.VTO }), { w: 20e-6, l: 2e-6 }],
  ]);
  const r = solveOperatingPoint(c);
  expect(r.op.converged).toBe(true);
  const rec = r.op.devices.M1 as MosRecord;
  // For VDS < 0 the channel is symmetric: the drain acts as source (VGD, −VDS, VBD) and the current reverses.
  const expected = mosDrainCurrent(vgs, vds, vbs, full, 10);
  // 1e-12 S across the channel is the solver's robustness conductance (common practice); it is included here.
  const gminPart = 1e-12 * vds;
  expect(Math.abs(rec.id - s * (expected + gminPart))).toBeLessThanOrEqual(1e-9 * Math.abs(expected) + 1e-18);
  expect(rec.region).toBe(region);
  return rec;
}

describe('MOSFET equations (docs/DEVICE-MODELS.md, written out in the test)', () => {
  it('NMOS saturation with channel-length modulation, gm and ro', () => {
    const m = checkMos('nmos', 1.5, 3, 0, { KP: 1e-4, VTO: 0.7, LAMBDA: 0.05 }, 'saturation');
    // Source: Razavi, Design of Analog CMOS Integrated Circuits, ch. 2 — gm = β·VOV·(1 + λVDS), ro = 1/(∂ID/∂VDS).
    expect(m.gm).toBeCloseTo(1e-3 * 0.8 * (1 + 0.05 * 3), 12);
    expect(m.ro).toBeCloseTo(1 / (0.5 * 1e-3 * 0.64 * 0.05), 6);
    expect(m.vov).toBeCloseTo(0.8, 12);
    expect(m.vth).toBeCloseTo(0.7, 12);
  });
  it('NMOS triode', () => checkMos('nmos', 2, 0.3, 0, { KP: 1e-4, VTO: 0.7, LAMBDA: 0.02 }, 'triode'));
  it('NMOS cutoff', () => {
    const m = checkMos('nmos', 0.4, 2, 0, { KP: 1e-4, VTO: 0.7 }, 'cutoff');
    expect(m.roInfinite).toBe(true);
  });
  it('NMOS body effect raises VTH by GAMMA·(√(PHI − VBS) − √PHI)', () => {
    const m = checkMos('nmos', 1.8, 3, -1.5, { KP: 1e-4, VTO: 0.7, GAMMA: 0.45, PHI: 0.7 }, 'saturation');
    // Source: Shichman and Hodges, IEEE JSSC 1968 / docs/DEVICE-MODELS.md threshold with body effect.
    expect(m.vth).toBeCloseTo(0.7 + 0.45 * (Math.sqrt(2.2) - Math.sqrt(0.7)), 12);
  });
  it('NMOS with VDS < 0 swaps source and drain', () => checkMos('nmos', 1.5, -0.4, 0, { KP: 1e-4, VTO: 0.5 }, 'triode'));
  it('PMOS saturation mirrors every sign (VTO written negative)', () => {
    const m = checkMos('pmos', 1.6, 2.5, 0, { KP: 4e-5, VTO: 0.8, LAMBDA: 0.03 }, 'saturation');
    expect(m.vgs).toBeCloseTo(-1.6, 12);
    expect(m.vth).toBeCloseTo(-0.8, 12);
    expect(m.vov).toBeCloseTo(0.8, 12);
  });
  it('PMOS triode with body effect', () => checkMos('pmos', 2.5, 0.5, -0.8, { KP: 4e-5, VTO: 0.8, GAMMA: 0.3 }, 'triode'));
});

describe('diode regions', () => {
  /** A diode held at `v` by an ideal source; returns its record. */
  function check(v: number, expected: { region: string; id: number; rel: number }): void {
    const r = solveOperatingPoint(circuit([['V', 'V1', 'a', '0', v], ['D', 'D1', 'a', '0', model('DR', 'd', { IS: 1e-14 })]]));
    const d = r.op.devices.D1 as { region: string; id: number };
    expect(d.region).toBe(expected.region);
    expect(Math.abs(d.id - expected.id)).toBeLessThanOrEqual(expected.rel * Math.abs(expected.id));
  }
  // Source: docs/DEVICE-MODELS.md diode law ID = IS·(exp(VD/(N·VT)) − 1), written out; the reverse case adds the solver's 1e-12 S (common practice).
  it('forward at 0.65 V', () => check(0.65, { region: 'forward', id: 1e-14 * (Math.exp(0.65 / VT27) - 1) + 0.65e-12, rel: 1e-12 }));
  it('reverse at −3 V saturates at −IS', () => check(-3, { region: 'reverse', id: -1e-14 - 3e-12, rel: 1e-9 }));
});

describe('junction rules of thumb (Horowitz and Hill, The Art of Electronics, 3rd ed., ch. 2 — common practice)', () => {
  /** VBE of a diode-connected NPN fed by a current source, at `tempC`. */
  function vbeAt(current: number, tempC: number): number {
    const c = circuit(
      [
        ['I', 'IREF', '0', 'c', current],
        ['Q', 'Q1', 'c', 'c', '0', model('QSMALL', 'npn', { IS: 1e-15, BF: 200 })],
      ],
      { temperatureC: tempC },
    );
    const r = solveOperatingPoint(c);
    expect(r.op.converged).toBe(true);
    return (r.op.devices.Q1 as BjtRecord).vbe;
  }

  it('VBE falls about 2 mV per °C at constant collector current', () => {
    // Source: Horowitz and Hill, 3rd ed., ch. 2 — about −2 mV/°C (common practice); tolerance −1.5 to −2.5 mV/°C.
    const slope = (vbeAt(1e-3, 37) - vbeAt(1e-3, 17)) / 20;
    expect(slope).toBeLessThan(-1.5e-3);
    expect(slope).toBeGreaterThan(-2.5e-3);
  });

  it('VBE rises about 60 mV per decade of collector current near room temperature', () => {
    // Source: Horowitz and Hill, 3rd ed., ch. 2 — VT·ln 10 ≈ 60 mV per decade (common practice); tolerance 55–65 mV.
    const step = vbeAt(1e-3, 27) - vbeAt(1e-4, 27);
    expect(step).toBeGreaterThan(0.055);
    expect(step).toBeLessThan(0.065);
    expect(step).toBeCloseTo(VT27 * Math.log(10), 4);
  });

  it('VBE of a small-signal device at 1 mA is 0.6–0.7 V', () => {
    // Source: Horowitz and Hill, 3rd ed., ch. 2 (common practice), with IS = 1e-15 A.
    const v = vbeAt(1e-3, 27);
    expect(v).toBeGreaterThan(0.6);
    expect(v).toBeLessThan(0.75);
  });
});
