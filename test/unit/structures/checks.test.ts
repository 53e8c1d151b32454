// Every structure finding code on a small invented circuit, with its span, related devices and the numbers it carries.

import { describe, expect, it } from 'vitest';
import { resolveOptions } from '../../../shared-analysis/src/analysis';
import type { Circuit } from '../../../shared-analysis/src/circuit';
import { analyseStructures, measureStructure, STRUCTURE_CODES } from '../../../shared-analysis/src/checks/structures';
import { DcSolver } from '../../../shared-analysis/src/solve/dc';
import type { OperatingPoint } from '../../../shared-analysis/src/solve/types';
import { recogniseStructures } from '../../../shared-analysis/src/structures/recognise';
import type { Structure } from '../../../shared-analysis/src/structures/types';
import type { Finding } from '../../../shared-analysis/src/types';
import { CircuitBuilder } from './build';
import { fixture } from './fixtures';

interface ExpectedFinding {
  code: string;
  /** Element whose card the finding must point at. */
  at: string;
  /** Substrings the message must contain. */
  says?: (string | RegExp)[];
  /** Elements the related locations must cover. */
  related?: string[];
}

/** The one entry point: solve, recognise, analyse; compare the findings by code, span and message. */
function check(
  b: CircuitBuilder,
  expected: ExpectedFinding[],
  opts: { solve?: boolean; margin?: number } = {},
): { findings: Finding[]; structures: Structure[]; op?: OperatingPoint; circuit: Circuit } {
  const circuit = b.build();
  const op = opts.solve === false ? undefined : new DcSolver(circuit).solve({}).op;
  if (op) expect(op.converged).toBe(true);
  const structures = recogniseStructures(circuit);
  const findings = analyseStructures({ circuit, op, structures, options: resolveOptions({ headroomMarginV: opts.margin }) });
  expect(findings.map((f) => f.code).sort()).toEqual(expected.map((e) => e.code).sort());
  for (const e of expected) {
    const f = findings.find((x) => x.code === e.code && x.span.start === b.spanOf(e.at).start);
    expect(f, `${e.code} at ${e.at}`).toBeDefined();
    expect(f!.uri).toBe('test.cir');
    expect(f!.severity).toBe(STRUCTURE_CODES[e.code].severity);
    for (const s of e.says ?? []) expect(f!.message).toMatch(s);
    for (const r of e.related ?? []) expect(f!.related?.some((x) => x.span.start === b.spanOf(r).start), `related ${r}`).toBe(true);
    expect(JSON.stringify(f!.data)).not.toMatch(/NaN|Infinity|null/);
    expect(f!.message).not.toMatch(/NaN|undefined/);
  }
  return { findings, structures, op, circuit };
}

function npnMirror(rLoad: number, supply = 5): CircuitBuilder {
  return new CircuitBuilder()
    .v('VCC', 'vcc', '0', supply)
    .model('qn', 'npn')
    .r('RREF', 'vcc', 'a', 4.3e3)
    .q('Q1', 'a', 'a', '0', 'qn')
    .q('Q2', 'out', 'a', '0', 'qn')
    .r('RL', 'vcc', 'out', rLoad);
}

describe('a healthy mirror raises nothing', () => {
  it('simple NPN mirror with a light load', () => {
    const { structures } = check(npnMirror(1e3), []);
    const s = structures[0];
    // Compliance starts at the output's base (VBC = 0, docs/DEVICE-MODELS.md) and reaches the top rail.
    expect(s.compliance.Q2.min).toBeCloseTo(s.estimate!.vControl, 6);
    expect(s.compliance.Q2.max).toBe(5);
    expect(s.outputResistance.Q2).toBe(1e30);
    expect(s.headroom.Q2).toBeGreaterThan(3);
  });
});

