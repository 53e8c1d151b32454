// MOSFET: Shichman–Hodges level 1 with body effect and temperature (docs/DEVICE-MODELS.md), NMOS and PMOS, source/drain swap, as one table of typed arrays with step limiting, stamps and records.

import type { Mosfet } from '../circuit';
import type { MosRecord, MosRegion } from '../solve/types';
import type { DeviceColumns, DeviceConditions, DeviceInstances, DeviceKind, DeviceSensitivity, DeviceTable, LoadTally, OverdrivenJunction, StartHint } from './device';
import { NOT_OVERDRIVEN, TEMPERATURE_PARAMETER, allocateSensitivity, columnsFor, deviceKind } from './device';
import type { ParamIssue } from './params';
import { elementParam, modelParam } from './params';
import { UNBOUNDED, ZERO_CELSIUS_K, cardTnomC, limitChannelValue, limitGateValue, tnomOf, unbounded } from './physics';

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

/**
 * Level-1 temperature terms (docs/DEVICE-MODELS.md; common practice): KP(T) = KP·(T/Tnom)^BEX and
 * |VTO|(T) = |VTO| − TCV·ΔT. `vto` is in the device's own polarity (positive for an
 * enhancement device of either type); its magnitude moves, so a depletion device's threshold
 * moves the other way. Returns the factor on KP and the own-polarity threshold at T.
 */
export function mosTemperature(vto: number, bex: number, tcv: number, temperatureC: number, tnomC: number): { kpFactor: number; vto: number } {
  if (temperatureC === tnomC) return { kpFactor: 1, vto };
  const r = (temperatureC + ZERO_CELSIUS_K) / (tnomC + ZERO_CELSIUS_K);
  const direction = vto >= 0 ? 1 : -1;
  return { kpFactor: Math.pow(r, bex), vto: vto - direction * tcv * (temperatureC - tnomC) };
}

/** Below this the body-effect square root is held constant, so a forward-biased bulk never takes √ of a negative number. */
const SQRT_ARG_FLOOR = 1e-6;

const REGIONS: readonly MosRegion[] = ['saturation', 'triode', 'cutoff'];
const SATURATION = 0;
const TRIODE = 1;
const CUTOFF = 2;

// Slots of the scratch array `mosCore` fills.
const ID = 0;
const GM = 1;
const GDS = 2;
const GMBS = 3;
const VTH = 4;
const VOV = 5;
// Its input slots: the bias in the frame where VDS ≥ 0 and the instance's parameters. They travel in the
// scratch array, not as arguments, because `mosCore` is not inlined into the table's load and a double
// passed to a call that is not inlined is boxed on the heap (about 130 bytes per device per Newton
// iteration before, with the threshold and the stamps' arguments).
const IN_VGS = 6;
const IN_VDS = 7;
const IN_VBS = 8;
const IN_BETA = 9;
const IN_VTO = 10;
const IN_LAMBDA = 11;
const IN_GAMMA = 12;
const IN_PHI = 13;
/** The equivalent current of the companion model, which the stamps read. */
const IEQ = 14;
const SCRATCH = 15;

/**
 * docs/DEVICE-MODELS.md level-1 equations for VDS ≥ 0: VTH = VTO + GAMMA·(√(PHI − VBS) − √PHI);
 * saturation (VDS ≥ VGS − VTH > 0) ID = β/2·(VGS − VTH)²·(1 + LAMBDA·VDS);
 * triode ID = β·((VGS − VTH)·VDS − VDS²/2)·(1 + LAMBDA·VDS); cutoff ID = 0, at the bias and
 * parameters in `out`'s input slots. Writes the result slots into `out` and returns the region's
 * index in REGIONS.
 */
