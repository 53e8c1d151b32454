// Junction diode: ID = IS·(exp(VD/(N·VT)) − 1) − IBV·exp(−(VD + BV)/(NBV·VT)) with optional series resistance RS (an internal node), as one table of typed arrays with limiting, stamps and records (docs/DEVICE-MODELS.md).

import type { Diode } from '../circuit';
import type { DiodeRecord, DiodeRegion } from '../solve/types';
import type { DeviceColumns, DeviceConditions, DeviceInstances, DeviceKind, DeviceSensitivity, DeviceTable, LoadTally, OverdrivenJunction, StartHint } from './device';
import { NOT_OVERDRIVEN, TEMPERATURE_PARAMETER, allocateSensitivity, columnsFor, deviceKind } from './device';
import type { ParamIssue } from './params';
import { elementParam, modelParam } from './params';
import { EXP_ARG_LIMIT, UNBOUNDED, ZERO_CELSIUS_K, criticalVoltage, guardedExpSlope, guardedExpValue, limitJunctionValue, reciprocalOrUnbounded, cardTnomC, saturationCurrentAt, saturationCurrentLogSlope, shiftJunction, tnomOf } from './physics';

/** Current and conductance of the intrinsic junction at voltage vd. */
export interface DiodeJunction {
  id: number;
  gd: number;
  clipped: boolean;
  /** The breakdown term's share of the current, amperes (≥ 0, flowing cathode to anode). */
  breakdown: number;
}

/**
 * ID = IS·(exp(vd/nvt) − 1) − IBV·exp(−(vd + BV)/nbvvt) + gmin·vd and its slope
 * (docs/DEVICE-MODELS.md), exponentials guarded. `bv` Infinity (the default) drops the breakdown term.
 */
export function diodeJunction(vd: number, is: number, nvt: number, gmin: number, bv = Infinity, ibv = 1e-3, nbvvt = nvt): DiodeJunction {
  const x = vd / nvt;
  let id = is * (guardedExpValue(x) - 1) + gmin * vd;
  let gd = (is * guardedExpSlope(x)) / nvt + gmin;
  let breakdown = 0;
  let xb = -Infinity;
  if (Number.isFinite(bv)) {
    xb = -(vd + bv) / nbvvt;
    breakdown = ibv * guardedExpValue(xb);
    id -= breakdown;
    gd += (ibv * guardedExpSlope(xb)) / nbvvt;
  }
  return { id, gd, clipped: x > EXP_ARG_LIMIT || xb > EXP_ARG_LIMIT, breakdown };
}

/**
 * Breakdown voltage at temperature: BV(T) = BV·(1 + TBV1·ΔT) (docs/DEVICE-MODELS.md).
 */
export function breakdownVoltageAt(bv: number, tbv1: number, temperatureC: number, tnomC: number): number {
  return bv * (1 + tbv1 * (temperatureC - tnomC));
}

/** Terminals per instance: anode, internal anode (the anode itself when there is no RS), cathode. */
const T = 3;
const ANODE = 0;
const JA = 1;
const JK = 2;

const QUANTITIES = ['id', 'vd', 'rd'] as const;
const REGIONS: readonly DiodeRegion[] = ['forward', 'reverse', 'breakdown'];
const BREAKDOWN = 2;

/**
 * Every diode of a circuit. Terminals are [anode, internal anode, cathode]: with RS > 0,
 * RS/(area·M) sits between the anode and the internal node; without it the internal anode is
 * the anode. The junction lies between the internal anode and the cathode. Area and M both
 * multiply IS and IBV.
 */
