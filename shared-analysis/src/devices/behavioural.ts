// Behavioural sources (B, and the VALUE/TABLE/POLY forms of E, F, G, H): a voltage or current that is a function of node voltages and branch currents, stamped with its exact gradient (docs/DEVICE-MODELS.md).

import type { BehaviouralSource } from '../circuit';
import type { TwoTerminalRecord } from '../solve/types';
import { evaluateProgram, type ProgramFailure } from './behaviour-program';
import type { DeviceColumns, DeviceConditions, DeviceInstances, DeviceKind, DeviceTable, LoadTally, OverdrivenJunction } from './device';
import { NOT_OVERDRIVEN, columnsFor, deviceKind } from './device';
import type { ParamIssue } from './params';

/** Most controlling quantities per source (each takes two terminals: the plus and minus unknown). */
export const MAX_INPUTS = 8;
const OUT_P = 0;
const OUT_N = 1;
const BRANCH = 2;
const FIRST_INPUT = 3;
/** Terminals per instance: out+, out−, own branch current (−1 for a current output), then two per input. */
const T = FIRST_INPUT + 2 * MAX_INPUTS;

const QUANTITIES = ['current', 'voltage', 'power'] as const;
const REGIONS = ['evaluated', 'not evaluable'] as const;

/** A point at which a source's function could not be evaluated, for the finding. */
export interface BehaviourProblem {
  element: number;
  failure: ProgramFailure;
  /** The controlling values at that point, as `V(a) = 1.2 V`. */
  at: string;
}

/**
 * Every behavioural source. A current output adds f(x) to the row of out+ and subtracts it from
 * out−, linearised with the gradient; a voltage output has its own branch current, and its branch
 * row reads V(out+) − V(out−) − f(x) = 0. Where f cannot be evaluated (the log of a negative
 * number, …) the last good linearisation is kept and the iteration counts as limited, so Newton
 * cannot stop there; the problem is reported when the final point has it.
 */
export class BehaviouralTable implements DeviceTable {
  readonly kind: DeviceKind = BEHAVIOURAL;
  private readonly n: number;
  private readonly grad = new Float64Array(MAX_INPUTS);
  private readonly inputValues = new Float64Array(MAX_INPUTS);
  /** Last good value and gradient per instance. */
  private readonly lastValue: Float64Array;
  private readonly lastGrad: Float64Array;

  constructor(readonly instances: DeviceInstances<BehaviouralSource>, _issues: ParamIssue[]) {
    this.n = instances.count;
    this.lastValue = new Float64Array(this.n);
    this.lastGrad = new Float64Array(this.n * MAX_INPUTS);
  }

  prepare(_c: DeviceConditions): void {}

  resetState(): void {
    this.lastValue.fill(0);
    this.lastGrad.fill(0);
  }

  private readInputs(x: Float64Array, i: number, count: number): void {
    const t = this.instances.terminals;
    for (let k = 0; k < count; k++) {
      const p = t[i * T + FIRST_INPUT + 2 * k];
      const m = t[i * T + FIRST_INPUT + 2 * k + 1];
      this.inputValues[k] = (p >= 0 ? x[p] : 0) - (m >= 0 ? x[m] : 0);
    }
  }

  load(x: Float64Array, values: Float64Array, rhs: Float64Array, _limit: boolean, tally: LoadTally): void {
    const t = this.instances.terminals;
    const pos = this.instances.positions;
    const grad = this.grad;
    for (let i = 0; i < this.n; i++) {
      const el = this.instances.elements[i];
      const count = el.program.inputs;
      this.readInputs(x, i, count);
      const r = evaluateProgram(el.program, this.inputValues, grad.subarray(0, count));
      let f: number;
      if (r.ok) {
        f = r.value;
        this.lastValue[i] = f;
        for (let k = 0; k < count; k++) this.lastGrad[i * MAX_INPUTS + k] = grad[k];
      } else {
        // Keep the last good linearisation, taken at this point: f ≈ f_last, slope as before.
        f = this.lastValue[i];
        for (let k = 0; k < count; k++) grad[k] = this.lastGrad[i * MAX_INPUTS + k];
        tally.limited = true;
      }
      // f(x) ≈ f0 + Σ g_k·(u_k − u0_k): the constant part is f0 − Σ g_k·u0_k.
      let constant = f;
      for (let k = 0; k < count; k++) constant -= grad[k] * this.inputValues[k];
      const p = i * T * T;
      if (el.output === 'I') {
        for (let k = 0; k < count; k++) {
          const g = grad[k];
          if (g === 0) continue;
          const cp = FIRST_INPUT + 2 * k;
          add(values, pos[p + OUT_P * T + cp], g);
          add(values, pos[p + OUT_P * T + cp + 1], -g);
          add(values, pos[p + OUT_N * T + cp], -g);
          add(values, pos[p + OUT_N * T + cp + 1], g);
        }
        const a = t[i * T + OUT_P];
        const b = t[i * T + OUT_N];
        if (a >= 0) rhs[a] -= constant;
        if (b >= 0) rhs[b] += constant;
      } else {
        const k0 = t[i * T + BRANCH];
        // KCL: the branch current leaves out+ and enters out−; branch row: V(out+) − V(out−) − Σ g·u = constant.
        add(values, pos[p + OUT_P * T + BRANCH], 1);
        add(values, pos[p + OUT_N * T + BRANCH], -1);
        add(values, pos[p + BRANCH * T + OUT_P], 1);
        add(values, pos[p + BRANCH * T + OUT_N], -1);
        for (let k = 0; k < count; k++) {
          const g = grad[k];
          if (g === 0) continue;
          const cp = FIRST_INPUT + 2 * k;
          add(values, pos[p + BRANCH * T + cp], -g);
          add(values, pos[p + BRANCH * T + cp + 1], g);
        }
        if (k0 >= 0) rhs[k0] += constant;
      }
      let finite = Number.isFinite(constant);
      for (let k = 0; k < count; k++) if (!Number.isFinite(grad[k])) finite = false;
      if (!finite) tally.nonFinite.push(this.instances.elementIndex[i]);
    }
  }

