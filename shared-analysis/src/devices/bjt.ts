// Bipolar transistor: Gummel–Poon transport model with forward Early effect only (DESIGN.md), NPN and PNP, with limiting, stamps and records.

import type { Bjt } from '../circuit';
import type { BjtRecord, BjtRegion } from '../solve/types';
import type { DeviceConditions, LoadReport, NonlinearDevice, OverdrivenJunction, StartHint } from './device';
import { addControl, addEquivalentCurrent, terminalVoltage } from './device';
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

/**
 * DESIGN.md equations in the NPN sense: ICC = IS·(exp(VBE/(NF·VT)) − 1),
 * IEC = IS·(exp(VBC/(NR·VT)) − 1), IT = (ICC − IEC)·(1 − VBC/VAF), IC = IT − IEC/BR,
 * IB = ICC/BF + IEC/BR; every current times M; gmin across each junction.
 */
export function evaluateBjt(vbe: number, vbc: number, p: BjtParams, out?: BjtEvaluation): BjtEvaluation {
  const nfvt = p.nf * p.vt;
  const nrvt = p.nr * p.vt;
  const xbe = vbe / nfvt;
  const xbc = vbc / nrvt;
  const icc = p.is * (guardedExpValue(xbe) - 1);
  const iec = p.is * (guardedExpValue(xbc) - 1);
  const dicc = (p.is * guardedExpSlope(xbe)) / nfvt;
  const diec = (p.is * guardedExpSlope(xbc)) / nrvt;
  const early = Number.isFinite(p.vaf);
  const q = early ? 1 - vbc / p.vaf : 1;
  const dq = early ? -1 / p.vaf : 0;
  const m = p.m;
  const g = p.gmin;
  // Filling a caller's object keeps the Newton loop free of per-iteration allocation.
  const r = out ?? ({} as BjtEvaluation);
  r.ic = m * ((icc - iec) * q - iec / p.br) - g * vbc;
  r.ib = m * (icc / p.bf + iec / p.br) + g * (vbe + vbc);
  r.dicDvbe = m * dicc * q;
  r.dicDvbc = m * (-diec * q + (icc - iec) * dq - diec / p.br) - g;
  r.dibDvbe = (m * dicc) / p.bf + g;
  r.dibDvbc = (m * diec) / p.br + g;
  r.gm = m * dicc * q;
  r.gpi = (m * dicc) / p.bf;
  r.clipped = xbe > EXP_ARG_LIMIT || xbc > EXP_ARG_LIMIT;
  return r;
}

const C = 0;
const B = 1;
const E = 2;

/** A BJT. Terminals are [collector, base, emitter]; a substrate node, if any, carries no DC current. */
export class BjtDevice implements NonlinearDevice {
  readonly terminals: Int32Array;
  positions = new Int32Array(0);
  private readonly sign: number;
  private readonly isNom: number;
  private readonly bfNom: number;
  private readonly brNom: number;
  private readonly xti: number;
  private readonly eg: number;
  private readonly params: BjtParams;
  private vcritBe = 0.6;
  private vcritBc = 0.6;
  private vbeOld = 0;
  private vbcOld = 0;
  private tnomC = 27;
  /** Junction voltages the next load linearises at (NaN when none is pending). */
  private startVbe = Number.NaN;
  private startVbc = Number.NaN;
  private readonly scratch = {} as BjtEvaluation;
  /** Reused by every load: the Newton loop reads it before the next call. */
  private readonly report: LoadReport = { limited: false, clipped: false, finite: true };

  constructor(readonly element: Bjt, nodes: { c: number; b: number; e: number }, issues: ParamIssue[]) {
    const md = element.model;
    this.sign = md.kind === 'pnp' ? -1 : 1;
    const area = elementParam(element, 'AREA', element.area, 'positive', 0, issues);
    const m = elementParam(element, 'M', element.m, 'positive', 0, issues);
    this.isNom = modelParam(element, md, 'IS', 'non-negative', issues) * area;
    this.bfNom = modelParam(element, md, 'BF', 'positive', issues);
    this.brNom = modelParam(element, md, 'BR', 'positive', issues);
    this.xti = modelParam(element, md, 'XTI', 'finite', issues);
    this.eg = modelParam(element, md, 'EG', 'finite', issues);
    this.params = {
      is: this.isNom,
      bf: this.bfNom,
      br: this.brNom,
      nf: modelParam(element, md, 'NF', 'positive', issues),
      nr: modelParam(element, md, 'NR', 'positive', issues),
      vaf: modelParam(element, md, 'VAF', 'positive-or-infinite', issues),
      m,
      vt: 0.025,
      gmin: 0,
    };
    this.terminals = Int32Array.of(nodes.c, nodes.b, nodes.e);
  }

  /** The scaled parameters in use for the current solve. */
  get modelParams(): Readonly<BjtParams> {
    return this.params;
  }

  prepare(c: DeviceConditions): void {
    const p = this.params;
    p.vt = c.vt;
    p.gmin = c.junctionGmin;
    p.is = saturationCurrentAt(this.isNom, this.xti, this.eg, c.temperatureC, c.tnomC);
    p.bf = this.bfNom * c.betaScale;
    p.br = this.brNom * c.betaScale;
    this.vcritBe = criticalVoltage(p.nf * c.vt, p.is);
    this.vcritBc = criticalVoltage(p.nr * c.vt, p.is);
    this.tnomC = c.tnomC;
  }

