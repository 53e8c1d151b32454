// Bipolar transistor: Gummel–Poon transport model with forward Early effect only (DESIGN.md), NPN and PNP, as one table of typed arrays with limiting, stamps and records.

import type { Bjt } from '../circuit';
import type { BjtRecord, BjtRegion } from '../solve/types';
import type { DeviceColumns, DeviceConditions, DeviceInstances, DeviceKind, DeviceTable, LoadTally, OverdrivenJunction, StartHint } from './device';
import { allocateColumns, deviceKind } from './device';
import type { ParamIssue } from './params';
import { elementParam, modelParam } from './params';
import { EXP_ARG_LIMIT, UNBOUNDED, criticalVoltage, guardedExpSlope, guardedExpValue, limitJunctionValue, reciprocalOrUnbounded, saturationCurrentAt, shiftJunction } from './physics';

/**
 * Region by junction bias in the device's own polarity (DESIGN.md): forward-active when
 * VBE > 0 and VBC ≤ 0, saturation when both are forward, reverse-active when only the
 * base-collector junction is forward, cutoff when neither is.
 */
export function bjtRegion(vbe: number, vbc: number): BjtRegion {
  if (vbe > 0) return vbc > 0 ? 'saturation' : 'forward-active';
  return vbc > 0 ? 'reverse-active' : 'cutoff';
}

/** Model parameters of one BJT after temperature and beta scaling (IS already times area). */
export interface BjtParams {
  is: number;
  bf: number;
  br: number;
  nf: number;
  nr: number;
  /** Forward Early voltage, volts; Infinity for none. */
  vaf: number;
  /** Parallel count: multiplies every current. */
  m: number;
  vt: number;
  /** Conductance across each junction, siemens. */
  gmin: number;
}

/** Terminal currents (own polarity, into the terminal) and their partial derivatives with respect to VBE and VBC. */
export interface BjtEvaluation {
  ic: number;
  ib: number;
  dicDvbe: number;
  dicDvbc: number;
  dibDvbe: number;
  dibDvbc: number;
  /** ∂IC/∂VBE of the transport current alone (the small-signal gm). */
  gm: number;
  /** ∂IB/∂VBE without the robustness conductance (1/rπ). */
  gpi: number;
  clipped: boolean;
}

// Slots of the scratch array `bjtCore` fills.
const IC = 0;
const IB = 1;
const DIC_DVBE = 2;
const DIC_DVBC = 3;
const DIB_DVBE = 4;
const DIB_DVBC = 5;
const GM = 6;
const GPI = 7;

/**
 * DESIGN.md equations in the NPN sense: ICC = IS·(exp(VBE/(NF·VT)) − 1),
 * IEC = IS·(exp(VBC/(NR·VT)) − 1), IT = (ICC − IEC)·(1 − VBC/VAF), IC = IT − IEC/BR,
 * IB = ICC/BF + IEC/BR; every current times M; gmin across each junction. Writes the slots
 * above into `out` and returns whether an exponential ran beyond the evaluated range.
 */
function bjtCore(vbe: number, vbc: number, is: number, bf: number, br: number, nfvt: number, nrvt: number, vaf: number, m: number, g: number, out: Float64Array): boolean {
  const xbe = vbe / nfvt;
  const xbc = vbc / nrvt;
  const icc = is * (guardedExpValue(xbe) - 1);
  const iec = is * (guardedExpValue(xbc) - 1);
  const dicc = (is * guardedExpSlope(xbe)) / nfvt;
  const diec = (is * guardedExpSlope(xbc)) / nrvt;
  const early = Number.isFinite(vaf);
  const q = early ? 1 - vbc / vaf : 1;
  const dq = early ? -1 / vaf : 0;
  out[IC] = m * ((icc - iec) * q - iec / br) - g * vbc;
  out[IB] = m * (icc / bf + iec / br) + g * (vbe + vbc);
  out[DIC_DVBE] = m * dicc * q;
  out[DIC_DVBC] = m * (-diec * q + (icc - iec) * dq - diec / br) - g;
  out[DIB_DVBE] = (m * dicc) / bf + g;
  out[DIB_DVBC] = (m * diec) / br + g;
  out[GM] = m * dicc * q;
  out[GPI] = (m * dicc) / bf;
  return xbe > EXP_ARG_LIMIT || xbc > EXP_ARG_LIMIT;
}

