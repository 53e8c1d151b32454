// Bipolar transistor: the Gummel–Poon DC model of docs/DEVICE-MODELS.md (high injection, leakage base currents, both Early voltages, ohmic RB/RE/RC, XTB), NPN and PNP, as one table of typed arrays with limiting, stamps and records.

import { float64Column, int8Column } from '../columns';
import type { Bjt } from '../circuit';
import type { BjtRecord, BjtRegion } from '../solve/types';
import type { DeviceColumns, DeviceConditions, DeviceInstances, DeviceKind, DeviceSensitivity, DeviceTable, LoadTally, OverdrivenJunction, StartHint } from './device';
import { NOT_OVERDRIVEN, SolveConditions, TEMPERATURE_PARAMETER, allocateSensitivity, columnsOverwritten, deviceKind } from './device';
import type { ParamIssue, ParamRule } from './params';
import { elementParam, ModelReads } from './params';
import { BOLTZMANN, ELEMENTARY_CHARGE, EXP_ARG_LIMIT, UNBOUNDED, ZERO_CELSIUS_K, criticalVoltage, guardedExpSlope, guardedExpValue, limitJunctionValue, reciprocalOrUnbounded, cardTnomC, saturationCurrentAt, shiftJunction, sameNumber, thermalVoltage, tnomOf, unbounded } from './physics';

/**
 * Region by intrinsic junction bias in the device's own polarity (docs/DEVICE-MODELS.md):
 * forward-active when VBE > 0 and VBC ≤ 0, saturation when both are forward, reverse-active
 * when only the base-collector junction is forward, cutoff when neither is.
 */
export function bjtRegion(vbe: number, vbc: number): BjtRegion {
  if (vbe > 0) return vbc > 0 ? 'saturation' : 'forward-active';
  return vbc > 0 ? 'reverse-active' : 'cutoff';
}

/**
 * Model parameters of one BJT after temperature, area and beta scaling. Currents (IS, ISE, ISC,
 * IKF, IKR) already carry area × M. The optional Gummel–Poon terms default to "no effect".
 */
export interface BjtParams {
  is: number;
  bf: number;
  br: number;
  nf: number;
  nr: number;
  /** Forward Early voltage, volts; Infinity for none. */
  vaf: number;
  /** Reverse Early voltage, volts; Infinity (default) for none. */
  var?: number;
  /** Forward and reverse knee currents, amperes; Infinity (default) for none. */
  ikf?: number;
  ikr?: number;
  /** Base-emitter and base-collector leakage saturation currents [0] and their emission coefficients [1.5, 2]. */
  ise?: number;
  ne?: number;
  isc?: number;
  nc?: number;
  /**
   * Parallel count: multiplies every current. Kept for callers that scale after the fact; the
   * table folds M into the currents above and passes 1.
   */
  m: number;
  vt: number;
  /** Conductance across each junction, siemens. */
  gmin: number;
}

/** Terminal currents (own polarity, into the terminal) and their partial derivatives with respect to the intrinsic VBE and VBC. */
export interface BjtEvaluation {
  ic: number;
  ib: number;
  dicDvbe: number;
  dicDvbc: number;
  dibDvbe: number;
  dibDvbc: number;
  /** ∂IC/∂VBE (the small-signal gm). */
  gm: number;
  /** ∂IB/∂VBE without the robustness conductance (1/rπ). */
  gpi: number;
  /** The normalised base charge qb (1 without high injection or Early effect). */
  qb: number;
  clipped: boolean;
}

// Slots of the per-instance parameter row the core reads (`PARAMS` numbers per instance).
const P_IS = 0;
const P_ISE = 1;
const P_ISC = 2;
const P_BF = 3;
const P_BR = 4;
const P_NFVT = 5;
const P_NRVT = 6;
const P_NEVT = 7;
const P_NCVT = 8;
const P_INV_VAF = 9;
const P_INV_VAR = 10;
const P_INV_IKF = 11;
const P_INV_IKR = 12;
const P_GMIN = 13;
const PARAMS = 14;

// Slots of the scratch array `bjtCore` fills.
const IC = 0;
const IB = 1;
const DIC_DVBE = 2;
const DIC_DVBC = 3;
const DIB_DVBE = 4;
const DIB_DVBC = 5;
const GM = 6;
const GPI = 7;
const QB = 8;
// The two input slots: the intrinsic VBE and VBC to evaluate at. They travel in the scratch array, not as
// arguments, because bjtCore is too large to be inlined and a double passed to a call that is not inlined
// is boxed on the heap: two objects per device per Newton iteration, 0.14 GB of garbage for 26 corners of
// 10,000 devices, whose collections cost more than the device equations.
const IN_VBE = 9;
const IN_VBC = 10;
// The emitter current and its partials, which `load` works out from the others for its stamps.
const IE = 11;
const DIE_DVBE = 12;
const DIE_DVBC = 13;
const SCRATCH = 14;

/**
 * Below this the Early factor 1 − VBC/VAF − VBE/VAR is continued by δ·exp((D − δ)/δ), which
 * keeps the base charge positive and its slope continuous. The model's own range never comes
 * near it (it needs a reverse bias of most of an Early voltage); it only guards wild iterates.
 */
const EARLY_FLOOR = 0.1;

/**
 * The Gummel–Poon equations of docs/DEVICE-MODELS.md in the NPN sense at the intrinsic biases
 * vbe = `out[IN_VBE]`, vbc = `out[IN_VBC]`, with the parameter row at `par[o …]`:
 *   IBE1 = IS·(e^(VBE/NF·VT) − 1), IBE2 = ISE·(e^(VBE/NE·VT) − 1), IBC1, IBC2 likewise,
 *   q1 = 1/(1 − VBC/VAF − VBE/VAR), q2 = IBE1/IKF + IBC1/IKR, qb = q1/2·(1 + √(1 + 4·q2)),
 *   IC = (IBE1 − IBC1)/qb − IBC1/BR − IBC2, IB = IBE1/BF + IBE2 + IBC1/BR + IBC2,
 * plus gmin across each junction. Writes the slots above into `out` (derivatives exact) and
 * returns whether an exponential ran beyond the evaluated range.
 */
