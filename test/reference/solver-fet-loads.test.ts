// The MOSFET and JFET tables' Newton loads (the companion stamps the solve converges on, not the records built
// afterwards) against the plain equations of docs/DEVICE-MODELS.md written out in the test: at the solved point of a
// circuit whose drain current flows through a resistor, Kirchhoff's current law at the drain must hold with the
// current the plain equations give at the solved terminal voltages. Forward and swapped channels, both polarities,
// body effect and a forward-biased JFET gate junction.

import { describe, expect, it } from 'vitest';
import { solveOperatingPoint } from '../../shared-analysis/src/solve/dc';
import { circuit, model } from '../unit/solve/build';
import { mosDrainCurrent, type MosP } from './level1-mosfet';

// Source: BIPM SI Brochure, 9th ed. (2019): k and q exact.
const VT27 = (1.380649e-23 * 300.15) / 1.602176634e-19;
/** The 1 pS the solver places across every channel and junction (docs/DEVICE-MODELS.md, numerical guards). */
const GMIN = 1e-12;

type JfetP = { BETA: number; VTO: number; LAMBDA: number; IS: number };

/** Shichman–Hodges channel current in the N-channel sense for any VDS (the drain acts as source below 0), plus the gate-drain junction's current out of the drain. */
function jfetDrainCurrent(vgs: number, vds: number, p: JfetP): number {
  const channel = (g: number, d: number): number => {
    const vov = g - p.VTO;
    if (vov <= 0) return 0;
    if (d >= vov) return p.BETA * vov * vov * (1 + p.LAMBDA * d);
    return p.BETA * d * (2 * vov - d) * (1 + p.LAMBDA * d);
  };
  const ich = vds >= 0 ? channel(vgs, vds) : -channel(vgs - vds, -vds);
  const vgd = vgs - vds;
  const igd = p.IS * (Math.exp(vgd / VT27) - 1) + GMIN * vgd;
  return ich - igd;
}

/** Solves the circuit and returns its node voltages by name. */
function solved(specs: Parameters<typeof circuit>[0]): Record<string, number> {
  const r = solveOperatingPoint(circuit(specs));
  expect(r.op.converged).toBe(true);
  return r.op.nodes;
}

/** KCL at the drain: what the resistor brings equals what the device takes, to 1e-9 of it. */
function expectKcl(fromResistor: number, intoDrain: number): void {
  expect(Math.abs(fromResistor - intoDrain)).toBeLessThanOrEqual(1e-9 * Math.abs(intoDrain) + 1e-15);
  expect(Math.abs(intoDrain)).toBeGreaterThan(1e-7);
}

describe('MOSFET load at the solved point (docs/DEVICE-MODELS.md level 1, written out in the test)', () => {
  const p: MosP = { KP: 1e-4, VTO: 0.7, LAMBDA: 0.04, GAMMA: 0.4, PHI: 0.7 };
  /** One device, drain through RD to VR, gate and bulk held, source grounded; polarity s flips every voltage. */
  function check(kind: 'nmos' | 'pmos', vg: number, vr: number, vb: number, rd: number): void {
    const s = kind === 'nmos' ? 1 : -1;
    const v = solved([
      ['V', 'VG', 'g', '0', s * vg],
      ['V', 'VR', 'r', '0', s * vr],
      ['V', 'VB', 'b', '0', s * vb],
      ['R', 'RD', 'r', 'd', rd],
      ['M', 'M1', 'd', 'g', '0', 'b', model('MX', kind, { ...p, VTO: s * p.VTO }), { w: 20e-6, l: 2e-6 }],
    ]);
    const vds = s * v.d;
    const intoDrain = mosDrainCurrent(vg, vds, vb, p, 10) + GMIN * vds;
    expectKcl(s * (v.r - v.d) / rd, intoDrain);
  }
  it('NMOS in saturation with body effect', () => check('nmos', 1.6, 5, -1, 10e3));
  it('NMOS in triode', () => check('nmos', 3, 5, 0, 20e3));
  it('NMOS with its drain pulled below its source: the swapped frame', () => check('nmos', 2, -1.5, -2, 2e3));
  it('PMOS in saturation', () => check('pmos', 1.5, 4, 0, 5e3));
  it('PMOS swapped, with body effect', () => check('pmos', 2.5, -1, -2, 3e3));
});

describe('JFET load at the solved point (docs/DEVICE-MODELS.md, written out in the test)', () => {
  const p: JfetP = { BETA: 1e-3, VTO: -2, LAMBDA: 0.02, IS: 1e-14 };
  /** One device, drain through RD to VR, gate held, source grounded; polarity s flips every voltage (VTO is written in the device's own polarity for both). */
  function check(kind: 'njf' | 'pjf', vg: number, vr: number, rd: number): void {
    const s = kind === 'njf' ? 1 : -1;
    const v = solved([
      ['V', 'VG', 'g', '0', s * vg],
      ['V', 'VR', 'r', '0', s * vr],
      ['R', 'RD', 'r', 'd', rd],
      ['J', 'J1', 'd', 'g', '0', model('JX', kind, p)],
    ]);
    const vds = s * v.d;
    const intoDrain = jfetDrainCurrent(vg, vds, p) + GMIN * vds;
    expectKcl(s * (v.r - v.d) / rd, intoDrain);
  }
  it('N-channel in saturation', () => check('njf', -0.8, 10, 2e3));
  it('N-channel in the linear region', () => check('njf', 0, 2, 4e3));
  it('N-channel with its drain pulled below its source: the swapped frame, gate-drain junction forward', () => check('njf', 0.2, -3, 1e3));
  it('P-channel in saturation', () => check('pjf', -1, 12, 3e3));
  it('P-channel swapped', () => check('pjf', 0, -2, 1.5e3));
});
