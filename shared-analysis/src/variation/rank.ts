// The order of ranked figures (sensitivities, contributors, supply slopes), the same whatever rounding noise the solve carried.

/**
 * The magnitude a ranked list (sensitivities, contributors) sorts by: |v| to 6 significant digits,
 * so equal figures (a matched pair's β sensitivities) keep their order whatever rounding the solve
 * that produced them carried (a warm-started re-analysis differs from a cold one around 1e-15).
 */
export function rankOf(v: number): number {
  return Number.isFinite(v) ? Number(Math.abs(v).toPrecision(6)) : Math.abs(v);
}
