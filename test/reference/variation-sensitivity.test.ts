// Adjoint sensitivities against central finite differences of full re-solves on a circuit of every recognised structure kind, and against closed forms (the resistor-fed diode-connected reference, Pelgrom's law, root-sum-square).

import { describe, expect, it } from 'vitest';
import type { Circuit } from '../../shared-analysis/src/circuit';
import { DcSolver, type DcSolveResult } from '../../shared-analysis/src/solve/dc';
import type { SolveOptions } from '../../shared-analysis/src/solve/types';
import { measureStructure } from '../../shared-analysis/src/structures/measure';
import { recogniseStructures } from '../../shared-analysis/src/structures/recognise';
import { KINDS } from '../../shared-analysis/src/structures/catalogue';
import type { Structure, StructureKind, Technology } from '../../shared-analysis/src/structures/types';
import { structureVoltages } from '../../shared-analysis/src/structures/voltages';
import { structureOutputs } from '../../shared-analysis/src/variation/outputs';
import { derivativeOf, modelValue, sensitivities, type VariedParameter } from '../../shared-analysis/src/variation/sensitivity';
import { toleranceSources } from '../../shared-analysis/src/variation/sources';
import { spreadOf } from '../../shared-analysis/src/variation/index';
import { fixture } from '../unit/structures/fixtures';
import { multiplier, selfBiasedLoop, wideSwing } from '../unit/structures/kinds/circuits';
import { CircuitBuilder } from '../unit/structures/build';
import { analyseSession } from '../../shared-analysis/src/service';
import { MemoryWorkspace } from '../../shared-analysis/src/types';

// Source: BIPM SI Brochure, 9th ed. (2019): k and q exact.
const VT27 = (1.380649e-23 * 300.15) / 1.602176634e-19;

