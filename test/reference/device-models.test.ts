// The Gummel–Poon, breakdown-diode and temperature-dependent MOS models against published closed forms, and operating points against the same equations solved independently in the test.

import { describe, expect, it } from 'vitest';
import { bjtBetaAt } from '../../shared-analysis/src/devices/bjt';
import { solveOperatingPoint } from '../../shared-analysis/src/solve/dc';
import type { BjtRecord, DiodeRecord, MosRecord } from '../../shared-analysis/src/solve/types';
import { circuit, model } from '../unit/solve/build';

// Source: BIPM SI Brochure, 9th ed. (2019): k and q exact.
const K = 1.380649e-23;
const Q = 1.602176634e-19;
const vtAt = (c: number): number => (K * (c + 273.15)) / Q;
const VT27 = vtAt(27);

/** Gummel–Poon DC (docs/DEVICE-MODELS.md), NPN sense, written out again for the test. */
interface Gp {
  IS: number;
  BF: number;
  BR: number;
  NF: number;
  NR: number;
  VAF: number;
  VAR: number;
  IKF: number;
  IKR: number;
  ISE: number;
  NE: number;
  ISC: number;
  NC: number;
}
const GP0: Gp = { IS: 1e-16, BF: 100, BR: 1, NF: 1, NR: 1, VAF: Infinity, VAR: Infinity, IKF: Infinity, IKR: Infinity, ISE: 0, NE: 1.5, ISC: 0, NC: 2 };

function gummelPoon(vbe: number, vbc: number, p: Gp, vt = VT27): { ic: number; ib: number } {
  const ibe1 = p.IS * (Math.exp(vbe / (p.NF * vt)) - 1);
  const ibe2 = p.ISE * (Math.exp(vbe / (p.NE * vt)) - 1);
  const ibc1 = p.IS * (Math.exp(vbc / (p.NR * vt)) - 1);
  const ibc2 = p.ISC * (Math.exp(vbc / (p.NC * vt)) - 1);
  const q1 = 1 / (1 - vbc / p.VAF - vbe / p.VAR);
  const q2 = ibe1 / p.IKF + ibc1 / p.IKR;
  const qb = (q1 / 2) * (1 + Math.sqrt(1 + 4 * q2));
  return { ic: (ibe1 - ibc1) / qb - ibc1 / p.BR - ibc2, ib: ibe1 / p.BF + ibe2 + ibc1 / p.BR + ibc2 };
}

/** An NPN held at intrinsic VBE and VCE by ideal sources (no series resistances); its record. */
function biased(vbe: number, vce: number, params: Partial<Gp>): BjtRecord {
  const r = solveOperatingPoint(
    circuit([
      ['V', 'VB', 'b', '0', vbe],
      ['V', 'VC', 'c', '0', vce],
      ['Q', 'Q1', 'c', 'b', '0', model('QG', 'npn', params)],
    ]),
  );
  expect(r.op.converged).toBe(true);
  return r.op.devices.Q1 as BjtRecord;
}

/** 2-D Newton with a central-difference Jacobian, written for the test (not the engine's solver). */
function newton2(f: (x: number, y: number) => [number, number], x0: number, y0: number): [number, number] {
  let x = x0;
  let y = y0;
  for (let k = 0; k < 200; k++) {
    const [f1, f2] = f(x, y);
    const h = 1e-7;
    const [a1, a2] = f(x + h, y);
    const [b1, b2] = f(x - h, y);
    const [c1, c2] = f(x, y + h);
    const [d1, d2] = f(x, y - h);
    const j11 = (a1 - b1) / (2 * h);
    const j21 = (a2 - b2) / (2 * h);
    const j12 = (c1 - d1) / (2 * h);
    const j22 = (c2 - d2) / (2 * h);
    const det = j11 * j22 - j12 * j21;
    let dx = (f1 * j22 - f2 * j12) / det;
    let dy = (j11 * f2 - j21 * f1) / det;
    // Damped so an exponential's first steps cannot overshoot.
    const big = Math.max(Math.abs(dx), Math.abs(dy));
    if (big > 0.05) {
      dx *= 0.05 / big;
      dy *= 0.05 / big;
    }
    x -= dx;
    y -= dy;
    if (big < 1e-15) break;
  }
  return [x, y];
}

