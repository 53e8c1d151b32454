// The degenerated mirror (emitter/source resistors on reference and outputs) against its published equation, a Lambert-W closed form and the DC solver.

import { describe, expect, it } from 'vitest';
import { resolveOptions } from '../../shared-analysis/src/analysis';
import type { Circuit } from '../../shared-analysis/src/circuit';
import { analyseStructures } from '../../shared-analysis/src/checks/structures';
import { DcSolver } from '../../shared-analysis/src/solve/dc';
import { degeneratedOutput, degeneratedRo, degeneratedRoWithBase, thermalVolts } from '../../shared-analysis/src/structures/formulas';
import { recogniseStructures } from '../../shared-analysis/src/structures/recognise';
import type { Structure, Technology } from '../../shared-analysis/src/structures/types';
import { CircuitBuilder } from '../unit/structures/build';
import { fixture, type FixtureOptions } from '../unit/structures/fixtures';

/** Relative comparison helper: |got − want| ≤ tol·|want|. */
function check(got: number, want: number, tol: number): void {
  expect(Number.isFinite(got)).toBe(true);
  expect(Math.abs(got - want)).toBeLessThanOrEqual(tol * Math.abs(want));
}

/** Lambert W (principal branch) by Halley iteration, written here independently of the engine. */
function lambertW(z: number): number {
  let w = Math.log(1 + z);
  for (let n = 0; n < 200; n++) {
    const ew = Math.exp(w);
    const f = w * ew - z;
    const next = w - f / (ew * (w + 1) - ((w + 2) * f) / (2 * w + 2));
    if (Math.abs(next - w) < 1e-15 * Math.max(1, Math.abs(w))) return next;
    w = next;
  }
  return w;
}

/** Solves the circuit, recognises and analyses its structures; returns the degenerated mirror. */
function solvedMirror(circuit: Circuit): Structure {
  const r = new DcSolver(circuit).solve({});
  expect(r.op.converged).toBe(true);
  const structures = recogniseStructures(circuit);
  analyseStructures({ circuit, op: r.op, structures, options: resolveOptions() });
  const s = structures.find((x) => x.kind === 'degenerated-mirror');
  expect(s).toBeDefined();
  return s!;
}

const TECHS: Technology[] = ['npn', 'pnp', 'nmos', 'pmos'];

describe('degenerated-mirror equation (Gray, Hurst, Lewis, Meyer, 5th ed., ch. 4, emitter degeneration)', () => {
  it('degeneratedOutput solves NF·VT·ln(IC/IS) + IC·R = V, equal to the Lambert-W closed form', () => {
    // Source: the junction law VBE = VT·ln(IC/IS) (Gray et al., ch. 1) with IC·R; closed form IC = (VT/R)·W((IS·R/VT)·exp(V/VT))
    // (Corless, Gonnet, Hare, Jeffrey, Knuth, "On the Lambert W function", Adv. Comput. Math. 5, 1996).
    const vt = thermalVolts(27);
    for (const [v, r, is] of [
      [1.5, 1e3, 1e-15],
      [0.9, 200, 1e-16],
      [3, 10e3, 1e-14],
    ]) {
      const i = degeneratedOutput({ v, isEff: is, nVt: vt, r });
      check(i, (vt / r) * lambertW(((is * r) / vt) * Math.exp(v / vt)), 1e-9);
    }
  });

  it('k = (β + 1)/β puts the base current into the emitter resistor', () => {
    // Source: IE = IC·(β + 1)/β (Gray et al., ch. 1); the drop is IE·R.
    const vt = thermalVolts(27);
    const i = degeneratedOutput({ v: 1.4, isEff: 1e-15, nVt: vt, r: 1e3, k: 1.01 });
    expect(Math.abs(vt * Math.log(i / 1e-15 + 1) + i * 1.01 * 1e3 - 1.4)).toBeLessThan(1e-12);
  });

  it('the extremes: a few nanovolts (junction alone, linear) and 20 V (resistor takes nearly all)', () => {
    // Source: ln(1 + x) ≈ x for small x (series expansion), so IC ≈ IS·V/(NF·VT) when V ≪ VT; for V ≫ VBE,
    // IC = (V − VBE)/(k·R) with VBE from the junction law (Gray et al., ch. 1).
    const vt = thermalVolts(27);
    const tiny = degeneratedOutput({ v: 3e-8, isEff: 1e-15, nVt: vt, r: 1e3, k: 1.01 });
    check(tiny, (1e-15 * 3e-8) / vt, 1e-5);
    const big = degeneratedOutput({ v: 20, isEff: 1e-15, nVt: vt, r: 1e3, k: 1.01 });
    check(big, (20 - vt * Math.log(big / 1e-15)) / (1.01 * 1e3), 1e-12);
    expect(big).toBeLessThan(20 / 1.01e3);
  });

  it('degenerate inputs give a finite current: no drop, zero resistance, zero IS', () => {
    // Source: (common practice) a solver helper returns a finite value for every input; V ≤ 0 gives no current.
    const vt = thermalVolts(27);
    expect(degeneratedOutput({ v: -1, isEff: 1e-15, nVt: vt, r: 1e3 })).toBe(0);
    expect(degeneratedOutput({ v: 1, isEff: 0, nVt: vt, r: 1e3 })).toBe(0);
    const noR = degeneratedOutput({ v: 0.6, isEff: 1e-15, nVt: vt, r: 0 });
    check(noR, 1e-15 * Math.expm1(0.6 / vt), 1e-12);
  });
});

