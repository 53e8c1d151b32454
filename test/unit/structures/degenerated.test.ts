// Recognition of the degenerated mirror against look-alikes, its findings, and the devices every estimate step names.

import { describe, expect, it } from 'vitest';
import { resolveOptions } from '../../../shared-analysis/src/analysis';
import type { Circuit } from '../../../shared-analysis/src/circuit';
import { analyseStructures } from '../../../shared-analysis/src/checks/structures';
import { DcSolver } from '../../../shared-analysis/src/solve/dc';
import { estimateStructure } from '../../../shared-analysis/src/structures/estimate';
import { recogniseStructures } from '../../../shared-analysis/src/structures/recognise';
import type { Structure, StructureKind, Technology } from '../../../shared-analysis/src/structures/types';
import { CircuitBuilder } from './build';
import { fixture } from './fixtures';

/** What one recognition case should give: the structures as `id → kind, devices, outputs`. */
interface Want {
  id: string;
  devices: string[];
  outputs: { device: string; resistor: string }[];
  referenceResistor?: string;
}

/** The one entry point for recognition: every structure id, its devices, its degenerated outputs and the reference's emitter resistor. */
function check(circuit: Circuit, want: Want[]): Structure[] {
  const got = recogniseStructures(circuit);
  expect(got.map((s) => s.id).sort()).toEqual(want.map((w) => w.id).sort());
  for (const w of want) {
    const s = got.find((x) => x.id === w.id)!;
    expect([...s.devices].sort()).toEqual([...w.devices].sort());
    expect(s.outputs.map((o) => ({ device: o.device, resistor: o.degeneration?.resistor }))).toEqual(w.outputs);
    expect(s.reference.degeneration?.resistor).toBe(w.referenceResistor);
  }
  return got;
}

/** NPN base circuit: RREF from VCC into a, Q1 diode on a with emitter e1, R1 from e1 to ground. */
function base(): CircuitBuilder {
  return new CircuitBuilder().v('VCC', 'vcc', '0', 9).model('qn', 'npn').r('RREF', 'vcc', 'a', 8.2e3).q('Q1', 'a', 'a', 'e1', 'qn').r('R1', 'e1', '0', 1e3);
}

