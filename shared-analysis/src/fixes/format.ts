// Engineering-notation text for values: netlist text that reads back exactly, and display text for messages.

/** Options for `formatEngineering`. */
export interface FormatOptions {
  /** Unit symbol shown after the prefix in display style (`Ω`, `A`, `V`). Ignored in netlist style. */
  unit?: string;
  /** Significant digits kept (default 3 for display, 4 for netlist); trailing zeros are dropped. */
  digits?: number;
  /** `netlist`: text for a card (`8.2k`, `1.5meg`); `display`: text for people (`8.2 kΩ`, `−0.21 V`). Default `display`. */
  style?: 'netlist' | 'display';
}

interface Prefix {
  exponent: number;
  netlist: string;
  display: string;
}

// `meg` rather than `m` for 1e6 in netlist text, because a netlist reads `m` as milli.
const PREFIXES: Prefix[] = [
  { exponent: 12, netlist: 't', display: 'T' },
  { exponent: 9, netlist: 'g', display: 'G' },
  { exponent: 6, netlist: 'meg', display: 'M' },
  { exponent: 3, netlist: 'k', display: 'k' },
  { exponent: 0, netlist: '', display: '' },
  { exponent: -3, netlist: 'm', display: 'm' },
  { exponent: -6, netlist: 'u', display: 'µ' },
  { exponent: -9, netlist: 'n', display: 'n' },
  { exponent: -12, netlist: 'p', display: 'p' },
  { exponent: -15, netlist: 'f', display: 'f' },
];

const MINUS = '\u2212';

/** Writes `mantissa` with `digits` significant figures, dropping trailing zeros and a trailing point. */
function trimmed(mantissa: number, digits: number): string {
  let s = mantissa.toPrecision(digits);
  if (s.includes('e')) s = String(Number(s));
  if (s.includes('.')) s = s.replace(/0+$/, '').replace(/\.$/, '');
  return s;
}

/**
 * Formats a value in engineering notation.
 *
 * - `netlist` style writes text a netlist reads back as the same value to the printed precision:
 *   `8.2k`, `1.5meg`, `470`, `2.2u`, `100m`, `-5`. It never writes the `4k7` form and never
 *   appends a unit, because a trailing `F` or `M` after a bare number would read as a prefix.
 *   Values beyond the prefixes (below 1f or from 1000T) are written with an exponent (`1e-18`).
 * - `display` style writes text for people: `8.2 kΩ`, `1.02 mA`, `−0.21 V` (true minus sign, µ,
 *   a space before the unit). Volts between 0.1 V and 1 V stay in volts because designers read
 *   headroom and junction voltages that way.
 *
 * Non-finite values give `∞`/`−∞` in display style (an unbounded output resistance) and `—` for
 * NaN; in netlist style they give an empty string, which callers must not write into a card.
 */
export function formatEngineering(value: number, options: FormatOptions = {}): string {
  const style = options.style ?? 'display';
  const digits = Math.max(1, Math.min(15, Math.round(options.digits ?? (style === 'netlist' ? 4 : 3))));
  const unit = options.unit ?? '';
  const sign = value < 0 ? (style === 'display' ? MINUS : '-') : '';
  const withUnit = (text: string, prefix: string): string =>
    style === 'netlist' ? text + prefix : unit || prefix ? `${text} ${prefix}${unit}` : text;

  if (Number.isNaN(value)) return style === 'display' ? '—' : '';
  if (!Number.isFinite(value)) return style === 'display' ? `${sign}∞${unit ? ' ' + unit : ''}` : '';
  if (value === 0) return withUnit('0', '');

  const magnitude = Math.abs(value);
  // Round to the requested digits first, so 999.96 becomes 1k rather than 1000.
  const rounded = Number(magnitude.toPrecision(digits));
  let exponent = Math.floor(Math.log10(rounded) / 3) * 3;
  if (rounded / 10 ** exponent >= 1000) exponent += 3;
  if (rounded / 10 ** exponent < 1) exponent -= 3;
  if (style === 'display' && unit === 'V' && exponent === -3 && rounded >= 0.1) exponent = 0;

  const prefix = PREFIXES.find((p) => p.exponent === exponent);
  if (!prefix) {
    const text = rounded.toExponential(digits - 1).replace(/\.?0+e/, 'e').replace('e+', 'e');
    return style === 'display' ? `${sign}${text.replace('e', '×10^')}${unit ? ' ' + unit : ''}` : sign + text;
  }
  const mantissa = Number((rounded / 10 ** exponent).toPrecision(digits));
  return withUnit(sign + trimmed(mantissa, digits), style === 'display' ? prefix.display : prefix.netlist);
}