function mosCore(out: Float64Array): number {
  const vgs = out[IN_VGS];
  const vds = out[IN_VDS];
  const beta = out[IN_BETA];
  const lambda = out[IN_LAMBDA];
  const gamma = out[IN_GAMMA];
  const phi = out[IN_PHI];
  const arg = phi - out[IN_VBS];
  const root = Math.sqrt(Math.max(arg, SQRT_ARG_FLOOR));
  const vth = out[IN_VTO] + gamma * (root - Math.sqrt(phi));
  // ∂ID/∂VBS = ∂ID/∂VOV · GAMMA/(2√(PHI − VBS)); zero where the root is held constant.
  const bodyFactor = arg > SQRT_ARG_FLOOR ? gamma / (2 * root) : 0;
  const vov = vgs - vth;
  out[VTH] = vth;
  out[VOV] = vov;
  if (!(vov > 0)) {
    out[ID] = 0;
    out[GM] = 0;
    out[GDS] = 0;
    out[GMBS] = 0;
    return CUTOFF;
  }
  const clm = 1 + lambda * vds;
  if (vds >= vov) {
    const core = 0.5 * beta * vov * vov;
    const gm = beta * vov * clm;
    out[ID] = core * clm;
    out[GM] = gm;
    out[GDS] = core * lambda;
    out[GMBS] = gm * bodyFactor;
    return SATURATION;
  }
  const core = beta * (vov * vds - 0.5 * vds * vds);
  const gm = beta * vds * clm;
  out[ID] = core * clm;
  out[GM] = gm;
  out[GDS] = beta * (vov - vds) * clm + core * lambda;
  out[GMBS] = gm * bodyFactor;
  return TRIODE;
}

/** The level-1 equations at one bias (VDS ≥ 0 frame), for tests and hand checks; the table evaluates the same function in its loop. */
export function evaluateMos(vgs: number, vds: number, vbs: number, p: MosParams): MosEvaluation {
  const s = new Float64Array(SCRATCH);
  s[IN_VGS] = vgs;
  s[IN_VDS] = vds;
  s[IN_VBS] = vbs;
  s[IN_BETA] = p.beta;
  s[IN_VTO] = p.vto;
  s[IN_LAMBDA] = p.lambda;
  s[IN_GAMMA] = p.gamma;
  s[IN_PHI] = p.phi;
  const region = mosCore(s);
  return { id: s[ID], gm: s[GM], gds: s[GDS], gmbs: s[GMBS], vth: s[VTH], vov: s[VOV], region: REGIONS[region] };
}

/** Overdrive of the cold-start linearisation, volts: a typical analog bias overdrive (common practice: a few tenths of a volt); 0.5 V took 5 iterations on the benchmark MOS mirror array (test/bench/newton-bench.ts), 0.2 V took 6. */
const COLD_OVERDRIVE = 0.5;

const D = 0;
const G = 1;
const S = 2;
const BULK = 3;
/** Terminals per instance: drain, gate, source, bulk. */
const T = 4;

const QUANTITIES = ['id', 'vgs', 'vds', 'vth', 'vov', 'gm', 'ro', 'gmbs'] as const;
const Q_ID = 0;
const Q_VGS = 1;
const Q_VDS = 2;
const Q_VTH = 3;
const Q_VOV = 4;
const Q_GM = 5;
const Q_RO = 6;
const Q_GMBS = 7;
/** `DeviceColumns.flags` bit: no channel-length modulation at this point, so `ro` stands for unbounded. */
const NO_CLM = 1;