describe('mirror-output-out-of-region', () => {
  it('a large load resistor drives the NPN output into saturation', () => {
    const { findings, op, structures } = check(npnMirror(10e3), [
      {
        code: 'mirror-output-out-of-region',
        at: 'Q2',
        says: [/saturated/, /VBC = \+0\.\d+ V/, /past the forward-active edge/, /Keep V\(out\) ≥ 1\.0\d+ V \(the edge at 0\.7\d+ V plus the 0\.3 V margin\)/, /RL ≤ 4\.\d+ kΩ at 96\d µA/, /−\d+ %/],
        related: ['Q1', 'RREF'],
      },
      { code: 'estimate-differs-from-solved', at: 'Q2', says: [/Q2 is out of its active region/] },
    ]);
    const f = findings.find((x) => x.code === 'mirror-output-out-of-region')!;
    const d = f.data as Record<string, number>;
    // The numbers come straight from the operating point: the edge is the base voltage, the overshoot VBC.
    expect(d.edgeV).toBeCloseTo(op!.nodes.a, 9);
    expect(d.pastEdgeV).toBeCloseTo(op!.nodes.a - op!.nodes.out, 9);
    expect(d.activeA).toBeCloseTo(structures[0].estimate!.iout.Q2, 15);
    // Source: Ohm's law on the load — the largest RL that keeps V(out) the margin beyond the edge carries the active current.
    expect(d.maxLoadOhms).toBeCloseTo((5 - d.edgeV - 0.3) / d.activeA, 6);
    expect(d.solvedA).toBeLessThan(d.activeA);
    expect(d.currentError).toBeCloseTo((d.solvedA - d.activeA) / d.activeA, 12);
    // Applying the advice (RL just under the limit) brings the output back.
    const fixed = new DcSolver(npnMirror(d.maxLoadOhms * 0.97).build()).solve({}).op;
    expect(fixed.devices.Q2.type === 'bjt' && fixed.devices.Q2.region).toBe('forward-active');
  });

  it('a PNP output saturates towards ground and the advice points down', () => {
    const b = new CircuitBuilder()
      .v('VCC', 'vcc', '0', 5)
      .model('qp', 'pnp')
      .r('RREF', 'a', '0', 4.3e3)
      .q('Q1', 'a', 'a', 'vcc', 'qp')
      .q('Q2', 'out', 'a', 'vcc', 'qp')
      .r('RL', 'out', '0', 10e3);
    check(b, [
      { code: 'mirror-output-out-of-region', at: 'Q2', says: [/VCB = \+0\.\d+ V/, /Keep V\(out\) ≤ 3\.9\d V \(the edge at 4\.2\d V plus the 0\.3 V margin\)/, /RL ≤ 4\.\d+ kΩ/] },
      { code: 'estimate-differs-from-solved', at: 'Q2' },
    ]);
  });

  it('an NMOS output in triode', () => {
    const b = new CircuitBuilder()
      .v('VDD', 'vdd', '0', 3.3)
      .model('nch', 'nmos', { KP: 1e-4, VTO: 0.5 })
      .i('IB', 'vdd', 'g', 50e-6)
      .mos('M1', 'g', 'g', '0', '0', 'nch', { w: 1e-6, l: 1e-6 })
      .mos('M2', 'd', 'g', '0', '0', 'nch', { w: 1e-6, l: 1e-6 })
      .r('RL', 'vdd', 'd', 100e3);
    const { findings, op } = check(b, [
      { code: 'mirror-output-out-of-region', at: 'M2', says: [/triode/, /VDS is 0\.\d+ V below the overdrive VGS − VTH = 1 V/, /Keep V\(d\) ≥ 1\.3 V \(the edge at 1 V plus the 0\.3 V margin\)/, /RL ≤ 40 kΩ at 50 µA/] },
      { code: 'estimate-differs-from-solved', at: 'M2' },
    ]);
    const d = findings.find((f) => f.code === 'mirror-output-out-of-region')!.data as Record<string, number>;
    // Source: square law, VOV = sqrt(2·ID/(KP·W/L)) = sqrt(2 × 50 µA / 100 µA/V²) = 1 V, so the edge is V(g) − VTH = 1 V.
    expect(d.edgeV).toBeCloseTo(1, 6);
    expect(d.edgeV).toBeCloseTo(op!.nodes.g - 0.5, 6);
    expect(d.maxLoadOhms).toBeCloseTo((3.3 - 1 - 0.3) / 50e-6, 3);
  });
});