describe('degenerated mirror: recognition', () => {
  it('one output: reference and output resistors are recorded, the feed is the resistor chain', () => {
    // Source: (common practice) the discrete degenerated mirror — emitter resistors on both sides to one rail.
    const [s] = check(base().q('Q2', 'out', 'a', 'e2', 'qn').r('R2', 'e2', '0', 500).r('RL', 'vcc', 'out', 1e3).build(), [
      { id: 'degenerated-mirror:Q1', devices: ['Q1', 'Q2'], outputs: [{ device: 'Q2', resistor: 'R2' }], referenceResistor: 'R1' },
    ]);
    expect(s.kind).toBe('degenerated-mirror');
    expect(s.reference).toMatchObject({ feed: 'resistor', elements: ['RREF'], degeneration: { resistor: 'R1', ohms: 1e3 } });
    expect(s.outputs[0].degeneration).toEqual({ resistor: 'R2', ohms: 500 });
    expect(s.roles).toEqual({ Q1: 'reference', Q2: 'output' });
  });

  it('two outputs with their own resistors make one structure; an output with its emitter straight on the rail is left out', () => {
    const c = base()
      .q('Q2', 'o2', 'a', 'e2', 'qn')
      .r('R2', 'e2', '0', 1e3)
      .q('Q3', 'o3', 'a', 'e3', 'qn')
      .r('R3', 'e3', '0', 2e3)
      .q('Q4', 'o4', 'a', '0', 'qn')
      .build();
    check(c, [{ id: 'degenerated-mirror:Q1', devices: ['Q1', 'Q2', 'Q3'], outputs: [{ device: 'Q2', resistor: 'R2' }, { device: 'Q3', resistor: 'R3' }], referenceResistor: 'R1' }]);
  });

  it('a capacitor across an emitter resistor does not hide it (open at DC)', () => {
    const c = base().c('C1', 'e1', '0', 1e-6).q('Q2', 'out', 'a', 'e2', 'qn').r('R2', 'e2', '0', 1e3).c('C2', 'e2', '0', 1e-6).build();
    check(c, [{ id: 'degenerated-mirror:Q1', devices: ['Q1', 'Q2'], outputs: [{ device: 'Q2', resistor: 'R2' }], referenceResistor: 'R1' }]);
  });

  it('the Widlar source (reference emitter on the rail) stays a Widlar source', () => {
    const c = new CircuitBuilder().v('VCC', 'vcc', '0', 9).model('qn', 'npn').r('RREF', 'vcc', 'a', 8.2e3).q('Q1', 'a', 'a', '0', 'qn').q('Q2', 'out', 'a', 'e2', 'qn').r('R2', 'e2', '0', 1e3).build();
    const [s] = check(c, [{ id: 'widlar-source:Q1', devices: ['Q1', 'Q2'], outputs: [{ device: 'Q2', resistor: 'R2' }] }]);
    expect(s.kind).toBe('widlar-source');
  });

  it('look-alikes are not degenerated mirrors', () => {
    // Output resistor to a different node than the reference's: no common node.
    check(base().q('Q2', 'out', 'a', 'e2', 'qn').r('R2', 'e2', 'vneg', 1e3).v('VN', 'vneg', '0', -1).build(), []);
    // A second resistor on the output's emitter node.
    check(base().q('Q2', 'out', 'a', 'e2', 'qn').r('R2', 'e2', '0', 1e3).r('R3', 'e2', 'vcc', 10e3).build(), []);
    // A second resistor on the reference's emitter node.
    check(base().r('R9', 'e1', 'vcc', 10e3).q('Q2', 'out', 'a', 'e2', 'qn').r('R2', 'e2', '0', 1e3).build(), []);
    // A differential pair with emitter resistors to a tail: no diode-connected device.
    const pair = new CircuitBuilder()
      .v('VCC', 'vcc', '0', 9)
      .model('qn', 'npn')
      .q('Q1', 'c1', 'b1', 'e1', 'qn')
      .q('Q2', 'c2', 'b2', 'e2', 'qn')
      .r('RE1', 'e1', 'tail', 100)
      .r('RE2', 'e2', 'tail', 100)
      .i('IT', 'tail', '0', 1e-3)
      .build();
    check(pair, []);
    // A diode-connected device with an emitter resistor and nothing on its base: a biased diode, not a mirror.
    check(base().build(), []);
    // Output of the other polarity on the same base node.
    check(base().model('qp', 'pnp').q('Q2', 'out', 'a', 'e2', 'qp').r('R2', 'e2', '0', 1e3).build(), []);
  });

  it('MOS: source resistors, bulk on the rail', () => {
    const c = new CircuitBuilder()
      .v('VDD', 'vdd', '0', 5)
      .model('nch', 'nmos', { KP: 1e-4, VTO: 0.5 })
      .r('RREF', 'vdd', 'g', 20e3)
      .mos('M1', 'g', 'g', 's1', '0', 'nch')
      .r('RS1', 's1', '0', 2e3)
      .mos('M2', 'd', 'g', 's2', '0', 'nch')
      .r('RS2', 's2', '0', 1e3)
      .build();
    check(c, [{ id: 'degenerated-mirror:M1', devices: ['M1', 'M2'], outputs: [{ device: 'M2', resistor: 'RS2' }], referenceResistor: 'RS1' }]);
  });
});

