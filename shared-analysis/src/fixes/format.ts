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

/** Formats a relative error as a signed percentage for messages: `+2.1 %`, `−12 %`, `0 %`. */
export function formatPercent(ratio: number, digits = 2): string {
  if (!Number.isFinite(ratio)) return '—';
  const pct = ratio * 100;
  const text = Math.abs(pct) >= 10 ** digits ? Math.abs(pct).toFixed(0) : trimmed(Math.abs(pct), digits);
  if (text === '0') return '0 %';
  return `${pct < 0 ? MINUS : '+'}${text} %`;
}