describe('mirror-output-out-of-region: cut off', () => {
  it('an output whose threshold is above the reference VGS is cut off, and no load advice is given', () => {
    const b = new CircuitBuilder()
      .v('VDD', 'vdd', '0', 3.3)
      .model('na', 'nmos', { KP: 1e-4, VTO: 0.5 })
      .model('nb', 'nmos', { KP: 1e-4, VTO: 2 })
      .i('IB', 'vdd', 'g', 50e-6)
      .mos('M1', 'g', 'g', '0', '0', 'na', { w: 1e-6, l: 1e-6 })
      .mos('M2', 'd', 'g', '0', '0', 'nb', { w: 1e-6, l: 1e-6 })
      .r('RL', 'vdd', 'd', 10e3);
    const { findings } = check(b, [
      { code: 'mirror-unmatched', at: 'M2', says: [/VTO \(2 vs 0\.5\)/, /−100 %/] },
      { code: 'mirror-output-out-of-region', at: 'M2', says: [/is cut off at the operating point \(VGS = 1\.5 V\)/] },
      // An off device is not "out of its active region" (no region on noise): it carries nothing.
      { code: 'estimate-differs-from-solved', at: 'M2', says: [/M2 carries no current at the operating point/] },
    ]);
    const f = findings.find((x) => x.code === 'mirror-output-out-of-region')!;
    expect(f.message).not.toMatch(/Keep V/);
    expect((f.data as Record<string, unknown>).region).toBe('cutoff');
  });
});

describe('mirror-headroom-low', () => {
  it('an output 0.1–0.3 V above its edge warns, with the margin from the options', () => {
    const { findings, structures } = check(npnMirror(4.2e3), [{ code: 'mirror-headroom-low', at: 'Q2', says: [/0\.\d+ V of headroom, under the 0\.3 V margin/, /stricter than the textbook VCE\(sat\)/] }]);
    const d = findings[0].data as Record<string, number>;
    expect(d.headroomV).toBeCloseTo(structures[0].headroom.Q2, 12);
    expect(d.headroomV).toBeGreaterThan(0);
    expect(d.headroomV).toBeLessThan(0.3);
    // A smaller margin silences it.
    check(npnMirror(4.2e3), [], { margin: 0.05 });
  });
});

describe('reference-unfed', () => {
  // Kirchhoff's current law (fact of the trade): with nothing but the mirror's own devices on the reference node, the
  // current into the diode-connected reference is zero; only the solver's junction conductances leak a few pA.
  it('a mirror whose reference resistor is missing: error on the reference device, and no estimate discrepancy', () => {
    const b = new CircuitBuilder()
      .v('VCC', 'vcc', '0', 5)
      .model('qn', 'npn')
      .q('Q1', 'a', 'a', '0', 'qn')
      .q('Q2', 'out', 'a', '0', 'qn')
      .r('RL', 'vcc', 'out', 1e3);
    const { findings, structures } = check(b, [
      { code: 'reference-unfed', at: 'Q1', says: [/^Nothing feeds the reference node a of the simple current mirror on Q1/, /IREF is ≈ 0 A/, /a resistor or a current source/], related: ['Q2'] },
    ]);
    expect(findings[0]!.data).toMatchObject({ referenceDevice: 'Q1', node: 'a' });
    // Leakage only: far below any bias current, and the hand analysis (zero) is not reported as disagreeing with it.
    expect(Math.abs(structures[0]!.solved!.iout['Q2']!)).toBeLessThan(1e-9);
    expect(structures[0]!.discrepancy).toBeUndefined();
  });

  it('a misspelt node on the reference resistor leaves the reference unfed too', () => {
    const b = new CircuitBuilder()
      .v('VCC', 'vcc', '0', 5)
      .model('qn', 'npn')
      .r('RREF', 'vcc', 'aa', 4.3e3)
      .q('Q1', 'a', 'a', '0', 'qn')
      .q('Q2', 'out', 'a', '0', 'qn')
      .r('RL', 'vcc', 'out', 1e3);
    check(b, [{ code: 'reference-unfed', at: 'Q1', says: [/reference node a /, /misspelt/] }]);
  });

  it('a PMOS mirror with nothing on its reference node', () => {
    const b = new CircuitBuilder()
      .v('VDD', 'vdd', '0', 3.3)
      .model('pch', 'pmos', { KP: 5e-5, VTO: -0.6 })
      .mos('M1', 'g', 'g', 'vdd', 'vdd', 'pch')
      .mos('M2', 'd', 'g', 'vdd', 'vdd', 'pch')
      .r('RL', 'd', '0', 5e3);
    check(b, [{ code: 'reference-unfed', at: 'M1', says: [/reference node g of the simple current mirror on M1/] }]);
  });

  it('a reference fed by two resistors in parallel is fed (no single feed, but current flows in)', () => {
    const b = new CircuitBuilder()
      .v('VCC', 'vcc', '0', 5)
      .model('qn', 'npn')
      .r('RA', 'vcc', 'a', 8.6e3)
      .r('RB', 'vcc', 'a', 8.6e3)
      .q('Q1', 'a', 'a', '0', 'qn')
      .q('Q2', 'out', 'a', '0', 'qn')
      .r('RL', 'vcc', 'out', 1e3);
    const { findings } = check(b, [], {});
    expect(findings.some((f) => f.code === 'reference-unfed')).toBe(false);
  });

  it('without a solved point nothing is said', () => {
    const b = new CircuitBuilder()
      .v('VCC', 'vcc', '0', 5)
      .model('qn', 'npn')
      .q('Q1', 'a', 'a', '0', 'qn')
      .q('Q2', 'out', 'a', '0', 'qn')
      .r('RL', 'vcc', 'out', 1e3);
    check(b, [], { solve: false });
  });
});