/**
 * Formats a relative error as a signed percentage for messages: `+2.1 %`, `−12 %`, `0 %`.
 * At most three significant figures (`digits`, default 2) and never an exponent: `+8890000 %`,
 * not `+8.89e6 %`. A share smaller than a hundredth of a percent reads `≈ 0 %`, because
 * `+2.8e-7 %` is rounding noise, not a difference anyone acts on.
 */
export function formatPercent(ratio: number, digits = 2): string {
  if (!Number.isFinite(ratio)) return '—';
  const pct = ratio * 100;
  if (pct === 0) return '0 %';
  if (Math.abs(pct) < 0.005) return '≈ 0 %';
  // Whole percentages above 10^digits keep three figures (`+123 %`), never more.
  const kept = Math.abs(pct) >= 10 ** digits ? 3 : Math.max(1, Math.min(3, Math.round(digits)));
  const text = plainNumber(Number(Math.abs(pct).toPrecision(kept)));
  if (text === '0') return '≈ 0 %';
  return `${pct < 0 ? MINUS : '+'}${text} %`;
}

/** A finite number written out in plain decimals (no exponent), as JavaScript would for a value between 1e-6 and 1e21. */
function plainNumber(v: number): string {
  const s = String(v);
  if (!s.includes('e')) return s;
  // Only very large or very small values reach here; write them out digit by digit.
  return Math.abs(v) >= 1 ? BigInt(Math.round(v)).toString() : v.toFixed(20).replace(/0+$/, '').replace(/\.$/, '');
}

/**
 * The magnitudes below which a solved quantity is numerical noise rather than a value
 * (docs/DEVICE-MODELS.md "Regions": a device whose terminal currents are all below 1 pA is off). The
 * solver settles node voltages to about a nanovolt; a microvolt is far below any bias voltage
 * a designer reads, and a picowatt is a picoampere across a volt.
 */
export const NOISE_FLOOR = { A: 1e-12, V: 1e-6, W: 1e-12 } as const;

/** Whether `value` is below the noise floor of its unit (units without a floor never are). */
export function belowFloor(value: number, unit: string): boolean {
  const floor = (NOISE_FLOOR as Record<string, number>)[unit];
  return floor !== undefined && Number.isFinite(value) && Math.abs(value) < floor;
}

/**
 * A solved quantity for people: `formatEngineering` in display style, except that a current,
 * voltage or power below its noise floor reads `≈ 0 A` (`≈ 0 V`, `≈ 0 W`) instead of
 * `3.49e-18 fV`, and a value at the project's 1e30 "unbounded" stand-in reads `∞`.
 */
export function formatMeasured(value: number, unit: string, digits = 3): string {
  if (belowFloor(value, unit)) return `≈ 0 ${unit}`;
  if (Number.isFinite(value) && Math.abs(value) >= 1e29) return `${value < 0 ? MINUS : ''}∞${unit ? ' ' + unit : ''}`;
  return formatEngineering(value, { unit, digits });
}

/** `formatMeasured` with an explicit `+` on positive values above the floor (`+0.62 V`), for signed junction voltages. */
export function formatSigned(value: number, unit: string, digits = 3): string {
  const text = formatMeasured(value, unit, digits);
  return value > 0 && !belowFloor(value, unit) ? `+${text}` : text;
}
