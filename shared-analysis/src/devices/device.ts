// The contract between the Newton loop and a nonlinear device: terminal wiring, per-solve preparation, linearised stamps and records.

import type { Element } from '../circuit';
import type { DeviceRecord } from '../solve/types';

/** Per-solve conditions every device reads when it prepares its temperature-scaled parameters. */
export interface DeviceConditions {
  /** Analysis temperature, °C. */
  temperatureC: number;
  /** Nominal (model) temperature, °C. */
  tnomC: number;
  /** Thermal voltage kT/q at the analysis temperature, volts. */
  vt: number;
  /** Multiplies BF and BR of every BJT. */
  betaScale: number;
  /** Conductance placed across every junction for robustness, siemens. */
  junctionGmin: number;
}

/** What one linearisation of a device reported back to the Newton loop. */
export interface LoadReport {
  /** A junction or terminal voltage was limited this iteration (the point is not a true Newton point). */
  limited: boolean;
  /** An exponential ran beyond the evaluated range (tangent continuation in use). */
  clipped: boolean;
  /** Every stamped number was finite. */
  finite: boolean;
}

/**
 * A nonlinear device as the Newton loop sees it. `terminals` lists MNA unknown indices
 * (−1 for ground) in the device's own terminal order; the solver registers every
 * terminal-pair matrix entry and hands back `positions[t * terminals.length + u]`
 * (−1 when either side is ground).
 */
export interface NonlinearDevice {
  readonly element: Element;
  readonly terminals: Int32Array;
  positions: Int32Array;
  /** Recomputes temperature- and beta-dependent parameters. Called once per solve. */
  prepare(conditions: DeviceConditions): void;
  /**
   * Sets the limiting history from a solution vector (start of a solve or of a continuation
   * step). With a `start` hint the first `load` afterwards linearises at a predicted point
   * instead of at `x` (and reports itself limited, so that iteration cannot end the run).
   */
  resetState(x: Float64Array, start?: StartHint): void;
  /** Linearises the device at `x` (limited against its history) and adds its companion stamps. The report may be an object the device reuses on its next call. */
  load(x: Float64Array, values: Float64Array, rhs: Float64Array, limit: boolean): LoadReport;
  /** The operating-point record at `x` (no limiting). */
  record(x: Float64Array): DeviceRecord;
  /** Junctions whose exponential runs beyond the evaluated range at `x` (empty when none). */
  overdriven(x: Float64Array): OverdrivenJunction[];
}

/**
 * How the first linearisation of a Newton run is chosen.
 * - `cold`: no usable guess; junctions start at a forward bias taken from the model (BJT
 *   base-emitter and diode at the junction's critical voltage, reverse junctions at 0 V) and MOS
 *   gates at threshold plus a small overdrive.
 * - `temperature`: the guess was solved at another temperature (thermal voltage `vt`,
 *   `temperatureC`); forward junctions start at the voltage that carries the same current at
 *   the new temperature, v₁ = n·VT₁·(v₀/(n·VT₀) + ln(IS(T₀)/IS(T₁))) — the diode law solved
 *   for v at constant current.
 */
export type StartHint = { kind: 'cold' } | { kind: 'temperature'; vt: number; temperatureC: number };

/** A junction forward-biased beyond the range where its exponential law is evaluated. */
export interface OverdrivenJunction {
  /** 'junction', 'base-emitter junction' or 'base-collector junction'. */
  junction: string;
  /** Forward voltage across it, volts (device's own polarity). */
  volts: number;
}

/** Voltage of terminal index `t` of a device at solution `x`. */
export function terminalVoltage(terminals: Int32Array, x: Float64Array, t: number): number {
  const i = terminals[t];
  return i >= 0 ? x[i] : 0;
}

/**
 * Adds the conductance g = ∂I_t/∂(V_pk − V_nk) to row `t`: +g at column pk, −g at column nk
 * (terminal indices of the device).
 */
export function addControl(
  positions: Int32Array,
  nt: number,
  values: Float64Array,
  t: number,
  pk: number,
  nk: number,
  g: number,
): void {
  const a = positions[t * nt + pk];
  if (a >= 0) values[a] += g;
  const b = positions[t * nt + nk];
  if (b >= 0) values[b] -= g;
}

/** Moves the equivalent current `ieq` (current into terminal t not explained by the stamped conductances) to the right-hand side. */
export function addEquivalentCurrent(terminals: Int32Array, rhs: Float64Array, t: number, ieq: number): void {
  const i = terminals[t];
  if (i >= 0) rhs[i] -= ieq;
}