describe('estimate against the DC solver, every polarity', () => {
  const cases: { name: string; o: FixtureOptions }[] = [
    { name: 'R1 = R2 = 1 kΩ', o: { r1: 1e3, r2: 1e3 } },
    { name: 'R1/R2 = 2 (2 kΩ/1 kΩ), 9 V', o: { r1: 2e3, r2: 1e3, supply: 9 } },
    { name: 'R1/R2 = 0.5, small drops (100 Ω/200 Ω)', o: { r1: 100, r2: 200 } },
  ];
  for (const tech of TECHS) {
    const bip = tech === 'npn' || tech === 'pnp';
    for (const c of cases) {
      it(`${tech}, ${c.name}: IREF and IOUT within 0.5 %`, () => {
        // Source: VBE1 + IE1·R1 = VBE2 + IE2·R2 with finite beta (Gray et al., ch. 4) / VGS1 + ID1·R1 = VGS2 + ID2·R2 (Razavi, ch. 5),
        // against the full DC solve of the same device equations.
        const s = solvedMirror(fixture('degenerated-mirror', tech, c.o).circuit);
        check(s.estimate!.iref, s.solved!.iref, 0.005);
        check(s.estimate!.iout.Q2, s.solved!.iout.Q2, 0.005);
        expect(s.discrepancy).toBeUndefined();
      });
    }
    it(`${tech}, VAF = 50 V / λ = 0.05 /V, area or W/L ratio 2, at 85 °C: within 0.5 %`, () => {
      // Source: as above, with the Early / channel-length correction of the output (Gray et al., ch. 4; Razavi, ch. 5).
      const { circuit } = fixture('degenerated-mirror', tech, {
        r1: 2e3,
        r2: 1e3,
        supply: 9,
        temperatureC: 85,
        model: bip ? { VAF: 50 } : { LAMBDA: 0.05 },
      });
      const q2 = circuit.elements.find((e) => e.name === 'Q2')!;
      if (q2.kind === 'Q') q2.area = 2;
      if (q2.kind === 'M') q2.w *= 2;
      const s = solvedMirror(circuit);
      expect(s.outputs[0].ratio).toBeCloseTo(2, 12);
      check(s.estimate!.iref, s.solved!.iref, 0.005);
      check(s.estimate!.iout.Q2, s.solved!.iout.Q2, 0.005);
    });
  }
});

describe('the resistors set the ratio: IOUT/IREF → R1/R2 at large drops (Gray et al., ch. 4)', () => {
  /** IOUT/IREF of a degenerated NPN mirror with R1 = 2·R2 at a given reference current (set by the feed resistor). */
  const ratioAt = (rRef: number, r1: number, bf: number) => {
    const s = solvedMirror(fixture('degenerated-mirror', 'npn', { supply: 15, rRef, r1, r2: r1 / 2, rLoad: 100, model: { BF: bf } }).circuit);
    return { solved: s.solved!.iout.Q2 / s.solved!.iref, estimate: s.estimate!.iout.Q2 / s.estimate!.iref, drop: s.solved!.iref * r1 };
  };

  it('R1/R2 = 2 with near-infinite beta: about 2:1, closer as the drop grows', () => {
    // Source: Gray et al., ch. 4 — IOUT/IREF ≈ R1/R2 once IREF·R1 ≫ VT; the residual error is VT·ln(IOUT/IREF)/(IOUT·R2), which falls with the drop.
    const points = [100e3, 20e3, 5e3].map((rRef) => ratioAt(rRef, 2e3, 1e6));
    expect(points[0].drop).toBeLessThan(points[2].drop);
    const errs = points.map((p) => Math.abs(p.solved - 2));
    expect(errs[1]).toBeLessThan(errs[0]);
    expect(errs[2]).toBeLessThan(errs[1]);
    // At IREF·R1 ≈ 4.6 V: VT·ln 2/(IOUT·R2) ≈ 0.018/4.6 ≈ 0.4 %.
    expect(points[2].drop).toBeGreaterThan(4);
    check(points[2].solved, 2, 0.01);
    for (const p of points) check(p.estimate, p.solved, 0.002);
  });

  it('with beta = 100 the base currents take a few percent off the 2:1', () => {
    // Source: IREF = IC1·(1 + 1/β) + IC2/β (KCL at the base node, Gray et al., ch. 4): IOUT/IREF ≈ 2/(1 + 3/β) for R1/R2 = 2 at large drops.
    const p = ratioAt(5e3, 2e3, 100);
    check(p.solved, 2 / (1 + 3 / 100), 0.01);
    check(p.estimate, p.solved, 0.002);
  });

  it('NMOS with R1/R2 = 2 and drops well above the overdrive: about 2:1', () => {
    // Source: Razavi, ch. 5 — with source degeneration ID2/ID1 → R1/R2 when ID·R ≫ VGS − VTH.
    const b = new CircuitBuilder()
      .v('VDD', 'vdd', '0', 15)
      .model('nch', 'nmos', { KP: 2e-3, VTO: 0.5 })
      .r('RREF', 'vdd', 'a', 15e3)
      .mos('M1', 'a', 'a', 's1', '0', 'nch', { w: 10, l: 1 })
      .r('R1', 's1', '0', 10e3)
      .mos('M2', 'd', 'a', 's2', '0', 'nch', { w: 10, l: 1 })
      .r('R2', 's2', '0', 5e3)
      .r('RL', 'vdd', 'd', 1e3);
    const s = solvedMirror(b.build());
    const ratio = s.solved!.iout.M2 / s.solved!.iref;
    expect(s.solved!.iref * 10e3).toBeGreaterThan(4);
    check(ratio, 2, 0.03);
    check(s.estimate!.iout.M2, s.solved!.iout.M2, 0.005);
  });
});