function bjtCore(par: Float64Array, o: number, out: Float64Array): boolean {
  const vbe = out[IN_VBE];
  const vbc = out[IN_VBC];
  const is = par[o + P_IS];
  const nfvt = par[o + P_NFVT];
  const nrvt = par[o + P_NRVT];
  const g = par[o + P_GMIN];
  const xbe = vbe / nfvt;
  const xbc = vbc / nrvt;
  // One exponential per junction: below the limit the value and the slope are the same number.
  const sbe = guardedExpSlope(xbe);
  const sbc = guardedExpSlope(xbc);
  const ibe1 = is * ((xbe <= EXP_ARG_LIMIT ? sbe : guardedExpValue(xbe)) - 1);
  const gbe1 = (is * sbe) / nfvt;
  const ibc1 = is * ((xbc <= EXP_ARG_LIMIT ? sbc : guardedExpValue(xbc)) - 1);
  const gbc1 = (is * sbc) / nrvt;
  let ibe2 = 0;
  let gbe2 = 0;
  const ise = par[o + P_ISE];
  if (ise > 0) {
    const nevt = par[o + P_NEVT];
    ibe2 = ise * (guardedExpValue(vbe / nevt) - 1);
    gbe2 = (ise * guardedExpSlope(vbe / nevt)) / nevt;
  }
  let ibc2 = 0;
  let gbc2 = 0;
  const isc = par[o + P_ISC];
  if (isc > 0) {
    const ncvt = par[o + P_NCVT];
    ibc2 = isc * (guardedExpValue(vbc / ncvt) - 1);
    gbc2 = (isc * guardedExpSlope(vbc / ncvt)) / ncvt;
  }
  // Base charge: Early factor (q1) and high injection (q2).
  const invVaf = par[o + P_INV_VAF];
  const invVar = par[o + P_INV_VAR];
  let d = 1 - vbc * invVaf - vbe * invVar;
  let dDvbe = -invVar;
  let dDvbc = -invVaf;
  if (d < EARLY_FLOOR) {
    const s = Math.exp((d - EARLY_FLOOR) / EARLY_FLOOR);
    d = EARLY_FLOOR * s;
    dDvbe *= s;
    dDvbc *= s;
  }
  const q1 = 1 / d;
  const dq1Dvbe = -dDvbe / (d * d);
  const dq1Dvbc = -dDvbc / (d * d);
  const invIkf = par[o + P_INV_IKF];
  const invIkr = par[o + P_INV_IKR];
  let qb = q1;
  let dqbDvbe = dq1Dvbe;
  let dqbDvbc = dq1Dvbc;
  if (invIkf > 0 || invIkr > 0) {
    const q2 = ibe1 * invIkf + ibc1 * invIkr;
    let arg = 1 + 4 * q2;
    let dq2Dvbe = gbe1 * invIkf;
    let dq2Dvbc = gbc1 * invIkr;
    if (!(arg > 1e-12)) {
      // Only a knee current below 4·IS under reverse bias gets here; hold the root.
      arg = 1e-12;
      dq2Dvbe = 0;
      dq2Dvbc = 0;
    }
    const root = Math.sqrt(arg);
    qb = (q1 * (1 + root)) / 2;
    dqbDvbe = (dq1Dvbe * (1 + root)) / 2 + (q1 * dq2Dvbe) / root;
    dqbDvbc = (dq1Dvbc * (1 + root)) / 2 + (q1 * dq2Dvbc) / root;
  }
  const it = (ibe1 - ibc1) / qb;
  const ditDvbe = gbe1 / qb - (it * dqbDvbe) / qb;
  const ditDvbc = -gbc1 / qb - (it * dqbDvbc) / qb;
  const bf = par[o + P_BF];
  const br = par[o + P_BR];
  out[IC] = it - ibc1 / br - ibc2 - g * vbc;
  out[IB] = ibe1 / bf + ibe2 + ibc1 / br + ibc2 + g * (vbe + vbc);
  out[DIC_DVBE] = ditDvbe;
  out[DIC_DVBC] = ditDvbc - gbc1 / br - gbc2 - g;
  out[DIB_DVBE] = gbe1 / bf + gbe2 + g;
  out[DIB_DVBC] = gbc1 / br + gbc2 + g;
  out[GM] = ditDvbe;
  out[GPI] = gbe1 / bf + gbe2;
  out[QB] = qb;
  return xbe > EXP_ARG_LIMIT || xbc > EXP_ARG_LIMIT;
}

// Slots of the scratch array `bjtCoreByParam` fills: ∂IC/∂(row entry) at [2·k], ∂IB/∂(row entry) at [2·k + 1].
// The multiplicative entries (IS, ISE, ISC, BF, BR) are given per unit of their logarithm, p·∂/∂p: a current
// proportional to IS is its own IS-derivative that way, and nothing is divided by a value that may be subnormal
// (BF = 1e-320 made 1/BF and ibe1/BF² overflow to Infinity and the spread NaN).
const BY_LN_IS = 0;
const BY_LN_ISE = 1;
const BY_LN_ISC = 2;
const BY_LN_BF = 3;
const BY_LN_BR = 4;
const BY_NFVT = 5;
const BY_NRVT = 6;
const BY_NEVT = 7;
const BY_NCVT = 8;
/** ∂/∂IS per unit of IS (for a card IS of 0, where the logarithmic form says nothing). */
const BY_IS = 9;
const BY_PARAMS = 10;

/**
 * The partial derivatives of `bjtCore`'s IC and IB with respect to the temperature-dependent
 * entries of the parameter row (IS, ISE, ISC, BF, BR and the four n·VT), at fixed vbe, vbc, by
 * the chain rule through the same equations: with E = e^(VBE/NF·VT), IBE1 = IS·(E − 1), so
 * IS·∂IBE1/∂IS = IBE1, and ∂IBE1/∂(NF·VT) = −gbe1·VBE/(NF·VT); IBC1, IBE2, IBC2 likewise;
 * qb depends on IBE1 and IBC1 through q2, so ∂IT/∂IBE1 = (1 − IT·∂qb/∂IBE1)/qb and
 * ∂IT/∂IBC1 = −(1 + IT·∂qb/∂IBC1)/qb; IC = IT − IBC1/BR − IBC2 and IB = IBE1/BF + IBE2 + IBC1/BR + IBC2.
 */