/** Every MOSFET of a circuit. Terminals are [drain, gate, source, bulk]; the channel is symmetric, so the lower-potential end acts as source. */
export class MosfetTable implements DeviceTable {
  readonly kind: DeviceKind = MOSFET;
  private readonly n: number;
  /** +1 N-channel, −1 P-channel (integers, so passing one to a call boxes nothing). */
  private readonly sign: Int8Array;
  /** KP·W/L·M and own-polarity VTO at Tnom, with their temperature coefficients. */
  private readonly betaNom: Float64Array;
  private readonly vtoNom: Float64Array;
  private readonly bex: Float64Array;
  private readonly tcv: Float64Array;
  /** The card's own TNOM, °C (NaN: the analysis's nominal temperature). */
  private readonly tnom: Float64Array;
  /** W·M/L (β per unit of KP), W and L as used. */
  private readonly betaPerKp: Float64Array;
  private readonly w: Float64Array;
  private readonly l: Float64Array;
  /** β and VTO of the solve in progress. */
  private readonly beta: Float64Array;
  private readonly vto: Float64Array;
  private readonly lambda: Float64Array;
  private readonly gamma: Float64Array;
  private readonly phi: Float64Array;
  private gmin = 0;
  private readonly vgsOld: Float64Array;
  private readonly vdsOld: Float64Array;
  /** Gate and channel voltages the next load linearises at (NaN when none is pending). */
  private readonly startVgs: Float64Array;
  private readonly startVds: Float64Array;
  private readonly scratch = new Float64Array(SCRATCH);

  constructor(readonly instances: DeviceInstances<Mosfet>, issues: ParamIssue[]) {
    const n = (this.n = instances.count);
    const col = (): Float64Array => new Float64Array(n);
    this.sign = new Int8Array(n);
    this.betaNom = col();
    this.vtoNom = col();
    this.bex = col();
    this.tcv = col();
    this.tnom = col();
    this.betaPerKp = col();
    this.w = col();
    this.l = col();
    this.beta = col();
    this.vto = col();
    this.lambda = col();
    this.gamma = col();
    this.phi = col();
    this.vgsOld = col();
    this.vdsOld = col();
    this.startVgs = col().fill(Number.NaN);
    this.startVds = col().fill(Number.NaN);
    for (let i = 0; i < n; i++) {
      const element = instances.elements[i];
      const md = element.model;
      const sign = md.kind === 'pmos' ? -1 : 1;
      this.sign[i] = sign;
      const w = elementParam(element, 'W', element.w, 'positive', 0, issues);
      const l = elementParam(element, 'L', element.l, 'positive', 0, issues);
      const m = elementParam(element, 'M', element.m, 'positive', 0, issues);
      const kp = modelParam(element, md, 'KP', 'non-negative', issues);
      const beta = l > 0 ? (kp * w * m) / l : 0;
      this.betaNom[i] = Number.isFinite(beta) ? beta : 0;
      const perKp = l > 0 ? (w * m) / l : 0;
      this.betaPerKp[i] = Number.isFinite(perKp) ? perKp : 0;
      this.w[i] = w;
      this.l[i] = l;
      this.vtoNom[i] = sign * modelParam(element, md, 'VTO', 'finite', issues);
      this.bex[i] = modelParam(element, md, 'BEX', 'finite', issues);
      this.tcv[i] = modelParam(element, md, 'TCV', 'finite', issues);
      this.tnom[i] = cardTnomC(md.params, NaN);
      this.lambda[i] = modelParam(element, md, 'LAMBDA', 'non-negative', issues);
      this.gamma[i] = modelParam(element, md, 'GAMMA', 'non-negative', issues);
      this.phi[i] = modelParam(element, md, 'PHI', 'positive', issues);
    }
    this.beta.set(this.betaNom);
    this.vto.set(this.vtoNom);
  }

  /** The level-1 parameters of instance i (own polarity). */
  modelParams(i: number): MosParams {
    return { beta: this.beta[i], vto: this.vto[i], lambda: this.lambda[i], gamma: this.gamma[i], phi: this.phi[i] };
  }

  prepare(c: DeviceConditions): void {
    this.gmin = c.junctionGmin;
    for (let i = 0; i < this.n; i++) {
      const t = mosTemperature(this.vtoNom[i], this.bex[i], this.tcv[i], c.temperatureC, tnomOf(this.tnom[i], c.tnomC));
      this.beta[i] = this.betaNom[i] * t.kpFactor;
      this.vto[i] = t.vto;
    }
  }

