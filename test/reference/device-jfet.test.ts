// The JFET (Shichman–Hodges form with gate junctions and temperature terms, docs/DEVICE-MODELS.md) against its published closed forms, and its operating point against the same equations solved independently in the test.

import { describe, expect, it } from 'vitest';
import { evaluateJfetChannel, jfetTemperature } from '../../shared-analysis/src/devices/jfet';
import { solveOperatingPoint } from '../../shared-analysis/src/solve/dc';
import type { JfetRecord } from '../../shared-analysis/src/solve/types';
import { circuit, model } from '../unit/solve/build';

// Source: BIPM SI Brochure, 9th ed. (2019): k and q exact.
const K = 1.380649e-23;
const Q = 1.602176634e-19;
const vtAt = (c: number): number => (K * (c + 273.15)) / Q;
/** The 1 pS the solver places across every junction and channel (docs/DEVICE-MODELS.md, numerical guards). */
const GMIN = 1e-12;

/** 2-D Newton with a central-difference Jacobian, written for the test (not the engine's solver). */
function newton2(f: (x: number, y: number) => [number, number], x0: number, y0: number): [number, number] {
  let x = x0;
  let y = y0;
  for (let k = 0; k < 300; k++) {
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
    const big = Math.max(Math.abs(dx), Math.abs(dy));
    if (big > 0.1) {
      dx *= 0.1 / big;
      dy *= 0.1 / big;
    }
    x -= dx;
    y -= dy;
    if (big < 1e-15) break;
  }
  return [x, y];
}

/** The JFET channel of docs/DEVICE-MODELS.md written out again for the test (N-channel sense, VDS ≥ 0). */
function channel(vgs: number, vds: number, beta: number, vto: number, lambda: number): number {
  const vov = vgs - vto;
  if (vov <= 0) return 0;
  if (vds >= vov) return beta * vov * vov * (1 + lambda * vds);
  return beta * vds * (2 * vov - vds) * (1 + lambda * vds);
}

/** An N- or P-channel JFET held at VGS and VDS by ideal sources; its record. */
function biased(kind: 'njf' | 'pjf', vgs: number, vds: number, params: Record<string, number>, temperatureC = 27): JfetRecord {
  const r = solveOperatingPoint(
    circuit(
      [
        ['V', 'VG', 'g', '0', vgs],
        ['V', 'VD', 'd', '0', vds],
        ['J', 'J1', 'd', 'g', '0', model('JT', kind, params)],
      ],
      { temperatureC },
    ),
  );
  expect(r.op.converged).toBe(true);
  return r.op.devices.J1 as JfetRecord;
}