function bjtCoreByParam(vbe: number, vbc: number, par: Float64Array, o: number, out: Float64Array): void {
  const is = par[o + P_IS];
  const nfvt = par[o + P_NFVT];
  const nrvt = par[o + P_NRVT];
  const xbe = vbe / nfvt;
  const xbc = vbc / nrvt;
  const ebe = guardedExpValue(xbe) - 1;
  const ebc = guardedExpValue(xbc) - 1;
  const ibe1 = is * ebe;
  const ibc1 = is * ebc;
  const gbe1 = (is * guardedExpSlope(xbe)) / nfvt;
  const gbc1 = (is * guardedExpSlope(xbc)) / nrvt;
  const invVaf = par[o + P_INV_VAF];
  const invVar = par[o + P_INV_VAR];
  let d = 1 - vbc * invVaf - vbe * invVar;
  if (d < EARLY_FLOOR) d = EARLY_FLOOR * Math.exp((d - EARLY_FLOOR) / EARLY_FLOOR);
  const q1 = 1 / d;
  const invIkf = par[o + P_INV_IKF];
  const invIkr = par[o + P_INV_IKR];
  let qb = q1;
  let dqbDibe1 = 0;
  let dqbDibc1 = 0;
  if (invIkf > 0 || invIkr > 0) {
    const arg = 1 + 4 * (ibe1 * invIkf + ibc1 * invIkr);
    if (arg > 1e-12) {
      const root = Math.sqrt(arg);
      qb = (q1 * (1 + root)) / 2;
      dqbDibe1 = (q1 * invIkf) / root;
      dqbDibc1 = (q1 * invIkr) / root;
    } else qb = (q1 * (1 + Math.sqrt(1e-12))) / 2;
  }
  const it = (ibe1 - ibc1) / qb;
  const bf = par[o + P_BF];
  const br = par[o + P_BR];
  // ∂IT/∂IBE1 and ∂IT/∂IBC1; IB's parts are divided by BF and BR, never multiplied by their reciprocals.
  const itByIbe1 = (1 - it * dqbDibe1) / qb;
  const itByIbc1 = -(1 + it * dqbDibc1) / qb;
  out[2 * BY_LN_IS] = itByIbe1 * ibe1 + itByIbc1 * ibc1 - ibc1 / br;
  out[2 * BY_LN_IS + 1] = ibe1 / bf + ibc1 / br;
  out[2 * BY_IS] = itByIbe1 * ebe + itByIbc1 * ebc - ebc / br;
  out[2 * BY_IS + 1] = ebe / bf + ebc / br;
  const ise = par[o + P_ISE];
  const nevt = par[o + P_NEVT];
  const ibe2 = ise > 0 ? ise * (guardedExpValue(vbe / nevt) - 1) : 0;
  out[2 * BY_LN_ISE] = 0;
  out[2 * BY_LN_ISE + 1] = ibe2;
  const isc = par[o + P_ISC];
  const ncvt = par[o + P_NCVT];
  const ibc2 = isc > 0 ? isc * (guardedExpValue(vbc / ncvt) - 1) : 0;
  out[2 * BY_LN_ISC] = -ibc2;
  out[2 * BY_LN_ISC + 1] = ibc2;
  out[2 * BY_LN_BF] = 0;
  out[2 * BY_LN_BF + 1] = -ibe1 / bf;
  out[2 * BY_LN_BR] = ibc1 / br;
  out[2 * BY_LN_BR + 1] = -ibc1 / br;
  const ibe1ByNfvt = -gbe1 * xbe;
  const ibc1ByNrvt = -gbc1 * xbc;
  out[2 * BY_NFVT] = itByIbe1 * ibe1ByNfvt;
  out[2 * BY_NFVT + 1] = ibe1ByNfvt / bf;
  out[2 * BY_NRVT] = itByIbc1 * ibc1ByNrvt - ibc1ByNrvt / br;
  out[2 * BY_NRVT + 1] = ibc1ByNrvt / br;
  const ibe2ByNevt = ise > 0 ? (-ise * guardedExpSlope(vbe / nevt) * vbe) / (nevt * nevt) : 0;
  const ibc2ByNcvt = isc > 0 ? (-isc * guardedExpSlope(vbc / ncvt) * vbc) / (ncvt * ncvt) : 0;
  out[2 * BY_NEVT] = 0;
  out[2 * BY_NEVT + 1] = ibe2ByNevt;
  out[2 * BY_NCVT] = -ibc2ByNcvt;
  out[2 * BY_NCVT + 1] = ibc2ByNcvt;
}

/** Writes the parameter row of `p` (M folded into the currents) at `par[o …]`. */
function paramRow(p: BjtParams, par: Float64Array, o: number): void {
  const m = p.m;
  par[o + P_IS] = p.is * m;
  par[o + P_ISE] = (p.ise ?? 0) * m;
  par[o + P_ISC] = (p.isc ?? 0) * m;
  par[o + P_BF] = p.bf;
  par[o + P_BR] = p.br;
  par[o + P_NFVT] = p.nf * p.vt;
  par[o + P_NRVT] = p.nr * p.vt;
  par[o + P_NEVT] = (p.ne ?? 1.5) * p.vt;
  par[o + P_NCVT] = (p.nc ?? 2) * p.vt;
  par[o + P_INV_VAF] = inverse(p.vaf);
  par[o + P_INV_VAR] = inverse(p.var ?? Infinity);
  par[o + P_INV_IKF] = inverse((p.ikf ?? Infinity) * m);
  par[o + P_INV_IKR] = inverse((p.ikr ?? Infinity) * m);
  par[o + P_GMIN] = p.gmin;
}

/** 1/v for a finite positive v, 0 for Infinity ("no effect"). */
function inverse(v: number): number {
  return Number.isFinite(v) && v > 0 ? 1 / v : 0;
}

/** The BJT equations at one intrinsic bias (own polarity), for tests and hand checks; the table evaluates the same function in its loop. */
export function evaluateBjt(vbe: number, vbc: number, p: BjtParams, out?: BjtEvaluation): BjtEvaluation {
  const par = new Float64Array(PARAMS);
  paramRow(p, par, 0);
  const s = new Float64Array(SCRATCH);
  s[IN_VBE] = vbe;
  s[IN_VBC] = vbc;
  const clipped = bjtCore(par, 0, s);
  const r = out ?? ({} as BjtEvaluation);
  r.ic = s[IC];
  r.ib = s[IB];
  r.dicDvbe = s[DIC_DVBE];
  r.dicDvbc = s[DIC_DVBC];
  r.dibDvbe = s[DIB_DVBE];
  r.dibDvbc = s[DIB_DVBC];
  r.gm = s[GM];
  r.gpi = s[GPI];
  r.qb = s[QB];
  r.clipped = clipped;
  return r;
}

/**
 * The model's DC current gain IC/IB at collector current `ic` (own polarity, > 0) in
 * forward-active operation with the base-collector junction unbiased (VBC = 0): the β a hand
 * analysis should use at that current, with high injection (IKF), base-emitter leakage (ISE)
 * and the temperature and beta scaling already in `p`. Returns BF when `ic` is not a positive
 * finite number or the equations give no usable answer.
 */
export function bjtBetaAt(p: BjtParams, ic: number): number {
  if (!(ic > 0) || !Number.isFinite(ic) || !(p.is > 0)) return p.bf;
  const par = new Float64Array(PARAMS);
  paramRow({ ...p, gmin: 0 }, par, 0);
  const s = new Float64Array(SCRATCH);
  const nfvt = p.nf * p.vt;
  // IC(VBE) rises monotonically at VBC = 0: bracket the root in VBE, then bisect on ln(IC).
  let lo = nfvt * Math.log(ic / (p.is * p.m) + 1) - 10 * nfvt;
  let hi = lo + 40 * nfvt;
  const icAt = (v: number): number => {
    s[IN_VBE] = v;
    s[IN_VBC] = 0;
    bjtCore(par, 0, s);
    return s[IC];
  };
  for (let k = 0; k < 60 && icAt(hi) < ic; k++) hi += 10 * nfvt;
  for (let k = 0; k < 60 && icAt(lo) > ic; k++) lo -= 10 * nfvt;
  for (let k = 0; k < 200 && hi - lo > 1e-15 * Math.max(1, Math.abs(hi)); k++) {
    const mid = 0.5 * (lo + hi);
    if (icAt(mid) < ic) lo = mid;
    else hi = mid;
  }
  icAt(0.5 * (lo + hi));
  const beta = s[IC] / s[IB];
  return Number.isFinite(beta) && beta > 0 ? beta : p.bf;
}

