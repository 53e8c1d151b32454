// Voltage- and current-controlled switches (S and W): a resistance that moves from ROFF to RON as the control crosses its threshold, interpolated smoothly in log R so Newton sees a continuous slope (docs/DEVICE-MODELS.md).

import type { CurrentSwitch, VoltageSwitch } from '../circuit';
import type { SwitchRecord, SwitchRegion } from '../solve/types';
import type { DeviceColumns, DeviceConditions, DeviceInstances, DeviceKind, DeviceTable, LoadTally, OverdrivenJunction } from './device';
import { NOT_OVERDRIVEN, columnsFor, deviceKind } from './device';
import type { ParamIssue } from './params';
import { modelParam } from './params';

/** Half-width of the transition when the model gives no hysteresis: 1 mV for S, 1 µA for W. */
export const DEFAULT_HALF_WIDTH = { S: 1e-3, W: 1e-6 } as const;

/** Conductance of a switch at control value c and its slope dg/dc. */
export interface SwitchConductance {
  g: number;
  dg: number;
  region: SwitchRegion;
}

const REGIONS: readonly SwitchRegion[] = ['on', 'off', 'transition'];
const ON = 0;
const OFF = 1;
const TRANSITION = 2;

/**
 * docs/DEVICE-MODELS.md: below VT − h the switch is ROFF, above VT + h it is RON, and between them
 * ln R = ln ROFF + (ln RON − ln ROFF)·s(u) with u = (c − VT + h)/(2h) and s(u) = 3u² − 2u³, so R
 * and its slope are continuous. h is the hysteresis VH (IH), or 1 mV (1 µA) when none is given.
 * Writes g = 1/R and dg/dc into out[0], out[1]; returns the region index.
 */
function switchCore(c: number, ron: number, roff: number, threshold: number, h: number, out: Float64Array): number {
  const lo = threshold - h;
  if (c <= lo) {
    out[0] = 1 / roff;
    out[1] = 0;
    return OFF;
  }
  if (c >= threshold + h) {
    out[0] = 1 / ron;
    out[1] = 0;
    return ON;
  }
  const u = (c - lo) / (2 * h);
  const s = u * u * (3 - 2 * u);
  const ds = (6 * u * (1 - u)) / (2 * h);
  const span = Math.log(ron) - Math.log(roff);
  const g = Math.exp(-(Math.log(roff) + span * s));
  out[0] = g;
  out[1] = -g * span * ds;
  return TRANSITION;
}

/** The switch law at one control value, for tests; the tables evaluate the same function in their loops. */
export function switchConductance(c: number, ron: number, roff: number, threshold: number, halfWidth: number): SwitchConductance {
  const s = new Float64Array(2);
  const region = switchCore(c, ron, roff, threshold, halfWidth, s);
  return { g: s[0], dg: s[1], region: REGIONS[region] };
}

const QUANTITIES = ['current', 'voltage', 'power', 'resistance', 'control'] as const;
const Q_CURRENT = 0;
const Q_VOLTAGE = 1;
const Q_POWER = 2;
const Q_RESISTANCE = 3;
const Q_CONTROL = 4;

/**
 * Every switch of one letter. S terminals: [out+, out−, ctrl+, ctrl−], control = V(ctrl+) − V(ctrl−).
 * W terminals: [out+, out−, branch current of the controlling V source], control = that current
 * (−1 when the source has no branch: the control reads 0).
 */
class SwitchTable implements DeviceTable {
  private readonly n: number;
  private readonly ron: Float64Array;
  private readonly roff: Float64Array;
  private readonly threshold: Float64Array;
  private readonly halfWidth: Float64Array;
  private readonly scratch = new Float64Array(2);
  private readonly T: number;
  /** Control value of the last linearisation, for limiting. */
  private readonly cOld: Float64Array;

