// IEC 60063:2015 preferred-number series (E12 to E192) and the nearest standard values around any resistance.

/** Names of the IEC 60063 series a resistor fix can pick from. */
export type SeriesName = 'E12' | 'E24' | 'E48' | 'E96' | 'E192';

/** Every supported series, coarsest first. */
export const SERIES_NAMES: readonly SeriesName[] = ['E12', 'E24', 'E48', 'E96', 'E192'];

// The tables are the IEC 60063:2015 series values, written as integers in units of the last
// significant figure so that no decimal rounding creeps in. They were typed in from memory (the
// standard itself was not at hand) and cross-checked: the E48/E96/E192 entries agree with
// round(10^(i/N), 2) everywhere except E192's 9.20 (the formula gives 9.19), which the standard
// keeps; E96 is every second E192 value and E48 every second E96 value; and E24 differs from
// round(10^(i/24), 1) exactly at the eight values the standard is known for (2.7 3.0 3.3 3.6 3.9
// 4.3 4.7 8.2). The tables, not the formula, are normative.

const E12_TENTHS = [10, 12, 15, 18, 22, 27, 33, 39, 47, 56, 68, 82];

const E24_TENTHS = [
  10, 11, 12, 13, 15, 16, 18, 20, 22, 24, 27, 30,
  33, 36, 39, 43, 47, 51, 56, 62, 68, 75, 82, 91,
];

const E192_HUNDREDTHS = [
  100, 101, 102, 104, 105, 106, 107, 109, 110, 111, 113, 114, 115, 117, 118, 120,
  121, 123, 124, 126, 127, 129, 130, 132, 133, 135, 137, 138, 140, 142, 143, 145,
  147, 149, 150, 152, 154, 156, 158, 160, 162, 164, 165, 167, 169, 172, 174, 176,
  178, 180, 182, 184, 187, 189, 191, 193, 196, 198, 200, 203, 205, 208, 210, 213,
  215, 218, 221, 223, 226, 229, 232, 234, 237, 240, 243, 246, 249, 252, 255, 258,
  261, 264, 267, 271, 274, 277, 280, 284, 287, 291, 294, 298, 301, 305, 309, 312,
  316, 320, 324, 328, 332, 336, 340, 344, 348, 352, 357, 361, 365, 370, 374, 379,
  383, 388, 392, 397, 402, 407, 412, 417, 422, 427, 432, 437, 442, 448, 453, 459,
  464, 470, 475, 481, 487, 493, 499, 505, 511, 517, 523, 530, 536, 542, 549, 556,
  562, 569, 576, 583, 590, 597, 604, 612, 619, 626, 634, 642, 649, 657, 665, 673,
  681, 690, 698, 706, 715, 723, 732, 741, 750, 759, 768, 777, 787, 796, 806, 816,
  825, 835, 845, 856, 866, 876, 887, 898, 909, 920, 931, 942, 953, 965, 976, 988,
];

// IEC 60063 builds E96 from every second E192 value and E48 from every second E96 value.
const E96_HUNDREDTHS = E192_HUNDREDTHS.filter((_, i) => i % 2 === 0);
const E48_HUNDREDTHS = E96_HUNDREDTHS.filter((_, i) => i % 2 === 0);

const TABLES: Record<SeriesName, readonly number[]> = {
  E12: Object.freeze(E12_TENTHS.map((v) => v / 10)),
  E24: Object.freeze(E24_TENTHS.map((v) => v / 10)),
  E48: Object.freeze(E48_HUNDREDTHS.map((v) => v / 100)),
  E96: Object.freeze(E96_HUNDREDTHS.map((v) => v / 100)),
  E192: Object.freeze(E192_HUNDREDTHS.map((v) => v / 100)),
};

// Tolerances the series are sold with (common practice: E12 10 %, E24 5 %, E48 2 %, E96 1 %, E192 0.5 %).
const TOLERANCES: Record<SeriesName, number> = { E12: 0.1, E24: 0.05, E48: 0.02, E96: 0.01, E192: 0.005 };

/** Lowest and highest resistance the fixes propose (1 mΩ and 1 GΩ). */
export const STANDARD_VALUE_RANGE = { min: 1e-3, max: 1e9 } as const;

/** True when `name` is one of the supported series (case-sensitive, as in the settings). */
export function isSeriesName(name: string): name is SeriesName {
  return (SERIES_NAMES as readonly string[]).includes(name);
}

/** The values of one decade of a series, ascending, 1.0 ≤ v < 10. */
export function seriesValues(name: SeriesName): readonly number[] {
  return TABLES[name];
}

/** The relative tolerance a series is usually sold with (0.05 for E24). */
export function seriesTolerance(name: SeriesName): number {
  return TOLERANCES[name];
}

/** The standard values on either side of a resistance. `exact` when the value is itself standard (then below = above). */
export interface NearestValues {
  below: number;
  above: number;
  exact: boolean;
}

/** Scales a decade value, then rounds away the binary noise of the multiplication (8.2 × 1e3 → 8200, not 8199.999…). */
function scaled(mantissa: number, exponent: number): number {
  return Number((mantissa * 10 ** exponent).toPrecision(12));
}

/**
 * The standard values of `series` just below and just above `value` (ohms), across decade
 * boundaries (9.9 kΩ in E24 → 9.1 kΩ and 10 kΩ). Values outside 1 mΩ … 1 GΩ are clamped to
 * that range. Returns undefined for a value that is not a positive finite number.
 */
export function nearestStandardValues(value: number, series: SeriesName): NearestValues | undefined {
  if (!Number.isFinite(value) || value <= 0) return undefined;
  const v = Math.min(Math.max(value, STANDARD_VALUE_RANGE.min), STANDARD_VALUE_RANGE.max);
  const table = TABLES[series];
  let exponent = Math.floor(Math.log10(v));
  // log10 can land one decade off near exact powers of ten; correct it so 1 ≤ v/10^e < 10.
  if (v / 10 ** exponent >= 10) exponent += 1;
  if (v / 10 ** exponent < 1) exponent -= 1;
  const mantissa = v / 10 ** exponent;
  const relTol = 1e-9;
  for (const t of table) {
    if (Math.abs(mantissa - t) <= relTol * t) {
      const exact = scaled(t, exponent);
      return { below: exact, above: exact, exact: true };
    }
  }
  let below: number | undefined;
  let above: number | undefined;
  for (const t of table) {
    if (t < mantissa) below = t;
    else if (above === undefined) above = t;
  }
  const belowValue = below === undefined ? scaled(table[table.length - 1], exponent - 1) : scaled(below, exponent);
  const aboveValue = above === undefined ? scaled(table[0], exponent + 1) : scaled(above, exponent);
  return {
    below: Math.max(belowValue, STANDARD_VALUE_RANGE.min),
    above: Math.min(aboveValue, STANDARD_VALUE_RANGE.max),
    exact: false,
  };
}

/** The single standard value of `series` closest to `value` on a logarithmic scale (ties go to the lower value). */
export function closestStandardValue(value: number, series: SeriesName): number | undefined {
  const n = nearestStandardValues(value, series);
  if (!n) return undefined;
  if (n.exact) return n.below;
  return Math.log(value / n.below) <= Math.log(n.above / value) ? n.below : n.above;
}