/**
 * Temperature scaling of the Gummel–Poon parameters (docs/DEVICE-MODELS.md): with r = T/Tnom,
 * BF(T) = BF·r^XTB (BR likewise), ISE(T) = ISE·r^(−XTB)·(IS(T)/IS)^(1/NE), ISC(T) likewise with NC.
 */
export function bjtTemperatureFactors(temperatureC: number, tnomC: number, xtb: number): { beta: number; leakage: number } {
  const r = (temperatureC + ZERO_CELSIUS_K) / (tnomC + ZERO_CELSIUS_K);
  if (r === 1 || xtb === 0) return { beta: 1, leakage: 1 };
  return { beta: Math.pow(r, xtb), leakage: Math.pow(r, -xtb) };
}

// Terminals per instance: the netlist collector, base and emitter, then the intrinsic ones behind
// RC, RB and RE (the netlist node itself when that resistance is zero).
const C = 0;
const B = 1;
const E = 2;
const CI = 3;
const BI = 4;
const EI = 5;
const T = 6;

/** Solved quantities, in the record's key order. */
const QUANTITIES = ['ic', 'ib', 'ie', 'vbe', 'vbc', 'vce', 'gm', 'rpi', 'ro', 'beta', 'gmu'] as const;
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
const Q_BETA = 9;
const Q_GMU = 10;

/** `DeviceColumns.flags` bit: the model has no Early effect, so `ro` stands for unbounded. */
const NO_EARLY = 1;

function regionCode(vbe: number, vbc: number): number {
  if (vbe > 0) return vbc > 0 ? 1 : 0;
  return vbc > 0 ? 3 : 2;
}

/**
 * Every BJT of a circuit. Terminals are [C, B, E, C′, B′, E′]: RC, RB and RE (divided by
 * area × M) join each netlist terminal to its intrinsic one, which is the netlist node itself
 * when the resistance is zero. A substrate node, if any, carries no DC current.
 */
/** The model parameters a table reads for each instance, in the order `modelParam` read them one by one (so issues keep their order). */
const MODEL_READS: readonly (readonly [string, ParamRule])[] = [
  ['IS', 'non-negative'],
  ['ISE', 'non-negative'],
  ['ISC', 'non-negative'],
  ['BF', 'positive'],
  ['BR', 'positive'],
  ['XTI', 'finite'],
  ['XTB', 'finite'],
  ['EG', 'finite'],
  ['NF', 'positive'],
  ['NR', 'positive'],
  ['NE', 'positive'],
  ['NC', 'positive'],
  ['VAF', 'positive-or-infinite'],
  ['VAR', 'positive-or-infinite'],
  ['IKF', 'positive-or-infinite'],
  ['IKR', 'positive-or-infinite'],
  ['RC', 'non-negative'],
  ['RB', 'non-negative'],
  ['RE', 'non-negative'],
];
// Positions in MODEL_READS.
const [M_IS, M_ISE, M_ISC, M_BF, M_BR, M_XTI, M_XTB, M_EG, M_NF, M_NR, M_NE, M_NC, M_VAF, M_VAR, M_IKF, M_IKR, M_RC, M_RB, M_RE] = MODEL_READS.map((_, k) => k);

/** A series resistance's conductance (area × M over R), 0 when its internal node is the netlist node (no resistance) or R is not positive. */
function seriesConductance(internal: boolean, r: number, scale: number): number {
  return internal && r > 0 && scale > 0 ? scale / r : 0;
}

export class BjtTable implements DeviceTable {
  readonly kind: DeviceKind = BJT;
  private readonly n: number;
  /** +1 NPN, −1 PNP (integers, so passing one to a call boxes nothing). */
  private readonly sign: Int8Array;
  // Nominal parameters (currents times area × M), read once from the cards.
  private readonly isNom: Float64Array;
  private readonly iseNom: Float64Array;
  private readonly iscNom: Float64Array;
  private readonly bfNom: Float64Array;
  private readonly brNom: Float64Array;
  private readonly xti: Float64Array;
  private readonly xtb: Float64Array;
  private readonly eg: Float64Array;
  /** The card's own TNOM, °C (NaN: the analysis's nominal temperature). */
  private readonly tnom: Float64Array;
  private readonly nf: Float64Array;
  private readonly nr: Float64Array;
  private readonly ne: Float64Array;
  private readonly nc: Float64Array;
  private readonly vaf: Float64Array;
  /** Area × M of each instance (the factor on IS, ISE, ISC). */
  private readonly scale: Float64Array;
  /** Series conductances of RC, RB, RE (0 when the resistance is zero). */
  private readonly gc: Float64Array;
  private readonly gb: Float64Array;
  private readonly ge: Float64Array;
  /** Parameter rows of the solve in progress (`PARAMS` per instance). */
  private readonly par: Float64Array;
  private readonly vcritBe: Float64Array;
  private readonly vcritBc: Float64Array;
  private vt = 0.025;
  private tnomC = 27;
  // Limiting history, and the junction voltages the next load linearises at (NaN when none is pending).
  private readonly vbeOld: Float64Array;
  private readonly vbcOld: Float64Array;
  private readonly startVbe: Float64Array;
  private readonly startVbc: Float64Array;
  private readonly scratch = new Float64Array(SCRATCH);

  constructor(readonly instances: DeviceInstances<Bjt>, issues: ParamIssue[]) {
    const n = (this.n = instances.count);
    const col = (): Float64Array => float64Column(n);
    this.sign = int8Column(n);
    this.isNom = col();
    this.iseNom = col();
    this.iscNom = col();
    this.bfNom = col();
    this.brNom = col();
    this.xti = col();
    this.xtb = col();
    this.eg = col();
    this.tnom = col();
    this.nf = col();
    this.nr = col();
    this.ne = col();
    this.nc = col();
    this.vaf = col();
    this.scale = col();
    this.gc = col();
    this.gb = col();
    this.ge = col();
    this.par = float64Column(n * PARAMS);
    this.vcritBe = col().fill(0.6);
    this.vcritBc = col().fill(0.6);
    this.vbeOld = col();
    this.vbcOld = col();
    this.startVbe = col().fill(Number.NaN);
    this.startVbc = col().fill(Number.NaN);
    const t = instances.terminals;
    const reads = new ModelReads(MODEL_READS);
    for (let i = 0; i < n; i++) {
      const element = instances.elements[i];
      const md = element.model;
      this.sign[i] = md.kind === 'pnp' ? -1 : 1;
      const area = elementParam(element, 'AREA', element.area, 'positive', 0, issues);
      const m = elementParam(element, 'M', element.m, 'positive', 0, issues);
      const scale = area * m;
      this.scale[i] = scale;
      const mp = reads.of(element, md, issues);
      this.isNom[i] = mp[M_IS] * scale;
      this.iseNom[i] = mp[M_ISE] * scale;
      this.iscNom[i] = mp[M_ISC] * scale;
      this.bfNom[i] = mp[M_BF];
      this.brNom[i] = mp[M_BR];
      this.xti[i] = mp[M_XTI];
      this.xtb[i] = mp[M_XTB];
      this.eg[i] = mp[M_EG];
      this.tnom[i] = cardTnomC(md.params, NaN);
      this.nf[i] = mp[M_NF];
      this.nr[i] = mp[M_NR];
      this.ne[i] = mp[M_NE];
      this.nc[i] = mp[M_NC];
      this.vaf[i] = mp[M_VAF];
      const o = i * PARAMS;
      this.par[o + P_INV_VAF] = inverse(this.vaf[i]);
      this.par[o + P_INV_VAR] = inverse(mp[M_VAR]);
      this.par[o + P_INV_IKF] = inverse(mp[M_IKF] * scale);
      this.par[o + P_INV_IKR] = inverse(mp[M_IKR] * scale);
      this.gc[i] = seriesConductance(t[i * T + C] !== t[i * T + CI], mp[M_RC], scale);
      this.gb[i] = seriesConductance(t[i * T + B] !== t[i * T + BI], mp[M_RB], scale);
      this.ge[i] = seriesConductance(t[i * T + E] !== t[i * T + EI], mp[M_RE], scale);
    }
    this.prepare(new SolveConditions(27, 27, thermalVoltage(27), 1, 0));
  }

