// The order of ranked figures (sensitivities, contributors, supply slopes), the same whatever rounding noise the solve carried.

/**
 * The magnitude a ranked list (sensitivities, contributors) sorts by: |v| rounded to 6 significant
 * digits, so equal figures (a matched pair's β sensitivities) keep their order whatever rounding the
 * solve that produced them carried (a warm-started re-analysis differs from a cold one around 1e-15).
 * Rounded in arithmetic (a string per figure cost 7 % of the spread analysis); a magnitude whose
 * scale overflows (a subnormal) is rounded through its decimal text.
 */
export function rankOf(v: number): number {
  const a = Math.abs(v);
  if (!(a > 0) || a === Infinity) return a;
  const scale = POWERS_OF_TEN[5 - Math.floor(Math.log10(a)) + POWER_OFFSET];
  const rounded = Math.round(a * scale) / scale;
  return Number.isFinite(rounded) && rounded > 0 ? rounded : Number(a.toPrecision(6));
}

/** 10^k for k = −POWER_OFFSET … POWER_OFFSET, each the double nearest to it (read from its decimal text; `10 ** k` costs a general power per figure). */
const POWER_OFFSET = 330;
const POWERS_OF_TEN = Float64Array.from({ length: 2 * POWER_OFFSET + 1 }, (_, i) => Number(`1e${i - POWER_OFFSET}`));
