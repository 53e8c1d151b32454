// Physical constants and the numerical helpers every semiconductor device shares: VT, IS(T), guarded exp and junction limiting.

/** Boltzmann constant, J/K (exact, SI 2019). */
export const BOLTZMANN = 1.380649e-23;
/** Elementary charge, C (exact, SI 2019). */
export const ELEMENTARY_CHARGE = 1.602176634e-19;
/** 0 °C in kelvin. */
export const ZERO_CELSIUS_K = 273.15;

/** Thermal voltage kT/q in volts at `temperatureC` degrees Celsius. */
export function thermalVoltage(temperatureC: number): number {
  return (BOLTZMANN * (temperatureC + ZERO_CELSIUS_K)) / ELEMENTARY_CHARGE;
}

/**
 * Saturation current at temperature T from its value at Tnom (docs/DEVICE-MODELS.md):
 * IS(T) = IS·(T/Tnom)^XTI·exp(EG·q/k·(1/Tnom − 1/T)).
 */
export function saturationCurrentAt(is: number, xti: number, eg: number, temperatureC: number, tnomC: number): number {
  const t = temperatureC + ZERO_CELSIUS_K;
  const tnom = tnomC + ZERO_CELSIUS_K;
  if (t === tnom) return is;
  return is * Math.pow(t / tnom, xti) * Math.exp(((eg * ELEMENTARY_CHARGE) / BOLTZMANN) * (1 / tnom - 1 / t));
}

/**
 * The nominal temperature (°C) a model card's parameters hold at: its own TNOM when it gives a usable one, else
 * `fallback` (the analysis's `.option tnom`, 27 °C by default; NaN for a device table that fills it in later).
 */
export function cardTnomC(params: Readonly<Record<string, number>>, fallback: number): number {
  const t = params['TNOM'];
  return t !== undefined && Number.isFinite(t) && t > -ZERO_CELSIUS_K ? t : fallback;
}

/** A device's own nominal temperature (a `cardTnomC` column entry, NaN for none) or the analysis's. */
export function tnomOf(own: number, analysisTnomC: number): number {
  return own === own ? own : analysisTnomC;
}

/** d ln IS(T)/dT of `saturationCurrentAt`, per kelvin: XTI/T + EG·q/(k·T²) (at Tnom too: the law is smooth there). */
export function saturationCurrentLogSlope(xti: number, eg: number, temperatureC: number): number {
  const t = temperatureC + ZERO_CELSIUS_K;
  return xti / t + (eg * ELEMENTARY_CHARGE) / (BOLTZMANN * t * t);
}

/**
 * Largest exponent evaluated exactly. Beyond it the exponential is continued by its
 * tangent line, so a wildly forward-biased junction gives a huge but finite current
 * and a finite slope instead of Infinity.
 */
export const EXP_ARG_LIMIT = 80;

/**
 * Critical voltage of a pn junction: above it, Newton steps on the junction voltage are
 * limited logarithmically (Nagel, ERL-M520, 1975): vcrit = n·VT·ln(n·VT/(√2·IS)).
 */
export function criticalVoltage(nvt: number, is: number): number {
  if (!(is > 0)) return 1e3;
  const v = nvt * Math.log(nvt / (Math.SQRT2 * is));
  return Number.isFinite(v) ? v : 1e3;
}

/**
 * Logarithmic junction-voltage limiting (Nagel, ERL-M520, 1975). A forward step that
 * would take the junction above its critical voltage by more than 2·n·VT is replaced by
 * the voltage at which the exponential's tangent from the old point would give the new
 * current, so the current grows at most by a factor e per n·VT of requested step.
 * Returns the limited voltage; it differs from `vNew` exactly when limiting applied.
 */
export function limitJunctionValue(vNew: number, vOld: number, nvt: number, vcrit: number): number {
  if (vNew > vcrit && Math.abs(vNew - vOld) > 2 * nvt) {
    if (vOld > 0) {
      const arg = 1 + (vNew - vOld) / nvt;
      return arg > 0 ? vOld + nvt * Math.log(arg) : vcrit;
    }
    return nvt * Math.log(vNew / nvt);
  }
  return vNew;
}