/** The BJT equations at one bias (own polarity), for tests and hand checks; the table evaluates the same function in its loop. */
export function evaluateBjt(vbe: number, vbc: number, p: BjtParams, out?: BjtEvaluation): BjtEvaluation {
  const s = new Float64Array(8);
  const clipped = bjtCore(vbe, vbc, p.is, p.bf, p.br, p.nf * p.vt, p.nr * p.vt, p.vaf, p.m, p.gmin, s);
  const r = out ?? ({} as BjtEvaluation);
  r.ic = s[IC];
  r.ib = s[IB];
  r.dicDvbe = s[DIC_DVBE];
  r.dicDvbc = s[DIC_DVBC];
  r.dibDvbe = s[DIB_DVBE];
  r.dibDvbc = s[DIB_DVBC];
  r.gm = s[GM];
  r.gpi = s[GPI];
  r.clipped = clipped;
  return r;
}

const C = 0;
const B = 1;
const E = 2;
/** Terminals per instance: collector, base, emitter. */
const T = 3;

/** Solved quantities, in the record's key order. */
const QUANTITIES = ['ic', 'ib', 'ie', 'vbe', 'vbc', 'vce', 'gm', 'rpi', 'ro'] as const;
const REGIONS: readonly BjtRegion[] = ['forward-active', 'saturation', 'cutoff', 'reverse-active'];
const Q_IC = 0;
const Q_IB = 1;
const Q_IE = 2;
const Q_VBE = 3;
const Q_VBC = 4;
const Q_VCE = 5;
const Q_GM = 6;
const Q_RPI = 7;
const Q_RO = 8;

/** `DeviceColumns.flags` bit: the model has no Early effect, so `ro` stands for unbounded. */
const NO_EARLY = 1;

function regionCode(vbe: number, vbc: number): number {
  if (vbe > 0) return vbc > 0 ? 1 : 0;
  return vbc > 0 ? 3 : 2;
}

/** Every BJT of a circuit. Terminals are [collector, base, emitter]; a substrate node, if any, carries no DC current. */
export class BjtTable implements DeviceTable {
  readonly kind: DeviceKind = BJT;
  private readonly n: number;
  /** +1 NPN, −1 PNP. */
  private readonly sign: Float64Array;
  // Nominal parameters (IS times area), read once from the cards.
  private readonly isNom: Float64Array;
  private readonly bfNom: Float64Array;
  private readonly brNom: Float64Array;
  private readonly xti: Float64Array;
  private readonly eg: Float64Array;
  private readonly nf: Float64Array;
  private readonly nr: Float64Array;
  private readonly vaf: Float64Array;
  private readonly m: Float64Array;
  // Parameters of the solve in progress.
  private readonly is: Float64Array;
  private readonly bf: Float64Array;
  private readonly br: Float64Array;
  private readonly vcritBe: Float64Array;
  private readonly vcritBc: Float64Array;
  private vt = 0.025;
  private gmin = 0;
  private tnomC = 27;
  // Limiting history, and the junction voltages the next load linearises at (NaN when none is pending).
  private readonly vbeOld: Float64Array;
  private readonly vbcOld: Float64Array;
  private readonly startVbe: Float64Array;
  private readonly startVbc: Float64Array;
  private readonly scratch = new Float64Array(8);

