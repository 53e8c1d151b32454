// The device judgements read the solver's vectors by element index (and a resistor's power without its record):
// they must find exactly what the judgements of the same point read by name from its tables find.

import { describe, expect, it } from 'vitest';
import { resolveOptions } from '../../../shared-analysis/src/analysis';
import { JudgeContext, currentsOff, recordIsOff } from '../../../shared-analysis/src/checks/devices/context';
import { DEVICE_CODES, judgeEachDevice } from '../../../shared-analysis/src/checks/devices/index';
import { dissipation, dissipationAt } from '../../../shared-analysis/src/checks/devices/power';
import { pointVectors as vectorsOf } from '../../../shared-analysis/src/solve/point';
import type { DeviceRecord, OperatingPoint } from '../../../shared-analysis/src/solve/types';
import { solvedNetlist } from './solved-netlist';

// Invented: one wiring mistake per device judge, a resistor over its rating, and a healthy mirror.
const FAULTS = `device faults, one of each
VCC vcc 0 DC 12
VNEG vneg 0 DC -6
VB bias 0 DC 0.75
.model QN NPN (IS=1e-15 BF=120 VAF=80)
.model DX D (IS=1e-14)
.model JN NJF (BETA=1m VTO=-2)
.model MN NMOS (KP=100u VTO=0.5)
RQ1 vcc e1 10k
Q1 0 b1 e1 QN
RB1 vcc b1 20k
Q2 c2 bias 0 QN
RC2 vcc c2 1Meg
RR4 vcc a4 10k
Q4D a4 a4 0 QN
Q4X a4 c4 0 QN
R4 vcc c4 100k
RP vcc 0 100
J7 vcc g7 0 JN
RG7 vcc g7 10k
D8 0 k8 DX
R8 vcc k8 1k
RM vcc m1 20k
M1 m1 m1 0 0 MN W=10u L=1u
M2 m2 m1 0 0 MN W=10u L=1u
RL2 vcc m2 20k
.end
`;

/** The same point as plain tables only (as a point that crossed JSON or a worker): records are read by name. */
function byNameOnly(op: OperatingPoint): OperatingPoint {
  return JSON.parse(JSON.stringify(op)) as OperatingPoint;
}

describe('device judgements by element index', () => {
  const { circuit, nominal, structures } = solvedNetlist(FAULTS, '/faults.cir');
  const options = resolveOptions({});

  it('find the same findings as the judgements reading the point by name', () => {
    const indexed = judgeEachDevice({ circuit, op: nominal.op, structures, options });
    const named = judgeEachDevice({ circuit, op: byNameOnly(nominal.op), structures, options });
    expect(indexed).toEqual(named);
    const codes = new Set(indexed!.flatMap((list) => (list ?? []).map((f) => f.code)));
    // The netlist has each of these mistakes (the judges' own tests say why each is one).
    for (const code of ['device-reversed', 'junction-beyond-breakdown', 'current-source-out-of-region', 'mirror-line-shunted', 'power-over-rating', 'jfet-gate-forward', 'branch-blocked']) {
      expect(codes.has(code), code).toBe(true);
      expect(DEVICE_CODES[code]).toBeDefined();
    }
  });

  it("read each element's power as its record's dissipation, a resistor's as V²/R", () => {
    const ctx = new JudgeContext(circuit, nominal.op, structures, options, DEVICE_CODES);
    const nodes = nominal.op.nodes;
    circuit.elements.forEach((el, e) => {
      expect(ctx.powerAt(e), el.name).toBe(dissipation(nominal.op.devices[el.name]));
      expect(ctx.recordAt(e), el.name).toEqual(nominal.op.devices[el.name]);
      if (el.kind === 'R') {
        // Joule's law: the power a resistor absorbs is V²/R with V across it (1e-9 relative: the solver's own rounding).
        const v = (nodes[circuit.nodes[el.nodes[0]]] ?? 0) - (nodes[circuit.nodes[el.nodes[1]]] ?? 0);
        expect(ctx.powerAt(e)!).toBeCloseTo((v * v) / el.resistance, 9);
      }
    });
    // RP carries 12 V across 100 Ω: 1.44 W.
    expect(ctx.powerAt(circuit.elements.findIndex((x) => x.name === 'RP'))).toBeCloseTo(1.44, 9);
  });

  it("read a transistor's power from the vectors as the sum of its terminals' voltage times the current into each", () => {
    // The power a multi-terminal device absorbs is Σ V_k·I_k over its terminals, currents counted into the device
    // (Tellegen's theorem); the emitter's current is −(IC + IB). Written here from the node voltages and the
    // record's currents, not through the IC·VCE + IB·VBE form the code uses.
    const vectors = vectorsOf(nominal.op)!;
    const nodes = nominal.op.nodes;
    const volts = (n: number): number => nodes[circuit.nodes[n]] ?? 0;
    let checked = 0;
    circuit.elements.forEach((el, e) => {
      if (el.kind !== 'Q') return;
      const rec = nominal.op.devices[el.name] as DeviceRecord & { ic: number; ib: number };
      const terminals = volts(el.nodes[0]) * rec.ic + volts(el.nodes[1]) * rec.ib - volts(el.nodes[2]) * (rec.ic + rec.ib);
      const p = dissipationAt(vectors, e)!;
      expect(p, el.name).toBe(dissipation(rec));
      expect(Math.abs(p - terminals), el.name).toBeLessThanOrEqual(1e-9 * Math.max(1e-9, Math.abs(terminals)) + 1e-15);
      checked++;
    });
    expect(checked).toBe(4);
  });
});

describe('recordIsOff', () => {
  // The "off" floor is 1 pA plus the 1 pS robustness conductance times the junction voltages (docs/DEVICE-MODELS.md "Regions").
  const bjt = (ic: number, ib: number, ie: number, vbe: number, vbc: number) => ({ type: 'bjt', ic, ib, ie, vbe, vbc }) as unknown as DeviceRecord;
  const cases: [DeviceRecord, number[], number][] = [];
  for (const i of [0, 1e-13, 0.99e-12, 1e-12, 1.2e-12, -1.2e-12, 1e-3, NaN]) {
    for (const v of [0, 0.5, -6]) {
      cases.push([bjt(i, 0, -i, v, 0), [i, 0, -i], Math.abs(v)]);
      cases.push([bjt(0, i, 0, 0, v), [0, i, 0], Math.abs(v)]);
      cases.push([{ type: 'mosfet', id: i, vds: v } as unknown as DeviceRecord, [i], Math.abs(v)]);
      cases.push([{ type: 'jfet', id: 0, ig: i, vds: v, vgs: -v } as unknown as DeviceRecord, [0, i], 2 * Math.abs(v)]);
      cases.push([{ type: 'diode', id: i, vd: v } as unknown as DeviceRecord, [i], Math.abs(v)]);
    }
  }

  it('agrees with currentsOff over the same currents and junction voltages', () => {
    for (const [rec, currents, leak] of cases) expect(recordIsOff(rec), JSON.stringify(rec)).toBe(currentsOff(currents, leak));
  });

  it('calls a device carrying microamps on, one carrying femtoamps off, and other records never off', () => {
    expect(recordIsOff(bjt(1e-6, 1e-8, -1.01e-6, 0.6, -2))).toBe(false);
    expect(recordIsOff(bjt(1e-15, 1e-17, -1e-15, 0.1, -2))).toBe(true);
    expect(recordIsOff({ type: 'resistor', current: 0, voltage: 0, power: 0 } as DeviceRecord)).toBe(false);
    expect(recordIsOff(undefined)).toBe(false);
  });
});