/** A circuit of every kind in the catalogue, in one technology each (the kind tests cover the rest). */
function circuitsOfEveryKind(): { name: string; circuit: Circuit }[] {
  const out: { name: string; circuit: Circuit }[] = [];
  const simple: [StructureKind, Technology][] = [
    ['simple-mirror', 'npn'],
    ['simple-mirror', 'pmos'],
    ['widlar-source', 'npn'],
    ['degenerated-mirror', 'nmos'],
    ['helper-mirror', 'pnp'],
    ['wilson-mirror', 'npn'],
    ['improved-wilson-mirror', 'nmos'],
    ['cascode-mirror', 'npn'],
  ];
  for (const [kind, tech] of simple) out.push({ name: `${kind} ${tech}`, circuit: fixture(kind, tech, { model: tech === 'npn' || tech === 'pnp' ? { VAF: 60 } : { LAMBDA: 0.02 } }).circuit });
  out.push({ name: 'ptat-cell npn', circuit: selfBiasedLoop({ core: 'npn', startup: 2e6 }).circuit });
  out.push({ name: 'beta-multiplier nmos', circuit: selfBiasedLoop({ core: 'nmos', startup: 2e6 }).circuit });
  out.push({ name: 'bandgap-core npn', circuit: selfBiasedLoop({ core: 'npn', startup: 2e6, bandgap: { r2: 10e3 } }).circuit });
  out.push({ name: 'vbe-multiplier npn', circuit: multiplier('npn') });
  out.push({ name: 'wide-swing-cascode nmos', circuit: wideSwing('nmos', { lambda: 0.02 }) });
  // A P-channel JFET self-biased source (invented values: IDSS = 4 mA, RS = 500 Ω, ID ≈ 1.5 mA).
  out.push({
    name: 'jfet-self-biased-source pjf',
    circuit: new CircuitBuilder()
      .v('VCC', 'vcc', '0', 15)
      .model('jp', 'pjf', { VTO: -2, BETA: 1e-3, LAMBDA: 0.01, VTOTC: -2e-3 })
      .jfet('J1', 'd', 'vcc', 's', 'jp')
      .r('RS', 'vcc', 's', 500)
      .r('RL', 'd', '0', 3.3e3)
      .build(),
  });
  // A zener-referenced NPN sink and a two-diode PNP source (invented values).
  out.push({
    name: 'diode-referenced-source npn (zener)',
    circuit: new CircuitBuilder()
      .v('VCC', 'vcc', '0', 12)
      .model('dz', 'd', { IS: 1e-14, BV: 5.6, IBV: 1e-3 })
      .model('qn', 'npn', { BF: 150, VAF: 80 })
      .r('RB', 'vcc', 'b', 4.7e3)
      .d('DZ', '0', 'b', 'dz')
      .q('Q1', 'out', 'b', 'e', 'qn')
      .r('RE', 'e', '0', 2.2e3)
      .r('RL', 'vcc', 'out', 1e3)
      .build(),
  });
  out.push({
    name: 'diode-referenced-source pnp (two diodes)',
    circuit: new CircuitBuilder()
      .v('VCC', 'vcc', '0', 9)
      .model('dn', 'd', { IS: 1e-14 })
      .model('qp', 'pnp', { BF: 80, VAF: 60 })
      .d('D1', 'vcc', 'm', 'dn')
      .d('D2', 'm', 'b', 'dn')
      .r('RB', 'b', '0', 10e3)
      .q('Q1', 'out', 'b', 'e', 'qp')
      .r('RE', 'vcc', 'e', 680)
      .r('RL', 'out', '0', 2.2e3)
      .build(),
  });
  // An NPN sink held by a high-gain amplifier across a 100 Ω sense resistor.
  out.push({
    name: 'regulated-source npn',
    circuit: new CircuitBuilder()
      .v('VCC', 'vcc', '0', 12)
      .model('qn', 'npn', { BF: 150, VAF: 80 })
      .r('R1', 'vcc', 'ref', 10e3)
      .r('R2', 'ref', '0', 1e3)
      .e('EAMP', 'b', '0', 'ref', 's', 1e5)
      .q('Q1', 'out', 'b', 's', 'qn')
      .r('RS', 's', '0', 100)
      .r('RL', 'vcc', 'out', 470)
      .build(),
  });
  // Resistors with temperature coefficients, solved away from Tnom: R(T) = R·(1 + TC1·ΔT + TC2·ΔT²) enters the drift.
  const tc = fixture('widlar-source', 'npn', { model: { VAF: 60 }, temperatureC: 85 }).circuit;
  for (const el of tc.elements) if (el.kind === 'R') Object.assign(el, { tc1: 2e-3, tc2: 4e-6 });
  out.push({ name: 'widlar-source npn with TC resistors at 85 °C', circuit: tc });
  return out;
}

/** Every output of every structure, measured off an operating point independently of the adjoint code (measureStructure, structureVoltages). */
function measureAll(circuit: Circuit, structures: Structure[], op: DcSolveResult['op']): number[] {
  const out: number[] = [];
  for (const s of structures) {
    const m = measureStructure(circuit, op, s);
    out.push(m.iref);
    for (const o of s.outputs) out.push(m.iout[o.device]);
    const v = structureVoltages(s, op);
    for (const dv of s.voltages ?? []) out.push(v?.[dv.name] ?? NaN);
  }
  return out;
}

