// Junction FET: the Shichman–Hodges form of docs/DEVICE-MODELS.md with gate-source and gate-drain junction diodes and temperature terms, N- and P-channel, source/drain swap, as one table of typed arrays with limiting, stamps and records.

import type { Jfet } from '../circuit';
import type { JfetRecord, JfetRegion } from '../solve/types';
import type { DeviceColumns, DeviceConditions, DeviceInstances, DeviceKind, DeviceSensitivity, DeviceTable, LoadTally, OverdrivenJunction, StartHint } from './device';
import { NOT_OVERDRIVEN, TEMPERATURE_PARAMETER, allocateSensitivity, columnsFor, deviceKind } from './device';
import type { ParamIssue } from './params';
import { elementParam, modelParam } from './params';
import { EXP_ARG_LIMIT, UNBOUNDED, ZERO_CELSIUS_K, criticalVoltage, guardedExpSlope, guardedExpValue, limitJunctionValue, cardTnomC, saturationCurrentAt, saturationCurrentLogSlope, tnomOf, unbounded } from './physics';

/** Channel parameters of one JFET at the solve's temperature, own polarity. */
export interface JfetParams {
  /** BETA·area·M, A/V². */
  beta: number;
  /** Pinch-off voltage (negative for a depletion device), own polarity. */
  vto: number;
  lambda: number;
}

/** Channel current (VDS ≥ 0 frame, own polarity) and its derivatives. */
export interface JfetChannel {
  id: number;
  gm: number;
  gds: number;
  region: JfetRegion;
}

/**
 * Temperature terms (docs/DEVICE-MODELS.md): VTO(T) = VTO + VTOTC·ΔT and
 * BETA(T) = BETA·1.01^(BETATCE·ΔT). Returns the own-polarity VTO and the factor on BETA.
 */
export function jfetTemperature(vto: number, vtotc: number, betatce: number, temperatureC: number, tnomC: number): { vto: number; betaFactor: number } {
  const dt = temperatureC - tnomC;
  if (dt === 0) return { vto, betaFactor: 1 };
  return { vto: vto + vtotc * dt, betaFactor: Math.pow(1.01, betatce * dt) };
}

const REGIONS: readonly JfetRegion[] = ['saturation', 'linear', 'cutoff'];
const SATURATION = 0;
const LINEAR = 1;
const CUTOFF = 2;

// Slots of the scratch array `jfetCore` fills.
const ID = 0;
const GM = 1;
const GDS = 2;
// Its input slots: the bias in the frame where VDS ≥ 0 and the instance's parameters. They travel in the
// scratch array, not as arguments, because `jfetCore` is not inlined into the table's load and a double
// passed to a call that is not inlined is boxed on the heap (about 220 bytes per device per Newton
// iteration before, with the stamps' and the gate junctions' arguments).
const IN_VGS = 3;
const IN_VDS = 4;
const IN_BETA = 5;
const IN_VTO = 6;
const IN_LAMBDA = 7;
/** The equivalent current of the channel's companion model, which the stamps read. */
const IEQ = 8;
/** The own-polarity voltage of the gate junction `gateJunction` stamps. */
const IN_VJ = 9;
const SCRATCH = 10;

/**
 * docs/DEVICE-MODELS.md channel equations for VDS ≥ 0: cutoff when VGS − VTO ≤ 0; saturation
 * (VDS ≥ VGS − VTO) ID = BETA·(VGS − VTO)²·(1 + LAMBDA·VDS); linear
 * ID = BETA·VDS·(2·(VGS − VTO) − VDS)·(1 + LAMBDA·VDS), at the bias and parameters in `out`'s
 * input slots. Writes ID, gm, gds into `out` and returns the region's index in REGIONS.
 */