describe('output resistance of a degenerated output', () => {
  it('RB = 0 reduces to ro·(1 + gm·(R2∥rπ)) + R2∥rπ; a MOSFET gives ro·(1 + gm·R2) + R2', () => {
    // Source: Gray et al., ch. 3 (emitter degeneration, from memory); Razavi, ch. 3 (source degeneration, from memory).
    check(degeneratedRoWithBase(80e3, 0.04, 1e3, 2.5e3, 0), degeneratedRo(80e3, 0.04, 1e3, 2.5e3), 1e-12);
    check(degeneratedRoWithBase(50e3, 2e-3, 2e3, Infinity, 5e3), 50e3 * (1 + 2e-3 * 2e3) + 2e3, 1e-12);
    // A larger base-side resistance lets the base follow the emitter and lowers Rout.
    expect(degeneratedRoWithBase(80e3, 0.04, 1e3, 2.5e3, 3e3)).toBeLessThan(degeneratedRoWithBase(80e3, 0.04, 1e3, 2.5e3, 0));
  });

  for (const k of [
    { name: 'NPN', tech: 'npn' as const, tol: 0.1 },
    { name: 'NMOS', tech: 'nmos' as const, tol: 0.05 },
  ]) {
    it(`${k.name}: against a finite difference of the solve`, () => {
      // Source: Gray et al., ch. 3 / Razavi, ch. 3 as above; the check value is the solver's ΔV/ΔI from the device law.
      const point = (vout: number) => {
        const b = new CircuitBuilder()
          .v('VCC', 'vcc', '0', 9)
          .v('VO', 'out', '0', vout)
          .model('qn', 'npn', { VAF: 60 })
          .model('nn', 'nmos', { KP: 1e-3, VTO: 0.5, LAMBDA: 0.05 })
          .r('RREF', 'vcc', 'a', 8.2e3)
          .r('R1', 'e1', '0', 1e3)
          .r('R2', 'e2', '0', 1e3);
        if (k.tech === 'npn') b.q('Q1', 'a', 'a', 'e1', 'qn').q('Q2', 'out', 'a', 'e2', 'qn');
        else b.mos('Q1', 'a', 'a', 'e1', '0', 'nn').mos('Q2', 'out', 'a', 'e2', '0', 'nn');
        const c = b.build();
        const r = new DcSolver(c).solve({});
        const rec = r.op.devices.Q2;
        const i = rec.type === 'bjt' ? rec.ic : rec.type === 'mosfet' ? rec.id : 0;
        return { i: Math.abs(i), c, op: r.op };
      };
      const fd = 0.4 / (point(5.2).i - point(4.8).i);
      const mid = point(5);
      const structures = recogniseStructures(mid.c);
      analyseStructures({ circuit: mid.c, op: mid.op, structures, options: resolveOptions() });
      expect(structures[0].kind).toBe('degenerated-mirror');
      check(structures[0].outputResistance.Q2, fd, k.tol);
    });
  }
});

describe('the 0.7 V shortcut of a degenerated reference', () => {
  it('(V+ − V− − 0.7 V)/(R + R1), within about 5 % of the solved IREF at 9 V', () => {
    // Source: VBE ≈ 0.7 V (common practice; Horowitz and Hill, 3rd ed., ch. 2), the feed and R1 then in series.
    const s = solvedMirror(fixture('degenerated-mirror', 'npn', { supply: 9, rRef: 4.3e3, r1: 1e3, r2: 1e3 }).circuit);
    check(s.estimate!.irefShortcut!, (9 - 0.7) / (4.3e3 + 1e3), 1e-12);
    check(s.estimate!.irefShortcut!, s.solved!.iref, 0.05);
  });
});