  constructor(readonly instances: DeviceInstances<Bjt>, issues: ParamIssue[]) {
    const n = (this.n = instances.count);
    const col = (): Float64Array => new Float64Array(n);
    this.sign = col();
    this.isNom = col();
    this.bfNom = col();
    this.brNom = col();
    this.xti = col();
    this.eg = col();
    this.nf = col();
    this.nr = col();
    this.vaf = col();
    this.m = col();
    this.is = col();
    this.bf = col();
    this.br = col();
    this.vcritBe = col().fill(0.6);
    this.vcritBc = col().fill(0.6);
    this.vbeOld = col();
    this.vbcOld = col();
    this.startVbe = col().fill(Number.NaN);
    this.startVbc = col().fill(Number.NaN);
    for (let i = 0; i < n; i++) {
      const element = instances.elements[i];
      const md = element.model;
      this.sign[i] = md.kind === 'pnp' ? -1 : 1;
      const area = elementParam(element, 'AREA', element.area, 'positive', 0, issues);
      this.m[i] = elementParam(element, 'M', element.m, 'positive', 0, issues);
      this.isNom[i] = modelParam(element, md, 'IS', 'non-negative', issues) * area;
      this.bfNom[i] = modelParam(element, md, 'BF', 'positive', issues);
      this.brNom[i] = modelParam(element, md, 'BR', 'positive', issues);
      this.xti[i] = modelParam(element, md, 'XTI', 'finite', issues);
      this.eg[i] = modelParam(element, md, 'EG', 'finite', issues);
      this.nf[i] = modelParam(element, md, 'NF', 'positive', issues);
      this.nr[i] = modelParam(element, md, 'NR', 'positive', issues);
      this.vaf[i] = modelParam(element, md, 'VAF', 'positive-or-infinite', issues);
    }
    this.is.set(this.isNom);
    this.bf.set(this.bfNom);
    this.br.set(this.brNom);
  }

  /** The scaled parameters of instance i in use for the current solve. */
  modelParams(i: number): BjtParams {
    return { is: this.is[i], bf: this.bf[i], br: this.br[i], nf: this.nf[i], nr: this.nr[i], vaf: this.vaf[i], m: this.m[i], vt: this.vt, gmin: this.gmin };
  }

  prepare(c: DeviceConditions): void {
    this.vt = c.vt;
    this.gmin = c.junctionGmin;
    this.tnomC = c.tnomC;
    for (let i = 0; i < this.n; i++) {
      const is = saturationCurrentAt(this.isNom[i], this.xti[i], this.eg[i], c.temperatureC, c.tnomC);
      this.is[i] = is;
      this.bf[i] = this.bfNom[i] * c.betaScale;
      this.br[i] = this.brNom[i] * c.betaScale;
      this.vcritBe[i] = criticalVoltage(this.nf[i] * c.vt, is);
      this.vcritBc[i] = criticalVoltage(this.nr[i] * c.vt, is);
    }
  }

  resetState(x: Float64Array, start?: StartHint): void {
    const t = this.instances.terminals;
    for (let i = 0; i < this.n; i++) {
      const tc = t[i * T + C];
      const tb = t[i * T + B];
      const te = t[i * T + E];
      const vb = tb >= 0 ? x[tb] : 0;
      const s = this.sign[i];
      const vbe = s * (vb - (te >= 0 ? x[te] : 0));
      const vbc = s * (vb - (tc >= 0 ? x[tc] : 0));
      this.vbeOld[i] = vbe;
      this.vbcOld[i] = vbc;
      this.startVbe[i] = Number.NaN;
      this.startVbc[i] = Number.NaN;
      const is = this.is[i];
      if (!start || !(is > 0)) continue;
      if (start.kind === 'cold') {
        // Forward-active: base-emitter at its critical voltage, base-collector unbiased.
        this.startVbe[i] = Math.min(this.vcritBe[i], 1);
        this.startVbc[i] = 0;
        continue;
      }
      const is0 = saturationCurrentAt(this.isNom[i], this.xti[i], this.eg[i], start.temperatureC, this.tnomC);
      this.startVbe[i] = vbe > 0 ? shiftJunction(vbe, this.nf[i] * start.vt, this.nf[i] * this.vt, is0, is) : vbe;
      this.startVbc[i] = vbc > 0 ? shiftJunction(vbc, this.nr[i] * start.vt, this.nr[i] * this.vt, is0, is) : vbc;
    }
  }

