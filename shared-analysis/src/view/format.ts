// The one set of formatting rules for what people read in the view: hover, inlay labels, reports and plots.
//
// Rules (each function below keeps one of them):
// - Three significant figures by default, trailing zeros dropped (`412 µA`, `8.2 kΩ`, `0.679 V`).
// - SI prefixes from f to T with the unit after a space; volts between 0.1 V and 1 V stay in
//   volts, as designers read junction voltages and headroom that way.
// - A current, voltage or power below its noise floor reads `≈ 0 A`; the engine's 1e30 stand-in
//   for "no limit" reads `∞`; NaN never reaches a reader (`not available`); zero has no sign.
// - Percentages keep at most three figures and never an exponent; a share below 0.01 % reads `≈ 0 %`.
// - A temperature coefficient below 0.01 ppm/°C reads `≈ 0 ppm/°C` (a thousandth of a precision
//   resistor's: common practice puts those at 1–25 ppm/°C), never `−0.00000167 ppm/°C`.
// - A signed quantity is written as a magnitude with words that say its direction: "0.236 V into
//   saturation", "8.8 % below the estimate", never "−0.236 V short of the edge".
// The finding messages keep their own rules (checks/, fixes/format.ts); this module is for the view.

import { technologyFacts } from '../structures/technology';
import { belowFloor, formatEngineering, formatPercent as signedPercentText } from '../fixes/format';

const MINUS = '\u2212';

/** Options for {@link formatQuantity}. */
export interface QuantityFormat {
  /** Significant digits (default 3). */
  digits?: number;
}

/**
 * Formats `value` in engineering notation with an SI prefix and a unit for people to read:
 * `412 µA`, `−0.21 V`, `8.2 kΩ`. The engine's 1e30 Ω stand-in for "no limit" and other
 * non-finite values become `∞`; NaN never reaches the user as "NaN".
 */
export function formatQuantity(value: number, unit = '', format: QuantityFormat = {}): string {
  if (Number.isNaN(value)) return 'not available';
  if (Math.abs(value) >= 1e29) return `${value < 0 ? MINUS : ''}∞${unit ? ' ' + unit : ''}`.replace(/ $/, '');
  // −0 (e.g. from −1 · 0 in a sign convention) is zero to a reader.
  if (value === 0) value = 0;
  // A current, voltage or power below its noise floor is solver noise, not a value.
  if (value !== 0 && belowFloor(value, unit)) return `≈ 0 ${unit}`;
  return unsignedZero(formatEngineering(value, { unit, digits: format.digits ?? 3, style: 'display' }));
}

/** The magnitude of `value` as {@link formatQuantity} writes it (for text that says the direction in words). */
export function formatMagnitude(value: number, unit = '', format: QuantityFormat = {}): string {
  return formatQuantity(Math.abs(value), unit, format);
}

/** `formatQuantity` with an explicit `+` on positive values above the floor (`+0.62 V`). */
export function formatSignedQuantity(value: number, unit = '', format: QuantityFormat = {}): string {
  const text = formatQuantity(value, unit, format);
  return value > 0 && !text.startsWith('≈') && !text.startsWith('∞') ? `+${text}` : text;
}

/** Drops the minus sign of a text whose number reads as zero (`−0 V`, `−0.00 %`), which no reader should see. */
function unsignedZero(text: string): string {
  return /^[−-]0(?:[.,]0*)?(?![0-9.])/.test(text) ? text.slice(1) : text;
}

/** Formats a plain number (no unit) with up to `digits` significant digits, without exponent for ordinary sizes. */
export function formatNumber(value: number, digits = 4): string {
  if (Number.isNaN(value)) return 'not available';
  if (!Number.isFinite(value)) return value < 0 ? '−∞' : '∞';
  if (value === 0) return '0';
  const mag = Math.abs(value);
  const sign = value < 0 ? '−' : '';
  const text = mag >= 1e-3 && mag < 1e6 ? String(Number(mag.toPrecision(digits))) : mag.toPrecision(digits).replace(/\.?0+e/, 'e').replace('e+', 'e');
  // toPrecision keeps trailing zeros below 1e-3 without an exponent (0.0004000); a reader wants 0.0004.
  const tidy = !text.includes('e') && text.includes('.') ? text.replace(/0+$/, '').replace(/\.$/, '') : text;
  return unsignedZero(sign + tidy);
}

/** Below this magnitude (ppm/°C) a temperature coefficient reads `≈ 0 ppm/°C`. */
export const TEMPCO_FLOOR_PPM_PER_C = 0.01;