  evaluate(x: Float64Array, into?: DeviceColumns): DeviceColumns {
    const out = columnsFor(into, QUANTITIES.length, this.n);
    const [current, voltage, power] = out.values;
    const t = this.instances.terminals;
    for (let i = 0; i < this.n; i++) {
      const el = this.instances.elements[i];
      const a = t[i * T + OUT_P];
      const b = t[i * T + OUT_N];
      const v = (a >= 0 ? x[a] : 0) - (b >= 0 ? x[b] : 0);
      let c: number;
      if (el.output === 'V') {
        const k0 = t[i * T + BRANCH];
        c = k0 >= 0 ? x[k0] : 0;
      } else {
        this.readInputs(x, i, el.program.inputs);
        const r = evaluateProgram(el.program, this.inputValues, this.grad.subarray(0, el.program.inputs));
        c = r.ok ? r.value : 0;
        if (!r.ok) out.region[i] = 1;
      }
      current[i] = c;
      voltage[i] = v;
      power[i] = v * c;
    }
    return out;
  }

  /** Sources whose function cannot be evaluated at `x`, with the controlling values there. */
  problems(x: Float64Array, describe: (i: number, k: number) => string): BehaviourProblem[] {
    const out: BehaviourProblem[] = [];
    for (let i = 0; i < this.n; i++) {
      const el = this.instances.elements[i];
      const count = el.program.inputs;
      this.readInputs(x, i, count);
      const r = evaluateProgram(el.program, this.inputValues, this.grad.subarray(0, count));
      if (r.ok) continue;
      const at: string[] = [];
      for (let k = 0; k < count; k++) at.push(describe(i, k) + ' = ' + String(Number(this.inputValues[k].toPrecision(4))));
      out.push({ element: this.instances.elementIndex[i], failure: r.failure, at: at.join(', ') });
    }
    return out;
  }

  overdriven(): readonly OverdrivenJunction[] {
    return NOT_OVERDRIVEN;
  }
}

function add(values: Float64Array, slot: number, v: number): void {
  if (slot >= 0) values[slot] += v;
}

/** The behavioural source kind (element kind B, whatever letter the card is written with). */
export const BEHAVIOURAL: DeviceKind = deviceKind<BehaviouralSource>({
  letter: 'B',
  nodeCount: 2,
  terminalCount: T,
  quantities: QUANTITIES,
  regions: REGIONS,
  internalNodes: () => [],
  terminals(el, node, _internal, branch) {
    const out = [node(el.nodes[0]), node(el.nodes[1]), el.output === 'V' && branch ? branch(el.name) : -1];
    for (let k = 0; k < MAX_INPUTS; k++) {
      const input = el.inputs[k];
      if (!input) out.push(-1, -1);
      else if (input.kind === 'v') out.push(node(input.a), node(input.b));
      else out.push(branch ? branch(input.source) : -1, -1);
    }
    return out;
  },
  // A voltage output fixes its two nodes together; a current output conducts nothing (as an I source).
  dcPaths: (el, to) => {
    if (el.output === 'V') to.union(el.nodes[0], el.nodes[1]);
  },
  checkedJunctions: () => {},
  instanceValues: () => {},
  createTable: (instances, issues) => new BehaviouralTable(instances, issues),
  record: (cols, _instances, i): TwoTerminalRecord => ({ type: 'controlled-source', current: cols.values[0][i], voltage: cols.values[1][i], power: cols.values[2][i] }),
  terminalCurrent: (cols, i, t) => (t === 0 ? cols.values[0][i] : t === 1 ? -cols.values[0][i] : 0),
});
