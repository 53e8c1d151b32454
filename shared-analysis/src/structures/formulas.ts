// The published hand-analysis formulas for mirrors and reference branches, as small pure functions.

/** Boltzmann constant, J/K (exact since the 2019 SI revision; BIPM SI Brochure, 9th ed.). */
export const K_BOLTZMANN = 1.380649e-23;
/** Elementary charge, C (exact since the 2019 SI revision). */
export const Q_ELECTRON = 1.602176634e-19;

/** Thermal voltage k·T/q at a temperature in °C. */
export function thermalVolts(temperatureC: number): number {
  return (K_BOLTZMANN * (temperatureC + 273.15)) / Q_ELECTRON;
}

/**
 * IS(T) = IS·(T/Tnom)^XTI·exp(EG·q/k·(1/Tnom − 1/T)).
 * Source: P. Antognetti and G. Massobrio, "Semiconductor Device Modeling with SPICE" (docs/DEVICE-MODELS.md form).
 */
export function isAtTemperature(is: number, temperatureC: number, tnomC: number, xti: number, eg: number): number {
  const t = temperatureC + 273.15;
  const tn = tnomC + 273.15;
  return is * Math.pow(t / tn, xti) * Math.exp(((eg * Q_ELECTRON) / K_BOLTZMANN) * (1 / tn - 1 / t));
}

/** VBE = NF·VT·ln(IC/IS + 1): the forward junction law solved for the voltage (Gray, Hurst, Lewis, Meyer, 5th ed., ch. 1). */
export function vbeAt(ic: number, isEff: number, nfVt: number): number {
  return nfVt * Math.log(Math.max(ic, 0) / isEff + 1);
}

/**
 * Output k of a simple mirror with outputs of ratios m_1…m_N on one diode-connected reference:
 * IOUT_k/IREF = m_k/(1 + (1 + Σm)/β). Reduces to 1/(1 + 2/β) for one matched output,
 * m/(1 + (1 + m)/β) for one ratioed output and 1/(1 + (N + 1)/β) for N identical outputs.
 * Source: Gray, Hurst, Lewis, Meyer, 5th ed., ch. 4; Sedra & Smith, current-mirror chapter.
 */
export function simpleMirrorGain(beta: number, m: number, sumM: number): number {
  return m / (1 + (1 + sumM) / beta);
}

/**
 * Mirror with a base-current helper (emitter follower on the base node):
 * IOUT_k/IREF = m_k/(1 + (1 + Σm)/(β(β + 1))); 1/(1 + 2/(β(β + 1))) when matched.
 * Source: Gray, Hurst, Lewis, Meyer, 5th ed., ch. 4.
 */
export function helperMirrorGain(beta: number, m: number, sumM: number): number {
  return m / (1 + (1 + sumM) / (beta * (beta + 1)));
}

/**
 * Wilson mirror with the lower pair ratioed m = A(Q2)/A(Q1), by current summation at each
 * node (equal beta): with x = IC2, IC1 = x/m, IE3 = x(1 + 1/β + 1/(mβ)), IOUT = IE3·β/(β + 1),
 * IREF = IC1 + IE3/(β + 1). For m = 1 this is the published IOUT = IREF·(1 − 2/(β² + 2β + 2)).
 * Source: Gray, Hurst, Lewis, Meyer, 5th ed., ch. 4 (Wilson current source); the improved
 * (four-device) Wilson has the same beta error.
 */
export function wilsonGain(beta: number, m = 1): number {
  const ie3PerX = 1 + 1 / beta + 1 / (m * beta);
  const irefPerX = 1 / m + ie3PerX / (beta + 1);
  return (ie3PerX * beta) / (beta + 1) / irefPerX;
}

/**
 * Bipolar cascode mirror (two stacked diode-connected devices on the reference side), lower
 * pair ratioed m, by current summation (equal beta): with x = IC1, IREF = x(1 + (1 + m)/β + m/(β + 1))
 * and IOUT = m·x·β/(β + 1); to first order IOUT ≈ IREF(1 − 4/β) when matched.
 * Source: Gray, Hurst, Lewis, Meyer, 5th ed., ch. 4 (cascode current source), derivation by node currents.
 */
export function cascodeGain(beta: number, m = 1): number {
  return ((m * beta) / (beta + 1)) / (1 + (1 + m) / beta + m / (beta + 1));
}

/**
 * Early-effect correction of a bipolar mirror output: 1 + (VCE2 − VBE)/VA; 1 when VA is infinite.
 * Source: Gray, Hurst, Lewis, Meyer, 5th ed., ch. 4.
 */
export function earlyFactor(vce2: number, vbe: number, va: number): number {
  if (!Number.isFinite(va) || va <= 0) return 1;
  return 1 + (vce2 - vbe) / va;
}

/**
 * MOS channel-length modulation correction of a mirror ratio: (1 + λ·VDS2)/(1 + λ·VDS1).
 * Source: Razavi, "Design of Analog CMOS Integrated Circuits", ch. 5.
 */