/** Scalar Newton with a central-difference slope, written for the test. */
function newton1(f: (x: number) => number, x0: number, maxStep = 0.05): number {
  let x = x0;
  for (let k = 0; k < 500; k++) {
    const h = 1e-7;
    const d = (f(x + h) - f(x - h)) / (2 * h);
    let dx = f(x) / d;
    if (Math.abs(dx) > maxStep) dx = Math.sign(dx) * maxStep;
    x -= dx;
    if (Math.abs(dx) < 1e-15) break;
  }
  return x;
}

describe('Gummel–Poon BJT', () => {
  it('matches the written-out equations at every term, to 1e-9 relative', () => {
    const p: Partial<Gp> = { IS: 2e-16, BF: 180, BR: 3, NF: 1.01, VAF: 70, VAR: 12, IKF: 0.02, IKR: 5e-3, ISE: 5e-15, NE: 1.6, ISC: 1e-15, NC: 1.8 };
    for (const [vbe, vce] of [
      [0.55, 3],
      [0.72, 5],
      [0.8, 0.1],
      [-0.3, -2],
    ]) {
      const rec = biased(vbe, vce, p);
      const e = gummelPoon(vbe, vbe - vce, { ...GP0, ...p });
      // The solver's 1 pS across each junction is added to the written-out currents (common practice).
      const ic = e.ic - 1e-12 * (vbe - vce);
      const ib = e.ib + 1e-12 * (2 * vbe - vce);
      expect(Math.abs(rec.ic - ic)).toBeLessThanOrEqual(1e-9 * Math.abs(ic));
      expect(Math.abs(rec.ib - ib)).toBeLessThanOrEqual(1e-9 * Math.abs(ib));
    }
  });

  it('rolls β off at high current as BF·IKF/IC', () => {
    // Source: Gummel and Poon, Bell Syst. Tech. J. 49 (1970); Antognetti and Massobrio, "Semiconductor Device
    // Modeling with SPICE" — for IBE1 ≫ IKF, qb ≈ √(IBE1/IKF), so IC ≈ √(IS·IKF)·exp(VBE/(2·VT)) and
    // β = IC/IB = BF·IKF/IC: β falls as IKF/IC grows.
    const p = { IS: 1e-15, BF: 150, IKF: 1e-3 };
    const low = biased(0.55, 5, p);
    expect(low.beta / 150).toBeCloseTo(1, 2); // IC ≪ IKF: the ideal BF
    let previous = Infinity;
    for (const vbe of [0.95, 1.0, 1.05]) {
      const rec = biased(vbe, 5, p);
      expect(rec.ic).toBeGreaterThan(20 * 1e-3);
      // qb = (1 + √(1 + 4q2))/2 approaches √q2 only asymptotically; at IC ≥ 20·IKF the two agree within 6 %.
      expect(rec.beta / ((150 * 1e-3) / rec.ic)).toBeGreaterThan(0.94);
      expect(rec.beta / ((150 * 1e-3) / rec.ic)).toBeLessThan(1.06);
      expect(rec.beta).toBeLessThan(previous);
      previous = rec.beta;
    }
    // Deep in high injection IC grows by e per 2·VT of VBE (the √ law).
    const a = biased(1.05, 5, p).ic;
    const b = biased(1.05 + 2 * VT27, 5, p).ic;
    expect(b / a).toBeCloseTo(Math.E, 1);
  });

  it('rolls β off at low current through the base-emitter leakage ISE', () => {
    // Source: Gray, Hurst, Lewis, Meyer, 5th ed., ch. 1 (β falls at low current because of recombination in the
    // emitter depletion region); with the leakage term dominant, IB ≈ ISE·exp(VBE/(NE·VT)) and
    // IC ≈ IS·exp(VBE/VT), so β = IC/IB ∝ IC^(1 − 1/NE); for NE = 2, β ∝ √IC.
    const p = { IS: 1e-14, BF: 200, ISE: 1e-10, NE: 2 };
    // The solver's 1 pS across each junction is taken off, so the ratios are those of the model alone (common practice).
    const core = (vbe: number): { ic: number; beta: number } => {
      const r = biased(vbe, 3, p);
      const ic = r.ic + 1e-12 * (vbe - 3);
      return { ic, beta: ic / (r.ib - 1e-12 * (2 * vbe - 3)) };
    };
    const r1 = core(0.35);
    const r2 = core(0.35 + Math.log(100) * VT27); // IC up 100×
    expect(r2.ic / r1.ic).toBeCloseTo(100, 2);
    expect(r2.beta / r1.beta).toBeCloseTo(Math.sqrt(100), 1);
    expect(r1.beta).toBeLessThan(1); // far below BF at these tiny currents
  });

  it('gives the hand analysis the β of the model at a given current', () => {
    const p = { is: 1e-15, bf: 150, br: 1, nf: 1, nr: 1, vaf: Infinity, ikf: 1e-3, ise: 1e-13, ne: 2, m: 1, vt: VT27, gmin: 0 };
    for (const ic of [1e-7, 1e-5, 1e-3, 1e-2]) {
      const beta = bjtBetaAt(p, ic);
      // Independently: the VBE that carries IC with VBC = 0, then IC/IB from the written-out equations.
      const gp = { ...GP0, IS: 1e-15, BF: 150, IKF: 1e-3, ISE: 1e-13, NE: 2 };
      const vbe = newton1((v) => Math.log(gummelPoon(v, 0, gp).ic / ic), VT27 * Math.log(ic / 1e-15), 0.02);
      const e = gummelPoon(vbe, 0, gp);
      expect(beta / (e.ic / e.ib)).toBeCloseTo(1, 9);
    }
    expect(bjtBetaAt(p, 0)).toBe(150);
  });

  it('solves series RB, RE and RC through internal nodes, matching an independent 2-D Newton to 1e-9', () => {
    const p: Partial<Gp> = { IS: 5e-16, BF: 120, VAF: 80, IKF: 0.05, ISE: 1e-14, NE: 1.5 };
    const rb = 200;
    const re = 10;
    const rc = 30;
    const c = circuit([
      ['V', 'VB', 'b', '0', 1.2],
      ['V', 'VC', 'c', '0', 6],
      ['Q', 'Q1', 'c', 'b', '0', model('QR', 'npn', { ...p, RB: rb, RE: re, RC: rc })],
    ]);
    const r = solveOperatingPoint(c);
    expect(r.op.converged).toBe(true);
    const rec = r.op.devices.Q1 as BjtRecord;
    const full = { ...GP0, ...p };
    const g = 1e-12; // the solver's conductance across each junction (common practice)
    const currents = (vbe: number, vbc: number): { ic: number; ib: number } => {
      const e = gummelPoon(vbe, vbc, full);
      return { ic: e.ic - g * vbc, ib: e.ib + g * (vbe + vbc) };
    };
    // Intrinsic nodes: B′ = 1.2 − IB·RB, E′ = (IC + IB)·RE, C′ = 6 − IC·RC.
    const [vbe, vbc] = newton2(
      (x, y) => {
        const { ic, ib } = currents(x, y);
        const vbi = 1.2 - ib * rb;
        const vei = (ic + ib) * re;
        const vci = 6 - ic * rc;
        return [vbi - vei - x, vbi - vci - y];
      },
      0.7,
      -4,
    );
    const e = currents(vbe, vbc);
    expect(Math.abs(rec.ic - e.ic)).toBeLessThanOrEqual(1e-9 * e.ic);
    expect(Math.abs(rec.ib - e.ib)).toBeLessThanOrEqual(1e-9 * e.ib);
    // The record's VBE is measured at the netlist terminals (the source), not the intrinsic junction.
    expect(rec.vbe).toBeCloseTo(1.2, 12);
    expect(rec.region).toBe('forward-active');
  });

  it('adds internal nodes only for non-zero series resistances', async () => {
    const { MnaLayout } = await import('../../shared-analysis/src/solve/mna');
    const layout = (params: Record<string, number>): number =>
      new MnaLayout(circuit([['V', 'VB', 'b', '0', 0.7], ['V', 'VC', 'c', '0', 3], ['Q', 'Q1', 'c', 'b', '0', model('QI', 'npn', params)]])).size;
    const base = layout({});
    expect(layout({ RB: 0, RE: 0, RC: 0 })).toBe(base);
    expect(layout({ RB: 100 })).toBe(base + 1);
    expect(layout({ RE: 1, RC: 5 })).toBe(base + 2);
    expect(layout({ RB: 100, RE: 1, RC: 5 })).toBe(base + 3);
  });

  it('scales β with (T/Tnom)^XTB: a mirror output at −40, 27 and 125 °C against IREF/(1 + 2/β(T))', () => {
    // Source: Gray, Hurst, Lewis, Meyer, 5th ed., ch. 4 — simple mirror IOUT = IREF/(1 + 2/β); β(T) = BF·(T/Tnom)^XTB
    // (Antognetti and Massobrio). No Early effect, so the formula is exact apart from the 1 pS junction conductances and
    // the output's reverse base-collector current (about 2·IS(T)); IS is small so both stay below 1e-7 of IOUT at 125 °C.
    const qm = model('QM', 'npn', { IS: 1e-17, BF: 80, XTB: 1.7 });
    for (const t of [-40, 27, 125]) {
      const c = circuit(
        [
          ['I', 'IREF', '0', 'ref', 100e-6],
          ['Q', 'Q1', 'ref', 'ref', '0', qm],
          ['Q', 'Q2', 'out', 'ref', '0', qm],
          ['V', 'VOUT', 'out', '0', 3],
        ],
        { temperatureC: t },
      );
      const r = solveOperatingPoint(c);
      expect(r.op.converged).toBe(true);
      const beta = 80 * Math.pow((t + 273.15) / 300.15, 1.7);
      const iout = 100e-6 / (1 + 2 / beta);
      expect(Math.abs((r.op.devices.Q2 as BjtRecord).ic - iout)).toBeLessThanOrEqual(1e-6 * iout);
    }
  });

  it('scales ISE with (T/Tnom)^(−XTB)·(IS(T)/IS)^(1/NE)', () => {
    // Source: Antognetti and Massobrio (docs/DEVICE-MODELS.md temperature rules), evaluated by hand in the test.
    const t = 85;
    const tr = (t + 273.15) / 300.15;
    const isT = 1e-16 * Math.pow(tr, 3) * Math.exp(((1.11 * Q) / K) * (1 / 300.15 - 1 / (t + 273.15)));
    const iseT = 1e-13 * Math.pow(tr, -2) * Math.pow(isT / 1e-16, 1 / 1.5);
    const vbe = 0.45;
    const c = circuit(
      [
        ['V', 'VB', 'b', '0', vbe],
        ['V', 'VC', 'c', '0', vbe],
        ['Q', 'Q1', 'c', 'b', '0', model('QT', 'npn', { IS: 1e-16, BF: 100, ISE: 1e-13, NE: 1.5, XTB: 2 })],
      ],
      { temperatureC: t },
    );
    const rec = solveOperatingPoint(c).op.devices.Q1 as BjtRecord;
    const vt = vtAt(t);
    const bf = 100 * Math.pow(tr, 2);
    const ib = (isT * (Math.exp(vbe / vt) - 1)) / bf + iseT * (Math.exp(vbe / (1.5 * vt)) - 1) + 1e-12 * vbe;
    expect(Math.abs(rec.ib - ib)).toBeLessThanOrEqual(1e-9 * ib);
  });
});