  /** Threshold of instance i (own polarity) at body bias vbs. */
  private thresholdAt(i: number, vbs: number): number {
    const phi = this.phi[i];
    return this.vto[i] + this.gamma[i] * (Math.sqrt(Math.max(phi - vbs, SQRT_ARG_FLOOR)) - Math.sqrt(phi));
  }

  resetState(x: Float64Array, start?: StartHint): void {
    const t = this.instances.terminals;
    for (let i = 0; i < this.n; i++) {
      const s = this.sign[i];
      const vs = voltage(x, t[i * T + S]);
      this.vgsOld[i] = s * (voltage(x, t[i * T + G]) - vs);
      this.vdsOld[i] = s * (voltage(x, t[i * T + D]) - vs);
      this.startVgs[i] = Number.NaN;
      if (start?.kind !== 'cold') continue; // a warm start from another temperature starts where it was
      // On the edge of saturation with a small overdrive, so the first linearisation has a gm.
      const vth = this.thresholdAt(i, s * (voltage(x, t[i * T + BULK]) - vs));
      this.startVgs[i] = vth + COLD_OVERDRIVE;
      this.startVds[i] = vth + COLD_OVERDRIVE;
    }
  }

  load(x: Float64Array, values: Float64Array, rhs: Float64Array, limit: boolean, tally: LoadTally): void {
    const t = this.instances.terminals;
    const pos = this.instances.positions;
    const ev = this.scratch;
    const gmin = this.gmin;
    for (let i = 0; i < this.n; i++) {
      const s = this.sign[i];
      const vs = voltage(x, t[i * T + S]);
      ev[IN_VGS] = s * (voltage(x, t[i * T + G]) - vs);
      ev[IN_VDS] = s * (voltage(x, t[i * T + D]) - vs);
      ev[IN_VBS] = s * (voltage(x, t[i * T + BULK]) - vs);
      if (Number.isFinite(this.startVgs[i])) {
        ev[IN_VGS] = this.startVgs[i];
        ev[IN_VDS] = this.startVds[i];
        this.startVgs[i] = Number.NaN;
        tally.limited = true;
      } else if (limit && this.limitBias(i)) tally.limited = true;
      this.vgsOld[i] = ev[IN_VGS];
      this.vdsOld[i] = ev[IN_VDS];
      const forward = ev[IN_VDS] >= 0;
      // In the swapped frame the drain terminal acts as source: VGS→VGD, VDS→−VDS, VBS→VBD.
      if (!forward) this.swapFrame();
      this.channel(i);
      this.stamp(i, values, rhs, forward);
      // Robustness conductance across the channel (linear, so no equivalent current).
      const p = i * T * T;
      add(values, pos[p + D * T + D], gmin);
      add(values, pos[p + D * T + S], -gmin);
      add(values, pos[p + S * T + D], -gmin);
      add(values, pos[p + S * T + S], gmin);
      if (!(Number.isFinite(ev[ID]) && Number.isFinite(ev[GM]) && Number.isFinite(ev[GDS]) && Number.isFinite(ev[GMBS]))) tally.nonFinite.push(this.instances.elementIndex[i]);
    }
  }

  /** Instance i's own-polarity bias at x into the scratch's input slots, in the frame where VDS ≥ 0; true when that is the netlist's (not swapped). */
  private biasAt(x: Float64Array, i: number): boolean {
    const t = this.instances.terminals;
    const ev = this.scratch;
    const s = this.sign[i];
    const vs = voltage(x, t[i * T + S]);
    ev[IN_VGS] = s * (voltage(x, t[i * T + G]) - vs);
    ev[IN_VDS] = s * (voltage(x, t[i * T + D]) - vs);
    ev[IN_VBS] = s * (voltage(x, t[i * T + BULK]) - vs);
    const forward = ev[IN_VDS] >= 0;
    if (!forward) this.swapFrame();
    return forward;
  }