function jfetCore(out: Float64Array): number {
  const vds = out[IN_VDS];
  const beta = out[IN_BETA];
  const lambda = out[IN_LAMBDA];
  const vov = out[IN_VGS] - out[IN_VTO];
  if (!(vov > 0)) {
    out[ID] = 0;
    out[GM] = 0;
    out[GDS] = 0;
    return CUTOFF;
  }
  const clm = 1 + lambda * vds;
  if (vds >= vov) {
    const core = beta * vov * vov;
    out[ID] = core * clm;
    out[GM] = 2 * beta * vov * clm;
    out[GDS] = core * lambda;
    return SATURATION;
  }
  const core = beta * vds * (2 * vov - vds);
  out[ID] = core * clm;
  out[GM] = 2 * beta * vds * clm;
  out[GDS] = 2 * beta * (vov - vds) * clm + core * lambda;
  return LINEAR;
}

/** The channel equations at one bias (VDS ≥ 0 frame), for tests and hand checks; the table evaluates the same function in its loop. */
export function evaluateJfetChannel(vgs: number, vds: number, p: JfetParams): JfetChannel {
  const s = new Float64Array(SCRATCH);
  s[IN_VGS] = vgs;
  s[IN_VDS] = vds;
  s[IN_BETA] = p.beta;
  s[IN_VTO] = p.vto;
  s[IN_LAMBDA] = p.lambda;
  const region = jfetCore(s);
  return { id: s[ID], gm: s[GM], gds: s[GDS], region: REGIONS[region] };
}

const D = 0;
const G = 1;
const S = 2;
/** Terminals per instance: drain, gate, source. */
const T = 3;

const QUANTITIES = ['id', 'ig', 'vgs', 'vds', 'vto', 'gm', 'ro'] as const;
const Q_ID = 0;
const Q_IG = 1;
const Q_VGS = 2;
const Q_VDS = 3;
const Q_VTO = 4;
const Q_GM = 5;
const Q_RO = 6;
/** `DeviceColumns.flags` bit: no channel-length modulation at this point, so `ro` stands for unbounded. */
const NO_CLM = 1;

/**
 * Every JFET of a circuit. Terminals are [drain, gate, source]; the channel is symmetric, so the
 * lower-potential end (own polarity) acts as source. The gate-source and gate-drain junctions
 * are diodes IS·(exp(V/(N·VT)) − 1) with 1 pS across each.
 */
export class JfetTable implements DeviceTable {
  readonly kind: DeviceKind = JFET;
  private readonly n: number;
  /** +1 N-channel, −1 P-channel (integers, so passing one to a call boxes nothing). */
  private readonly sign: Int8Array;
  private readonly betaNom: Float64Array;
  /** area·M: BETA of the card to BETA of the instance. */
  private readonly betaScale: Float64Array;
  private readonly vtoNom: Float64Array;
  private readonly vtotc: Float64Array;
  private readonly betatce: Float64Array;
  private readonly lambda: Float64Array;
  private readonly isNom: Float64Array;
  private readonly nEmission: Float64Array;
  private readonly xti: Float64Array;
  private readonly eg: Float64Array;
  /** The card's own TNOM, °C (NaN: the analysis's nominal temperature). */
  private readonly tnom: Float64Array;
  private readonly beta: Float64Array;
  private readonly vto: Float64Array;
  private readonly is: Float64Array;
  private readonly nvt: Float64Array;
  private readonly vcrit: Float64Array;
  private gmin = 0;
  private readonly vgsOld: Float64Array;
  private readonly vdsOld: Float64Array;
  private readonly startVgs: Float64Array;
  private readonly startVds: Float64Array;
  private readonly scratch = new Float64Array(SCRATCH);

