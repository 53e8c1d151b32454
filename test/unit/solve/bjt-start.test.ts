// The BJT table's start points: the first load after a cold or a temperature start linearises each transistor at its start bias,
// and the next load at the solution's bias, limited against the start; checked against fresh tables loaded without limiting at
// node voltages that realise exactly those biases.

import { describe, expect, it } from 'vitest';
import type { DeviceConditions, LoadTally, StartHint } from '../../../shared-analysis/src/devices/device';
import { criticalVoltage, limitJunctionValue, saturationCurrentAt, thermalVoltage } from '../../../shared-analysis/src/devices/physics';
import { MnaLayout } from '../../../shared-analysis/src/solve/mna';
import { rng } from '../../seeded-random';
import { circuit, model, type Spec } from './build';

const QN = model('QN', 'npn', { IS: 1e-15, BF: 120, VAF: 60, XTI: 3, EG: 1.11 });
const QW = model('QW', 'npn', { IS: 4e-14, BF: 80, NF: 1.2, NR: 1.5 });
const QP = model('QP', 'pnp', { IS: 2e-15, BF: 60 });
/** No saturation current: no start point, so its first load is at the bias the node voltages give. */
const QZ = model('QZ', 'npn', { IS: 0, BF: 100 });

/** Each transistor on nodes of its own, so any bias of each is realised by some node voltages. */
const SPECS: Spec[] = [
  ['Q', 'Q1', 'c1', 'b1', 'e1', QN, { area: 2 }],
  ['Q', 'Q2', 'c2', 'b2', 'e2', QW],
  ['Q', 'Q3', 'c3', 'b3', 'e3', QP, { m: 3 }],
  ['Q', 'Q4', 'c4', 'b4', 'e4', QZ],
  ['Q', 'Q5', 'c5', 'b5', 'e5', QN],
];
/** Polarity (+1 NPN, −1 PNP), the card's IS times area·M, NF and NR, in the order of SPECS. */
const DEVICES = [
  { s: 1, is: 2e-15, nf: 1, nr: 1 },
  { s: 1, is: 4e-14, nf: 1.2, nr: 1.5 },
  { s: -1, is: 6e-15, nf: 1, nr: 1 },
  { s: 1, is: 0, nf: 1, nr: 1 },
  { s: 1, is: 1e-15, nf: 1, nr: 1 },
];
const C = circuit(SPECS);

function conditions(temperatureC: number): DeviceConditions {
  return { temperatureC, tnomC: 27, vt: thermalVoltage(temperatureC), betaScale: 1, junctionGmin: 1e-12 };
}

/** Node voltages: random in [−1, 1] V, with the first transistors' junctions pushed forward (so limiting and the temperature shift act). */
function randomVoltages(n: number, seed: number): Float64Array {
  const r = rng(seed);
  const x = new Float64Array(n);
  for (let k = 0; k < n; k++) x[k] = 2 * r() - 1;
  return x;
}

/** The unknown of node `name` (ground has none). */
function unknownOf(name: string): number {
  return C.nodes.indexOf(name) - 1;
}

/** Transistor d's intrinsic (VBE, VBC) at x, in its own polarity. */
function biasAt(x: Float64Array, d: number): [number, number] {
  const k = d + 1;
  const vb = x[unknownOf(`b${k}`)];
  return [DEVICES[d].s * (vb - x[unknownOf(`e${k}`)]), DEVICES[d].s * (vb - x[unknownOf(`c${k}`)])];
}

/** Node voltages at which every transistor d sits at biases[d]: emitter at 0 V, base at s·VBE, collector at s·(VBE − VBC). */
function realising(biases: [number, number][], n: number): Float64Array {
  const x = new Float64Array(n);
  biases.forEach(([vbe, vbc], d) => {
    const k = d + 1;
    const s = DEVICES[d].s;
    x[unknownOf(`b${k}`)] = s * vbe;
    x[unknownOf(`c${k}`)] = s * (vbe - vbc);
  });
  return x;
}

interface Loaded {
  values: Float64Array;
  rhs: Float64Array;
  limited: boolean;
}

/** A table of a fresh layout, prepared at `temperatureC`. */
function freshTable(temperatureC: number): { layout: MnaLayout; load: (x: Float64Array, limit: boolean) => Loaded; reset: (x: Float64Array, start?: StartHint) => void } {
  const layout = new MnaLayout(C);
  const table = layout.tables[0];
  table.prepare(conditions(temperatureC));
  return {
    layout,
    reset: (x, start) => table.resetState(x, start),
    load: (x, limit) => {
      const values = new Float64Array(layout.pattern.rows.length);
      const rhs = new Float64Array(layout.size);
      const tally: LoadTally = { limited: false, nonFinite: [] };
      table.load(x, values, rhs, limit, tally);
      expect(tally.nonFinite).toEqual([]);
      return { values, rhs, limited: tally.limited };
    },
  };
}