function check(circuit: Circuit): { kinds: StructureKind[]; compared: number } {
  const structures = recogniseStructures(circuit);
  const solver = new DcSolver(circuit);
  const nominal = solver.solve();
  expect(nominal.op.converged).toBe(true);
  const t = nominal.op.temperatureC;
  const specs = structureOutputs(circuit, structures);
  // Parameters: every resistor and voltage source, the temperature, and the mismatch parameters of every structure device.
  const params: VariedParameter[] = [{ kind: 'temperature' }];
  circuit.elements.forEach((el, i) => {
    if (el.kind === 'R') params.push({ kind: 'resistance', element: i });
    if (el.kind === 'V' || el.kind === 'I') params.push({ kind: 'source', element: i });
  });
  for (const s of toleranceSources(circuit, structures, new Map(), { resistorTolerance: 0, resistorFrom: 'setting', supplyTolerance: 0 }, t)) params.push(s.parameter);
  const lin = solver.linearise(nominal)!;
  const adj = sensitivities(lin, specs.map((s) => s.functional), params);
  const base = measureAll(circuit, structures, nominal.op);
  expect(Array.from(adj.value, (v) => +v.toPrecision(9))).toEqual(base.map((v) => +v.toPrecision(9)));
  let compared = 0;
  const solveWith = (o: SolveOptions): number[] => {
    const r = solver.solve({ temperatureC: t, initialGuess: nominal.x, ...o });
    expect(r.op.converged).toBe(true);
    return measureAll(circuit, structures, r.op);
  };
  for (let j = 0; j < params.length; j++) {
    const p = params[j];
    let h: number;
    let up: number[];
    let down: number[];
    let scale: number;
    if (p.kind === 'temperature') {
      h = 0.1;
      up = solveWith({ temperatureC: t + h });
      down = solveWith({ temperatureC: t - h });
      scale = 1;
    } else if (p.kind === 'resistance') {
      const el = circuit.elements[p.element] as { name: string; resistance: number };
      h = el.resistance * 1e-3;
      up = solveWith({ resistances: { [el.name]: el.resistance + h } });
      down = solveWith({ resistances: { [el.name]: el.resistance - h } });
      scale = el.resistance;
    } else if (p.kind === 'source') {
      const el = circuit.elements[p.element] as { name: string; dc: number };
      h = Math.max(Math.abs(el.dc), 1e-6) * 1e-3;
      up = solveWith({ sourceValues: { [el.name]: el.dc + h } });
      down = solveWith({ sourceValues: { [el.name]: el.dc - h } });
      scale = Math.abs(el.dc);
    } else {
      const el = circuit.elements[p.element];
      const v = modelValue(el, p.param);
      h = p.param === 'VTO' ? 1e-4 : Math.abs(v) * 1e-3;
      up = solveWith({ deviceParameters: { [el.name]: { [p.param]: v + h } } });
      down = solveWith({ deviceParameters: { [el.name]: { [p.param]: v - h } } });
      scale = p.param === 'VTO' ? 1e-3 : Math.abs(v);
    }
    for (let o = 0; o < base.length; o++) {
      const fd = (up[o] - down[o]) / (2 * h);
      const a = derivativeOf(adj, o, j);
      // 1e-4 relative, with a floor of 1e-7 in the normalised sensitivity (d ln y per unit of the parameter's own scale).
      const floor = (1e-7 * Math.abs(base[o])) / scale;
      expect(Math.abs(a - fd), `${JSON.stringify(p)} on output ${o}: adjoint ${a}, finite difference ${fd}`).toBeLessThanOrEqual(1e-4 * Math.abs(fd) + floor);
      compared++;
    }
  }
  return { kinds: structures.map((s) => s.kind), compared };
}

describe('adjoint sensitivities against finite differences of re-solves', () => {
  const seen = new Set<StructureKind>();
  for (const { name, circuit } of circuitsOfEveryKind()) {
    it(name, () => {
      const r = check(circuit);
      expect(r.compared).toBeGreaterThan(0);
      for (const k of r.kinds) seen.add(k);
    });
  }
  it('covered every kind of the catalogue', () => {
    for (const k of KINDS) expect(seen.has(k.id), `no circuit of kind ${k.id}`).toBe(true);
  });
});

/**
 * Every closed-form device derivative (`DeviceTable.sensitivity`: temperature, IS, BF, VTO, KP, W, L, BETA) against central
 * finite differences of full re-solves, on devices of our own invention that reach every branch of the equations: a
 * Gummel–Poon NPN with leakage, high injection, both Early voltages and ohmic resistances away from Tnom, in
 * forward-active and in saturation, a PNP, MOSFETs with body effect and temperature terms in saturation, in triode and
 * with the channel reversed, JFETs (temperature, VTO, BETA) in every region, reversed and with a conducting gate, and
 * diodes (temperature) forward with RS and in breakdown.
 */
