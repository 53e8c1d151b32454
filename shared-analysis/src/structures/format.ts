// Engineering-notation formatting for the numbers that structure messages and estimate steps carry.

const PREFIXES: [number, string][] = [
  [1e12, 'T'],
  [1e9, 'G'],
  [1e6, 'M'],
  [1e3, 'k'],
  [1, ''],
  [1e-3, 'm'],
  [1e-6, 'µ'],
  [1e-9, 'n'],
  [1e-12, 'p'],
  [1e-15, 'f'],
];

/** Rounds to `digits` significant figures and drops trailing zeros. */
export function sig(value: number, digits = 3): string {
  if (!Number.isFinite(value)) return value > 0 ? '∞' : value < 0 ? '−∞' : '?';
  if (value === 0) return '0';
  let s = Math.abs(value).toPrecision(digits);
  // Trailing zeros are cut by hand (a Number round trip costs twice as much; every estimate step formats a dozen numbers).
  if (s.indexOf('e') >= 0) s = Number(s).toString();
  else if (s.indexOf('.') >= 0) {
    let end = s.length;
    while (s.charCodeAt(end - 1) === 48) end--;
    if (s.charCodeAt(end - 1) === 46) end--;
    s = s.slice(0, end);
  }
  return value < 0 ? `−${s}` : s;
}

/**
 * Formats a value with an SI prefix, e.g. `eng(0.00102, 'A')` → "1.02 mA", `eng(4300, 'Ω')` → "4.3 kΩ".
 * Volts between 10 mV and 1 kV stay in plain volts ("0.652 V"), as designers read bias voltages.
 * Values of 1e30 and above (the project's stand-in for "unbounded") print as "unbounded".
 */
export function eng(value: number, unit: string, digits = 3): string {
  if (!Number.isFinite(value)) return `${sig(value)} ${unit}`.trim();
  if (Math.abs(value) >= 1e29) return 'unbounded';
  if (value === 0) return `0 ${unit}`.trim();
  const a = Math.abs(value);
  if (unit === 'V' && a >= 0.01 && a < 1000) return `${sig(value, digits)} V`;
  for (const [scale, prefix] of PREFIXES) {
    if (a >= scale * 0.9995) return `${sig(value / scale, digits)} ${prefix}${unit}`.trim();
  }
  return `${sig(value / 1e-15, digits)} f${unit}`.trim();
}

/** A signed voltage with an explicit "+" for positive values, e.g. "+0.21 V". */
export function signedVolts(value: number, digits = 3): string {
  const s = eng(value, 'V', digits);
  return value > 0 ? `+${s}` : s;
}

/** A percentage with a sign, e.g. "−39 %". */
export function percent(fraction: number, digits = 2): string {
  const p = fraction * 100;
  const s = sig(p, digits);
  return `${p > 0 ? '+' : ''}${s} %`;
}