  /** The scaled parameters of instance i in use for the current solve (currents include area × M, so `m` is 1). */
  modelParams(i: number): BjtParams {
    const o = i * PARAMS;
    const par = this.par;
    const back = (v: number): number => (v > 0 ? 1 / v : Infinity);
    return {
      is: par[o + P_IS],
      bf: par[o + P_BF],
      br: par[o + P_BR],
      nf: this.nf[i],
      nr: this.nr[i],
      vaf: this.vaf[i],
      var: back(par[o + P_INV_VAR]),
      ikf: back(par[o + P_INV_IKF]),
      ikr: back(par[o + P_INV_IKR]),
      ise: par[o + P_ISE],
      ne: this.ne[i],
      isc: par[o + P_ISC],
      nc: this.nc[i],
      m: 1,
      vt: this.vt,
      gmin: par[o + P_GMIN],
    };
  }

  prepare(c: DeviceConditions): void {
    // The rows are a function of the conditions and of the nominal columns, which only the constructor writes: under the
    // conditions of the last preparation they hold what this loop would write again (a corner that moves only the supply
    // from the corner before it).
    const last = this.preparedFor;
    if (this.prepared && sameNumber(c.temperatureC, last.temperatureC) && sameNumber(c.tnomC, last.tnomC) && sameNumber(c.vt, last.vt) && sameNumber(c.betaScale, last.betaScale) && sameNumber(c.junctionGmin, last.junctionGmin)) return;
    this.vt = c.vt;
    this.tnomC = c.tnomC;
    const par = this.par;
    // Instances of one model follow each other with the same nominal values: the temperature laws
    // (a power, an exponential and two logarithms each) are worked out again only when one changes.
    let lastXtb = this.n > 0 ? this.xtb[0] : 0;
    let lastTnom = this.n > 0 ? tnomOf(this.tnom[0], c.tnomC) : c.tnomC;
    let f = bjtTemperatureFactors(c.temperatureC, lastTnom, lastXtb);
    let lastIs = NaN;
    let lastXti = NaN;
    let lastEg = NaN;
    let lastIsTnom = NaN;
    let is = 0;
    let lastNf = NaN;
    let lastNr = NaN;
    let vcritBe = 0;
    let vcritBc = 0;
    for (let i = 0; i < this.n; i++) {
      const o = i * PARAMS;
      const isNom = this.isNom[i];
      const tn = tnomOf(this.tnom[i], c.tnomC);
      const isChanged = !(sameNumber(isNom, lastIs) && this.xti[i] === lastXti && this.eg[i] === lastEg && tn === lastIsTnom);
      if (isChanged) {
        is = saturationCurrentAt(isNom, this.xti[i], this.eg[i], c.temperatureC, tn);
        lastIs = isNom;
        lastXti = this.xti[i];
        lastEg = this.eg[i];
        lastIsTnom = tn;
      }
      if (!(this.xtb[i] === lastXtb && tn === lastTnom)) {
        f = bjtTemperatureFactors(c.temperatureC, tn, this.xtb[i]);
        lastXtb = this.xtb[i];
        lastTnom = tn;
      }
      const ratio = isNom > 0 ? is / isNom : 1;
      par[o + P_IS] = is;
      par[o + P_ISE] = this.iseNom[i] > 0 ? this.iseNom[i] * f.leakage * Math.pow(ratio, 1 / this.ne[i]) : 0;
      par[o + P_ISC] = this.iscNom[i] > 0 ? this.iscNom[i] * f.leakage * Math.pow(ratio, 1 / this.nc[i]) : 0;
      par[o + P_BF] = this.bfNom[i] * f.beta * c.betaScale;
      par[o + P_BR] = this.brNom[i] * f.beta * c.betaScale;
      par[o + P_NFVT] = this.nf[i] * c.vt;
      par[o + P_NRVT] = this.nr[i] * c.vt;
      par[o + P_NEVT] = this.ne[i] * c.vt;
      par[o + P_NCVT] = this.nc[i] * c.vt;
      par[o + P_GMIN] = c.junctionGmin;
      if (isChanged || !(this.nf[i] === lastNf && this.nr[i] === lastNr)) {
        vcritBe = criticalVoltage(this.nf[i] * c.vt, is);
        vcritBc = criticalVoltage(this.nr[i] * c.vt, is);
        lastNf = this.nf[i];
        lastNr = this.nr[i];
      }
      this.vcritBe[i] = vcritBe;
      this.vcritBc[i] = vcritBc;
    }
    last.temperatureC = c.temperatureC;
    last.tnomC = c.tnomC;
    last.vt = c.vt;
    last.betaScale = c.betaScale;
    last.junctionGmin = c.junctionGmin;
    this.prepared = true;
  }
  /** The conditions the parameter rows were last prepared for (compared bit for bit: +0 is not −0), once `prepared`. */
  private readonly preparedFor = new SolveConditions(NaN, NaN, NaN, NaN, NaN);
  private prepared = false;

  /** Intrinsic VBE and VBC of instance i at x, own polarity, into `out[0]`, `out[1]`. */
  private intrinsic(x: Float64Array, i: number, out: Float64Array): void {
    const t = this.instances.terminals;
    const vb = voltage(x, t[i * T + BI]);
    const s = this.sign[i];
    out[0] = s * (vb - voltage(x, t[i * T + EI]));
    out[1] = s * (vb - voltage(x, t[i * T + CI]));
  }

  resetState(x: Float64Array, start?: StartHint): void {
    // A loop per kind of start, each with one path through it: V8 compiles a long loop while it runs for the
    // first time (the cold start), and a branch that had not run by then gave up that code at the first warm start.
    this.recordBias(x);
    if (!start) return;
    if (start.kind === 'cold') this.coldStart();
    else this.temperatureStart(start.temperatureC, start.vt);
  }