describe('device derivatives against finite differences of re-solves', () => {
  type Read = { element: string; terminal: number };
  /** Current into netlist terminal `terminal` of a device, read off the operating point's record (independent of the derivative code). */
  const currentOf = (op: DcSolveResult['op'], r: Read): number => {
    const rec = op.devices[r.element];
    if (rec.type === 'bjt') return [rec.ic, rec.ib, rec.ie][r.terminal];
    if (rec.type === 'mosfet') return r.terminal === 0 ? rec.id : r.terminal === 2 ? -rec.id : 0;
    if (rec.type === 'diode') return r.terminal === 0 ? rec.id : -rec.id;
    if (rec.type === 'jfet') return [rec.id, rec.ig, -rec.id - rec.ig][r.terminal];
    throw new Error(`no current read for ${rec.type}`);
  };
  const compare = (build: (change?: { element: string; param: string; value: number }) => Circuit, reads: Read[], deviceParams: string[]): number => {
    const circuit = build();
    const solver = new DcSolver(circuit);
    const nominal = solver.solve();
    expect(nominal.op.converged).toBe(true);
    const t = nominal.op.temperatureC;
    const index = (name: string): number => circuit.elements.findIndex((e) => e.name === name);
    const params: VariedParameter[] = [{ kind: 'temperature' }];
    const devices = [...new Set(reads.map((r) => r.element))];
    for (const d of devices) for (const param of deviceParams) if (circuit.elements[index(d)].kind !== 'D') params.push({ kind: 'model', element: index(d), param });
    const outputs = reads.map((r) => ({ terms: [{ kind: 'terminal' as const, element: index(r.element), terminal: r.terminal, weight: 1 }], magnitude: false }));
    const adj = sensitivities(solver.linearise(nominal)!, outputs, params);
    const base = reads.map((r) => currentOf(nominal.op, r));
    reads.forEach((_, o) => expect(adj.value[o]).toBeCloseTo(base[o], 15));
    let compared = 0;
    params.forEach((p, j) => {
      let up: number[];
      let down: number[];
      let h: number;
      let scale: number;
      if (p.kind === 'temperature') {
        h = 0.1;
        scale = 1;
        const at = (dt: number) => solver.solve({ temperatureC: t + dt, initialGuess: nominal.x }).op;
        up = reads.map((r) => currentOf(at(h), r));
        down = reads.map((r) => currentOf(at(-h), r));
      } else if (p.kind === 'model') {
        const el = circuit.elements[p.element] as unknown as Record<string, number> & { name: string };
        const v = p.param === 'W' || p.param === 'L' ? el[p.param.toLowerCase()] : modelValue(circuit.elements[p.element], p.param);
        h = p.param === 'VTO' ? 1e-4 : Math.abs(v) * 1e-3;
        scale = p.param === 'VTO' ? 1e-3 : Math.abs(v);
        // W and L are the instance's own: a circuit built with the changed value and solved afresh.
        const at = (value: number) => {
          const solved = p.param === 'W' || p.param === 'L' ? new DcSolver(build({ element: el.name, param: p.param, value })).solve() : solver.solve({ initialGuess: nominal.x, deviceParameters: { [el.name]: { [p.param]: value } } });
          expect(solved.op.converged).toBe(true);
          return solved.op;
        };
        const opUp = at(v + h);
        const opDown = at(v - h);
        up = reads.map((r) => currentOf(opUp, r));
        down = reads.map((r) => currentOf(opDown, r));
      } else return;
      reads.forEach((r, o) => {
        const fd = (up[o] - down[o]) / (2 * h);
        const a = derivativeOf(adj, o, j);
        const floor = (1e-7 * Math.abs(base[o])) / scale;
        expect(Math.abs(a - fd), `${JSON.stringify(p)} on ${r.element}.${r.terminal}: closed form ${a}, finite difference ${fd}`).toBeLessThanOrEqual(1e-4 * Math.abs(fd) + floor);
        compared++;
      });
    });
    return compared;
  };
  const all = (names: string[], terminals: number[]): Read[] => names.flatMap((element) => terminals.map((terminal) => ({ element, terminal })));

  it('Gummel–Poon NPN and PNP away from Tnom: temperature, IS, BF', () => {
    const build = (): Circuit => {
      const b = new CircuitBuilder();
      b.temperatureC = 70;
      b.v('VCC', 'vcc', '0', 9)
        .model('qg', 'npn', { IS: 2e-16, BF: 180, BR: 3, NF: 1.02, NR: 1.05, ISE: 5e-15, NE: 1.6, ISC: 2e-14, NC: 1.8, IKF: 8e-3, IKR: 2e-3, VAF: 70, VAR: 15, XTB: 1.6, XTI: 3.2, EG: 1.12, RB: 120, RE: 1.5, RC: 12 })
        .model('qp', 'pnp', { IS: 5e-16, BF: 90, VAF: 45, XTB: 1.2, ISE: 1e-15, NE: 1.5 })
        .r('RB1', 'vcc', 'b1', 1e6)
        .q('Q1', 'c1', 'b1', '0', 'qg')
        .r('RC1', 'vcc', 'c1', 2.2e3)
        // Q2 saturated: a heavy base drive into a large collector resistor.
        .r('RB2', 'vcc', 'b2', 10e3)
        .q('Q2', 'c2', 'b2', '0', 'qg')
        .r('RC2', 'vcc', 'c2', 47e3)
        .r('RB3', 'b3', '0', 150e3)
        .q('Q3', 'c3', 'b3', 'e3', 'qp')
        .r('RE3', 'vcc', 'e3', 1e3)
        .r('RC3', 'c3', '0', 1.5e3);
      return b.build();
    };
    const devices = new DcSolver(build()).solve().op.devices;
    expect((devices.Q1 as { region: string }).region).toBe('forward-active');
    expect((devices.Q2 as { region: string }).region).toBe('saturation');
    expect(compare(build, all(['Q1', 'Q2', 'Q3'], [0, 1, 2]), ['IS', 'BF'])).toBe(9 * 7);
  });

  it('MOSFETs with body effect and temperature terms, in saturation, triode and reversed: temperature, VTO, KP, W, L', () => {
    const build = (change?: { element: string; param: string; value: number }): Circuit => {
      const b = new CircuitBuilder();
      b.temperatureC = 85;
      const o = (name: string, w: number, l: number) => ({ w: change?.element === name && change.param === 'W' ? change.value : w, l: change?.element === name && change.param === 'L' ? change.value : l });
      b.v('VDD', 'vdd', '0', 5)
        .v('VB', 'vb', '0', -1)
        .model('nt', 'nmos', { VTO: 0.6, KP: 110e-6, LAMBDA: 0.03, GAMMA: 0.45, PHI: 0.7, BEX: -1.5, TCV: 2e-3 })
        .model('pt', 'pmos', { VTO: -0.7, KP: 45e-6, LAMBDA: 0.05, GAMMA: 0.3, PHI: 0.65, BEX: -1.2, TCV: 1.5e-3 })
        // M1 saturated, its bulk below its source (body effect).
        .r('RG1', 'vdd', 'g1', 100e3)
        .r('RG1B', 'g1', '0', 100e3)
        .mos('M1', 'd1', 'g1', 's1', 'vb', 'nt', o('M1', 8e-6, 2e-6))
        .r('RS1', 's1', '0', 1e3)
        .r('RD1', 'vdd', 'd1', 4.7e3)
        // M2 in triode: gate at the rail, a large drain resistor.
        .mos('M2', 'd2', 'vdd', '0', '0', 'nt', o('M2', 4e-6, 1e-6))
        .r('RD2', 'vdd', 'd2', 20e3)
        // M3 reversed: its netlist drain sits below its netlist source.
        .mos('M3', 'x3', 'vdd', 'y3', '0', 'nt', o('M3', 6e-6, 1e-6))
        .r('RX3', 'x3', '0', 4.7e3)
        .r('RY3', 'vdd', 'y3', 1e3)
        // M4 a PMOS in saturation.
        .mos('M4', 'd4', 'g4', 'vdd', 'vdd', 'pt', o('M4', 20e-6, 2e-6))
        .r('RG4', 'g4', '0', 100e3)
        .r('RG4B', 'vdd', 'g4', 150e3)
        .r('RD4', 'd4', '0', 1.5e3);
      return b.build();
    };
    const op = new DcSolver(build()).solve().op;
    const rec = (n: string) => op.devices[n] as { region: string; vds: number };
    expect(rec('M1').region).toBe('saturation');
    expect(rec('M2').region).toBe('triode');
    expect(rec('M3').vds).toBeLessThan(0);
    expect(rec('M4').region).toBe('saturation');
    expect(compare(build, all(['M1', 'M2', 'M3', 'M4'], [0, 2]), ['VTO', 'KP', 'W', 'L'])).toBe(8 * 17);
  });


  it('JFETs with temperature terms, N- and P-channel, saturated, linear, swapped and with a conducting gate: temperature, VTO, BETA', () => {
    // Our own circuit: five JFETs, each in one branch of the equations, at 60 °C (away from Tnom).
    const text = `jfet derivatives
.temp 60
VDD vdd 0 12
RD1 vdd d1 2k
J1 d1 0 s1 nj
RS1 s1 0 1k
RD2 vdd d2 20k
J2 d2 0 0 nj
RY3 vdd y3 5k
J3 x3 0 y3 nj
RX3 x3 0 1k
RG4 vdd g4 100k
J4 d4 g4 0 nj
RD4 vdd d4 1k
RS5 vdd s5 1k
J5 d5 vdd s5 pj
RD5 d5 0 2k
.model nj njf (VTO=-2 BETA=1m LAMBDA=0.02 IS=1e-14 N=1.1 VTOTC=-2.5m BETATCE=-0.5 XTI=3 EG=1.11)
.model pj pjf (VTO=-1.5 BETA=0.5m LAMBDA=0.01 IS=2e-14 VTOTC=2m BETATCE=-0.6)
.end
`;
    const build = (): Circuit => analyseSession({ uri: 'mem://jfets.cir', text }, new MemoryWorkspace({}), { corners: { enabled: false }, variation: { enabled: false } }).analysis.circuit!;
    const devices = new DcSolver(build()).solve().op.devices as Record<string, { region: string; vds: number; ig: number }>;
    expect(devices.J1.region).toBe('saturation');
    expect(devices.J2.region).toBe('linear');
    expect(devices.J3.vds).toBeLessThan(0);
    expect(devices.J4.ig).toBeGreaterThan(1e-5);
    expect(devices.J5.region).toBe('saturation');
    expect(compare(build, all(['J1', 'J2', 'J3', 'J4', 'J5'], [0, 1, 2]), ['VTO', 'BETA'])).toBe(15 * 11);
  });
  it('diodes, forward with RS and in breakdown with its temperature coefficient: temperature', () => {
    const build = (): Circuit => {
      const b = new CircuitBuilder();
      b.temperatureC = 50;
      b.v('V1', 'a', '0', 3).model('dd', 'd', { IS: 1e-14, N: 1.1, XTI: 3, EG: 1.11, RS: 5 }).r('R1', 'a', 'k', 2.2e3).d('D1', 'k', '0', 'dd');
      // D2: a 5.1 V zener fed from 12 V, its breakdown voltage drifting with TBV1.
      b.v('V2', 'h', '0', 12).model('dz', 'd', { IS: 2e-14, BV: 5.1, IBV: 1e-3, NBV: 1.3, TBV1: 4e-4 }).r('R2', 'h', 'z', 1e3).d('D2', '0', 'z', 'dz');
      return b.build();
    };
    expect((new DcSolver(build()).solve().op.devices.D2 as { region: string }).region).toBe('breakdown');
    expect(compare(build, all(['D1', 'D2'], [0, 1]), [])).toBe(4);
  });
});