describe('degenerated mirror: findings and robustness', () => {
  it('an R1/R2 ratio is reported as a deliberate ratio with the resistor values', () => {
    // Source: Gray et al., ch. 4 — IOUT/IREF → R1/R2 at large drops.
    const { circuit } = fixture('degenerated-mirror', 'npn', { r1: 2e3, r2: 1e3, supply: 9 });
    const op = new DcSolver(circuit).solve({}).op;
    const structures = recogniseStructures(circuit);
    const f = analyseStructures({ circuit, op, structures, options: resolveOptions() });
    const ratio = f.find((x) => x.code === 'mirror-ratio');
    expect(ratio?.message).toContain('R1/R2 = 2 kΩ/1 kΩ = 2');
    expect(ratio?.data?.resistorRatio).toBe(2);
  });

  it('a matched degenerated mirror raises no ratio finding', () => {
    const { circuit } = fixture('degenerated-mirror', 'npn');
    const op = new DcSolver(circuit).solve({}).op;
    const structures = recogniseStructures(circuit);
    const f = analyseStructures({ circuit, op, structures, options: resolveOptions() });
    expect(f.filter((x) => x.code === 'mirror-ratio')).toEqual([]);
  });

  it('a structure whose resistors went missing gives an empty estimate, not a throw', () => {
    const { circuit } = fixture('degenerated-mirror', 'pnp');
    const [s] = recogniseStructures(circuit);
    const broken: Structure = { ...s, reference: { ...s.reference, degeneration: undefined } };
    expect(estimateStructure(circuit, broken, { temperatureC: 27 }).irefFrom).toBe('unknown');
    const zero: Structure = { ...s, outputs: s.outputs.map((o) => ({ ...o, degeneration: { resistor: 'R2', ohms: 0 } })) };
    expect(estimateStructure(circuit, zero, { temperatureC: 27 }).irefFrom).toBe('unknown');
  });

  it('a starved supply is reported on the reference resistor', () => {
    const { circuit } = fixture('degenerated-mirror', 'nmos', { supply: 0.3 });
    const structures = recogniseStructures(circuit);
    const f = analyseStructures({ circuit, structures, options: resolveOptions() });
    const starved = f.find((x) => x.code === 'reference-starved');
    expect(starved?.message).toContain('one VTH needs');
    expect(structures[0].estimate?.iref).toBe(0);
  });
});

describe('estimate steps name the devices they concern', () => {
  const KINDS: StructureKind[] = ['simple-mirror', 'widlar-source', 'helper-mirror', 'wilson-mirror', 'improved-wilson-mirror', 'cascode-mirror', 'degenerated-mirror'];
  const TECHS: Technology[] = ['npn', 'pnp', 'nmos', 'pmos'];
  for (const kind of KINDS) {
    for (const tech of TECHS) {
      it(`${kind} ${tech}`, () => {
        // Source: (common practice) a per-device hover shows the steps about that device plus the structure-wide ones.
        const { circuit } = fixture(kind, tech);
        const op = new DcSolver(circuit).solve({}).op;
        const structures = recogniseStructures(circuit);
        analyseStructures({ circuit, op, structures, options: resolveOptions() });
        const s = structures[0];
        const steps = s.estimate!.steps;
        const names = new Set(circuit.elements.map((e) => e.name));
        for (const st of steps) {
          const named = /^(?:IOUT|VBE|VGS)\(([^)]+)\)/.exec(st.quantity);
          if (st.quantity === 'VT' || st.quantity.startsWith('IREF')) expect(st.devices).toBeUndefined();
          else expect(st.devices?.length).toBeGreaterThan(0);
          if (named) expect(st.devices).toContain(named[1]);
          for (const d of st.devices ?? []) expect(names.has(d)).toBe(true);
        }
        // Every output has its own IOUT step, and no step about one output names another output.
        for (const o of s.outputs) {
          const own = steps.filter((st) => st.devices?.includes(o.device));
          expect(own.some((st) => st.quantity === `IOUT(${o.device})`)).toBe(true);
          expect(own.some((st) => st.quantity.startsWith('Compliance edge'))).toBe(true);
        }
      });
    }
  }

  it('two outputs: the steps of one output do not mention the other', () => {
    const c = base().q('Q2', 'o2', 'a', 'e2', 'qn').r('R2', 'e2', '0', 1e3).q('Q3', 'o3', 'a', 'e3', 'qn').r('R3', 'e3', '0', 2e3).r('L2', 'vcc', 'o2', 1e3).r('L3', 'vcc', 'o3', 1e3).build();
    const structures = recogniseStructures(c);
    analyseStructures({ circuit: c, op: new DcSolver(c).solve({}).op, structures, options: resolveOptions() });
    const steps = structures[0].estimate!.steps;
    const forQ2 = steps.filter((st) => st.devices?.includes('Q2'));
    expect(forQ2.length).toBeGreaterThanOrEqual(3);
    for (const st of forQ2) expect(st.devices).not.toContain('Q3');
  });
});
