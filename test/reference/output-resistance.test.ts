// Output resistance of mirror outputs against a finite difference of the solve: PNP outputs (the sign of
// VCB), saturated and triode outputs (the slope at the operating point, not the active-region ro) and the
// body effect of MOS cascodes and source-degenerated outputs.

import { describe, expect, it } from 'vitest';
import { resolveOptions } from '../../shared-analysis/src/analysis';
import { analyseStructures } from '../../shared-analysis/src/checks/structures';
import { DcSolver } from '../../shared-analysis/src/solve/dc';
import { recogniseStructures } from '../../shared-analysis/src/structures/recognise';
import { CircuitBuilder } from '../unit/structures/build';

function check(got: number, want: number, tol: number): void {
  expect(Number.isFinite(got)).toBe(true);
  expect(Math.abs(got - want)).toBeLessThanOrEqual(tol * Math.abs(want));
}

/**
 * The structure's output resistance at V(out) = vout and the solver's own ΔV/ΔI there (a central
 * difference over ±dv with the output node held by a source): the check value is computed from the
 * device law by the solver, independently of the small-signal formulas under test.
 */
function measure(build: (b: CircuitBuilder) => void, out: string, vout: number, dv: number) {
  const point = (v: number) => {
    const b = new CircuitBuilder().v('VO', 'out', '0', v);
    build(b);
    const c = b.build();
    const r = new DcSolver(c).solve({});
    expect(r.op.converged).toBe(true);
    const rec = r.op.devices[out];
    const i = rec.type === 'bjt' ? rec.ic : rec.type === 'mosfet' ? rec.id : 0;
    return { i: Math.abs(i), c, op: r.op };
  };
  const fd = (2 * dv) / Math.abs(point(vout + dv).i - point(vout - dv).i);
  const mid = point(vout);
  const structures = recogniseStructures(mid.c);
  analyseStructures({ circuit: mid.c, op: mid.op, structures, options: resolveOptions() });
  return { s: structures[0], fd, op: mid.op };
}

describe('PNP output resistance uses VEC, not its negative', () => {
  // Source: Gray, Hurst, Lewis, Meyer, 5th ed., ch. 1 — ro = (VA + VCE)/IC in the device's own polarity (from memory).
  const pnp = (b: CircuitBuilder) =>
    void b.v('VCC', 'vcc', '0', 10).model('qp', 'pnp', { IS: 1e-15, BF: 100, VAF: 50 }).r('RREF', 'ref', '0', 9.3e3).q('Q1', 'ref', 'ref', 'vcc', 'qp').q('Q2', 'out', 'ref', 'vcc', 'qp');

  it('simple PNP mirror with 6.7 V across the output: (VAF + VEC − VEB)/IC, checked against the solve', () => {
    const { s, fd, op } = measure(pnp, 'Q2', 3.3, 0.2);
    expect(s.kind).toBe('simple-mirror');
    const q2 = op.devices.Q2;
    if (q2.type !== 'bjt') throw new Error('Q2 is a BJT');
    // Own polarity VBC of a PNP is VC − VB = 3.3 − 9.3 ≈ −6 V: ro = (50 + 6)/IC.
    const vcbOwn = -(q2.vbc);
    check(q2.ro, (50 - vcbOwn) / Math.abs(q2.ic), 1e-6);
    check(s.outputResistance.Q2, fd, 0.03);
    // The sign error this guards against would give (50 − 6)/IC, about 21 % low.
    expect(s.outputResistance.Q2).toBeGreaterThan(((50 + 5) / Math.abs(q2.ic)) * 0.98);
  });

  it('PNP output with VEC beyond VAF is finite, not unbounded', () => {
    const { s, fd } = measure((b) => void pnp(b), 'Q2', -50, 0.5);
    expect(s.outputResistance.Q2).toBeLessThan(1e12);
    check(s.outputResistance.Q2, fd, 0.05);
  });
});