  constructor(
    readonly kind: DeviceKind,
    readonly instances: DeviceInstances<VoltageSwitch | CurrentSwitch>,
    issues: ParamIssue[],
  ) {
    const n = (this.n = instances.count);
    this.T = kind.terminalCount;
    this.ron = new Float64Array(n);
    this.roff = new Float64Array(n);
    this.threshold = new Float64Array(n);
    this.halfWidth = new Float64Array(n);
    this.cOld = new Float64Array(n);
    const current = kind.letter === 'W';
    for (let i = 0; i < n; i++) {
      const el = instances.elements[i];
      const md = el.model;
      this.ron[i] = modelParam(el, md, 'RON', 'positive', issues);
      this.roff[i] = modelParam(el, md, 'ROFF', 'positive', issues);
      this.threshold[i] = modelParam(el, md, current ? 'IT' : 'VT', 'finite', issues);
      const h = Math.abs(modelParam(el, md, current ? 'IH' : 'VH', 'finite', issues));
      this.halfWidth[i] = h > 0 ? h : current ? DEFAULT_HALF_WIDTH.W : DEFAULT_HALF_WIDTH.S;
    }
  }

  prepare(_c: DeviceConditions): void {}

  resetState(x: Float64Array): void {
    for (let i = 0; i < this.n; i++) this.cOld[i] = this.control(x, i);
  }

  /** Control value of instance i at x. */
  private control(x: Float64Array, i: number): number {
    const t = this.instances.terminals;
    const T = this.T;
    if (T === 4) return voltage(x, t[i * T + 2]) - voltage(x, t[i * T + 3]);
    return voltage(x, t[i * T + 2]);
  }

  load(x: Float64Array, values: Float64Array, rhs: Float64Array, limit: boolean, tally: LoadTally): void {
    const t = this.instances.terminals;
    const pos = this.instances.positions;
    const T = this.T;
    const s = this.scratch;
    for (let i = 0; i < this.n; i++) {
      const a = t[i * T];
      const b = t[i * T + 1];
      const vs = voltage(x, a) - voltage(x, b);
      let c = this.control(x, i);
      if (limit) {
        const limited = limitControl(c, this.cOld[i], this.threshold[i], this.halfWidth[i]);
        if (limited !== c) {
          tally.limited = true;
          c = limited;
        }
      }
      this.cOld[i] = c;
      switchCore(c, this.ron[i], this.roff[i], this.threshold[i], this.halfWidth[i], s);
      const g = s[0];
      const gc = vs * s[1];
      const p = i * T * T;
      // i = g(c)·vs, linearised: i ≈ g·vs + gc·c + (g·vs0 − g·vs0 − gc·c0) → equivalent current −gc·c0.
      add(values, pos[p], g);
      add(values, pos[p + 1], -g);
      add(values, pos[p + T], -g);
      add(values, pos[p + T + 1], g);
      if (gc !== 0) {
        add(values, pos[p + 2], gc);
        add(values, pos[p + T + 2], -gc);
        if (T === 4) {
          add(values, pos[p + 3], -gc);
          add(values, pos[p + T + 3], gc);
        }
      }
      const ieq = -gc * c;
      if (a >= 0) rhs[a] -= ieq;
      if (b >= 0) rhs[b] += ieq;
      if (!(Number.isFinite(g) && Number.isFinite(gc))) tally.nonFinite.push(this.instances.elementIndex[i]);
    }
  }

  evaluate(x: Float64Array, into?: DeviceColumns): DeviceColumns {
    const out = columnsFor(into, QUANTITIES.length, this.n);
    const v = out.values;
    const t = this.instances.terminals;
    const T = this.T;
    const s = this.scratch;
    for (let i = 0; i < this.n; i++) {
      const vs = voltage(x, t[i * T]) - voltage(x, t[i * T + 1]);
      const c = this.control(x, i);
      out.region[i] = switchCore(c, this.ron[i], this.roff[i], this.threshold[i], this.halfWidth[i], s);
      const current = s[0] * vs;
      v[Q_CURRENT][i] = current;
      v[Q_VOLTAGE][i] = vs;
      v[Q_POWER][i] = current * vs;
      v[Q_RESISTANCE][i] = 1 / s[0];
      v[Q_CONTROL][i] = c;
    }
    return out;
  }

