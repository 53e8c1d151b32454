// MOSFET: Shichman–Hodges level 1 with body effect (DESIGN.md), NMOS and PMOS, source/drain swap, step limiting, stamps and records.

import type { Mosfet } from '../circuit';
import type { MosRecord, MosRegion } from '../solve/types';
import type { DeviceConditions, LoadReport, NonlinearDevice, OverdrivenJunction, StartHint } from './device';
import { addControl, addEquivalentCurrent, terminalVoltage } from './device';
import type { ParamIssue } from './params';
import { elementParam, modelParam } from './params';
import { UNBOUNDED, limitChannel, limitGate } from './physics';

/** Level-1 parameters of one device, own polarity (for PMOS `vto` is already sign-flipped). */
export interface MosParams {
  /** KP·W/L·M, A/V². */
  beta: number;
  vto: number;
  lambda: number;
  gamma: number;
  phi: number;
}

/** Drain current (own polarity, VDS ≥ 0 frame) and its derivatives. */
export interface MosEvaluation {
  id: number;
  gm: number;
  gds: number;
  gmbs: number;
  vth: number;
  vov: number;
  region: MosRegion;
}

/** Below this the body-effect square root is held constant, so a forward-biased bulk never takes √ of a negative number. */
const SQRT_ARG_FLOOR = 1e-6;

/**
 * DESIGN.md level-1 equations for VDS ≥ 0: VTH = VTO + GAMMA·(√(PHI − VBS) − √PHI);
 * saturation (VDS ≥ VGS − VTH > 0) ID = β/2·(VGS − VTH)²·(1 + LAMBDA·VDS);
 * triode ID = β·((VGS − VTH)·VDS − VDS²/2)·(1 + LAMBDA·VDS); cutoff ID = 0.
 */
export function evaluateMos(vgs: number, vds: number, vbs: number, p: MosParams): MosEvaluation {
  const arg = p.phi - vbs;
  const root = Math.sqrt(Math.max(arg, SQRT_ARG_FLOOR));
  const vth = p.vto + p.gamma * (root - Math.sqrt(p.phi));
  // ∂ID/∂VBS = ∂ID/∂VOV · GAMMA/(2√(PHI − VBS)); zero where the root is held constant.
  const bodyFactor = arg > SQRT_ARG_FLOOR ? p.gamma / (2 * root) : 0;
  const vov = vgs - vth;
  if (!(vov > 0)) return { id: 0, gm: 0, gds: 0, gmbs: 0, vth, vov, region: 'cutoff' };
  const clm = 1 + p.lambda * vds;
  if (vds >= vov) {
    const core = 0.5 * p.beta * vov * vov;
    const gm = p.beta * vov * clm;
    return { id: core * clm, gm, gds: core * p.lambda, gmbs: gm * bodyFactor, vth, vov, region: 'saturation' };
  }
  const core = p.beta * (vov * vds - 0.5 * vds * vds);
  const gm = p.beta * vds * clm;
  const gds = p.beta * (vov - vds) * clm + core * p.lambda;
  return { id: core * clm, gm, gds, gmbs: gm * bodyFactor, vth, vov, region: 'triode' };
}

/** Overdrive of the cold-start linearisation, volts: a typical analog bias overdrive (common practice: a few tenths of a volt); 0.5 V took 5 iterations on the benchmark MOS mirror array (test/bench/newton-bench.ts), 0.2 V took 6. */
const COLD_OVERDRIVE = 0.5;

const D = 0;
const G = 1;
const S = 2;
const BULK = 3;

/** A MOSFET. Terminals are [drain, gate, source, bulk]; the channel is symmetric, so the lower-potential end acts as source. */
export class MosfetDevice implements NonlinearDevice {
  readonly terminals: Int32Array;
  positions = new Int32Array(0);
  private readonly sign: number;
  private readonly params: MosParams;
  private gmin = 0;
  private vgsOld = 0;
  private vdsOld = 0;
  /** Gate and channel voltages the next load linearises at (NaN when none is pending). */
  private startVgs = Number.NaN;
  private startVds = Number.NaN;
  /** Reused by every load: the Newton loop reads it before the next call. */
  private readonly report: LoadReport = { limited: false, clipped: false, finite: true };

  constructor(readonly element: Mosfet, nodes: { d: number; g: number; s: number; b: number }, issues: ParamIssue[]) {
    const md = element.model;
    this.sign = md.kind === 'pmos' ? -1 : 1;
    const w = elementParam(element, 'W', element.w, 'positive', 0, issues);
    const l = elementParam(element, 'L', element.l, 'positive', 0, issues);
    const m = elementParam(element, 'M', element.m, 'positive', 0, issues);
    const kp = modelParam(element, md, 'KP', 'non-negative', issues);
    const beta = l > 0 ? (kp * w * m) / l : 0;
    this.params = {
      beta: Number.isFinite(beta) ? beta : 0,
      vto: this.sign * modelParam(element, md, 'VTO', 'finite', issues),
      lambda: modelParam(element, md, 'LAMBDA', 'non-negative', issues),
      gamma: modelParam(element, md, 'GAMMA', 'non-negative', issues),
      phi: modelParam(element, md, 'PHI', 'positive', issues),
    };
    this.terminals = Int32Array.of(nodes.d, nodes.g, nodes.s, nodes.b);
  }

