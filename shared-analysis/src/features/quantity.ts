// Display formatting of physical quantities for hovers and inlay hints, on top of the shared engineering formatter.

import { belowFloor, formatEngineering, formatPercent as formatSignedPercent } from '../fixes/format';

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
  if (Math.abs(value) >= 1e29) return value < 0 ? '−∞' : '∞';
  // −0 (e.g. from −1 · 0 in a sign convention) is zero to a reader.
  if (value === 0) value = 0;
  // A current, voltage or power below its noise floor is solver noise, not a value.
  if (value !== 0 && belowFloor(value, unit)) return `≈ 0 ${unit}`;
  return unsignedZero(formatEngineering(value, { unit, digits: format.digits ?? 3, style: 'display' }));
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

/** Formats a ratio as a signed percentage, e.g. `+2.1 %`; zero (either sign) is `0 %`. */
export function formatPercent(ratio: number): string {
  return unsignedZero(formatSignedPercent(ratio === 0 ? 0 : ratio));
}