  overdriven(): readonly OverdrivenJunction[] {
    return NOT_OVERDRIVEN;
  }
}

/**
 * Control limiting (our scheme, in the spirit of junction limiting): a step that enters, leaves or
 * stays in the transition band moves at most one half-width h per iteration, because across the
 * band the resistance changes by many decades and the linearisation there overshoots. Steps that
 * stay on one side outside the band are free (the resistance does not change).
 */
function limitControl(c: number, cOld: number, threshold: number, h: number): number {
  const lo = threshold - h;
  const hi = threshold + h;
  if ((c <= lo && cOld <= lo) || (c >= hi && cOld >= hi)) return c;
  const step = c - cOld;
  if (Math.abs(step) <= h) return c;
  // Entering the band from outside: stop at its edge first.
  if (cOld <= lo && c > lo) return Math.min(c, lo + (cOld < lo ? 0 : h));
  if (cOld >= hi && c < hi) return Math.max(c, hi - (cOld > hi ? 0 : h));
  return cOld + Math.sign(step) * h;
}

function voltage(x: Float64Array, k: number): number {
  return k >= 0 ? x[k] : 0;
}

function add(values: Float64Array, slot: number, v: number): void {
  if (slot >= 0) values[slot] += v;
}

function record(cols: DeviceColumns, i: number): SwitchRecord {
  const v = cols.values;
  return {
    type: 'switch',
    region: REGIONS[cols.region[i]],
    current: v[Q_CURRENT][i],
    voltage: v[Q_VOLTAGE][i],
    power: v[Q_POWER][i],
    resistance: v[Q_RESISTANCE][i],
    control: v[Q_CONTROL][i],
  };
}

/** The voltage-controlled switch (element letter S). */
export const VOLTAGE_SWITCH: DeviceKind = deviceKind<VoltageSwitch>({
  letter: 'S',
  nodeCount: 4,
  terminalCount: 4,
  quantities: QUANTITIES,
  regions: REGIONS,
  internalNodes: () => [],
  terminals: (el, node) => [node(el.nodes[0]), node(el.nodes[1]), node(el.nodes[2]), node(el.nodes[3])],
  dcPaths: (el, to) => to.union(el.nodes[0], el.nodes[1]),
  checkedJunctions: () => {},
  instanceValues: () => {},
  floatingNote: 'its controlling nodes draw no current',
  createTable: (instances, issues) => new SwitchTable(VOLTAGE_SWITCH, instances, issues),
  record: (cols, _instances, i) => record(cols, i),
  terminalCurrent: (cols, i, t) => (t === 0 ? cols.values[Q_CURRENT][i] : t === 1 ? -cols.values[Q_CURRENT][i] : 0),
});

/** The current-controlled switch (element letter W), controlled by the current through a V source. */
export const CURRENT_SWITCH: DeviceKind = deviceKind<CurrentSwitch>({
  letter: 'W',
  nodeCount: 2,
  terminalCount: 3,
  quantities: QUANTITIES,
  regions: REGIONS,
  internalNodes: () => [],
  terminals: (el, node, _internal, branch) => [node(el.nodes[0]), node(el.nodes[1]), branch ? branch(el.control) : -1],
  dcPaths: (el, to) => to.union(el.nodes[0], el.nodes[1]),
  checkedJunctions: () => {},
  instanceValues: () => {},
  createTable: (instances, issues) => new SwitchTable(CURRENT_SWITCH, instances, issues),
  record: (cols, _instances, i) => record(cols, i),
  terminalCurrent: (cols, i, t) => (t === 0 ? cols.values[Q_CURRENT][i] : t === 1 ? -cols.values[Q_CURRENT][i] : 0),
});