export class DiodeTable implements DeviceTable {
  readonly kind: DeviceKind = DIODE;
  private readonly n: number;
  private readonly isNom: Float64Array;
  private readonly nEmission: Float64Array;
  private readonly xti: Float64Array;
  private readonly eg: Float64Array;
  /** Breakdown voltage at Tnom (Infinity: no breakdown term), its current (× area × M), emission coefficient and temperature coefficient. */
  private readonly bvNom: Float64Array;
  private readonly ibv: Float64Array;
  private readonly nbv: Float64Array;
  private readonly tbv1: Float64Array;
  /** The card's own TNOM, °C (NaN: the analysis's nominal temperature). */
  private readonly tnom: Float64Array;
  /** Series conductance, siemens (0 without RS). */
  private readonly grs: Float64Array;
  private readonly is: Float64Array;
  private readonly nvt: Float64Array;
  private readonly vcrit: Float64Array;
  private readonly bv: Float64Array;
  private readonly nbvvt: Float64Array;
  /** Critical value of the breakdown junction's own forward variable u = −VD − BV. */
  private readonly vcritBv: Float64Array;
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
    this.bvNom = col();
    this.ibv = col();
    this.nbv = col();
    this.tbv1 = col();
    this.tnom = col();
    this.grs = col();
    this.is = col();
    this.nvt = col().fill(0.025);
    this.vcrit = col().fill(0.6);
    this.bv = col().fill(Infinity);
    this.nbvvt = col().fill(0.025);
    this.vcritBv = col().fill(0.6);
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
      this.bvNom[i] = modelParam(element, m, 'BV', 'positive-or-infinite', issues);
      this.ibv[i] = modelParam(element, m, 'IBV', 'positive', issues) * scale;
      this.nbv[i] = modelParam(element, m, 'NBV', 'positive', issues);
      this.tbv1[i] = modelParam(element, m, 'TBV1', 'finite', issues);
      this.tnom[i] = cardTnomC(m.params, NaN);
      const rs = modelParam(element, m, 'RS', 'non-negative', issues);
      const internal = t[i * T + JA] !== t[i * T + ANODE];
      this.grs[i] = internal && rs > 0 && scale > 0 ? scale / rs : 0;
    }
  }

  prepare(c: DeviceConditions): void {
    this.gmin = c.junctionGmin;
    this.tnomC = c.tnomC;
    for (let i = 0; i < this.n; i++) {
      const tn = tnomOf(this.tnom[i], c.tnomC);
      this.is[i] = saturationCurrentAt(this.isNom[i], this.xti[i], this.eg[i], c.temperatureC, tn);
      this.nvt[i] = this.nEmission[i] * c.vt;
      this.vcrit[i] = criticalVoltage(this.nvt[i], this.is[i]);
      const bv = breakdownVoltageAt(this.bvNom[i], this.tbv1[i], c.temperatureC, tn);
      // A coefficient that drives BV to zero or below leaves no breakdown voltage to speak of; the term is dropped.
      this.bv[i] = bv > 0 && this.ibv[i] > 0 ? bv : Infinity;
      this.nbvvt[i] = this.nbv[i] * c.vt;
      this.vcritBv[i] = criticalVoltage(this.nbvvt[i], this.ibv[i]);
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
        const is0 = saturationCurrentAt(this.isNom[i], this.xti[i], this.eg[i], start.temperatureC, tnomOf(this.tnom[i], this.tnomC));
        this.startVd[i] = shiftJunction(vd, this.nEmission[i] * start.vt, this.nvt[i], is0, is);
      } else if (Number.isFinite(this.bv[i])) {
        // In breakdown the reverse voltage follows BV(T) at constant current.
        const bv0 = breakdownVoltageAt(this.bvNom[i], this.tbv1[i], start.temperatureC, tnomOf(this.tnom[i], this.tnomC));
        if (bv0 > 0 && vd < -0.5 * bv0) this.startVd[i] = vd - (this.bv[i] - bv0);
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
      const bv = this.bv[i];
      const nbvvt = this.nbvvt[i];
      if (Number.isFinite(this.startVd[i])) {
        vd = this.startVd[i];
        this.startVd[i] = Number.NaN;
        tally.limited = true;
      } else if (limit) {
        let v = limitJunctionValue(vd, this.vdOld[i], nvt, this.vcrit[i]);
        if (Number.isFinite(bv) && v < 0) {
          // The breakdown exponential is limited in its own forward variable u = −VD − BV.
          const u = limitJunctionValue(-v - bv, -this.vdOld[i] - bv, nbvvt, this.vcritBv[i]);
          v = -u - bv;
        }
        if (v !== vd) tally.limited = true;
        vd = v;
      }
      this.vdOld[i] = vd;
      const is = this.is[i];
      const arg = vd / nvt;
      let id = is * (guardedExpValue(arg) - 1) + gmin * vd;
      let gd = (is * guardedExpSlope(arg)) / nvt + gmin;
      if (Number.isFinite(bv)) {
        const xb = -(vd + bv) / nbvvt;
        const ibv = this.ibv[i];
        id -= ibv * guardedExpValue(xb);
        gd += (ibv * guardedExpSlope(xb)) / nbvvt;
      }
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

  evaluate(x: Float64Array, into?: DeviceColumns): DeviceColumns {
    const out = columnsFor(into, QUANTITIES.length, this.n);
    const [id, vdCol, rd] = out.values;
    const t = this.instances.terminals;
    const gmin = this.gmin;
    for (let i = 0; i < this.n; i++) {
      const vj = this.junctionVoltage(x, i);
      const j = diodeJunction(vj, this.is[i], this.nvt[i], gmin, this.bv[i], this.ibv[i], this.nbvvt[i]);
      id[i] = j.id;
      const a = t[i * T + ANODE];
      const k = t[i * T + JK];
      const vd = (a >= 0 ? x[a] : 0) - (k >= 0 ? x[k] : 0);
      vdCol[i] = vd;
      const grs = this.grs[i];
      rd[i] = Math.min(UNBOUNDED, reciprocalOrUnbounded(j.gd) + (grs > 0 ? 1 / grs : 0));
      // Breakdown when the breakdown current outweighs the junction's own reverse saturation current.
      out.region[i] = vj < 0 && j.breakdown > this.is[i] ? BREAKDOWN : vd > 0 ? 0 : 1;
    }
    return out;
  }

  overdriven(x: Float64Array, i: number): readonly OverdrivenJunction[] {
    const v = this.junctionVoltage(x, i);
    return this.is[i] > 0 && v / this.nvt[i] > EXP_ARG_LIMIT ? [{ junction: 'junction', volts: v }] : NOT_OVERDRIVEN;
  }

  /**
   * Exact partial derivatives at fixed terminal voltages (docs/VARIATION.md), for the temperature
   * only (a diode carries no source of spread of its own): the junction current and its slope as
   * `diodeJunction` gives them, and per kelvin IS·(d ln IS/dT)·(e − 1) − IS·e'·VD/(N·VT·T) (N·VT ∝ T)
   * less the breakdown term's IBV·e'(xb)·dxb/dT with xb = −(VD + BV(T))/(NBV·VT) and
   * dBV/dT = BV·TBV1. The current read at the anode is the junction's (the record's), so RS enters
   * only through the circuit's equations.
   */
  sensitivity(x: Float64Array, c: DeviceConditions, params: readonly string[]): DeviceSensitivity | undefined {
    if (params.some((p) => p !== TEMPERATURE_PARAMETER)) return undefined;
    const N = 2;
    const out = allocateSensitivity(this.n, T, N, params.length);
    const tk = c.temperatureC + ZERO_CELSIUS_K;
    for (let i = 0; i < this.n; i++) {
      const vd = this.junctionVoltage(x, i);
      const is = this.is[i];
      const nvt = this.nvt[i];
      const bv = this.bv[i];
      const j = diodeJunction(vd, is, nvt, this.gmin, bv, this.ibv[i], this.nbvvt[i]);
      out.current[i * N] = j.id;
      out.current[i * N + 1] = -j.id;
      const w = out.currentByVoltage;
      w[i * N * T + JA] = j.gd;
      w[i * N * T + JK] = -j.gd;
      w[(i * N + 1) * T + JA] = -j.gd;
      w[(i * N + 1) * T + JK] = j.gd;
      if (params.length === 0) continue;
      const x0 = vd / nvt;
      let perK = is * saturationCurrentLogSlope(this.xti[i], this.eg[i], c.temperatureC) * (guardedExpValue(x0) - 1) - (is * guardedExpSlope(x0) * x0) / tk;
      if (Number.isFinite(bv)) {
        const nbvvt = this.nbvvt[i];
        const xb = -(vd + bv) / nbvvt;
        perK -= this.ibv[i] * guardedExpSlope(xb) * (-(this.bvNom[i] * this.tbv1[i]) / nbvvt - xb / tk);
      }
      out.residualByParam[0][i * T + JA] = perK;
      out.residualByParam[0][i * T + JK] = -perK;
      out.currentByParam[0][i * N] = perK;
      out.currentByParam[0][i * N + 1] = -perK;
    }
    return out;
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
  dcPaths: (el, to) => to.union(el.nodes[0], el.nodes[1]),
  checkedJunctions: (el, visit) => visit('junction', el.nodes[0], el.nodes[1]),
  instanceValues: (el, visit) => {
    visit('area', el.area, 1);
    visit('M', el.m, 1);
  },
  createTable: (instances, issues) => new DiodeTable(instances, issues),
  record: (cols, _instances, i): DiodeRecord => ({ type: 'diode', id: cols.values[0][i], vd: cols.values[1][i], region: REGIONS[cols.region[i]], rd: cols.values[2][i] }),
  terminalCurrent: (cols, i, t) => (t === 0 ? cols.values[0][i] : t === 1 ? -cols.values[0][i] : 0),
});