  load(x: Float64Array, values: Float64Array, rhs: Float64Array, limit: boolean, tally: LoadTally): void {
    const t = this.instances.terminals;
    const pos = this.instances.positions;
    const ev = this.scratch;
    const vt = this.vt;
    const g = this.gmin;
    for (let i = 0; i < this.n; i++) {
      const tc = t[i * T + C];
      const tb = t[i * T + B];
      const te = t[i * T + E];
      const vb = tb >= 0 ? x[tb] : 0;
      const s = this.sign[i];
      let vbe = s * (vb - (te >= 0 ? x[te] : 0));
      let vbc = s * (vb - (tc >= 0 ? x[tc] : 0));
      const nfvt = this.nf[i] * vt;
      const nrvt = this.nr[i] * vt;
      if (Number.isFinite(this.startVbe[i])) {
        // A pending start point replaces this iteration's bias.
        vbe = this.startVbe[i];
        vbc = this.startVbc[i];
        this.startVbe[i] = Number.NaN;
        tally.limited = true;
      } else if (limit) {
        const a = limitJunctionValue(vbe, this.vbeOld[i], nfvt, this.vcritBe[i]);
        const b = limitJunctionValue(vbc, this.vbcOld[i], nrvt, this.vcritBc[i]);
        if (a !== vbe || b !== vbc) tally.limited = true;
        vbe = a;
        vbc = b;
      }
      this.vbeOld[i] = vbe;
      this.vbcOld[i] = vbc;
      bjtCore(vbe, vbc, this.is[i], this.bf[i], this.br[i], nfvt, nrvt, this.vaf[i], this.m[i], g, ev);
      const ic = ev[IC];
      const ib = ev[IB];
      const ie = -(ic + ib);
      const dieDvbe = -(ev[DIC_DVBE] + ev[DIB_DVBE]);
      const dieDvbc = -(ev[DIC_DVBC] + ev[DIB_DVBC]);
      // Each row: ∂I/∂VBE into (B, E), ∂I/∂VBC into (B, C), then the equivalent current on the right-hand side.
      const p = i * T * T;
      stampRow(values, rhs, pos, p + C * T, tc, ic, ev[DIC_DVBE], ev[DIC_DVBC], vbe, vbc, s);
      stampRow(values, rhs, pos, p + B * T, tb, ib, ev[DIB_DVBE], ev[DIB_DVBC], vbe, vbc, s);
      stampRow(values, rhs, pos, p + E * T, te, ie, dieDvbe, dieDvbc, vbe, vbc, s);
      const finite = Number.isFinite(ic) && Number.isFinite(ib) && Number.isFinite(ev[DIC_DVBE] + ev[DIC_DVBC] + ev[DIB_DVBE] + ev[DIB_DVBC]) && Number.isFinite(ie);
      if (!finite) tally.nonFinite.push(this.instances.elementIndex[i]);
    }
  }

  evaluate(x: Float64Array): DeviceColumns {
    const out = allocateColumns(QUANTITIES.length, this.n);
    const v = out.values;
    const t = this.instances.terminals;
    const ev = this.scratch;
    for (let i = 0; i < this.n; i++) {
      const tc = t[i * T + C];
      const tb = t[i * T + B];
      const te = t[i * T + E];
      const vb = tb >= 0 ? x[tb] : 0;
      const s = this.sign[i];
      const vbe = s * (vb - (te >= 0 ? x[te] : 0));
      const vbc = s * (vb - (tc >= 0 ? x[tc] : 0));
      bjtCore(vbe, vbc, this.is[i], this.bf[i], this.br[i], this.nf[i] * this.vt, this.nr[i] * this.vt, this.vaf[i], this.m[i], this.gmin, ev);
      const ic = s * ev[IC];
      const ib = s * ev[IB];
      const vaf = this.vaf[i];
      v[Q_IC][i] = ic;
      v[Q_IB][i] = ib;
      v[Q_IE][i] = -(ic + ib);
      v[Q_VBE][i] = s * vbe;
      v[Q_VBC][i] = s * vbc;
      v[Q_VCE][i] = s * (vbe - vbc);
      v[Q_GM][i] = ev[GM];
      v[Q_RPI][i] = reciprocalOrUnbounded(ev[GPI]);
      v[Q_RO][i] = Number.isFinite(vaf) ? Math.min(UNBOUNDED, Math.abs(ic) > 0 ? vaf / Math.abs(ic) : UNBOUNDED) : UNBOUNDED;
      out.region[i] = regionCode(vbe, vbc);
      if (!Number.isFinite(vaf)) out.flags[i] = NO_EARLY;
    }
    return out;
  }

