// Engineering notation for solver messages: three significant figures and an SI prefix (1.23 mA, 4.70 kΩ).

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

/** Formats `value` with an SI prefix and `unit`; outside 1e-15…1e15 it falls back to exponent notation. */
export function formatEng(value: number, unit: string): string {
  if (!Number.isFinite(value)) return `${String(value)} ${unit}`.trim();
  if (value === 0) return `0 ${unit}`.trim();
  const a = Math.abs(value);
  if (a >= 1e15 || a < 1e-15) return `${value.toExponential(2)} ${unit}`.trim();
  for (const [scale, prefix] of PREFIXES) {
    if (a >= scale * 0.9995) {
      const v = value / scale;
      return `${Number(v.toPrecision(3))} ${prefix}${unit}`.trim();
    }
  }
  return `${value.toExponential(2)} ${unit}`.trim();
}

/** Joins names as "A", "A and B", "A, B and C", eliding beyond `max` ("… and 4 more"). */
export function listNames(names: string[], max = 6): string {
  if (names.length === 0) return '';
  const shown = names.slice(0, max);
  const rest = names.length - shown.length;
  if (rest > 0) return `${shown.join(', ')} and ${rest} more`;
  if (shown.length === 1) return shown[0];
  return `${shown.slice(0, -1).join(', ')} and ${shown[shown.length - 1]}`;
}