  /** Every instance's intrinsic bias at x as its limiting history, and no start pending. */
  private recordBias(x: Float64Array): void {
    const v = this.scratch;
    const { vbeOld, vbcOld, startVbe, startVbc } = this;
    for (let i = 0; i < this.n; i++) {
      this.intrinsic(x, i, v);
      vbeOld[i] = v[0];
      vbcOld[i] = v[1];
      startVbe[i] = Number.NaN;
      startVbc[i] = Number.NaN;
    }
  }

  /** The cold start of every instance with a saturation current: forward-active, base-emitter at its critical voltage, base-collector unbiased. */
  private coldStart(): void {
    const { par, startVbe, startVbc, vcritBe } = this;
    for (let i = 0; i < this.n; i++) {
      if (!(par[i * PARAMS + P_IS] > 0)) continue;
      startVbe[i] = Math.min(vcritBe[i], 1);
      startVbc[i] = 0;
    }
  }

  /**
   * The start of every instance with a saturation current from a point solved at `temperatureC` (thermal voltage
   * `startVt`): each forward junction moved to the voltage that carries the same current at this solve's temperature.
   */
  private temperatureStart(temperatureC: number, startVt: number): void {
    const { par, startVbe, startVbc, vbeOld, vbcOld, isNom, xti, eg, tnom, nf, nr } = this;
    // IS at the guess's temperature, worked out again only when the nominal values change (as in `prepare`).
    let lastIs = NaN;
    let lastXti = NaN;
    let lastEg = NaN;
    let lastTnom = NaN;
    let is0 = 0;
    for (let i = 0; i < this.n; i++) {
      const is = par[i * PARAMS + P_IS];
      if (!(is > 0)) continue;
      const tn = tnomOf(tnom[i], this.tnomC);
      if (!(sameNumber(isNom[i], lastIs) && xti[i] === lastXti && eg[i] === lastEg && tn === lastTnom)) {
        is0 = saturationCurrentAt(isNom[i], xti[i], eg[i], temperatureC, tn);
        lastIs = isNom[i];
        lastXti = xti[i];
        lastEg = eg[i];
        lastTnom = tn;
      }
      const vbe = vbeOld[i];
      const vbc = vbcOld[i];
      startVbe[i] = vbe > 0 ? shiftJunction(vbe, nf[i] * startVt, nf[i] * this.vt, is0, is) : vbe;
      startVbc[i] = vbc > 0 ? shiftJunction(vbc, nr[i] * startVt, nr[i] * this.vt, is0, is) : vbc;
    }
  }

  load(x: Float64Array, values: Float64Array, rhs: Float64Array, limit: boolean, tally: LoadTally): void {
    const t = this.instances.terminals;
    const ev = this.scratch;
    const vt = this.vt;
    // The columns in locals: `bjtCore` and `stamp` are not inlined, so a field read after them would be read
    // again from the object for every instance.
    const { sign, startVbe, startVbc, vbeOld, vbcOld, nf, nr, vcritBe, vcritBc, par } = this;
    for (let i = 0; i < this.n; i++) {
      const tc = t[i * T + CI];
      const tb = t[i * T + BI];
      const te = t[i * T + EI];
      const vb = voltage(x, tb);
      const s = sign[i];
      const vbe = s * (vb - voltage(x, te));
      const vbc = s * (vb - voltage(x, tc));
      // The limited bias is worked out even where a pending start point replaces it (limiting is a pure function),
      // and the start's slots are read and cleared for every instance: the first load, where every instance
      // starts, then runs each operation the later ones run, and the code V8 compiles while it runs stays valid.
      const a = limit ? limitJunctionValue(vbe, vbeOld[i], nf[i] * vt, vcritBe[i]) : vbe;
      const b = limit ? limitJunctionValue(vbc, vbcOld[i], nr[i] * vt, vcritBc[i]) : vbc;
      const startBe = startVbe[i];
      const startBc = startVbc[i];
      const started = Number.isFinite(startBe);
      startVbe[i] = Number.NaN;
      if (a !== vbe || b !== vbc || started) tally.limited = true;
      const be = started ? startBe : a;
      const bc = started ? startBc : b;
      vbeOld[i] = be;
      vbcOld[i] = bc;
      ev[IN_VBE] = be;
      ev[IN_VBC] = bc;
      bjtCore(par, i * PARAMS, ev);
      const finite = this.stamp(i, values, rhs);
      if (!finite) tally.nonFinite.push(this.instances.elementIndex[i]);
    }
  }

  /**
   * Adds instance i's companion stamps for the evaluation in the scratch array (bias in its input
   * slots); false when a stamp is not finite. A method of its own, with only indices and arrays for
   * arguments, so `load` stays small enough for the junction limiting to be inlined into it (see
   * `IN_VBE`: a double passed to a call that is not inlined is boxed).
   */
  private stamp(i: number, values: Float64Array, rhs: Float64Array): boolean {
    const t = this.instances.terminals;
    const pos = this.instances.positions;
    const ev = this.scratch;
    const s = this.sign[i];
    ev[IE] = -(ev[IC] + ev[IB]);
    ev[DIE_DVBE] = -(ev[DIC_DVBE] + ev[DIB_DVBE]);
    ev[DIE_DVBC] = -(ev[DIC_DVBC] + ev[DIB_DVBC]);
    // Each intrinsic row: ∂I/∂VBE into (B′, E′), ∂I/∂VBC into (B′, C′), then the equivalent current on the right-hand side.
    const p = i * T * T;
    stampRow(values, rhs, pos, p + CI * T, t[i * T + CI], ev, IC, DIC_DVBE, DIC_DVBC, s);
    stampRow(values, rhs, pos, p + BI * T, t[i * T + BI], ev, IB, DIB_DVBE, DIB_DVBC, s);
    stampRow(values, rhs, pos, p + EI * T, t[i * T + EI], ev, IE, DIE_DVBE, DIE_DVBC, s);
    if (this.gc[i] > 0 || this.gb[i] > 0 || this.ge[i] > 0) this.stampSeriesResistances(i, values);
    return Number.isFinite(ev[IC]) && Number.isFinite(ev[IB]) && Number.isFinite(ev[DIC_DVBE] + ev[DIC_DVBC] + ev[DIB_DVBE] + ev[DIB_DVBC]) && Number.isFinite(ev[IE]);
  }

  /** The conductances of RC, RB and RE of instance i between each netlist terminal and its intrinsic one. */
  private stampSeriesResistances(i: number, values: Float64Array): void {
    const pos = this.instances.positions;
    const p = i * T * T;
    stampSeries(values, pos, p, C, CI, this.gc[i]);
    stampSeries(values, pos, p, B, BI, this.gb[i]);
    stampSeries(values, pos, p, E, EI, this.ge[i]);
  }