  /**
   * Limits instance i's bias in the scratch's input slots against the last iteration's: the channel
   * first, then the gate of whichever end acts as source after the step. True when it changed.
   */
  private limitBias(i: number): boolean {
    const ev = this.scratch;
    const vgs = ev[IN_VGS];
    const vbs = ev[IN_VBS];
    const vdsIn = ev[IN_VDS];
    const vds = limitChannelValue(vdsIn, this.vdsOld[i]);
    let gateLimited: boolean;
    if (vds >= 0) {
      const g = limitGateValue(vgs, this.vgsOld[i], this.thresholdAt(i, vbs));
      gateLimited = g !== vgs;
      ev[IN_VGS] = g;
    } else {
      // Swapped: the drain acts as source, so limit VGD and rebuild VGS from it.
      const vgd = vgs - vds;
      const g = limitGateValue(vgd, this.vgsOld[i] - this.vdsOld[i], this.thresholdAt(i, vbs - vds));
      gateLimited = g !== vgd;
      ev[IN_VGS] = g + vds;
    }
    ev[IN_VDS] = vds;
    return vds !== vdsIn || gateLimited;
  }

  /** The scratch's bias into the swapped frame, where the drain acts as source: VGS→VGD, VDS→−VDS, VBS→VBD. */
  private swapFrame(): void {
    const ev = this.scratch;
    const vds = ev[IN_VDS];
    ev[IN_VGS] = ev[IN_VGS] - vds;
    ev[IN_VDS] = -vds;
    ev[IN_VBS] = ev[IN_VBS] - vds;
  }

  /** `mosCore` of instance i at the bias in the scratch's input slots; returns the region's index. */
  private channel(i: number): number {
    const ev = this.scratch;
    ev[IN_BETA] = this.beta[i];
    ev[IN_VTO] = this.vto[i];
    ev[IN_LAMBDA] = this.lambda[i];
    ev[IN_GAMMA] = this.gamma[i];
    ev[IN_PHI] = this.phi[i];
    return mosCore(ev);
  }

  /**
   * Instance i's channel stamps for the evaluation in the scratch (frame bias in its input slots):
   * the acting drain's row, then the acting source's with the opposite sign. Indices and arrays only
   * for arguments (see `IN_VGS`).
   */
  private stamp(i: number, values: Float64Array, rhs: Float64Array, forward: boolean): void {
    const t = this.instances.terminals;
    const pos = this.instances.positions;
    const ev = this.scratch;
    const s = this.sign[i];
    ev[IEQ] = ev[ID] - ev[GM] * ev[IN_VGS] - ev[GDS] * ev[IN_VDS] - ev[GMBS] * ev[IN_VBS];
    const effD = forward ? D : S;
    const effS = forward ? S : D;
    const p = i * T * T;
    stampChannelRow(values, rhs, pos, p + effD * T, effS, t[i * T + effD], effD, ev, s, 1);
    stampChannelRow(values, rhs, pos, p + effS * T, effS, t[i * T + effS], effD, ev, s, -1);
  }

  evaluate(x: Float64Array, into?: DeviceColumns): DeviceColumns {
    const out = columnsFor(into, QUANTITIES.length, this.n);
    const v = out.values;
    const t = this.instances.terminals;
    const ev = this.scratch;
    for (let i = 0; i < this.n; i++) {
      const s = this.sign[i];
      const vs = voltage(x, t[i * T + S]);
      const vgs = s * (voltage(x, t[i * T + G]) - vs);
      const vds = s * (voltage(x, t[i * T + D]) - vs);
      const forward = this.biasAt(x, i);
      const region = this.channel(i);
      const idOwn = forward ? ev[ID] : -ev[ID];
      const gds = ev[GDS];
      v[Q_ID][i] = s * idOwn + this.gmin * s * vds;
      v[Q_VGS][i] = s * vgs;
      v[Q_VDS][i] = s * vds;
      v[Q_VTH][i] = s * ev[VTH];
      v[Q_VOV][i] = ev[VOV];
      v[Q_GM][i] = ev[GM];
      v[Q_RO][i] = gds > 1 / UNBOUNDED ? 1 / gds : unbounded();
      v[Q_GMBS][i] = ev[GMBS];
      out.region[i] = region;
      if (!(gds > 1 / UNBOUNDED)) out.flags[i] = NO_CLM;
    }
    return out;
  }