describe('diode breakdown', () => {
  it('carries IBV at VD = −BV (a zener’s test current at its voltage)', () => {
    // Source: the trade's definition of the breakdown parameters (IBV is the reverse current at BV; from memory),
    // as the docs/DEVICE-MODELS.md equation writes it: ID(−BV) = IS·(e^(−BV/VT) − 1) − IBV.
    const r = solveOperatingPoint(circuit([['V', 'V1', 'k', '0', 5.1], ['D', 'DZ', '0', 'k', model('DZ', 'd', { BV: 5.1, IBV: 5e-3 })]]));
    const d = r.op.devices.DZ as DiodeRecord;
    expect(d.vd).toBeCloseTo(-5.1, 12);
    expect(Math.abs(d.id - -(5e-3 + 1e-14 + 5.1e-12))).toBeLessThanOrEqual(1e-9 * 5e-3);
    expect(d.region).toBe('breakdown');
    // Small-signal: rd = NBV·VT/IBV at the knee (the breakdown exponential's slope).
    expect(d.rd / (VT27 / 5e-3)).toBeCloseTo(1, 6);
  });

  it('solves a zener reference against an independent scalar Newton, to 1e-9', () => {
    // 12 V through 1 kΩ into a zener with BV = 6.2 V, IBV = 1 mA, NBV = 1.5.
    const p = { IS: 1e-14, BV: 6.2, IBV: 1e-3, NBV: 1.5, RS: 2 };
    const r = solveOperatingPoint(
      circuit([
        ['V', 'V1', 'in', '0', 12],
        ['R', 'R1', 'in', 'k', 1e3],
        ['D', 'DZ', '0', 'k', model('DZ', 'd', p)],
      ]),
    );
    expect(r.op.converged).toBe(true);
    const d = r.op.devices.DZ as DiodeRecord;
    const junction = (vj: number): number => 1e-14 * (Math.exp(vj / VT27) - 1) - 1e-3 * Math.exp(-(vj + 6.2) / (1.5 * VT27)) + 1e-12 * vj;
    // KCL: (12 − Vk)/1k = −ID, with Vk = −VD and VD = vj + ID·RS.
    const vj = newton1((v) => {
      const id = junction(v);
      const vd = v + id * 2;
      return (12 + vd) / 1e3 + id;
    }, -6);
    const id = junction(vj);
    expect(Math.abs(d.id - id)).toBeLessThanOrEqual(1e-9 * Math.abs(id));
    expect(d.region).toBe('breakdown');
    expect(d.vd).toBeLessThan(-6.2);
  });

  it('moves BV with TBV1 and stays forward or reverse without BV', () => {
    // Source: docs/DEVICE-MODELS.md, BV(T) = BV·(1 + TBV1·ΔT): at 127 °C with TBV1 = 1e-3, BV = 5·1.1 = 5.5 V.
    const at = (t: number): DiodeRecord => {
      const c = circuit(
        [
          ['I', 'I1', '0', 'k', 1e-3],
          ['D', 'DZ', '0', 'k', model('DZ', 'd', { BV: 5, IBV: 1e-3, TBV1: 1e-3 })],
        ],
        { temperatureC: t },
      );
      return solveOperatingPoint(c).op.devices.DZ as DiodeRecord;
    };
    expect(at(127).vd).toBeCloseTo(-5.5, 6);
    expect(at(27).vd).toBeCloseTo(-5, 6);
    const plain = solveOperatingPoint(circuit([['V', 'V1', 'k', '0', 30], ['D', 'D1', '0', 'k', model('DP', 'd')]])).op.devices.D1 as DiodeRecord;
    expect(plain.region).toBe('reverse');
  });
});