  evaluate(x: Float64Array, into?: DeviceColumns): DeviceColumns {
    // Every value, region and flag of every instance is written below: reused columns are not cleared first.
    const out = columnsOverwritten(into, QUANTITIES.length, this.n);
    // Every column, the parameter rows and the terminals in locals: bjtCore is not inlined, so a field read
    // after it in the loop would be read again from the object for every instance.
    const v = out.values;
    const [icCol, ibCol, ieCol, vbeCol, vbcCol, vceCol, gmCol, rpiCol, roCol, betaCol, gmuCol] = [v[Q_IC], v[Q_IB], v[Q_IE], v[Q_VBE], v[Q_VBC], v[Q_VCE], v[Q_GM], v[Q_RPI], v[Q_RO], v[Q_BETA], v[Q_GMU]];
    const { region: regionCol, flags } = out;
    const t = this.instances.terminals;
    const { sign, vaf: vafCol, par, scratch: ev } = this;
    for (let i = 0; i < this.n; i++) {
      const s = sign[i];
      const vbI = voltage(x, t[i * T + BI]);
      const vbe = s * (vbI - voltage(x, t[i * T + EI]));
      const vbc = s * (vbI - voltage(x, t[i * T + CI]));
      ev[IN_VBE] = vbe;
      ev[IN_VBC] = vbc;
      bjtCore(par, i * PARAMS, ev);
      const ic = s * ev[IC];
      const ib = s * ev[IB];
      const vaf = vafCol[i];
      // Terminal voltages as measured at the netlist nodes (they include the drops across RB, RE, RC).
      const vb = voltage(x, t[i * T + B]);
      const vc = voltage(x, t[i * T + C]);
      const ve = voltage(x, t[i * T + E]);
      icCol[i] = ic;
      ibCol[i] = ib;
      ieCol[i] = -(ic + ib);
      vbeCol[i] = vb - ve;
      vbcCol[i] = vb - vc;
      vceCol[i] = vc - ve;
      gmCol[i] = ev[GM];
      rpiCol[i] = reciprocalOrUnbounded(ev[GPI]);
      // Output resistance as the slope at the operating point with VBE held: ∂IC/∂VCE = −∂IC/∂VBC
      // (gmin, a solver aid, left out). That is (VAF − VBC)/IC in forward-active and the low
      // collector–emitter resistance of a saturated device, whatever the polarity.
      const region = regionCode(vbe, vbc);
      const gmin = par[i * PARAMS + P_GMIN];
      const go = -(ev[DIC_DVBC] + gmin);
      const noEarly = !Number.isFinite(vaf) && region !== 1;
      roCol[i] = noEarly || !(go > 1 / UNBOUNDED) ? unbounded() : Math.min(UNBOUNDED, 1 / go);
      const beta = ic / ib;
      betaCol[i] = Number.isFinite(beta) ? Math.max(-UNBOUNDED, Math.min(UNBOUNDED, beta)) : unbounded();
      gmuCol[i] = Math.max(ev[DIB_DVBC] - gmin, 0);
      regionCol[i] = region;
      flags[i] = noEarly ? NO_EARLY : 0;
    }
    return out;
  }

  overdriven(x: Float64Array, i: number): readonly OverdrivenJunction[] {
    const v = this.scratch;
    this.intrinsic(x, i, v);
    const vbe = v[0];
    const vbc = v[1];
    if (!(this.par[i * PARAMS + P_IS] > 0)) return NOT_OVERDRIVEN;
    const be = vbe / (this.nf[i] * this.vt) > EXP_ARG_LIMIT;
    const bc = vbc / (this.nr[i] * this.vt) > EXP_ARG_LIMIT;
    if (!be && !bc) return NOT_OVERDRIVEN;
    const out: OverdrivenJunction[] = [];
    if (be) out.push({ junction: 'base-emitter junction', volts: vbe });
    if (bc) out.push({ junction: 'base-collector junction', volts: vbc });
    return out;
  }

  /**
   * Exact partials for adjoint sensitivities (docs/VARIATION.md): temperature, IS and BF as the
   * model card writes them, for each instance alone. The temperature enters through IS(T)
   * (d ln IS/dT = XTI/T + EG·q/(k·T²)), the leakage currents (d ln ISE/dT = −XTB/T + (d ln IS/dT)/NE),
   * BF and BR (d ln BF/dT = XTB/T) and every n·VT (d(n·VT)/dT = n·VT/T), T in kelvin; a card IS
   * enters as IS·area·M·(IS(T)/IS), a card BF as BF·(T/Tnom)^XTB·(the beta scale).
   */
  sensitivity(x: Float64Array, c: DeviceConditions, params: readonly string[]): DeviceSensitivity | undefined {
    for (const p of params) if (p !== TEMPERATURE_PARAMETER && p !== 'IS' && p !== 'BF') return undefined;
    const n = this.n;
    const N = 3;
    const out = allocateSensitivity(n, T, N, params.length);
    const t = this.instances.terminals;
    const par = this.par;
    const ev = this.scratch;
    const by = new Float64Array(2 * BY_PARAMS);
    const tk = c.temperatureC + ZERO_CELSIUS_K;
    const gapSlope = (ELEMENTARY_CHARGE / BOLTZMANN) / (tk * tk);
    const dIc = float64Column(params.length);
    const dIb = float64Column(params.length);
    for (let i = 0; i < n; i++) {
      const s = this.sign[i];
      const o = i * PARAMS;
      const vbI = voltage(x, t[i * T + BI]);
      const vbe = s * (vbI - voltage(x, t[i * T + EI]));
      const vbc = s * (vbI - voltage(x, t[i * T + CI]));
      ev[IN_VBE] = vbe;
      ev[IN_VBC] = vbc;
      bjtCore(par, o, ev);
      bjtCoreByParam(vbe, vbc, par, o, by);
      const ic = s * ev[IC];
      const ib = s * ev[IB];
      const row = i * N;
      out.current[row + C] = ic;
      out.current[row + B] = ib;
      out.current[row + E] = -(ic + ib);
      // Netlist currents against the intrinsic terminal voltages (the load's rows): VBE = s·(V_B′ − V_E′), VBC = s·(V_B′ − V_C′).
      const w = out.currentByVoltage;
      currentRow(w, (row + C) * T, ev[DIC_DVBE], ev[DIC_DVBC]);
      currentRow(w, (row + B) * T, ev[DIB_DVBE], ev[DIB_DVBC]);
      currentRow(w, (row + E) * T, -(ev[DIC_DVBE] + ev[DIB_DVBE]), -(ev[DIC_DVBC] + ev[DIB_DVBC]));
      const dIs = this.xti[i] / tk + this.eg[i] * gapSlope;
      for (let k = 0; k < params.length; k++) {
        const p = params[k];
        let a: number;
        let b: number;
        if (p === TEMPERATURE_PARAMETER) {
          const xtb = this.xtb[i] / tk;
          // The leakage currents follow IS(T)/IS only when there is an IS to follow.
          const dRatio = this.isNom[i] > 0 ? dIs : 0;
          const ise = -xtb + dRatio / this.ne[i];
          const isc = -xtb + dRatio / this.nc[i];
          a =
            by[2 * BY_LN_IS] * dIs +
            by[2 * BY_LN_ISE] * ise +
            by[2 * BY_LN_ISC] * isc +
            (by[2 * BY_LN_BF] + by[2 * BY_LN_BR]) * xtb +
            by[2 * BY_NFVT] * (par[o + P_NFVT] / tk) +
            by[2 * BY_NRVT] * (par[o + P_NRVT] / tk) +
            by[2 * BY_NEVT] * (par[o + P_NEVT] / tk) +
            by[2 * BY_NCVT] * (par[o + P_NCVT] / tk);
          b =
            by[2 * BY_LN_IS + 1] * dIs +
            by[2 * BY_LN_ISE + 1] * ise +
            by[2 * BY_LN_ISC + 1] * isc +
            (by[2 * BY_LN_BF + 1] + by[2 * BY_LN_BR + 1]) * xtb +
            by[2 * BY_NFVT + 1] * (par[o + P_NFVT] / tk) +
            by[2 * BY_NRVT + 1] * (par[o + P_NRVT] / tk) +
            by[2 * BY_NEVT + 1] * (par[o + P_NEVT] / tk) +
            by[2 * BY_NCVT + 1] * (par[o + P_NCVT] / tk);
        } else if (p === 'IS') {
          // The row's IS is the card's times area·M·IS(T)/IS: per unit of the card, (IS·∂/∂IS)/IS_card, or the per-unit form at IS = 0.
          const card = this.scale[i] > 0 ? this.isNom[i] / this.scale[i] : 0;
          if (card > 0) {
            a = by[2 * BY_LN_IS] / card;
            b = by[2 * BY_LN_IS + 1] / card;
          } else {
            const f = this.scale[i] * saturationCurrentAt(1, this.xti[i], this.eg[i], c.temperatureC, tnomOf(this.tnom[i], c.tnomC));
            a = by[2 * BY_IS] * f;
            b = by[2 * BY_IS + 1] * f;
          }
        } else {
          // The row's BF is the card's times (T/Tnom)^XTB and the beta scale: (BF·∂/∂BF)/BF_card.
          const card = this.bfNom[i];
          a = by[2 * BY_LN_BF] / card;
          b = by[2 * BY_LN_BF + 1] / card;
        }
        dIc[k] = s * a;
        dIb[k] = s * b;
      }
      for (let k = 0; k < params.length; k++) {
        const r = out.residualByParam[k];
        r[i * T + CI] = dIc[k];
        r[i * T + BI] = dIb[k];
        r[i * T + EI] = -(dIc[k] + dIb[k]);
        const cp = out.currentByParam[k];
        cp[row + C] = dIc[k];
        cp[row + B] = dIb[k];
        cp[row + E] = -(dIc[k] + dIb[k]);
      }
    }
    return out;
  }
}