/** The stamps of a table loaded without limiting at node voltages that realise `biases`: the companion model linearised at them. */
function linearisedAt(biases: [number, number][], temperatureC: number): Loaded {
  const t = freshTable(temperatureC);
  const x = realising(biases, t.layout.size);
  t.reset(x);
  return t.load(x, false);
}

function expectSameStamps(got: Loaded, want: Loaded): void {
  const close = (a: Float64Array, b: Float64Array) => a.forEach((v, k) => expect(Math.abs(v - b[k]), `entry ${k}`).toBeLessThanOrEqual(1e-12 * Math.abs(b[k]) + 1e-30));
  close(got.values, want.values);
  close(got.rhs, want.rhs);
}

describe('the BJT start points', () => {
  it('linearise a cold start at the critical base-emitter voltage (at most 1 V) and an unbiased base-collector junction, then limit against it', () => {
    const vt = thermalVoltage(27);
    for (const seed of [1, 2, 3]) {
      const t = freshTable(27);
      const x = randomVoltages(t.layout.size, seed);
      t.reset(x, { kind: 'cold' });
      // vcrit = n·VT·ln(n·VT/(√2·IS)) (Nagel, ERL-M520, 1975); a transistor without IS starts where x puts it.
      const start = DEVICES.map((d, i): [number, number] => (d.is > 0 ? [Math.min(criticalVoltage(d.nf * vt, d.is), 1), 0] : biasAt(x, i)));
      const first = t.load(x, true);
      expect(first.limited).toBe(true);
      expectSameStamps(first, linearisedAt(start, 27));
      // The next load: the bias at x, each junction limited from its start (Nagel's logarithmic step).
      const next = DEVICES.map((d, i): [number, number] => {
        const [vbe, vbc] = biasAt(x, i);
        const vcrit = d.is > 0 ? criticalVoltage(d.nf * vt, d.is) : 1e3;
        const vcritBc = d.is > 0 ? criticalVoltage(d.nr * vt, d.is) : 1e3;
        return [limitJunctionValue(vbe, start[i][0], d.nf * vt, vcrit), limitJunctionValue(vbc, start[i][1], d.nr * vt, vcritBc)];
      });
      const second = t.load(x, true);
      expect(second.limited).toBe(next.some(([vbe, vbc], i) => vbe !== biasAt(x, i)[0] || vbc !== biasAt(x, i)[1]));
      expectSameStamps(second, linearisedAt(next, 27));
    }
  });

  it('move each forward junction of a point solved at another temperature to the voltage that carries the same current', () => {
    const vt27 = thermalVoltage(27);
    const vt125 = thermalVoltage(125);
    for (const seed of [4, 5, 6]) {
      const t = freshTable(125);
      const x = randomVoltages(t.layout.size, seed);
      // Push Q1 and Q2 forward, so their junctions are shifted (the others keep whatever x gives them).
      x[unknownOf('b1')] = 0.7;
      x[unknownOf('e1')] = 0;
      x[unknownOf('b2')] = 0.65;
      x[unknownOf('c2')] = 0.1;
      t.reset(x, { kind: 'temperature', temperatureC: 27, vt: vt27 });
      // The diode law I = IS(T)·exp(V/(n·VT)) held at the same current: V₁ = n·VT₁·(V₀/(n·VT₀) + ln(IS(T₀)/IS(T₁))),
      // IS(T) = IS·(T/Tnom)^XTI·exp(EG·q/k·(1/Tnom − 1/T)) (docs/DEVICE-MODELS.md); XTI 3 and EG 1.11 are the defaults.
      const shifted = (v: number, n: number, is: number): number => (v > 0 ? n * vt125 * (v / (n * vt27) + Math.log(saturationCurrentAt(is, 3, 1.11, 27, 27) / saturationCurrentAt(is, 3, 1.11, 125, 27))) : v);
      const start = DEVICES.map((d, i): [number, number] => {
        const [vbe, vbc] = biasAt(x, i);
        return d.is > 0 ? [shifted(vbe, d.nf, d.is), shifted(vbc, d.nr, d.is)] : [vbe, vbc];
      });
      expect(start[0][0]).not.toBe(biasAt(x, 0)[0]);
      expect(start[1][1]).not.toBe(biasAt(x, 1)[1]);
      const first = t.load(x, true);
      expect(first.limited).toBe(true);
      expectSameStamps(first, linearisedAt(start, 125));
    }
  });
});
