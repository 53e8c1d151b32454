// A lossless transmission line (T) at DC: each conductor is a short from port 1 to port 2, solved with one current unknown per conductor (docs/DEVICE-MODELS.md).

import type { TransmissionLine } from '../circuit';
import type { TwoTerminalRecord } from '../solve/types';
import type { DeviceColumns, DeviceConditions, DeviceInstances, DeviceKind, DeviceTable, LoadTally, OverdrivenJunction } from './device';
import { NOT_OVERDRIVEN, columnsFor, deviceKind } from './device';
import type { ParamIssue } from './params';

/** Terminals: port 1 (+, −), port 2 (+, −), the current of the signal conductor and of the return conductor. */
const A1 = 0;
const B1 = 1;
const A2 = 2;
const B2 = 3;
const I_SIGNAL = 4;
const I_RETURN = 5;
const T = 6;

const QUANTITIES = ['current', 'voltage', 'power', 'returnCurrent'] as const;

/** Every T line: V(port-1 +) = V(port-2 +) and V(port-1 −) = V(port-2 −), each conductor carrying its own current. */
class LineTable implements DeviceTable {
  readonly kind: DeviceKind = LINE;
  private readonly n: number;

  constructor(readonly instances: DeviceInstances<TransmissionLine>, _issues: ParamIssue[]) {
    this.n = instances.count;
  }

  prepare(_c: DeviceConditions): void {}

  resetState(): void {}

  load(_x: Float64Array, values: Float64Array, _rhs: Float64Array, _limit: boolean, _tally: LoadTally): void {
    const pos = this.instances.positions;
    for (let i = 0; i < this.n; i++) {
      const p = i * T * T;
      // Each conductor is a 0 V branch: its current leaves the port-1 node and enters the port-2 node.
      for (const [from, to, k] of CONDUCTORS) {
        add(values, pos[p + from * T + k], 1);
        add(values, pos[p + to * T + k], -1);
        add(values, pos[p + k * T + from], 1);
        add(values, pos[p + k * T + to], -1);
      }
    }
  }

  evaluate(x: Float64Array, into?: DeviceColumns): DeviceColumns {
    const out = columnsFor(into, QUANTITIES.length, this.n);
    const t = this.instances.terminals;
    for (let i = 0; i < this.n; i++) {
      const v = (k: number): number => (t[i * T + k] >= 0 ? x[t[i * T + k]] : 0);
      out.values[0][i] = v(I_SIGNAL);
      out.values[1][i] = v(A1) - v(B1);
      out.values[2][i] = 0;
      out.values[3][i] = v(I_RETURN);
    }
    return out;
  }

  overdriven(): readonly OverdrivenJunction[] {
    return NOT_OVERDRIVEN;
  }
}

const CONDUCTORS: readonly (readonly [number, number, number])[] = [
  [A1, A2, I_SIGNAL],
  [B1, B2, I_RETURN],
];

function add(values: Float64Array, slot: number, v: number): void {
  if (slot >= 0) values[slot] += v;
}

/** The transmission line kind (element letter T). */
export const LINE: DeviceKind = deviceKind<TransmissionLine>({
  letter: 'T',
  nodeCount: 4,
  terminalCount: T,
  quantities: QUANTITIES,
  regions: ['conducting'],
  // A conductor whose two ends are one node (a return tied to ground at both ports) needs no current unknown: it would make the equations singular.
  internalNodes: (el) => [...(el.nodes[0] !== el.nodes[2] ? ['signal conductor current'] : []), ...(el.nodes[1] !== el.nodes[3] ? ['return conductor current'] : [])],
  terminals(el, node, internal) {
    let k = 0;
    const signal = el.nodes[0] !== el.nodes[2] ? internal[k++] : -1;
    const ret = el.nodes[1] !== el.nodes[3] ? internal[k++] : -1;
    return [node(el.nodes[0]), node(el.nodes[1]), node(el.nodes[2]), node(el.nodes[3]), signal ?? -1, ret ?? -1];
  },
  dcPaths: (el, to) => {
    to.union(el.nodes[0], el.nodes[2]);
    to.union(el.nodes[1], el.nodes[3]);
  },
  checkedJunctions: () => {},
  instanceValues: () => {},
  createTable: (instances, issues) => new LineTable(instances, issues),
  record: (cols, _instances, i): TwoTerminalRecord => ({ type: 'transmission-line', current: cols.values[0][i], voltage: cols.values[1][i], power: 0, returnCurrent: cols.values[3][i] }),
  terminalCurrent: (cols, i, t) => (t === 0 ? cols.values[0][i] : t === 2 ? -cols.values[0][i] : t === 1 ? cols.values[3][i] : t === 3 ? -cols.values[3][i] : 0),
});