describe('closed forms', () => {
  it('a resistor-fed diode-connected reference: S = −(V+ − V− − VBE)/(V+ − V− − VBE + NF·VT)', () => {
    // Differentiate IREF·R = V+ − V− − NF·VT·ln(IREF/IS): dIREF/IREF · (IREF·R + NF·VT) = −IREF·R · dR/R.
    for (const [supply, ohms, nf] of [
      [5, 10e3, 1],
      [12, 2.2e3, 1],
      [1.8, 47e3, 1.2],
    ]) {
      const b = new CircuitBuilder();
      b.v('VCC', 'vcc', '0', supply);
      b.model('qn', 'npn', { IS: 1e-15, BF: 1e12, NF: nf });
      b.r('RREF', 'vcc', 'a', ohms);
      b.q('Q1', 'a', 'a', '0', 'qn');
      const circuit = b.build();
      const solver = new DcSolver(circuit);
      const nominal = solver.solve();
      const lin = solver.linearise(nominal)!;
      const r = circuit.elements.findIndex((e) => e.name === 'RREF');
      const adj = sensitivities(lin, [{ terms: [{ kind: 'element', element: r, weight: 1 }], magnitude: true }], [{ kind: 'resistance', element: r }]);
      const iref = adj.value[0];
      const drop = iref * ohms; // V+ − V− − VBE
      const want = -drop / (drop + nf * VT27);
      expect(derivativeOf(adj, 0, 0) * (ohms / iref)).toBeCloseTo(want, 6);
    }
  });

  it("Pelgrom's law for the VTH mismatch of a MOS pair", () => {
    // Source: M. J. M. Pelgrom, A. C. J. Duinmaijer, A. P. G. Welbers, IEEE JSSC 24(5), 1989: σ(ΔVT) = AVT/√(W·L) for a pair,
    // so each device's own σ is AVT/√(2·W·L). AVT here is the project default, 5 mV·µm (common practice, from memory).
    const c = fixture('simple-mirror', 'nmos').circuit;
    const m1 = c.elements.find((e) => e.name === 'Q1')! as { w: number; l: number; m: number };
    m1.w = 20e-6;
    m1.l = 2e-6;
    const structures = recogniseStructures(c);
    const s = toleranceSources(c, structures, new Map(), { resistorTolerance: 0.01, resistorFrom: 'setting', supplyTolerance: 0.05 }, 27);
    const vth = s.find((x) => x.label === 'Q1 VTH')!;
    const pair = 5e-3 / Math.sqrt(20 * 2); // 5 mV·µm over √(40 µm²)
    expect(vth.sigma * Math.SQRT2).toBeCloseTo(pair, 9);
    expect(pair * 1e3).toBeCloseTo(0.7906, 3);
  });

  it('root-sum-square and linear sum of independent contributions', () => {
    // σ = √Σ(Sᵢσᵢ)², worst case = Σ|Sᵢ·Δᵢ| (independent contributions; common practice).
    const src = (label: string, sigma: number, bound: number) => ({ label, group: label, element: label, parameter: { kind: 'temperature' } as VariedParameter, nominal: 1, sigma, bound, from: 'card' as const, figure: 0 });
    const sources = [src('A', 3, 9), src('B', 4, 12)];
    const r = spreadOf(sources, { index: [0, 1], value: [1, -1] });
    expect(r.sigma).toBeCloseTo(5, 12);
    expect(r.worstCase).toBeCloseTo(21, 12);
    expect(r.contributors.map((c) => [c.name, +c.share.toFixed(4)])).toEqual([
      ['B', 0.64],
      ['A', 0.36],
    ]);
  });
});