  overdriven(): readonly OverdrivenJunction[] {
    return NOT_OVERDRIVEN;
  }

  /**
   * Exact partials for adjoint sensitivities (docs/VARIATION.md), for each instance alone:
   * temperature, VTO, KP, W and L as the netlist writes them. The level-1 current depends on
   * them only through β = KP·W·M/L·(T/Tnom)^BEX and the own-polarity threshold
   * VTO(T) = s·VTO − sign(VTO)·TCV·ΔT, with ∂ID/∂VTO = −gm (gm = ∂ID/∂VOV in both regions) and
   * ∂ID/∂β = ID/β (the bracket of the region's formula).
   */
  sensitivity(x: Float64Array, c: DeviceConditions, params: readonly string[]): DeviceSensitivity | undefined {
    for (const p of params) if (p !== TEMPERATURE_PARAMETER && p !== 'VTO' && p !== 'KP' && p !== 'W' && p !== 'L') return undefined;
    const n = this.n;
    const N = 4;
    const out = allocateSensitivity(n, T, N, params.length);
    const t = this.instances.terminals;
    const ev = this.scratch;
    const gmin = this.gmin;
    const tk = c.temperatureC + ZERO_CELSIUS_K;
    const kpFactor = (i: number): number => mosTemperature(this.vtoNom[i], this.bex[i], this.tcv[i], c.temperatureC, tnomOf(this.tnom[i], c.tnomC)).kpFactor;
    for (let i = 0; i < n; i++) {
      const s = this.sign[i];
      const vs = voltage(x, t[i * T + S]);
      const vds = s * (voltage(x, t[i * T + D]) - vs);
      const forward = this.biasAt(x, i);
      const fvds = forward ? vds : -vds;
      const beta = this.beta[i];
      const lambda = this.lambda[i];
      const region = this.channel(i);
      const gm = ev[GM];
      const gds = ev[GDS];
      const gmbs = ev[GMBS];
      const vov = ev[VOV];
      // ∂ID/∂β: the region's bracket times the channel-length factor.
      const byBeta = region === SATURATION ? 0.5 * vov * vov * (1 + lambda * fvds) : region === TRIODE ? (vov * fvds - 0.5 * fvds * fvds) * (1 + lambda * fvds) : 0;
      const byVto = -gm;
      const idNet = s * (forward ? ev[ID] : -ev[ID]) + gmin * s * vds;
      const row = i * N;
      out.current[row + D] = idNet;
      out.current[row + S] = -idNet;
      const w = out.currentByVoltage;
      const qd = (row + D) * T;
      const qs = (row + S) * T;
      // Drain current against the terminal voltages (the load's rows, in the frame that conducts), and gmin across the channel.
      if (forward) {
        w[qd + G] = gm;
        w[qd + D] = gds + gmin;
        w[qd + BULK] = gmbs;
        w[qd + S] = -(gm + gds + gmbs) - gmin;
      } else {
        w[qd + G] = -gm;
        w[qd + S] = -gds - gmin;
        w[qd + BULK] = -gmbs;
        w[qd + D] = gm + gds + gmbs + gmin;
      }
      for (let c2 = 0; c2 < T; c2++) w[qs + c2] = -w[qd + c2];
      // The frame current ID flows into the acting drain (D forward, S swapped); into the netlist drain it is ±ID.
      const into = s * (forward ? 1 : -1);
      for (let k = 0; k < params.length; k++) {
        const p = params[k];
        let d: number;
        if (p === TEMPERATURE_PARAMETER) {
          const direction = this.vtoNom[i] >= 0 ? 1 : -1;
          d = byBeta * ((beta * this.bex[i]) / tk) + byVto * (-direction * this.tcv[i]);
        } else if (p === 'VTO') d = byVto * s;
        else if (p === 'KP') d = byBeta * this.betaPerKp[i] * kpFactor(i);
        else if (p === 'W') d = this.w[i] > 0 ? (byBeta * beta) / this.w[i] : 0;
        else d = this.l[i] > 0 ? (-byBeta * beta) / this.l[i] : 0;
        const dNet = into * d;
        const r = out.residualByParam[k];
        r[i * T + D] = dNet;
        r[i * T + S] = -dNet;
        out.currentByParam[k][row + D] = dNet;
        out.currentByParam[k][row + S] = -dNet;
      }
    }
    return out;
  }
}

