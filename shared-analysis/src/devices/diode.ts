// Junction diode: ID = IS·(exp(VD/(N·VT)) − 1) with optional series resistance RS (an internal node), limiting and records.

import type { Diode } from '../circuit';
import type { DiodeRecord } from '../solve/types';
import type { DeviceConditions, LoadReport, NonlinearDevice, OverdrivenJunction, StartHint } from './device';
import { addControl, addEquivalentCurrent, terminalVoltage } from './device';
import type { ParamIssue } from './params';
import { elementParam, modelParam } from './params';
import { EXP_ARG_LIMIT, criticalVoltage, guardedExp, limitJunction, saturationCurrentAt, shiftJunction } from './physics';

/** Current and conductance of the intrinsic junction at voltage vd. */
export interface DiodeJunction {
  id: number;
  gd: number;
  clipped: boolean;
}

/** ID = IS·(exp(vd/nvt) − 1) + gmin·vd and its slope (DESIGN.md), exponential guarded. */
export function diodeJunction(vd: number, is: number, nvt: number, gmin: number): DiodeJunction {
  const e = guardedExp(vd / nvt);
  return { id: is * (e.value - 1) + gmin * vd, gd: (is * e.slope) / nvt + gmin, clipped: e.clipped };
}

/**
 * A diode. Terminals are [anode, cathode], or [anode, internal anode, cathode] when RS > 0:
 * RS/(area·M) then sits between the anode and the internal node and the junction between
 * the internal node and the cathode. Area and M both multiply IS.
 */
export class DiodeDevice implements NonlinearDevice {
  readonly terminals: Int32Array;
  positions = new Int32Array(0);
  private readonly isNom: number;
  private readonly n: number;
  private readonly xti: number;
  private readonly eg: number;
  private readonly grs: number;
  private is = 0;
  private nvt = 0.025;
  private vcrit = 0.6;
  private gmin = 0;
  private vdOld = 0;
  private tnomC = 27;
  /** Junction voltage the next load linearises at (NaN when none is pending). */
  private startVd = Number.NaN;

  /** `internal` is the unknown index of the internal anode node, or −1 when there is no series resistance. */
  constructor(readonly element: Diode, anode: number, cathode: number, internal: number, issues: ParamIssue[]) {
    const m = element.model;
    const area = elementParam(element, 'AREA', element.area, 'positive', 0, issues);
    const mult = elementParam(element, 'M', element.m, 'positive', 0, issues);
    const scale = area * mult;
    this.isNom = modelParam(element, m, 'IS', 'non-negative', issues) * scale;
    this.n = modelParam(element, m, 'N', 'positive', issues);
    this.xti = modelParam(element, m, 'XTI', 'finite', issues);
    this.eg = modelParam(element, m, 'EG', 'finite', issues);
    const rs = modelParam(element, m, 'RS', 'non-negative', issues);
    this.grs = internal >= 0 && rs > 0 && scale > 0 ? scale / rs : 0;
    this.terminals = internal >= 0 ? Int32Array.of(anode, internal, cathode) : Int32Array.of(anode, cathode);
  }

  /** Whether the card's model asks for an internal node (RS > 0 and finite). */
  static needsInternalNode(element: Diode): boolean {
    const rs = element.model.params.RS;
    return rs !== undefined && Number.isFinite(rs) && rs > 0 && element.area > 0 && element.m > 0;
  }

  prepare(c: DeviceConditions): void {
    this.is = saturationCurrentAt(this.isNom, this.xti, this.eg, c.temperatureC, c.tnomC);
    this.nvt = this.n * c.vt;
    this.vcrit = criticalVoltage(this.nvt, this.is);
    this.gmin = c.junctionGmin;
    this.tnomC = c.tnomC;
  }

  private junctionVoltage(x: Float64Array): number {
    const nt = this.terminals.length;
    return terminalVoltage(this.terminals, x, nt - 2) - terminalVoltage(this.terminals, x, nt - 1);
  }

  resetState(x: Float64Array, start?: StartHint): void {
    this.vdOld = this.junctionVoltage(x);
    this.startVd = Number.NaN;
    if (!start || !(this.is > 0)) return;
    if (start.kind === 'cold') this.startVd = Math.min(this.vcrit, 1);
    else if (this.vdOld > 0) {
      const is0 = saturationCurrentAt(this.isNom, this.xti, this.eg, start.temperatureC, this.tnomC);
      this.startVd = shiftJunction(this.vdOld, this.n * start.vt, this.nvt, is0, this.is);
    }
  }

  load(x: Float64Array, values: Float64Array, rhs: Float64Array, limit: boolean): LoadReport {
    const nt = this.terminals.length;
    const ja = nt - 2;
    const jk = nt - 1;
    let vd = this.junctionVoltage(x);
    let limited = false;
    if (Number.isFinite(this.startVd)) {
      vd = this.startVd;
      this.startVd = Number.NaN;
      limited = true;
    } else if (limit) {
      const l = limitJunction(vd, this.vdOld, this.nvt, this.vcrit);
      vd = l.v;
      limited = l.limited;
    }
    this.vdOld = vd;
    const j = diodeJunction(vd, this.is, this.nvt, this.gmin);
    const p = this.positions;
    addControl(p, nt, values, ja, ja, jk, j.gd);
    addControl(p, nt, values, jk, ja, jk, -j.gd);
    const ieq = j.id - j.gd * vd;
    addEquivalentCurrent(this.terminals, rhs, ja, ieq);
    addEquivalentCurrent(this.terminals, rhs, jk, -ieq);
    if (this.grs > 0) {
      addControl(p, nt, values, 0, 0, 1, this.grs);
      addControl(p, nt, values, 1, 0, 1, -this.grs);
    }
    return { limited, clipped: j.clipped, finite: Number.isFinite(j.gd) && Number.isFinite(ieq) };
  }

  overdriven(x: Float64Array): OverdrivenJunction[] {
    const v = this.junctionVoltage(x);
    return this.is > 0 && v / this.nvt > EXP_ARG_LIMIT ? [{ junction: 'junction', volts: v }] : [];
  }

  record(x: Float64Array): DiodeRecord {
    const j = diodeJunction(this.junctionVoltage(x), this.is, this.nvt, this.gmin);
    const vd = terminalVoltage(this.terminals, x, 0) - terminalVoltage(this.terminals, x, this.terminals.length - 1);
    return { type: 'diode', id: j.id, vd, region: vd > 0 ? 'forward' : 'reverse' };
  }
}