  constructor(readonly instances: DeviceInstances<Jfet>, issues: ParamIssue[]) {
    const n = (this.n = instances.count);
    const col = (): Float64Array => new Float64Array(n);
    this.sign = new Int8Array(n);
    this.betaNom = col();
    this.betaScale = col();
    this.vtoNom = col();
    this.vtotc = col();
    this.betatce = col();
    this.lambda = col();
    this.isNom = col();
    this.nEmission = col();
    this.xti = col();
    this.eg = col();
    this.tnom = col();
    this.beta = col();
    this.vto = col();
    this.is = col();
    this.nvt = col().fill(0.025);
    this.vcrit = col().fill(0.6);
    this.vgsOld = col();
    this.vdsOld = col();
    this.startVgs = col().fill(Number.NaN);
    this.startVds = col().fill(Number.NaN);
    for (let i = 0; i < n; i++) {
      const element = instances.elements[i];
      const md = element.model;
      this.sign[i] = md.kind === 'pjf' ? -1 : 1;
      const area = elementParam(element, 'AREA', element.area, 'positive', 0, issues);
      const mult = elementParam(element, 'M', element.m, 'positive', 0, issues);
      const scale = area * mult;
      this.betaScale[i] = scale;
      this.betaNom[i] = modelParam(element, md, 'BETA', 'non-negative', issues) * scale;
      this.vtoNom[i] = modelParam(element, md, 'VTO', 'finite', issues);
      this.vtotc[i] = modelParam(element, md, 'VTOTC', 'finite', issues);
      this.betatce[i] = modelParam(element, md, 'BETATCE', 'finite', issues);
      this.lambda[i] = modelParam(element, md, 'LAMBDA', 'non-negative', issues);
      this.isNom[i] = modelParam(element, md, 'IS', 'non-negative', issues) * scale;
      this.nEmission[i] = modelParam(element, md, 'N', 'positive', issues);
      this.xti[i] = modelParam(element, md, 'XTI', 'finite', issues);
      this.eg[i] = modelParam(element, md, 'EG', 'finite', issues);
      this.tnom[i] = cardTnomC(md.params, NaN);
    }
    this.beta.set(this.betaNom);
    this.vto.set(this.vtoNom);
  }

  /** The channel parameters of instance i at the prepared temperature (own polarity). */
  modelParams(i: number): JfetParams {
    return { beta: this.beta[i], vto: this.vto[i], lambda: this.lambda[i] };
  }

  prepare(c: DeviceConditions): void {
    this.gmin = c.junctionGmin;
    for (let i = 0; i < this.n; i++) {
      const tn = tnomOf(this.tnom[i], c.tnomC);
      const t = jfetTemperature(this.vtoNom[i], this.vtotc[i], this.betatce[i], c.temperatureC, tn);
      this.beta[i] = this.betaNom[i] * t.betaFactor;
      this.vto[i] = t.vto;
      this.is[i] = saturationCurrentAt(this.isNom[i], this.xti[i], this.eg[i], c.temperatureC, tn);
      this.nvt[i] = this.nEmission[i] * c.vt;
      this.vcrit[i] = criticalVoltage(this.nvt[i], this.is[i]);
    }
  }

  resetState(x: Float64Array, start?: StartHint): void {
    const t = this.instances.terminals;
    for (let i = 0; i < this.n; i++) {
      const s = this.sign[i];
      const vs = voltage(x, t[i * T + S]);
      this.vgsOld[i] = s * (voltage(x, t[i * T + G]) - vs);
      this.vdsOld[i] = s * (voltage(x, t[i * T + D]) - vs);
      this.startVgs[i] = Number.NaN;
      if (start?.kind !== 'cold') continue;
      // A depletion device starts with its gate at its source, an enhancement one just above pinch-off; the drain at the edge of saturation, so the first linearisation has a gm.
      const vgs = Math.max(0, this.vto[i] + 0.5);
      this.startVgs[i] = vgs;
      this.startVds[i] = vgs - this.vto[i];
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
      if (Number.isFinite(this.startVgs[i])) {
        ev[IN_VGS] = this.startVgs[i];
        ev[IN_VDS] = this.startVds[i];
        this.startVgs[i] = Number.NaN;
        tally.limited = true;
      } else if (limit && this.limitBias(i)) tally.limited = true;
      const vgs = ev[IN_VGS];
      const vds = ev[IN_VDS];
      this.vgsOld[i] = vgs;
      this.vdsOld[i] = vds;
      const forward = vds >= 0;
      if (!forward) this.swapFrame();
      this.channel(i);
      this.stamp(i, values, rhs, forward);
      let finite = Number.isFinite(ev[ID]) && Number.isFinite(ev[GM]) && Number.isFinite(ev[GDS]);
      // Gate junctions: gate (anode) to source and to drain (cathodes).
      ev[IN_VJ] = vgs;
      if (!this.gateJunction(i, S, values, rhs)) finite = false;
      ev[IN_VJ] = vgs - vds;
      if (!this.gateJunction(i, D, values, rhs)) finite = false;
      // Robustness conductance across the channel (linear, so no equivalent current).
      const p = i * T * T;
      add(values, pos[p + D * T + D], gmin);
      add(values, pos[p + D * T + S], -gmin);
      add(values, pos[p + S * T + D], -gmin);
      add(values, pos[p + S * T + S], gmin);
      if (!finite) tally.nonFinite.push(this.instances.elementIndex[i]);
    }
  }