describe('saturated and triode outputs: the slope at the operating point', () => {
  it('a saturated NPN output shows its collector–emitter slope (hundreds of ohms), not VAF/IC', () => {
    // Source: the device law's own slope ∂IC/∂VCE in saturation (docs/DEVICE-MODELS.md), against the solver's ΔV/ΔI.
    const { s, fd, op } = measure(
      (b) => void b.v('VCC', 'vcc', '0', 5).model('qn', 'npn', { IS: 1e-15, BF: 100, VAF: 80 }).r('RREF', 'vcc', 'ref', 4.3e3).q('Q1', 'ref', 'ref', '0', 'qn').q('Q2', 'out', 'ref', '0', 'qn'),
      'Q2',
      0.12,
      0.005,
    );
    const q2 = op.devices.Q2;
    if (q2.type !== 'bjt') throw new Error('Q2 is a BJT');
    expect(q2.region).toBe('saturation');
    expect(s.outputResistance.Q2).toBeLessThan(2e3);
    check(s.outputResistance.Q2, fd, 0.05);
  });

  it('a triode NMOS output shows its channel resistance', () => {
    // Source: Razavi, ch. 2 — triode channel resistance 1/(∂ID/∂VDS) (from memory), against the solver's ΔV/ΔI.
    const { s, fd, op } = measure(
      (b) =>
        void b.v('VDD', 'vdd', '0', 5).model('nn', 'nmos', { KP: 1e-4, VTO: 0.5, LAMBDA: 0.05 }).r('RREF', 'vdd', 'a', 20e3).mos('M1', 'a', 'a', '0', '0', 'nn').mos('M2', 'out', 'a', '0', '0', 'nn'),
      'M2',
      0.1,
      0.005,
    );
    const m2 = op.devices.M2;
    if (m2.type !== 'mosfet') throw new Error('M2 is a MOSFET');
    expect(m2.region).toBe('triode');
    check(s.outputResistance.M2, fd, 0.05);
  });
});

describe('body effect in MOS cascode and source-degenerated outputs', () => {
  const model = { KP: 1e-4, VTO: 0.5, LAMBDA: 0.05, GAMMA: 0.5, PHI: 0.7 };

  it('cascode: ro4 + ro2 + (gm4 + gmb4)·ro4·ro2, against the solve', () => {
    // Source: Razavi, ch. 5, cascode output resistance with body effect (from memory).
    const { s, fd } = measure(
      (b) =>
        void b
          .v('VDD', 'vdd', '0', 9)
          .model('nn', 'nmos', model)
          .r('R1', 'vdd', 'a', 47e3)
          .mos('M1', 'b', 'b', '0', '0', 'nn')
          .mos('M2', 'c', 'b', '0', '0', 'nn')
          .mos('M3', 'a', 'a', 'b', '0', 'nn')
          .mos('M4', 'out', 'a', 'c', '0', 'nn'),
      'M4',
      5,
      0.2,
    );
    expect(s.kind).toBe('cascode-mirror');
    check(s.outputResistance.M4, fd, 0.1);
  });

  it('source-degenerated output: ro·(1 + (gm + gmb)·R2) + R2, against the solve', () => {
    // Source: Razavi, ch. 3, source degeneration with body effect (from memory).
    const { s, fd, op } = measure(
      (b) =>
        void b
          .v('VDD', 'vdd', '0', 9)
          .model('nn', 'nmos', model)
          .r('RREF', 'vdd', 'a', 8.2e3)
          .r('R1', 'e1', '0', 2e3)
          .r('R2', 'e2', '0', 2e3)
          .mos('M1', 'a', 'a', 'e1', '0', 'nn')
          .mos('M2', 'out', 'a', 'e2', '0', 'nn'),
      'M2',
      5,
      0.2,
    );
    expect(s.kind).toBe('degenerated-mirror');
    const m2 = op.devices.M2;
    if (m2.type !== 'mosfet') throw new Error('M2 is a MOSFET');
    expect(m2.gmbs).toBeGreaterThan(0.1 * m2.gm);
    check(s.outputResistance.M2, fd, 0.05);
    // Without the body term the estimate would be low by about gmb·ro·R2.
    const withoutBody = m2.ro * (1 + m2.gm * 2e3) + 2e3;
    expect(s.outputResistance.M2).toBeGreaterThan(withoutBody * 1.05);
  });
});