export function lambdaFactor(lambda: number, vds2: number, vds1: number): number {
  if (!Number.isFinite(lambda) || lambda === 0) return 1;
  return (1 + lambda * vds2) / (1 + lambda * vds1);
}

/**
 * Widlar source: solves n·VT·ln(m·IIN/IOUT) = IOUT·k·R2 for IOUT in (0, m·IIN], where IIN is the
 * reference collector current, m the output's area ratio and k the factor that turns IOUT into
 * the current through R2 (1 in the published form; (β + 1)/β to include the output's base current).
 * Source: R. J. Widlar, "Some circuit design techniques for linear integrated circuits",
 * IEEE Trans. Circuit Theory, 1965: VT·ln(IREF/IOUT) = IOUT·R2 (base currents neglected).
 * Safeguarded Newton: each Newton step is kept only when it stays inside the current bracket,
 * otherwise the bracket is bisected; the residual is monotone, so the bracket always holds the root.
 */
export function widlarOutput(p: { iin: number; r2: number; nVt: number; m?: number; k?: number }): number {
  const m = p.m ?? 1;
  const k = p.k ?? 1;
  const target = m * p.iin;
  if (!(target > 0) || !(p.r2 > 0) || !(p.nVt > 0)) return Math.max(target, 0);
  const g = (i: number) => p.nVt * Math.log(target / i) - i * k * p.r2;
  let lo = target * 1e-12;
  let hi = target;
  if (g(lo) <= 0) return lo;
  let i = Math.min(target, p.nVt / (k * p.r2));
  for (let n = 0; n < 200; n++) {
    const gi = g(i);
    // An exact root would otherwise sit on the bracket end and be taken for a step outside it.
    if (gi === 0) return i;
    if (gi > 0) lo = i;
    else hi = i;
    if (hi - lo <= 1e-15 * hi) break;
    const dg = -p.nVt / i - k * p.r2;
    let next = i - gi / dg;
    if (!(next > lo && next < hi)) next = 0.5 * (lo + hi);
    if (Math.abs(next - i) <= 1e-14 * i) {
      i = next;
      break;
    }
    i = next;
  }
  return i;
}

/**
 * MOS Widlar source (square law, body effect neglected): sqrt(2·IREF/β1) = sqrt(2·IOUT/β2) + IOUT·R2,
 * with β = KP·W/L·M, solved by bisection on IOUT in (0, (β2/β1)·IREF].
 * Source: Razavi, ch. 5 (degenerated current source with the square law); Shichman and Hodges, IEEE JSSC, 1968.
 */
export function mosWidlarOutput(p: { iref: number; beta1: number; beta2: number; r2: number }): number {
  if (!(p.iref > 0) || !(p.beta1 > 0) || !(p.beta2 > 0)) return 0;
  const vov1 = Math.sqrt((2 * p.iref) / p.beta1);
  let lo = 0;
  let hi = (p.beta2 / p.beta1) * p.iref;
  if (!(p.r2 > 0)) return hi;
  for (let n = 0; n < 200; n++) {
    const mid = 0.5 * (lo + hi);
    const f = Math.sqrt((2 * mid) / p.beta2) + mid * p.r2 - vov1;
    if (f > 0) hi = mid;
    else lo = mid;
    if (hi - lo <= 1e-15 * hi) break;
  }
  return 0.5 * (lo + hi);
}

/**
 * Gate-source voltage of a diode-connected MOSFET (VDS = VGS) carrying `id` in saturation:
 * ID = (β/2)(VGS − VTH)²(1 + λ·VGS), solved by fixed-point iteration on VGS.
 * Source: Shichman and Hodges, IEEE JSSC, 1968; Razavi, ch. 2.
 */
export function diodeMosVgs(id: number, beta: number, vth: number, lambda: number): number {
  if (!(id > 0) || !(beta > 0)) return vth;
  let vgs = vth + Math.sqrt((2 * id) / beta);
  for (let n = 0; n < 60; n++) {
    const clm = 1 + lambda * vgs;
    const next = vth + Math.sqrt((2 * id) / (beta * (clm > 0.05 ? clm : 0.05)));
    if (Math.abs(next - vgs) < 1e-12) return next;
    vgs = next;
  }
  return vgs;
}

/** Threshold with body effect: VTH = VTO + GAMMA·(√(PHI + VSB) − √PHI) (Shichman and Hodges; docs/DEVICE-MODELS.md form with VSB = −VBS). */
export function thresholdWithBody(vto: number, gamma: number, phi: number, vsb: number): number {
  if (!(gamma > 0) || !(phi > 0)) return vto;
  return vto + gamma * (Math.sqrt(Math.max(phi + vsb, 0)) - Math.sqrt(phi));
}

/** Stand-in for an unbounded resistance (VAF infinite, λ = 0), JSON-safe. */
export const UNBOUNDED_OHMS = 1e30;