  /** Instance i's own-polarity bias at x into the scratch's input slots, in the frame where VDS ≥ 0; true when that is the netlist's (not swapped). */
  private biasAt(x: Float64Array, i: number): boolean {
    const ev = this.scratch;
    ev[IN_VGS] = this.fromSource(x, i, G);
    ev[IN_VDS] = this.fromSource(x, i, D);
    const forward = ev[IN_VDS] >= 0;
    if (!forward) this.swapFrame();
    return forward;
  }

  /**
   * Limits instance i's bias in the scratch's input slots against the last iteration's; true when it
   * changed. Forward, the gate-source voltage steers the channel and both junctions are limited;
   * swapped, the drain acts as source.
   */
  private limitBias(i: number): boolean {
    const ev = this.scratch;
    const vgsIn = ev[IN_VGS];
    const vdsIn = ev[IN_VDS];
    let vgs = vgsIn;
    let vds = vdsIn;
    const vto = this.vto[i];
    const nvt = this.nvt[i];
    const vcrit = this.vcrit[i];
    const vgdOld = this.vgsOld[i] - this.vdsOld[i];
    if (vds >= 0) {
      vgs = limitJunctionValue(limitTurnOff(vgs, this.vgsOld[i], vto), this.vgsOld[i], nvt, vcrit);
      const vgd = vgs - vds;
      const vgdLimited = limitJunctionValue(vgd, vgdOld, nvt, vcrit);
      if (vgdLimited !== vgd) vds = vgs - vgdLimited;
    } else {
      const vgdIn = vgs - vds;
      const vgd = limitJunctionValue(limitTurnOff(vgdIn, vgdOld, vto), vgdOld, nvt, vcrit);
      const vgsLimited = limitJunctionValue(vgd + vds, this.vgsOld[i], nvt, vcrit);
      if (vgd !== vgdIn || vgsLimited !== vgs) {
        vgs = vgsLimited;
        vds = vgs - vgd;
      }
    }
    ev[IN_VGS] = vgs;
    ev[IN_VDS] = vds;
    return vds !== vdsIn || vgs !== vgsIn;
  }

  /** The scratch's bias into the swapped frame, where the drain acts as source: VGS→VGD, VDS→−VDS. */
  private swapFrame(): void {
    const ev = this.scratch;
    const vds = ev[IN_VDS];
    ev[IN_VGS] = ev[IN_VGS] - vds;
    ev[IN_VDS] = -vds;
  }

  /** `jfetCore` of instance i at the bias in the scratch's input slots; returns the region's index. */
  private channel(i: number): number {
    const ev = this.scratch;
    ev[IN_BETA] = this.beta[i];
    ev[IN_VTO] = this.vto[i];
    ev[IN_LAMBDA] = this.lambda[i];
    return jfetCore(ev);
  }

  /**
   * Instance i's channel stamps for the evaluation in the scratch (frame bias in its input slots): current
   * from the acting drain to the acting source, linearised in (VG − VeffS) and (VeffD − VeffS).
   */
  private stamp(i: number, values: Float64Array, rhs: Float64Array, forward: boolean): void {
    const t = this.instances.terminals;
    const pos = this.instances.positions;
    const ev = this.scratch;
    const s = this.sign[i];
    ev[IEQ] = ev[ID] - ev[GM] * ev[IN_VGS] - ev[GDS] * ev[IN_VDS];
    const effD = forward ? D : S;
    const effS = forward ? S : D;
    const p = i * T * T;
    stampChannelRow(values, rhs, pos, p + effD * T, effS, effD, t[i * T + effD], ev, s, 1);
    stampChannelRow(values, rhs, pos, p + effS * T, effS, effD, t[i * T + effS], ev, s, -1);
  }

