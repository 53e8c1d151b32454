// Junction diode: ID = IS·(exp(VD/(N·VT)) − 1) with optional series resistance RS (an internal node), as one table of typed arrays with limiting, stamps and records.

import type { Diode } from '../circuit';
import type { DiodeRecord } from '../solve/types';
import type { DeviceColumns, DeviceConditions, DeviceInstances, DeviceKind, DeviceTable, LoadTally, OverdrivenJunction, StartHint } from './device';
import { allocateColumns, deviceKind } from './device';
import type { ParamIssue } from './params';
import { elementParam, modelParam } from './params';
import { EXP_ARG_LIMIT, criticalVoltage, guardedExpSlope, guardedExpValue, limitJunctionValue, saturationCurrentAt, shiftJunction } from './physics';

/** Current and conductance of the intrinsic junction at voltage vd. */
export interface DiodeJunction {
  id: number;
  gd: number;
  clipped: boolean;
}

/** ID = IS·(exp(vd/nvt) − 1) + gmin·vd and its slope (DESIGN.md), exponential guarded. */
export function diodeJunction(vd: number, is: number, nvt: number, gmin: number): DiodeJunction {
  const x = vd / nvt;
  return { id: is * (guardedExpValue(x) - 1) + gmin * vd, gd: (is * guardedExpSlope(x)) / nvt + gmin, clipped: x > EXP_ARG_LIMIT };
}

/** Terminals per instance: anode, internal anode (the anode itself when there is no RS), cathode. */
const T = 3;
const ANODE = 0;
const JA = 1;
const JK = 2;

const QUANTITIES = ['id', 'vd'] as const;
const REGIONS = ['forward', 'reverse'] as const;

/**
 * Every diode of a circuit. Terminals are [anode, internal anode, cathode]: with RS > 0,
 * RS/(area·M) sits between the anode and the internal node; without it the internal anode is
 * the anode. The junction lies between the internal anode and the cathode. Area and M both
 * multiply IS.
 */
export class DiodeTable implements DeviceTable {
  readonly kind: DeviceKind = DIODE;
  private readonly n: number;
  private readonly isNom: Float64Array;
  private readonly nEmission: Float64Array;
  private readonly xti: Float64Array;
  private readonly eg: Float64Array;
  /** Series conductance, siemens (0 without RS). */
  private readonly grs: Float64Array;
  private readonly is: Float64Array;
  private readonly nvt: Float64Array;
  private readonly vcrit: Float64Array;
  private gmin = 0;
  private tnomC = 27;
  private readonly vdOld: Float64Array;
  /** Junction voltage the next load linearises at (NaN when none is pending). */
  private readonly startVd: Float64Array;

  constructor(readonly instances: DeviceInstances<Diode>, issues: ParamIssue[]) {
    const n = (this.n = instances.count);
    const col = (): Float64Array => new Float64Array(n);
    this.isNom = col();
    this.nEmission = col();
    this.xti = col();
    this.eg = col();
    this.grs = col();
    this.is = col();
    this.nvt = col().fill(0.025);
    this.vcrit = col().fill(0.6);
    this.vdOld = col();
    this.startVd = col().fill(Number.NaN);
    const t = instances.terminals;
    for (let i = 0; i < n; i++) {
      const element = instances.elements[i];
      const m = element.model;
      const area = elementParam(element, 'AREA', element.area, 'positive', 0, issues);
      const mult = elementParam(element, 'M', element.m, 'positive', 0, issues);
      const scale = area * mult;
      this.isNom[i] = modelParam(element, m, 'IS', 'non-negative', issues) * scale;
      this.nEmission[i] = modelParam(element, m, 'N', 'positive', issues);
      this.xti[i] = modelParam(element, m, 'XTI', 'finite', issues);
      this.eg[i] = modelParam(element, m, 'EG', 'finite', issues);
      const rs = modelParam(element, m, 'RS', 'non-negative', issues);
      const internal = t[i * T + JA] !== t[i * T + ANODE];
      this.grs[i] = internal && rs > 0 && scale > 0 ? scale / rs : 0;
    }
  }

  prepare(c: DeviceConditions): void {
    this.gmin = c.junctionGmin;
    this.tnomC = c.tnomC;
    for (let i = 0; i < this.n; i++) {
      this.is[i] = saturationCurrentAt(this.isNom[i], this.xti[i], this.eg[i], c.temperatureC, c.tnomC);
      this.nvt[i] = this.nEmission[i] * c.vt;
      this.vcrit[i] = criticalVoltage(this.nvt[i], this.is[i]);
    }
  }

  /** Junction voltage of instance i at x (internal anode to cathode). */
  private junctionVoltage(x: Float64Array, i: number): number {
    const t = this.instances.terminals;
    const ja = t[i * T + JA];
    const jk = t[i * T + JK];
    return (ja >= 0 ? x[ja] : 0) - (jk >= 0 ? x[jk] : 0);
  }