/** Small-signal output resistance ro = VA/IC of a bipolar output (Gray, Hurst, Lewis, Meyer, 5th ed., ch. 1). */
export function bjtRo(va: number, ic: number): number {
  if (!Number.isFinite(va) || va <= 0 || !(ic > 0)) return UNBOUNDED_OHMS;
  return Math.min(va / ic, UNBOUNDED_OHMS);
}

/** Small-signal output resistance ro = 1/(λ·ID) of a MOS output (Razavi, ch. 2). */
export function mosRo(lambda: number, id: number): number {
  if (!(lambda > 0) || !(id > 0)) return UNBOUNDED_OHMS;
  return Math.min(1 / (lambda * id), UNBOUNDED_OHMS);
}

/**
 * Output resistance of an emitter-degenerated output: ro·(1 + gm·(R2∥rπ)) + R2∥rπ.
 * Source: Gray, Hurst, Lewis, Meyer, 5th ed., ch. 3/4 (common-emitter stage with emitter
 * degeneration), from memory. For a MOSFET rπ is infinite: ro·(1 + gm·R2) + R2 (Razavi, ch. 3).
 */
export function degeneratedRo(ro: number, gm: number, r2: number, rpi: number): number {
  if (ro >= UNBOUNDED_OHMS) return UNBOUNDED_OHMS;
  const rp = Number.isFinite(rpi) ? (r2 * rpi) / (r2 + rpi) : r2;
  return Math.min(ro * (1 + gm * rp) + rp, UNBOUNDED_OHMS);
}

/**
 * Collector current of a degenerated output: solves NF·VT·ln(IC/IS + 1) + IC·k·R = V for IC ≥ 0,
 * where V is the base potential above the common node, R the emitter resistor and k = (β + 1)/β
 * turns IC into the emitter current through R (1 neglects the base current). Newton on ln(IC), started
 * at or below the smaller one-term solution.
 * Source: Gray, Hurst, Lewis, Meyer, 5th ed., ch. 4 (current mirror with emitter degeneration):
 * VBE1 + IE1·R1 = VBE2 + IE2·R2 with the junction law of ch. 1. `guess` (optional) starts Newton
 * there instead of at the 0.6 V estimate.
 */
export function degeneratedOutput(p: { v: number; isEff: number; nVt: number; r: number; k?: number; guess?: number }): number {
  const k = p.k ?? 1;
  if (!(p.v > 0) || !(p.isEff > 0) || !(p.nVt > 0)) return 0;
  if (!(p.r > 0)) return p.isEff * Math.expm1(p.v / p.nVt);
  // The root lies below both one-term solutions (junction alone, resistor alone). On u = ln(IC) the left
  // side is convex and rising, so Newton from above descends monotonically onto the root.
  const top = Math.min(p.isEff * Math.expm1(p.v / p.nVt), p.v / (k * p.r));
  if (!(top > 0)) return 0;
  const uTop = Math.log(top);
  let u = p.guess !== undefined && p.guess > 0 && p.guess < top ? Math.log(p.guess) : uTop;
  for (let n = 0; n < 100; n++) {
    const i = Math.exp(u);
    const g = p.nVt * Math.log1p(i / p.isEff) + i * k * p.r - p.v;
    const slope = i * (p.nVt / (i + p.isEff) + k * p.r);
    if (!(slope > 0)) break;
    const step = g / slope;
    u = Math.min(u - step, uTop);
    if (Math.abs(step) <= 1e-14 * Math.max(1, Math.abs(u))) break;
  }
  return Math.exp(u);
}

/**
 * Output resistance of an emitter-degenerated output whose base sees a resistance RB (the
 * reference side): RE' = R2 ∥ (rπ + RB), Rout = ro·(1 + gm·RE'·rπ/(rπ + RB)) + RE'. With RB = 0
 * this is {@link degeneratedRo}; for a MOSFET (rπ infinite) it is ro·(1 + gm·R2) + R2.
 * Source: node analysis of the small-signal model (Gray, Hurst, Lewis, Meyer, 5th ed., ch. 3,
 * common-emitter stage with emitter degeneration and a source resistance; from memory).
 */
export function degeneratedRoWithBase(ro: number, gm: number, r2: number, rpi: number, rb: number): number {
  if (ro >= UNBOUNDED_OHMS) return UNBOUNDED_OHMS;
  if (!Number.isFinite(rpi)) return Math.min(ro * (1 + gm * r2) + r2, UNBOUNDED_OHMS);
  const rbase = Math.max(Number.isFinite(rb) ? rb : UNBOUNDED_OHMS, 0);
  const path = rpi + rbase;
  const re = path >= UNBOUNDED_OHMS ? r2 : (r2 * path) / (r2 + path);
  const share = path >= UNBOUNDED_OHMS ? 0 : rpi / path;
  return Math.min(ro * (1 + gm * re * share) + re, UNBOUNDED_OHMS);
}
