// The rules every analysis option must meet, shared by the CLI's flags and the server's settings so both refuse the same values.

import type { AnalysisOptions } from '../../shared-analysis/src/analysis';

/** Absolute zero in °C; no temperature at or below it is physical. */
const ABSOLUTE_ZERO_C = -273.15;

/** One numeric option: its test and the phrase that says what it must be. */
export interface NumberRule {
  ok: (v: number) => boolean;
  rule: string;
}

const temperature: NumberRule = { ok: (v) => v > ABSOLUTE_ZERO_C && v < 1000, rule: 'a temperature in °C above absolute zero (−273.15 °C) and below 1000 °C' };

/**
 * The range of each option. Beta corners bracket the nominal beta (a low factor above 1 or
 * a high one below 1 would swap the corners); the supply tolerance is a percentage a
 * designer could mean (common practice: a few percent, ±50 % at the very most).
 */
export const OPTION_RULES = {
  temperatureC: temperature,
  coldC: temperature,
  hotC: temperature,
  supplyTolerancePercent: { ok: (v: number) => v >= 0 && v <= 50, rule: 'a percentage from 0 to 50' },
  betaLow: { ok: (v: number) => v > 0 && v <= 1, rule: 'a factor above 0 and at most 1' },
  betaHigh: { ok: (v: number) => v >= 1 && v <= 100, rule: 'a factor from 1 to 100' },
  headroomMarginV: { ok: (v: number) => v >= 0 && v < 1000, rule: 'a voltage from 0 to 1000 V' },
  powerLimitW: { ok: (v: number) => v > 0 && v < 1e6, rule: 'a number of watts above 0 and below 1 MW' },
  processKpPercent: { ok: (v: number) => v >= 0 && v <= 50, rule: 'a percentage from 0 to 50' },
  processVtoShiftV: { ok: (v: number) => v >= 0 && v <= 1, rule: 'a voltage from 0 to 1 V' },
  resistorTolerancePercent: { ok: (v: number) => v >= 0 && v <= 50, rule: 'a percentage from 0 to 50' },
  yieldTargetPercent: { ok: (v: number) => v > 0 && v < 100, rule: 'a percentage above 0 and below 100' },
  monteCarloRuns: { ok: (v: number) => Number.isInteger(v) && v >= 1 && v <= 100000, rule: 'a whole number of runs from 1 to 100000' },
  seed: { ok: (v: number) => Number.isInteger(v) && v >= 0 && v <= 4294967295, rule: 'a whole number from 0 to 4294967295' },
} satisfies Record<string, NumberRule>;

/** Problems between options that are each fine alone (the hot corner below the cold one), as sentences. */
export function crossCheckCorners(corners: AnalysisOptions['corners'], names: { cold: string; hot: string }): string[] {
  const cold = corners?.coldC ?? -40;
  const hot = corners?.hotC ?? 125;
  if (hot <= cold) return [`${names.hot} (${hot} °C) must be above ${names.cold} (${cold} °C).`];
  return [];
}

/**
 * A number written in plain decimal (`-40`, `2.5`, `1e-3`); undefined for anything else,
 * including the empty string, hexadecimal (`0x10`), `Infinity` and surrounding spaces,
 * which `Number()` would silently accept.
 */
export function parseDecimal(text: string | undefined): number | undefined {
  if (text === undefined || !/^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?$/.test(text)) return undefined;
  const v = Number(text);
  return Number.isFinite(v) ? v : undefined;
}