/** A temperature coefficient with its sign and three significant figures: `+115 ppm/°C`, `−3.2 ppm/°C`, `≈ 0 ppm/°C`; `—` when there is none. */
export function formatTempco(ppmPerC: number): string {
  if (!Number.isFinite(ppmPerC)) return '— ppm/°C';
  if (ppmPerC === 0) return '0 ppm/°C';
  if (Math.abs(ppmPerC) < TEMPCO_FLOOR_PPM_PER_C) return '≈ 0 ppm/°C';
  return `${ppmPerC > 0 ? '+' : MINUS}${formatNumber(Math.abs(ppmPerC), 3)} ppm/°C`;
}

/** Formats a ratio as a signed percentage, e.g. `+2.1 %`, `≈ 0 %` below 0.01 %; zero (either sign) is `0 %`. */
export function formatPercent(ratio: number): string {
  return unsignedZero(signedPercentText(ratio === 0 ? 0 : ratio));
}

/** A share without a sign (`2.5 %`, `≈ 0 %`), for "of its limit" and tolerances. */
export function formatShare(ratio: number): string {
  const text = formatPercent(Math.abs(ratio));
  return text.startsWith('+') ? text.slice(1) : text;
}

/** `452 µA to 555 µA`: a range of one unit, lowest first. */
export function formatRange(a: number, b: number, unit: string): string {
  const lo = Math.min(a, b);
  const hi = Math.max(a, b);
  const l = formatQuantity(lo, unit);
  const h = formatQuantity(hi, unit);
  return l === h ? l : `${l} to ${h}`;
}

/**
 * The region a transistor enters when it leaves its active region, as the view says it after "into",
 * "clear of" and "the edge of": saturation for a BJT, triode for a MOSFET, the linear region for a JFET
 * (the engine's own region names, docs/DEVICE-MODELS.md); for a technology the view does not know, its
 * active region's edge in general words.
 */
export function regionBeyondEdge(technology: string): string {
  return technologyFacts(technology)?.beyondWords ?? 'the region past its active edge';
}

/**
 * Headroom in words, signed by its meaning: `8.97 V clear of saturation` when the output is inside
 * its active region, `0.236 V into saturation` when it has crossed the edge (a BJT; `triode` for
 * a MOSFET, `the linear region` for a JFET), `at the edge of saturation` within a millivolt. A
 * technology the view does not know is said without a region name (`0.2 V inside its active region`).
 */
export function formatHeadroom(volts: number, technology: string): string {
  if (!Number.isFinite(volts)) return 'headroom not available';
  const facts = technologyFacts(technology);
  if (!facts) {
    if (Math.abs(volts) < 1e-3) return 'at the edge of its active region';
    return volts > 0 ? `${formatQuantity(volts, 'V')} inside its active region` : `${formatQuantity(-volts, 'V')} past the edge of its active region`;
  }
  const beyond = facts.beyondWords;
  if (Math.abs(volts) < 1e-3) return `at the edge of ${beyond}`;
  return volts > 0 ? `${formatQuantity(volts, 'V')} clear of ${beyond}` : `${formatQuantity(-volts, 'V')} into ${beyond}`;
}

/**
 * How a solved value compares with its estimate, in words: `3.1 % above the estimate`,
 * `8.8 % below the estimate`, `matches the estimate` within 0.01 %.
 */
export function formatDifference(estimate: number, solved: number): string {
  const rel = (solved - estimate) / Math.abs(estimate);
  // A zero or subnormal estimate (a 1e-320 A reference) makes the ratio, or the ratio in per cent,
  // overflow even where both values are finite.
  if (!Number.isFinite(rel * 100)) return 'not comparable with the estimate';
  const share = formatShare(rel);
  if (share === '≈ 0 %' || share === '0 %') return 'matches the estimate';
  return `${share} ${rel > 0 ? 'above' : 'below'} the estimate`;
}

/** The current a value is against a target: `on target (450 µA ±2 %)`, `9.8 % above target 450 µA ±2 %`. */
export function formatTargetState(current: number, target: number, tolerance: number): { met: boolean; text: string } {
  const band = `${formatQuantity(target, 'A')} ±${formatShare(tolerance).replace(' %', '')} %`;
  if (!Number.isFinite(current)) return { met: false, text: `target ${band}: no solved current` };
  const rel = (Math.abs(current) - target) / target;
  const met = Math.abs(rel) <= tolerance * (1 + 1e-9);
  if (met) return { met, text: `on target ${band}` };
  // A subnormal target makes the ratio in per cent overflow, as in formatDifference.
  if (!Number.isFinite(rel * 100)) return { met, text: `far above target ${band}` };
  return { met, text: `${formatShare(rel)} ${rel > 0 ? 'above' : 'below'} target ${band}` };
}