  private junctions(x: Float64Array): { vbe: number; vbc: number } {
    const t = this.terminals;
    const vb = terminalVoltage(t, x, B);
    return { vbe: this.sign * (vb - terminalVoltage(t, x, E)), vbc: this.sign * (vb - terminalVoltage(t, x, C)) };
  }

  resetState(x: Float64Array, start?: StartHint): void {
    const j = this.junctions(x);
    this.vbeOld = j.vbe;
    this.vbcOld = j.vbc;
    this.startVbe = Number.NaN;
    this.startVbc = Number.NaN;
    const p = this.params;
    if (!start || !(p.is > 0)) return;
    if (start.kind === 'cold') {
      // Forward-active: base-emitter at its critical voltage, base-collector unbiased.
      this.startVbe = Math.min(this.vcritBe, 1);
      this.startVbc = 0;
      return;
    }
    const is0 = saturationCurrentAt(this.isNom, this.xti, this.eg, start.temperatureC, this.tnomC);
    this.startVbe = j.vbe > 0 ? shiftJunction(j.vbe, p.nf * start.vt, p.nf * p.vt, is0, p.is) : j.vbe;
    this.startVbc = j.vbc > 0 ? shiftJunction(j.vbc, p.nr * start.vt, p.nr * p.vt, is0, p.is) : j.vbc;
  }

  load(x: Float64Array, values: Float64Array, rhs: Float64Array, limit: boolean): LoadReport {
    const t = this.terminals;
    const vb = terminalVoltage(t, x, B);
    let vbe = this.sign * (vb - terminalVoltage(t, x, E));
    let vbc = this.sign * (vb - terminalVoltage(t, x, C));
    let limited = false;
    if (Number.isFinite(this.startVbe)) {
      vbe = this.startVbe;
      vbc = this.startVbc;
      this.startVbe = Number.NaN;
      limited = true;
    } else if (limit) {
      const a = limitJunctionValue(vbe, this.vbeOld, this.params.nf * this.params.vt, this.vcritBe);
      const b = limitJunctionValue(vbc, this.vbcOld, this.params.nr * this.params.vt, this.vcritBc);
      limited = a !== vbe || b !== vbc;
      vbe = a;
      vbc = b;
    }
    this.vbeOld = vbe;
    this.vbcOld = vbc;
    const ev = evaluateBjt(vbe, vbc, this.params, this.scratch);
    const ie = -(ev.ic + ev.ib);
    const dieDvbe = -(ev.dicDvbe + ev.dibDvbe);
    const dieDvbc = -(ev.dicDvbc + ev.dibDvbc);
    const s = this.sign;
    this.stampRow(values, rhs, C, ev.ic, ev.dicDvbe, ev.dicDvbc, vbe, vbc, s);
    this.stampRow(values, rhs, B, ev.ib, ev.dibDvbe, ev.dibDvbc, vbe, vbc, s);
    this.stampRow(values, rhs, E, ie, dieDvbe, dieDvbc, vbe, vbc, s);
    const finite = Number.isFinite(ev.ic) && Number.isFinite(ev.ib) && Number.isFinite(ev.dicDvbe + ev.dicDvbc + ev.dibDvbe + ev.dibDvbc) && Number.isFinite(ie);
    const report = this.report;
    report.limited = limited;
    report.clipped = ev.clipped;
    report.finite = finite;
    return report;
  }

  /** Row `t` of the companion model: conductances to the base-emitter and base-collector controls, and the equivalent current. */
  private stampRow(values: Float64Array, rhs: Float64Array, t: number, i: number, gbe: number, gbc: number, vbe: number, vbc: number, s: number): void {
    addControl(this.positions, 3, values, t, B, E, gbe);
    addControl(this.positions, 3, values, t, B, C, gbc);
    addEquivalentCurrent(this.terminals, rhs, t, s * (i - gbe * vbe - gbc * vbc));
  }

  overdriven(x: Float64Array): OverdrivenJunction[] {
    const { vbe, vbc } = this.junctions(x);
    const out: OverdrivenJunction[] = [];
    if (!(this.params.is > 0 && this.params.m > 0)) return out;
    if (vbe / (this.params.nf * this.params.vt) > EXP_ARG_LIMIT) out.push({ junction: 'base-emitter junction', volts: vbe });
    if (vbc / (this.params.nr * this.params.vt) > EXP_ARG_LIMIT) out.push({ junction: 'base-collector junction', volts: vbc });
    return out;
  }

  record(x: Float64Array): BjtRecord {
    const { vbe, vbc } = this.junctions(x);
    const ev = evaluateBjt(vbe, vbc, this.params);
    const s = this.sign;
    const ic = s * ev.ic;
    const ib = s * ev.ib;
    const vaf = this.params.vaf;
    const rec: BjtRecord = {
      type: 'bjt',
      polarity: s > 0 ? 'npn' : 'pnp',
      region: bjtRegion(vbe, vbc),
      ic,
      ib,
      ie: -(ic + ib),
      vbe: s * vbe,
      vbc: s * vbc,
      vce: s * (vbe - vbc),
      gm: ev.gm,
      rpi: reciprocalOrUnbounded(ev.gpi),
      ro: Number.isFinite(vaf) ? Math.min(UNBOUNDED, Math.abs(ic) > 0 ? vaf / Math.abs(ic) : UNBOUNDED) : UNBOUNDED,
    };
    if (!Number.isFinite(vaf)) rec.roInfinite = true;
    return rec;
  }
}