/**
 * One channel row (the acting drain, r = 1, or the acting source, r = −1) of the companion model for
 * the evaluation in `ev`: r·gm to (G, effS), r·gds to (effD, effS), r·gmbs to (BULK, effS), and the
 * equivalent current s·r·ieq on unknown `k`.
 */
function stampChannelRow(values: Float64Array, rhs: Float64Array, pos: Int32Array, row: number, effS: number, k: number, effD: number, ev: Float64Array, s: number, r: number): void {
  const gm = r * ev[GM];
  const gds = r * ev[GDS];
  const gmbs = r * ev[GMBS];
  add(values, pos[row + G], gm);
  add(values, pos[row + effS], -gm);
  add(values, pos[row + effD], gds);
  add(values, pos[row + effS], -gds);
  add(values, pos[row + BULK], gmbs);
  add(values, pos[row + effS], -gmbs);
  if (k >= 0) rhs[k] -= s * r * ev[IEQ];
}

function voltage(x: Float64Array, k: number): number {
  return k >= 0 ? x[k] : 0;
}

function add(values: Float64Array, slot: number, v: number): void {
  if (slot >= 0) values[slot] += v;
}

/** The MOSFET kind (element letter M). */
export const MOSFET: DeviceKind = deviceKind<Mosfet>({
  letter: 'M',
  nodeCount: 4,
  terminalCount: T,
  quantities: QUANTITIES,
  regions: REGIONS,
  internalNodes: () => [],
  terminals: (el, node) => [node(el.nodes[0]), node(el.nodes[1]), node(el.nodes[2]), node(el.nodes[3])],
  dcPaths: (el, to) => to.union(el.nodes[0], el.nodes[2]),
  checkedJunctions: () => {},
  instanceValues: (el, visit) => {
    visit('W', el.w, 1e-6);
    visit('L', el.l, 1e-6);
    visit('M', el.m, 1);
  },
  floatingNote: 'its gate and bulk draw no DC current',
  createTable: (instances, issues) => new MosfetTable(instances, issues),
  record(cols, instances, i): MosRecord {
    const v = cols.values;
    const rec: MosRecord = {
      type: 'mosfet',
      polarity: instances.elements[i].model.kind === 'pmos' ? 'pmos' : 'nmos',
      region: REGIONS[cols.region[i]],
      id: v[Q_ID][i],
      vgs: v[Q_VGS][i],
      vds: v[Q_VDS][i],
      vth: v[Q_VTH][i],
      vov: v[Q_VOV][i],
      gm: v[Q_GM][i],
      ro: v[Q_RO][i],
      gmbs: v[Q_GMBS][i],
    };
    if (cols.flags[i] & NO_CLM) rec.roInfinite = true;
    return rec;
  },
  terminalCurrent: (cols, i, t) => (t === D ? cols.values[Q_ID][i] : t === S ? -cols.values[Q_ID][i] : 0),
});