  resetState(x: Float64Array, start?: StartHint): void {
    for (let i = 0; i < this.n; i++) {
      const vd = this.junctionVoltage(x, i);
      this.vdOld[i] = vd;
      this.startVd[i] = Number.NaN;
      const is = this.is[i];
      if (!start || !(is > 0)) continue;
      if (start.kind === 'cold') this.startVd[i] = Math.min(this.vcrit[i], 1);
      else if (vd > 0) {
        const is0 = saturationCurrentAt(this.isNom[i], this.xti[i], this.eg[i], start.temperatureC, this.tnomC);
        this.startVd[i] = shiftJunction(vd, this.nEmission[i] * start.vt, this.nvt[i], is0, is);
      }
    }
  }

  load(x: Float64Array, values: Float64Array, rhs: Float64Array, limit: boolean, tally: LoadTally): void {
    const t = this.instances.terminals;
    const pos = this.instances.positions;
    const gmin = this.gmin;
    for (let i = 0; i < this.n; i++) {
      let vd = this.junctionVoltage(x, i);
      const nvt = this.nvt[i];
      if (Number.isFinite(this.startVd[i])) {
        vd = this.startVd[i];
        this.startVd[i] = Number.NaN;
        tally.limited = true;
      } else if (limit) {
        const v = limitJunctionValue(vd, this.vdOld[i], nvt, this.vcrit[i]);
        if (v !== vd) tally.limited = true;
        vd = v;
      }
      this.vdOld[i] = vd;
      const is = this.is[i];
      const arg = vd / nvt;
      const id = is * (guardedExpValue(arg) - 1) + gmin * vd;
      const gd = (is * guardedExpSlope(arg)) / nvt + gmin;
      const p = i * T * T;
      // Junction between the internal anode (row/column JA) and the cathode (JK).
      add(values, pos[p + JA * T + JA], gd);
      add(values, pos[p + JA * T + JK], -gd);
      add(values, pos[p + JK * T + JA], -gd);
      add(values, pos[p + JK * T + JK], gd);
      const ieq = id - gd * vd;
      const ka = t[i * T + JA];
      const kk = t[i * T + JK];
      if (ka >= 0) rhs[ka] -= ieq;
      if (kk >= 0) rhs[kk] -= -ieq;
      const grs = this.grs[i];
      if (grs > 0) {
        add(values, pos[p + ANODE * T + ANODE], grs);
        add(values, pos[p + ANODE * T + JA], -grs);
        add(values, pos[p + JA * T + ANODE], -grs);
        add(values, pos[p + JA * T + JA], grs);
      }
      if (!(Number.isFinite(gd) && Number.isFinite(ieq))) tally.nonFinite.push(this.instances.elementIndex[i]);
    }
  }

  evaluate(x: Float64Array): DeviceColumns {
    const out = allocateColumns(QUANTITIES.length, this.n);
    const [id, vdCol] = out.values;
    const t = this.instances.terminals;
    const gmin = this.gmin;
    for (let i = 0; i < this.n; i++) {
      const vj = this.junctionVoltage(x, i);
      const nvt = this.nvt[i];
      id[i] = this.is[i] * (guardedExpValue(vj / nvt) - 1) + gmin * vj;
      const a = t[i * T + ANODE];
      const k = t[i * T + JK];
      const vd = (a >= 0 ? x[a] : 0) - (k >= 0 ? x[k] : 0);
      vdCol[i] = vd;
      out.region[i] = vd > 0 ? 0 : 1;
    }
    return out;
  }

  overdriven(x: Float64Array, i: number): OverdrivenJunction[] {
    const v = this.junctionVoltage(x, i);
    return this.is[i] > 0 && v / this.nvt[i] > EXP_ARG_LIMIT ? [{ junction: 'junction', volts: v }] : [];
  }
}

/** values[slot] += v, skipping ground slots (−1). */
function add(values: Float64Array, slot: number, v: number): void {
  if (slot >= 0) values[slot] += v;
}

/** Whether the card's model asks for an internal node (RS > 0 and finite). */
function needsInternalNode(element: Diode): boolean {
  const rs = element.model.params.RS;
  return rs !== undefined && Number.isFinite(rs) && rs > 0 && element.area > 0 && element.m > 0;
}

/** The diode kind (element letter D). */
export const DIODE: DeviceKind = deviceKind<Diode>({
  letter: 'D',
  nodeCount: 2,
  terminalCount: T,
  quantities: QUANTITIES,
  regions: REGIONS,
  internalNodes: (el) => (needsInternalNode(el) ? ['internal anode'] : []),
  terminals: (el, node, internal) => [node(el.nodes[0]), internal.length > 0 ? internal[0] : node(el.nodes[0]), node(el.nodes[1])],
  dcPaths: (el) => [[el.nodes[0], el.nodes[1]]],
  checkedJunctions: (el) => [{ junction: 'junction', a: el.nodes[0], b: el.nodes[1] }],
  instanceValues: (el) => [{ name: 'area', value: el.area, typical: 1 }, { name: 'M', value: el.m, typical: 1 }],
  createTable: (instances, issues) => new DiodeTable(instances, issues),
  record: (cols, _instances, i): DiodeRecord => ({ type: 'diode', id: cols.values[0][i], vd: cols.values[1][i], region: REGIONS[cols.region[i]] }),
  terminalCurrent: (cols, i, t) => (t === 0 ? cols.values[0][i] : t === 1 ? -cols.values[0][i] : 0),
});