/**
 * Gate-voltage limiting for a square-law device (our scheme; same aim as Nagel's junction
 * limiting: keep Newton out of regions where its linearisation misleads). Upward steps
 * from cutoff stop half a volt above threshold, because a device that was off has no gm
 * to predict its current; upward steps of a conducting device may at most triple its
 * overdrive plus half a volt, since the square law's tangent then overshoots. Downward
 * steps are free while the device stays on; a step from on to far into cutoff stops half a
 * volt below threshold, so the next iteration still sees the turn-on. Returns the limited
 * gate voltage; it differs from `vNew` exactly when limiting applied.
 */
export function limitGateValue(vNew: number, vOld: number, vth: number): number {
  if (vNew > vOld) {
    const ceiling = vOld <= vth ? vth + 0.5 : vth + 3 * (vOld - vth) + 0.5;
    return vNew > ceiling ? ceiling : vNew;
  }
  if (vOld > vth && vNew < vth - 0.5) return vth - 0.5;
  return vNew;
}

/**
 * Drain-source limiting for a symmetric MOS channel: a step that would swap source and drain
 * by more than a volt stops at 0 V first, so one iteration never jumps straight from
 * strong forward to strong reverse conduction. Returns the limited voltage; it differs from
 * `vNew` exactly when limiting applied.
 */
export function limitChannelValue(vNew: number, vOld: number): number {
  if (vOld >= 0 && vNew < -1) return 0;
  if (vOld < 0 && vNew > 1) return 0;
  return vNew;
}

/**
 * The forward junction voltage that carries, at saturation current `is1` and n·VT `nvt1`, the
 * current that `v0` carried at `is0`, `nvt0`: the diode law I = IS·exp(v/(n·VT)) solved for v,
 * v₁ = nvt1·(v₀/nvt0 + ln(is0/is1)). Returns v0 when the inputs give no finite answer.
 */
export function shiftJunction(v0: number, nvt0: number, nvt1: number, is0: number, is1: number): number {
  const v = nvt1 * (v0 / nvt0 + Math.log(is0 / is1));
  return Number.isFinite(v) ? v : v0;
}

/** Clamps a huge or infinite magnitude to a JSON-safe stand-in for "unbounded" (1e30). */
export const UNBOUNDED = 1e30;

/**
 * Object.is(a, b) for two numbers (NaN equal to NaN, +0 apart from −0), worked out on the doubles themselves: in the
 * BJT table's loops over every instance, Object.is made both of its numbers heap objects (15 bytes a device a solve).
 */
export function sameNumber(a: number, b: number): boolean {
  if (a === b) return a !== 0 || 1 / a === 1 / b;
  return a !== a && b !== b;
}

/** UNBOUNDED held in a typed array, so that reading it gives the compiler a double: see `unbounded`. */
const UNBOUNDED_CELL = Float64Array.of(UNBOUNDED);

/**
 * UNBOUNDED as a double, for an evaluation loop that picks between it and a computed number. The bundles
 * turn a module's `const` into a `var`, whose value the optimising compiler does not know to be a number, so
 * a branch yielding UNBOUNDED beside a computed double boxed that double on the heap: three objects per BJT
 * per evaluation of the operating point (2.4 MB a corner on the 100,000-element sink array).
 */
export function unbounded(): number {
  return UNBOUNDED_CELL[0];
}

/** 1/g, reported as UNBOUNDED when g is zero, negative-zero or so small the reciprocal would exceed it. */
export function reciprocalOrUnbounded(g: number): number {
  const a = Math.abs(g);
  if (!(a > 1 / UNBOUNDED)) return unbounded();
  return 1 / g;
}

/**
 * exp(x), continued by its tangent line beyond EXP_ARG_LIMIT, so a wildly forward-biased
 * junction gives a huge but finite current instead of Infinity.
 */
export function guardedExpValue(x: number): number {
  return x <= EXP_ARG_LIMIT ? Math.exp(x) : Math.exp(EXP_ARG_LIMIT) * (1 + (x - EXP_ARG_LIMIT));
}

/** The slope of `guardedExpValue` at x (finite for any finite x). */
export function guardedExpSlope(x: number): number {
  return Math.exp(Math.min(x, EXP_ARG_LIMIT));
}