describe('MOSFET temperature', () => {
  it('scales KP by (T/Tnom)^BEX: the mobility exponent at two temperatures', () => {
    // Source: common practice (lattice-scattering mobility ∝ T^−1.5, from memory; S. M. Sze, Physics of Semiconductor
    // Devices): with TCV = 0 the saturation current at fixed VGS scales as (T1/T2)^BEX.
    const id = (t: number, bex: number): number => {
      const c = circuit(
        [
          ['V', 'VG', 'g', '0', 1.5],
          ['V', 'VD', 'd', '0', 3],
          ['M', 'M1', 'd', 'g', '0', '0', model('NT', 'nmos', { KP: 1e-4, VTO: 0.6, TCV: 0, BEX: bex }), { w: 10e-6, l: 1e-6 }],
        ],
        { temperatureC: t },
      );
      return (solveOperatingPoint(c).op.devices.M1 as MosRecord).id - 3e-12;
    };
    expect(id(125, -1.5) / id(-40, -1.5)).toBeCloseTo(Math.pow(398.15 / 233.15, -1.5), 9);
    expect(id(85, -2) / id(27, -2)).toBeCloseTo(Math.pow(358.15 / 300.15, -2), 9);
    // The default BEX is −1.5.
    const c = (t: number): number => {
      const r = solveOperatingPoint(
        circuit([['V', 'VG', 'g', '0', 1.5], ['V', 'VD', 'd', '0', 3], ['M', 'M1', 'd', 'g', '0', '0', model('ND', 'nmos', { KP: 1e-4, VTO: 0.6, TCV: 0 })]], { temperatureC: t }),
      );
      return (r.op.devices.M1 as MosRecord).id - 3e-12;
    };
    expect(c(125) / c(27)).toBeCloseTo(Math.pow(398.15 / 300.15, -1.5), 9);
  });

  it('lowers the threshold magnitude by TCV per kelvin, NMOS and PMOS alike, and leaves Tnom unchanged', () => {
    const vth = (kind: 'nmos' | 'pmos', t: number): number => {
      const s = kind === 'nmos' ? 1 : -1;
      const c = circuit(
        [
          ['V', 'VG', 'g', '0', s * 1.5],
          ['V', 'VD', 'd', '0', s * 3],
          ['M', 'M1', 'd', 'g', '0', '0', model('MT', kind, { KP: 1e-4, VTO: s * 0.7, TCV: 2e-3 })],
        ],
        { temperatureC: t },
      );
      return (solveOperatingPoint(c).op.devices.M1 as MosRecord).vth;
    };
    // Source: docs/DEVICE-MODELS.md, |VTO|(T) = |VTO| − TCV·ΔT (common practice: 1–3 mV/K).
    expect(vth('nmos', 27)).toBeCloseTo(0.7, 12);
    expect(vth('nmos', 127)).toBeCloseTo(0.5, 12);
    expect(vth('pmos', -73)).toBeCloseTo(-0.9, 12);
  });

  it('solves a diode-connected NMOS at 125 °C against an independent scalar Newton, to 1e-9', () => {
    const p = { KP: 120e-6, VTO: 0.55, LAMBDA: 0.04, BEX: -1.6, TCV: 1.5e-3 };
    const r = solveOperatingPoint(
      circuit(
        [
          ['V', 'VDD', 'vdd', '0', 3.3],
          ['R', 'R1', 'vdd', 'g', 20e3],
          ['M', 'M1', 'g', 'g', '0', '0', model('NR', 'nmos', p), { w: 8e-6, l: 2e-6 }],
        ],
        { temperatureC: 125 },
      ),
    );
    const beta = 120e-6 * 4 * Math.pow(398.15 / 300.15, -1.6);
    const vto = 0.55 - 1.5e-3 * 98;
    const vgs = newton1((v) => (3.3 - v) / 20e3 - ((beta / 2) * (v - vto) ** 2 * (1 + 0.04 * v) + 1e-12 * v), 1);
    const rec = r.op.devices.M1 as MosRecord;
    expect(Math.abs(rec.vgs - vgs)).toBeLessThanOrEqual(1e-9 * vgs);
  });

  it('an NMOS mirror output near the edge leaves saturation at 125 °C but not at −40 °C', () => {
    // Source: square law (Razavi, ch. 5): the output stays saturated while VDS ≥ VOV = √(2·IREF/β(T)); β falls
    // as T^BEX, so the overdrive grows with temperature and a fixed output voltage runs out of headroom when hot.
    const nm = model('NM', 'nmos', { KP: 100e-6, VTO: 0.6, LAMBDA: 0 });
    const at = (t: number): MosRecord => {
      const c = circuit(
        [
          ['I', 'IREF', '0', 'ref', 50e-6],
          ['M', 'M1', 'ref', 'ref', '0', '0', nm, { w: 10e-6, l: 1e-6 }],
          ['M', 'M2', 'out', 'ref', '0', '0', nm, { w: 10e-6, l: 1e-6 }],
          ['V', 'VOUT', 'out', '0', 0.34],
        ],
        { temperatureC: t },
      );
      return solveOperatingPoint(c).op.devices.M2 as MosRecord;
    };
    // VOV at 27 °C = √(2·50 µA/1 mA/V²) = 0.316 V; at 125 °C it is 0.316·(398.15/300.15)^0.75 = 0.39 V > 0.34 V.
    expect(at(27).region).toBe('saturation');
    expect(at(-40).region).toBe('saturation');
    expect(at(125).region).toBe('triode');
  });
});