  overdriven(x: Float64Array, i: number): OverdrivenJunction[] {
    const t = this.instances.terminals;
    const tc = t[i * T + C];
    const tb = t[i * T + B];
    const te = t[i * T + E];
    const vb = tb >= 0 ? x[tb] : 0;
    const s = this.sign[i];
    const vbe = s * (vb - (te >= 0 ? x[te] : 0));
    const vbc = s * (vb - (tc >= 0 ? x[tc] : 0));
    const out: OverdrivenJunction[] = [];
    if (!(this.is[i] > 0 && this.m[i] > 0)) return out;
    if (vbe / (this.nf[i] * this.vt) > EXP_ARG_LIMIT) out.push({ junction: 'base-emitter junction', volts: vbe });
    if (vbc / (this.nr[i] * this.vt) > EXP_ARG_LIMIT) out.push({ junction: 'base-collector junction', volts: vbc });
    return out;
  }
}

/**
 * One row of the companion model: the conductances to the base-emitter and base-collector
 * controls at slots `pos[row + B]`, `pos[row + E]`, `pos[row + C]`, and the equivalent current
 * (the terminal current not explained by them) moved to the right-hand side of unknown `k`.
 */
function stampRow(values: Float64Array, rhs: Float64Array, pos: Int32Array, row: number, k: number, i: number, gbe: number, gbc: number, vbe: number, vbc: number, s: number): void {
  const pb = pos[row + B];
  const pe = pos[row + E];
  const pc = pos[row + C];
  if (pb >= 0) values[pb] += gbe;
  if (pe >= 0) values[pe] -= gbe;
  if (pb >= 0) values[pb] += gbc;
  if (pc >= 0) values[pc] -= gbc;
  if (k >= 0) rhs[k] -= s * (i - gbe * vbe - gbc * vbc);
}

/** The BJT kind (element letter Q). */
export const BJT: DeviceKind = deviceKind<Bjt>({
  letter: 'Q',
  nodeCount: 3,
  terminalCount: T,
  quantities: QUANTITIES,
  regions: REGIONS,
  internalNodes: () => [],
  terminals: (el, node) => [node(el.nodes[0]), node(el.nodes[1]), node(el.nodes[2])],
  dcPaths: (el) => [
    [el.nodes[0], el.nodes[1]],
    [el.nodes[1], el.nodes[2]],
  ],
  // A shorted base-collector junction is the ordinary diode connection, so only the base-emitter one is checked.
  checkedJunctions: (el) => [{ junction: 'base-emitter junction', a: el.nodes[1], b: el.nodes[2] }],
  instanceValues: (el) => [{ name: 'area', value: el.area, typical: 1 }, { name: 'M', value: el.m, typical: 1 }],
  createTable: (instances, issues) => new BjtTable(instances, issues),
  record(cols, instances, i): BjtRecord {
    const v = cols.values;
    const rec: BjtRecord = {
      type: 'bjt',
      polarity: instances.elements[i].model.kind === 'pnp' ? 'pnp' : 'npn',
      region: REGIONS[cols.region[i]],
      ic: v[Q_IC][i],
      ib: v[Q_IB][i],
      ie: v[Q_IE][i],
      vbe: v[Q_VBE][i],
      vbc: v[Q_VBC][i],
      vce: v[Q_VCE][i],
      gm: v[Q_GM][i],
      rpi: v[Q_RPI][i],
      ro: v[Q_RO][i],
    };
    if (cols.flags[i] & NO_EARLY) rec.roInfinite = true;
    return rec;
  },
  terminalCurrent: (cols, i, t) => cols.values[t === C ? Q_IC : t === B ? Q_IB : Q_IE][i],
});