describe('reference-starved', () => {
  it('a 0.5 V supply cannot forward-bias one VBE: error on the reference resistor', () => {
    const { findings } = check(
      npnMirror(1e3, 0.5),
      [{ code: 'reference-starved', at: 'RREF', says: [/0\.5 V across RREF/, /below the 0\.6 V that one VBE needs/], related: ['Q1', 'Q2'] }],
      { solve: false },
    );
    expect((findings[0].data as Record<string, number>).availableV).toBeCloseTo(0.5, 12);
  });

  it('a cascode reference needs two VBEs', () => {
    const { circuit } = fixture('cascode-mirror', 'npn', { supply: 1.1 });
    const structures = recogniseStructures(circuit);
    const f = analyseStructures({ circuit, structures, options: resolveOptions() });
    expect(f.map((x) => x.code)).toEqual(['reference-starved']);
    expect(f[0].message).toMatch(/1\.2 V that 2 stacked VBEs need/);
  });

  it('an NMOS reference below its threshold carries nothing', () => {
    const b = new CircuitBuilder()
      .v('VDD', 'vdd', '0', 0.4)
      .model('nch', 'nmos', { KP: 1e-4, VTO: 0.5 })
      .r('RREF', 'vdd', 'g', 10e3)
      .mos('M1', 'g', 'g', '0', '0', 'nch')
      .mos('M2', 'd', 'g', '0', '0', 'nch');
    const { structures } = check(b, [{ code: 'reference-starved', at: 'RREF', says: [/one VTH needs/] }], { solve: false });
    expect(structures[0].estimate!.iref).toBe(0);
  });

  it('a current source pointing the wrong way', () => {
    const b = new CircuitBuilder()
      .v('VCC', 'vcc', '0', 5)
      .model('qn', 'npn')
      .i('IREF', 'a', 'vcc', 100e-6)
      .q('Q1', 'a', 'a', '0', 'qn')
      .q('Q2', 'out', 'a', '0', 'qn');
    check(b, [{ code: 'reference-starved', at: 'IREF', says: [/wrong way/] }], { solve: false });
  });
});

