// Hook implementations several kinds share: the geometric-ratio note and the output resistance of a plain or emitter-degenerated output.

import { eng, sig } from '../format';
import { degeneratedRo } from '../formulas';
import type { RatioContext, RatioNote, SmallSignal } from '../kind';
import type { StructureOutput } from '../types';

/**
 * The `mirror-ratio` note of an output ratioed by geometry (area × M, or (W/L) × M), or undefined for
 * a matched one. `bipolarFormula` words the kind's finite-beta formula for the ratio; without it the
 * note says IOUT ≈ m·IREF by geometry. A Widlar-degenerated output carries its ratio inside the logarithm.
 */
export function geometricRatio(c: RatioContext, o: StructureOutput, kindName: string, bipolarFormula?: (m: string, sumM: number) => string): RatioNote | undefined {
  if (Math.abs(o.ratio - 1) < 1e-9) return undefined;
  const s = c.s;
  const est = c.estimate;
  // Widlar outputs carry far less than their ratio; the estimate counts their base currents separately.
  const sumM = s.outputs.filter((x) => !x.degeneration).reduce((a, x) => a + x.ratio, 0);
  const m = sig(o.ratio);
  let formula: string;
  if (o.degeneration) formula = `IOUT from the Widlar equation with the ratio inside the logarithm, NF·VT·ln(${m}·IC1/IOUT) = IOUT·R2`;
  else if (!c.bipolar) formula = `IOUT ≈ ${m}·IREF`;
  else if (bipolarFormula) formula = bipolarFormula(m, sumM);
  else formula = `IOUT ≈ ${m}·IREF by geometry`;
  const value = est && est.irefFrom !== 'unknown' ? ` = ${eng(est.iout[o.device] ?? 0, 'A')} by hand` : '';
  const what = c.bipolar ? 'area × M' : '(W/L) × M';
  return {
    message: `${o.device} is a 1:${m} output of the ${kindName} on ${s.reference.device} (${what} relative to the reference): ${formula}${value}.`,
    data: { device: o.device, ratio: o.ratio, iout: est?.iout[o.device] },
  };
}

/**
 * Output resistance of a common-emitter (common-source) output: ro, or with an emitter resistor
 * ro·(1 + gm·(R2∥rπ)) + R2∥rπ, with gm + gmb for a MOSFET whose source is off its bulk (body effect). Source: Gray, Hurst, Lewis, Meyer, 5th ed., ch. 3/4 (from memory).
 */
export function commonEmitterRo(o: StructureOutput, out: SmallSignal): number {
  return o.degeneration ? degeneratedRo(out.ro, out.gm + out.gmb, o.degeneration.ohms, out.rpi) : out.ro;
}