  /**
   * The junction from the gate (anode) of instance i to its terminal `k` (cathode) at the own-polarity
   * voltage in the scratch's `IN_VJ`; false when its stamp is not finite.
   */
  private gateJunction(i: number, k: number, values: Float64Array, rhs: Float64Array): boolean {
    const t = this.instances.terminals;
    const pos = this.instances.positions;
    const v = this.scratch[IN_VJ];
    const is = this.is[i];
    const nvt = this.nvt[i];
    const gmin = this.gmin;
    const xj = v / nvt;
    const ij = is * (guardedExpValue(xj) - 1) + gmin * v;
    const gj = (is * guardedExpSlope(xj)) / nvt + gmin;
    const jeq = this.sign[i] * (ij - gj * v);
    const p = i * T * T;
    add(values, pos[p + G * T + G], gj);
    add(values, pos[p + G * T + k], -gj);
    add(values, pos[p + k * T + G], -gj);
    add(values, pos[p + k * T + k], gj);
    const kg = t[i * T + G];
    const kk = t[i * T + k];
    if (kg >= 0) rhs[kg] -= jeq;
    if (kk >= 0) rhs[kk] += jeq;
    return Number.isFinite(gj) && Number.isFinite(jeq);
  }

  /** V(terminal) − V(source) of instance i in its channel's own polarity (an N-channel's sense). */
  private fromSource(x: Float64Array, i: number, terminal: number): number {
    const t = this.instances.terminals;
    return this.sign[i] * (voltage(x, t[i * T + terminal]) - voltage(x, t[i * T + S]));
  }

  evaluate(x: Float64Array, into?: DeviceColumns): DeviceColumns {
    const out = columnsFor(into, QUANTITIES.length, this.n);
    const v = out.values;
    const ev = this.scratch;
    const gmin = this.gmin;
    for (let i = 0; i < this.n; i++) {
      const s = this.sign[i];
      const vgs = this.fromSource(x, i, G);
      const vds = this.fromSource(x, i, D);
      const vgd = vgs - vds;
      const forward = this.biasAt(x, i);
      const region = this.channel(i);
      const ich = forward ? ev[ID] : -ev[ID];
      const is = this.is[i];
      const nvt = this.nvt[i];
      const igs = is * (guardedExpValue(vgs / nvt) - 1) + gmin * vgs;
      const igd = is * (guardedExpValue(vgd / nvt) - 1) + gmin * vgd;
      const gds = ev[GDS];
      v[Q_ID][i] = s * (ich - igd + gmin * vds);
      v[Q_IG][i] = s * (igs + igd);
      v[Q_VGS][i] = s * vgs;
      v[Q_VDS][i] = s * vds;
      v[Q_VTO][i] = this.vto[i];
      v[Q_GM][i] = ev[GM];
      v[Q_RO][i] = gds > 1 / UNBOUNDED ? 1 / gds : unbounded();
      out.region[i] = region;
      if (!(gds > 1 / UNBOUNDED)) out.flags[i] = NO_CLM;
    }
    return out;
  }

  overdriven(x: Float64Array, i: number): readonly OverdrivenJunction[] {
    const t = this.instances.terminals;
    const s = this.sign[i];
    const vg = voltage(x, t[i * T + G]);
    if (!(this.is[i] > 0)) return NOT_OVERDRIVEN;
    const vgs = s * (vg - voltage(x, t[i * T + S]));
    const vgd = s * (vg - voltage(x, t[i * T + D]));
    const gs = vgs / this.nvt[i] > EXP_ARG_LIMIT;
    const gd = vgd / this.nvt[i] > EXP_ARG_LIMIT;
    if (!gs && !gd) return NOT_OVERDRIVEN;
    const out: OverdrivenJunction[] = [];
    if (gs) out.push({ junction: 'gate-source junction', volts: vgs });
    if (gd) out.push({ junction: 'gate-drain junction', volts: vgd });
    return out;
  }