describe('mirror-unmatched', () => {
  it('an output with twice the IS and a lower BF: about +100 % ratio error, model names in the data', () => {
    const b = new CircuitBuilder()
      .v('VCC', 'vcc', '0', 5)
      .model('qa', 'npn')
      .model('qb', 'npn', { IS: 2e-16, BF: 90 })
      .r('RREF', 'vcc', 'a', 4.3e3)
      .q('Q1', 'a', 'a', '0', 'qa')
      .q('Q2', 'out', 'a', '0', 'qb')
      .r('RL', 'vcc', 'out', 1e3);
    const { findings, structures } = check(b, [
      { code: 'mirror-unmatched', at: 'Q2', says: [/model qb while the reference Q1 uses qa/, /IS \(2e-16 vs 1e-16\), BF \(90 vs 100\)/, /\+\d+ %/], related: ['Q1'] },
      { code: 'estimate-differs-from-solved', at: 'Q2', says: [/unmatched devices/] },
    ]);
    const d = findings.find((f) => f.code === 'mirror-unmatched')!.data as Record<string, unknown>;
    expect(d.models).toEqual(['qa', 'qb']);
    expect(d.differing).toEqual(['IS', 'BF']);
    // Source: junction law — at equal VBE, IC scales with IS (×2); the base currents with 1/BF move it by well under 1 %.
    expect(d.ratioErrorPercent as number).toBeGreaterThan(99);
    expect(d.ratioErrorPercent as number).toBeLessThan(101);
    const s = structures[0];
    expect(s.solved!.iout.Q2 / s.estimate!.iout.Q2).toBeGreaterThan(1.95);
    expect(s.solved!.iout.Q2 / s.estimate!.iout.Q2).toBeLessThan(2.0);
  });

  it('an output whose model differs only in IS is an intended ratio, not a mismatch', () => {
    const b = new CircuitBuilder()
      .v('VCC', 'vcc', '0', 5)
      .model('qa', 'npn')
      .model('qb', 'npn', { IS: 2e-16 })
      .r('RREF', 'vcc', 'a', 4.3e3)
      .q('Q1', 'a', 'a', '0', 'qa')
      .q('Q2', 'out', 'a', '0', 'qb')
      .r('RL', 'vcc', 'out', 1e3);
    const { findings } = check(b, [
      { code: 'mirror-ratio', at: 'Q2', says: [/1:2 output/, /only in IS \(2e-16 vs 1e-16\), read as an intended ratio of 2/] },
    ]);
    expect((findings.find((f) => f.code === 'mirror-ratio')!.data as Record<string, number>).isRatio).toBeCloseTo(2, 12);
    // The estimate carries the ratio (at one VBE, IC scales with IS: the transport model), so it agrees with the solve.
    const s = recogniseStructures(b.build())[0];
    expect(s.outputs[0].ratio).toBeCloseTo(2, 12);
    expect(s.outputs[0].isRatio).toBeCloseTo(2, 12);
  });

  it('two models with the same parameters are not a mismatch', () => {
    const b = new CircuitBuilder()
      .v('VCC', 'vcc', '0', 5)
      .model('qa', 'npn', { BF: 150 })
      .model('qb', 'npn', { BF: 150 })
      .r('RREF', 'vcc', 'a', 4.3e3)
      .q('Q1', 'a', 'a', '0', 'qa')
      .q('Q2', 'out', 'a', '0', 'qb')
      .r('RL', 'vcc', 'out', 1e3);
    check(b, []);
  });

  it('a 20 mV VTO difference on an NMOS mirror: ≈ 2·ΔVTH/VOV', () => {
    const b = new CircuitBuilder()
      .v('VDD', 'vdd', '0', 3.3)
      .model('na', 'nmos', { KP: 1e-4, VTO: 0.5 })
      .model('nb', 'nmos', { KP: 1e-4, VTO: 0.52 })
      .i('IB', 'vdd', 'g', 50e-6)
      .mos('M1', 'g', 'g', '0', '0', 'na', { w: 1e-6, l: 1e-6 })
      .mos('M2', 'd', 'g', '0', '0', 'nb', { w: 1e-6, l: 1e-6 })
      .r('RL', 'vdd', 'd', 10e3);
    const { findings } = check(b, [
      { code: 'mirror-unmatched', at: 'M2', says: [/VTO \(0\.52 vs 0\.5\)/] },
      { code: 'estimate-differs-from-solved', at: 'M2', says: [/unmatched devices \(M2: VTO\)/] },
    ]);
    // Source: square law (Razavi, ch. 5) — ΔI/I = (1 − ΔVTH/VOV)² − 1 with VOV = 1 V here.
    expect((findings.find((f) => f.code === 'mirror-unmatched')!.data as Record<string, number>).ratioErrorPercent).toBeCloseTo(((1 - 0.02) ** 2 - 1) * 100, 6);
  });
});

describe('mirror-ratio', () => {
  it('a 1:4 output is information, not a fault', () => {
    const b = new CircuitBuilder()
      .v('VCC', 'vcc', '0', 5)
      .model('qn', 'npn')
      .r('RREF', 'vcc', 'a', 43e3)
      .q('Q1', 'a', 'a', '0', 'qn')
      .q('Q2', 'out', 'a', '0', 'qn', { area: 4 })
      .r('RL', 'vcc', 'out', 1e3);
    const { findings, structures } = check(b, [{ code: 'mirror-ratio', at: 'Q2', says: [/1:4 output/, /IOUT ≈ 4·IREF\/\(1 \+ 5\/β\)/, /by hand/] }]);
    expect((findings[0].data as Record<string, number>).ratio).toBe(4);
    // Source: Gray et al., ch. 4 — m·IREF/(1 + (1 + m)/β) with β = 100.
    const s = structures[0];
    expect(s.estimate!.iout.Q2).toBeCloseTo((4 * s.estimate!.iref) / 1.05, 12);
  });
});