  /** The level-1 parameters in use (own polarity). */
  get modelParams(): Readonly<MosParams> {
    return this.params;
  }

  prepare(c: DeviceConditions): void {
    this.gmin = c.junctionGmin;
  }

  private biases(x: Float64Array): { vgs: number; vds: number; vbs: number } {
    const t = this.terminals;
    const vs = terminalVoltage(t, x, S);
    const s = this.sign;
    return {
      vgs: s * (terminalVoltage(t, x, G) - vs),
      vds: s * (terminalVoltage(t, x, D) - vs),
      vbs: s * (terminalVoltage(t, x, BULK) - vs),
    };
  }

  resetState(x: Float64Array, start?: StartHint): void {
    const b = this.biases(x);
    this.vgsOld = b.vgs;
    this.vdsOld = b.vds;
    this.startVgs = Number.NaN;
    if (start?.kind !== 'cold') return; // level 1 has no temperature dependence to predict
    // On the edge of saturation with a small overdrive, so the first linearisation has a gm.
    const vth = this.thresholdAt(b.vbs);
    this.startVgs = vth + COLD_OVERDRIVE;
    this.startVds = vth + COLD_OVERDRIVE;
  }

  load(x: Float64Array, values: Float64Array, rhs: Float64Array, limit: boolean): LoadReport {
    let { vgs, vds, vbs } = this.biases(x);
    let limited = false;
    if (Number.isFinite(this.startVgs)) {
      vgs = this.startVgs;
      vds = this.startVds;
      this.startVgs = Number.NaN;
      limited = true;
    } else if (limit) {
      // Channel first, then the gate of whichever end acts as source after the step.
      const ch = limitChannel(vds, this.vdsOld);
      vds = ch.v;
      let g: { v: number; limited: boolean };
      if (vds >= 0) {
        g = limitGate(vgs, this.vgsOld, this.thresholdAt(vbs));
        vgs = g.v;
      } else {
        // Swapped: the drain acts as source, so limit VGD and rebuild VGS from it.
        g = limitGate(vgs - vds, this.vgsOld - this.vdsOld, this.thresholdAt(vbs - vds));
        vgs = g.v + vds;
      }
      limited = ch.limited || g.limited;
    }
    this.vgsOld = vgs;
    this.vdsOld = vds;
    const forward = vds >= 0;
    // In the swapped frame the drain terminal acts as source: VGS→VGD, VDS→−VDS, VBS→VBD.
    const ev = forward ? evaluateMos(vgs, vds, vbs, this.params) : evaluateMos(vgs - vds, -vds, vbs - vds, this.params);
    const fvgs = forward ? vgs : vgs - vds;
    const fvds = forward ? vds : -vds;
    const fvbs = forward ? vbs : vbs - vds;
    const effD = forward ? D : S;
    const effS = forward ? S : D;
    const pos = this.positions;
    for (const [t, dir] of [[effD, 1], [effS, -1]] as const) {
      addControl(pos, 4, values, t, G, effS, dir * ev.gm);
      addControl(pos, 4, values, t, effD, effS, dir * ev.gds);
      addControl(pos, 4, values, t, BULK, effS, dir * ev.gmbs);
      addEquivalentCurrent(this.terminals, rhs, t, this.sign * dir * (ev.id - ev.gm * fvgs - ev.gds * fvds - ev.gmbs * fvbs));
    }
    // Robustness conductance across the channel (linear, so no equivalent current).
    addControl(pos, 4, values, D, D, S, this.gmin);
    addControl(pos, 4, values, S, D, S, -this.gmin);
    const finite = Number.isFinite(ev.id) && Number.isFinite(ev.gm) && Number.isFinite(ev.gds) && Number.isFinite(ev.gmbs);
    const report = this.report;
    report.limited = limited;
    report.finite = finite;
    return report;
  }

  /** Threshold (own polarity) at body bias vbs. */
  private thresholdAt(vbs: number): number {
    const p = this.params;
    return p.vto + p.gamma * (Math.sqrt(Math.max(p.phi - vbs, SQRT_ARG_FLOOR)) - Math.sqrt(p.phi));
  }

  overdriven(): OverdrivenJunction[] {
    return [];
  }

  record(x: Float64Array): MosRecord {
    const { vgs, vds, vbs } = this.biases(x);
    const forward = vds >= 0;
    const ev = forward ? evaluateMos(vgs, vds, vbs, this.params) : evaluateMos(vgs - vds, -vds, vbs - vds, this.params);
    const s = this.sign;
    const idOwn = forward ? ev.id : -ev.id;
    const rec: MosRecord = {
      type: 'mosfet',
      polarity: s > 0 ? 'nmos' : 'pmos',
      region: ev.region,
      id: s * idOwn + this.gmin * s * vds,
      vgs: s * vgs,
      vds: s * vds,
      vth: s * ev.vth,
      vov: ev.vov,
      gm: ev.gm,
      ro: ev.gds > 1 / UNBOUNDED ? 1 / ev.gds : UNBOUNDED,
    };
    if (!(ev.gds > 1 / UNBOUNDED)) rec.roInfinite = true;
    return rec;
  }
}