  /**
   * Exact partial derivatives at fixed terminal voltages (docs/VARIATION.md), for the temperature,
   * VTO and BETA: the channel through the square law's gm and gds and its current per unit of
   * BETA (it is linear in it), the gate junctions through their exponentials; VTO(T) = VTO +
   * VTOTC·ΔT, BETA(T) = BETA·1.01^(BETATCE·ΔT), d ln IS/dT = XTI/T + EG·q/(k·T²) and N·VT ∝ T.
   */
  sensitivity(x: Float64Array, c: DeviceConditions, params: readonly string[]): DeviceSensitivity | undefined {
    for (const p of params) if (p !== TEMPERATURE_PARAMETER && p !== 'VTO' && p !== 'BETA') return undefined;
    const out = allocateSensitivity(this.n, T, T, params.length);
    const ev = this.scratch;
    const gmin = this.gmin;
    const tk = c.temperatureC + ZERO_CELSIUS_K;
    for (let i = 0; i < this.n; i++) {
      const s = this.sign[i];
      const vgs = this.fromSource(x, i, G);
      const vds = this.fromSource(x, i, D);
      const vgd = vgs - vds;
      const beta = this.beta[i];
      // The channel per unit of BETA(T), then at BETA(T); swapped, the drain acts as source.
      const forward = this.biasAt(x, i);
      this.channel(i);
      ev[IN_BETA] = 1;
      jfetCore(ev);
      const perBeta = forward ? ev[ID] : -ev[ID];
      this.channel(i);
      const ich = forward ? ev[ID] : -ev[ID];
      const byVgs = forward ? ev[GM] : -ev[GM];
      const byVds = forward ? ev[GDS] : ev[GM] + ev[GDS];
      const is = this.is[i];
      const nvt = this.nvt[i];
      const ejs = guardedExpValue(vgs / nvt);
      const ejd = guardedExpValue(vgd / nvt);
      const gjs = (is / nvt) * guardedExpSlope(vgs / nvt) + gmin;
      const gjd = (is / nvt) * guardedExpSlope(vgd / nvt) + gmin;
      const igs = is * (ejs - 1) + gmin * vgs;
      const igd = is * (ejd - 1) + gmin * vgd;
      // Own-frame currents into D and G and their partials in vgs and vds; S carries the rest. The polarity sign cancels in the voltage partials.
      const row = i * T;
      out.current[row + D] = s * (ich - igd + gmin * vds);
      out.current[row + G] = s * (igs + igd);
      out.current[row + S] = -out.current[row + D] - out.current[row + G];
      setVoltagePartials(out.currentByVoltage, row, D, byVgs - gjd, byVds + gjd + gmin);
      setVoltagePartials(out.currentByVoltage, row, G, gjs + gjd, -gjd);
      for (let k = 0; k < T; k++) out.currentByVoltage[(row + S) * T + k] = -out.currentByVoltage[(row + D) * T + k] - out.currentByVoltage[(row + G) * T + k];
      // Junction current per kelvin at a fixed voltage v: IS·(d ln IS/dT)·(e − 1) − IS·e'·v/(N·VT·T).
      const lnIsPerK = saturationCurrentLogSlope(this.xti[i], this.eg[i], c.temperatureC);
      const junctionPerK = (v: number, e: number): number => is * lnIsPerK * (e - 1) - ((is * guardedExpSlope(v / nvt)) * v) / (nvt * tk);
      for (let k = 0; k < params.length; k++) {
        const p = params[k];
        let dD: number;
        let dG = 0;
        if (p === 'VTO') dD = -byVgs;
        else if (p === 'BETA') dD = perBeta * this.betaScale[i] * jfetTemperature(this.vtoNom[i], this.vtotc[i], this.betatce[i], c.temperatureC, tnomOf(this.tnom[i], c.tnomC)).betaFactor;
        else {
          const jd = junctionPerK(vgd, ejd);
          dD = -byVgs * this.vtotc[i] + perBeta * beta * this.betatce[i] * Math.log(1.01) - jd;
          dG = junctionPerK(vgs, ejs) + jd;
        }
        const r = out.residualByParam[k];
        const q = out.currentByParam[k];
        q[row + D] = r[row + D] = s * dD;
        q[row + G] = r[row + G] = s * dG;
        q[row + S] = r[row + S] = -s * (dD + dG);
      }
    }
    return out;
  }
}