describe('estimate-differs-from-solved', () => {
  it('base current of a follower on the control node', () => {
    const b = new CircuitBuilder()
      .v('VCC', 'vcc', '0', 5)
      .v('VEE', 'vee', '0', -5)
      .model('qn', 'npn')
      .r('RREF', 'vcc', 'a', 4.3e3)
      .q('Q1', 'a', 'a', '0', 'qn')
      .q('Q2', 'out', 'a', '0', 'qn')
      .r('RL', 'vcc', 'out', 1e3)
      .q('Q5', 'vcc', 'a', 'f', 'qn')
      .r('RF', 'f', 'vee', 1e3);
    const { findings, structures } = check(b, [{ code: 'estimate-differs-from-solved', at: 'Q2', says: [/loading of the control node by Q5/, /by hand/, /solved/] }]);
    expect(structures[0].discrepancy).toMatch(/Q5/);
    const rows = (findings[0].data as { rows: { quantity: string; relative: number }[] }).rows;
    expect(Math.abs(rows.find((r) => r.quantity === 'Q2')!.relative)).toBeGreaterThan(0.03);
  });
});

describe('chained mirrors', () => {
  it('a fed mirror takes IREF from the feeding estimate and blames the feed when that is off', () => {
    const b = new CircuitBuilder()
      .v('VCC', 'vcc', '0', 5)
      .model('qn', 'npn')
      .model('qp', 'pnp')
      .model('qp2', 'pnp', { IS: 2e-16, BF: 50 })
      .r('R1', 'p1', '0', 10e3)
      .q('QP1', 'p1', 'p1', 'vcc', 'qp')
      .q('QP2', 'n1', 'p1', 'vcc', 'qp2')
      .q('QN1', 'n1', 'n1', '0', 'qn')
      .q('QN2', 'out', 'n1', '0', 'qn')
      .r('RL', 'vcc', 'out', 1e3);
    const { structures } = check(b, [
      { code: 'mirror-unmatched', at: 'QP2' },
      { code: 'estimate-differs-from-solved', at: 'QP2', says: [/unmatched devices/] },
      { code: 'estimate-differs-from-solved', at: 'QN2', says: [/IREF comes from QP2 of simple-mirror:QP1/] },
    ]);
    const p = structures.find((x) => x.id === 'simple-mirror:QP1')!;
    const n = structures.find((x) => x.id === 'simple-mirror:QN1')!;
    // Source: the fed reference's IREF is the feeding output's estimate (Gray et al., ch. 4, mirrors in cascade).
    expect(n.estimate!.iref).toBe(p.estimate!.iout.QP2);
    expect(n.estimate!.irefFrom).toBe('mirror-output');
  });
});

describe('structure-analysis-incomplete', () => {
  it('a stale structure naming a device the circuit no longer has gets a located finding, not a crash', () => {
    const circuit = npnMirror(1e3).build();
    const structures = recogniseStructures(circuit);
    structures[0].outputs[0].device = 'Q9';
    structures[0].devices.push('Q9');
    const f = analyseStructures({ circuit, structures, options: resolveOptions() });
    expect(f.map((x) => x.code)).toEqual(['structure-analysis-incomplete']);
    expect(f[0].span).toEqual(npnMirror(1e3).spanOf('Q1'));
  });
});

describe('severity overrides and measurement', () => {
  it('"off" drops a code and a severity replaces the default', () => {
    const circuit = npnMirror(10e3).build();
    const op = new DcSolver(circuit).solve({}).op;
    const structures = recogniseStructures(circuit);
    const f = analyseStructures({
      circuit,
      op,
      structures,
      options: resolveOptions({ severities: { 'estimate-differs-from-solved': 'off', 'mirror-output-out-of-region': 'warning' } }),
    });
    expect(f.map((x) => [x.code, x.severity])).toEqual([['mirror-output-out-of-region', 'warning']]);
  });

  it('measureStructure reads IREF as the current into the structure at the reference node', () => {
    const circuit = npnMirror(1e3).build();
    const op = new DcSolver(circuit).solve({}).op;
    const s = recogniseStructures(circuit)[0];
    const m = measureStructure(circuit, op, s);
    // Source: Kirchhoff's current law — everything RREF carries enters Q1's collector and the two bases.
    const rr = op.devices.RREF;
    expect(m.iref).toBeCloseTo(rr.type === 'resistor' ? Math.abs(rr.current) : 0, 12);
    expect(m.outOfRegion).toEqual([]);
    expect(m.headroom.Q2).toBeCloseTo(op.nodes.out - op.nodes.a, 12);
  });
});