describe('JFET', () => {
  it('carries IDSS = BETA·VTO² at VGS = 0 in saturation', () => {
    // Source: Shichman–Hodges JFET form (H. Shichman and D. A. Hodges, IEEE JSSC 3, 1968): with the gate at the source,
    // ID = BETA·(0 − VTO)² — the drain saturation current IDSS of a data sheet. The 1 pS across the channel and each
    // junction and the reverse gate-drain current IS are added as the test's own small terms.
    const rec = biased('njf', 0, 10, { VTO: -2.5, BETA: 1.6e-3, LAMBDA: 0, IS: 1e-14 });
    const idss = 1.6e-3 * 2.5 ** 2;
    expect(rec.id).toBeCloseTo(idss + 1e-14 + 2 * GMIN * 10, 15);
    expect(rec.region).toBe('saturation');
    expect(rec.vto).toBe(-2.5);
  });

  it('follows the linear-region law below VDS = VGS − VTO, and is cut off at VGS ≤ VTO', () => {
    // Source: the same form; in the linear region ID = BETA·VDS·(2·(VGS − VTO) − VDS)·(1 + LAMBDA·VDS).
    const p = { beta: 1e-3, vto: -2, lambda: 0.02 };
    const lin = evaluateJfetChannel(-0.5, 0.4, p);
    expect(lin.region).toBe('linear');
    expect(lin.id).toBeCloseTo(1e-3 * 0.4 * (2 * 1.5 - 0.4) * (1 + 0.02 * 0.4), 15);
    // gm and gds are the exact partial derivatives (checked against a central difference written here).
    const h = 1e-6;
    expect(lin.gm).toBeCloseTo((channel(-0.5 + h, 0.4, 1e-3, -2, 0.02) - channel(-0.5 - h, 0.4, 1e-3, -2, 0.02)) / (2 * h), 9);
    expect(lin.gds).toBeCloseTo((channel(-0.5, 0.4 + h, 1e-3, -2, 0.02) - channel(-0.5, 0.4 - h, 1e-3, -2, 0.02)) / (2 * h), 9);
    const off = evaluateJfetChannel(-2.2, 5, p);
    expect(off.region).toBe('cutoff');
    expect(off.id).toBe(0);
  });

  it('mirrors every sign for a P-channel device', () => {
    const n = biased('njf', -0.8, 6, { VTO: -2, BETA: 1e-3, LAMBDA: 0.01 });
    const p = biased('pjf', 0.8, -6, { VTO: -2, BETA: 1e-3, LAMBDA: 0.01 });
    expect(p.id).toBeCloseTo(-n.id, 15);
    expect(p.region).toBe('saturation');
    expect(p.gm).toBeCloseTo(n.gm, 15);
  });

  it('moves VTO by VTOTC and BETA by 1.01^(BETATCE·ΔT)', () => {
    // Source: docs/DEVICE-MODELS.md temperature terms: VTO(T) = VTO + VTOTC·ΔT, BETA(T) = BETA·1.01^(BETATCE·ΔT).
    const params = { VTO: -2, BETA: 1e-3, LAMBDA: 0, IS: 0, VTOTC: -2.5e-3, BETATCE: -0.5 };
    for (const t of [-40, 27, 125]) {
      const rec = biased('njf', 0, 10, params, t);
      const dt = t - 27;
      const vto = -2 - 2.5e-3 * dt;
      const beta = 1e-3 * Math.pow(1.01, -0.5 * dt);
      expect(rec.vto).toBeCloseTo(vto, 12);
      expect((rec.id - 2 * GMIN * 10) / (beta * vto * vto)).toBeCloseTo(1, 9);
    }
    expect(jfetTemperature(-2, 1e-3, 1, 27, 27)).toEqual({ vto: -2, betaFactor: 1 });
  });

  it('solves a self-biased stage at 85 °C against an independent 2-D Newton, to 1e-9 relative', () => {
    // Drain resistor to 15 V, source resistor to ground, gate at ground: VGS = −VS. Unknowns VS and VD.
    const p = { VTO: -1.8, BETA: 2e-3, LAMBDA: 0.015, IS: 2e-14, N: 1.2, VTOTC: -2e-3, BETATCE: -0.4, XTI: 3, EG: 1.11 };
    const T = 85;
    const r = solveOperatingPoint(
      circuit(
        [
          ['V', 'VDD', 'vdd', '0', 15],
          ['R', 'RD', 'vdd', 'd', 3.3e3],
          ['J', 'J1', 'd', '0', 's', model('JS', 'njf', p)],
          ['R', 'RS', 's', '0', 470],
        ],
        { temperatureC: T },
      ),
    );
    expect(r.op.converged).toBe(true);
    const dt = T - 27;
    const vto = -1.8 - 2e-3 * dt;
    const beta = 2e-3 * Math.pow(1.01, -0.4 * dt);
    const tk = T + 273.15;
    const t0 = 300.15;
    // Source: docs/DEVICE-MODELS.md IS(T) = IS·(T/Tnom)^XTI·exp(EG·q/k·(1/Tnom − 1/T)).
    const is = 2e-14 * Math.pow(tk / t0, 3) * Math.exp(((1.11 * Q) / K) * (1 / t0 - 1 / tk));
    const nvt = 1.2 * vtAt(T);
    const junction = (v: number): number => is * (Math.exp(v / nvt) - 1) + GMIN * v;
    const [vs, vd] = newton2(
      (vs, vd) => {
        const vgs = -vs;
        const vds = vd - vs;
        const ich = channel(vgs, vds, beta, vto, 0.015) + GMIN * vds;
        // KCL at the source: channel in, gate-source junction in, RS out; at the drain: RD in, channel and gate-drain junction out.
        return [ich + junction(vgs) - vs / 470, (15 - vd) / 3.3e3 - ich + junction(-vd)];
      },
      1,
      8,
    );
    expect(Math.abs(r.op.nodes.s - vs)).toBeLessThanOrEqual(1e-9 * vs);
    expect(Math.abs(r.op.nodes.d - vd)).toBeLessThanOrEqual(1e-9 * vd);
    const rec = r.op.devices.J1 as JfetRecord;
    expect(rec.region).toBe('saturation');
  });
});