function voltage(x: Float64Array, k: number): number {
  return k >= 0 ? x[k] : 0;
}

/** Adds a netlist current's partials with respect to the intrinsic VBE and VBC as partials with respect to the voltages of B′, E′ and C′ (row q of `w`). */
function currentRow(w: Float64Array, q: number, dVbe: number, dVbc: number): void {
  w[q + BI] += dVbe + dVbc;
  w[q + EI] -= dVbe;
  w[q + CI] -= dVbc;
}

/**
 * One intrinsic row of the companion model: the conductances to the base-emitter and
 * base-collector controls (`ev[qbe]`, `ev[qbc]`) at slots `pos[row + B′]`, `pos[row + E′]`,
 * `pos[row + C′]`, and the equivalent current (the terminal current `ev[qi]` not explained by
 * them) moved to the right-hand side of unknown `k`. Every argument is an index or an array, so
 * nothing is boxed when the call is not inlined.
 */
function stampRow(values: Float64Array, rhs: Float64Array, pos: Int32Array, row: number, k: number, ev: Float64Array, qi: number, qbe: number, qbc: number, s: number): void {
  const gbe = ev[qbe];
  const gbc = ev[qbc];
  const pb = pos[row + BI];
  const pe = pos[row + EI];
  const pc = pos[row + CI];
  if (pb >= 0) values[pb] += gbe;
  if (pe >= 0) values[pe] -= gbe;
  if (pb >= 0) values[pb] += gbc;
  if (pc >= 0) values[pc] -= gbc;
  if (k >= 0) rhs[k] -= s * (ev[qi] - gbe * ev[IN_VBE] - gbc * ev[IN_VBC]);
}

/** A series conductance g between terminals a and b of the instance whose slots start at p (nothing when g is 0). */
function stampSeries(values: Float64Array, pos: Int32Array, p: number, a: number, b: number, g: number): void {
  if (!(g > 0)) return;
  add(values, pos[p + a * T + a], g);
  add(values, pos[p + a * T + b], -g);
  add(values, pos[p + b * T + a], -g);
  add(values, pos[p + b * T + b], g);
}

function add(values: Float64Array, slot: number, v: number): void {
  if (slot >= 0) values[slot] += v;
}

/** Whether the instance's model has a usable non-zero resistance `name` (so it needs an intrinsic node). */
function hasSeries(el: Bjt, name: string): boolean {
  const r = el.model.params[name];
  return r !== undefined && Number.isFinite(r) && r > 0 && el.area > 0 && el.m > 0;
}

const SERIES: readonly [string, string][] = [
  ['RC', 'internal collector'],
  ['RB', 'internal base'],
  ['RE', 'internal emitter'],
];

/** The BJT kind (element letter Q). */
export const BJT: DeviceKind = deviceKind<Bjt>({
  letter: 'Q',
  nodeCount: 3,
  terminalCount: T,
  quantities: QUANTITIES,
  regions: REGIONS,
  internalNodes: (el) => {
    const labels: string[] = [];
    for (const [r, label] of SERIES) if (hasSeries(el, r)) labels.push(label);
    return labels;
  },
  // One array per instance (the layout binds every instance of a large circuit through here).
  terminals: (el, node, internal) => {
    const t = [node(el.nodes[0]), node(el.nodes[1]), node(el.nodes[2]), 0, 0, 0];
    let k = 0;
    for (let j = 0; j < SERIES.length; j++) t[3 + j] = hasSeries(el, SERIES[j][0]) ? internal[k++] : t[j];
    return t;
  },
  dcPaths: (el, to) => {
    to.union(el.nodes[0], el.nodes[1]);
    to.union(el.nodes[1], el.nodes[2]);
  },
  // A shorted base-collector junction is the ordinary diode connection, so only the base-emitter one is checked.
  checkedJunctions: (el, visit) => visit('base-emitter junction', el.nodes[1], el.nodes[2]),
  instanceValues: (el, visit) => {
    visit('area', el.area, 1);
    visit('M', el.m, 1);
  },
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
      beta: v[Q_BETA][i],
      gmu: v[Q_GMU][i],
    };
    if (cols.flags[i] & NO_EARLY) rec.roInfinite = true;
    return rec;
  },
  terminalCurrent: (cols, i, t) => cols.values[t === C ? Q_IC : t === B ? Q_IB : Q_IE][i],
});