/** The row of ∂(current into terminal `term`)/∂(terminal voltages) of one instance from its own-frame partials in vgs = VG − VS and vds = VD − VS. */
function setVoltagePartials(w: Float64Array, row: number, term: number, byVgs: number, byVds: number): void {
  const q = (row + term) * T;
  w[q + G] = byVgs;
  w[q + D] = byVds;
  w[q + S] = -byVgs - byVds;
}

/**
 * One channel row (the acting drain, r = 1, or the acting source, r = −1) for the evaluation in `ev`:
 * r·gm to (G, effS), r·gds to (effD, effS), and the equivalent current s·r·ieq on unknown `k`.
 */
function stampChannelRow(values: Float64Array, rhs: Float64Array, pos: Int32Array, row: number, effS: number, effD: number, k: number, ev: Float64Array, s: number, r: number): void {
  const gm = r * ev[GM];
  const gds = r * ev[GDS];
  add(values, pos[row + G], gm);
  add(values, pos[row + effS], -gm);
  add(values, pos[row + effD], gds);
  add(values, pos[row + effS], -gds);
  if (k >= 0) rhs[k] -= s * r * ev[IEQ];
}

/**
 * A step of a conducting channel's gate voltage far into cutoff stops half a volt below pinch-off,
 * so the next iteration still sees the turn-off (the MOS rule of `limitGateValue` for downward
 * steps; upward steps are left to the gate junction's own limiting).
 */
function limitTurnOff(vNew: number, vOld: number, vto: number): number {
  return vOld > vto && vNew < vto - 0.5 ? vto - 0.5 : vNew;
}

function voltage(x: Float64Array, k: number): number {
  return k >= 0 ? x[k] : 0;
}

function add(values: Float64Array, slot: number, v: number): void {
  if (slot >= 0) values[slot] += v;
}

/** The JFET kind (element letter J). */
export const JFET: DeviceKind = deviceKind<Jfet>({
  letter: 'J',
  nodeCount: 3,
  terminalCount: T,
  quantities: QUANTITIES,
  regions: REGIONS,
  internalNodes: () => [],
  terminals: (el, node) => [node(el.nodes[0]), node(el.nodes[1]), node(el.nodes[2])],
  dcPaths: (el, to) => {
    to.union(el.nodes[0], el.nodes[2]);
    to.union(el.nodes[1], el.nodes[2]);
    to.union(el.nodes[1], el.nodes[0]);
  },
  checkedJunctions: () => {},
  instanceValues: (el, visit) => {
    visit('area', el.area, 1);
    visit('M', el.m, 1);
  },
  createTable: (instances, issues) => new JfetTable(instances, issues),
  record(cols, instances, i): JfetRecord {
    const v = cols.values;
    const rec: JfetRecord = {
      type: 'jfet',
      polarity: instances.elements[i].model.kind === 'pjf' ? 'pjf' : 'njf',
      region: REGIONS[cols.region[i]],
      id: v[Q_ID][i],
      ig: v[Q_IG][i],
      vgs: v[Q_VGS][i],
      vds: v[Q_VDS][i],
      vto: v[Q_VTO][i],
      gm: v[Q_GM][i],
      ro: v[Q_RO][i],
    };
    if (cols.flags[i] & NO_CLM) rec.roInfinite = true;
    return rec;
  },
  terminalCurrent: (cols, i, t) => (t === D ? cols.values[Q_ID][i] : t === G ? cols.values[Q_IG][i] : t === S ? -cols.values[Q_ID][i] - cols.values[Q_IG][i] : 0),
});
