// Keeps the editor settings true to the engine: every documented default is the one the engine uses, and the examples name real codes.
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { describe, expect, it } from 'vitest';
import { resolveOptions } from '../../shared-analysis/src/analysis';
import { findingCatalogue } from '../../shared-analysis/src/codes';
import { settingsFromConfiguration, DEFAULT_SETTINGS } from '../../server/src/settings';

const pkg = JSON.parse(readFileSync(join(__dirname, '../../package.json'), 'utf8'));
const props: Record<string, { default: unknown; description: string }> = pkg.contributes.configuration.properties;

describe('package.json settings', () => {
  it('give the defaults the engine resolves when nothing is set', () => {
    const o = resolveOptions();
    const d = (k: string) => props[`qpoint.${k}`]!.default;
    expect(d('corners.enabled')).toBe(o.corners.enabled);
    expect(d('corners.supplyTolerancePercent')).toBeCloseTo(o.corners.supplyTolerance * 100, 12);
    expect(d('corners.coldCelsius')).toBe(o.corners.coldC);
    expect(d('corners.hotCelsius')).toBe(o.corners.hotC);
    expect(d('corners.betaLowFactor')).toBe(o.corners.betaLow);
    expect(d('corners.betaHighFactor')).toBe(o.corners.betaHigh);
    expect(d('headroomMarginVolts')).toBe(o.headroomMarginV);
    expect(d('resistorSeries')).toBe(o.resistorSeries);
    expect(d('powerLimit.resistorWatts')).toBe(o.powerLimits.resistorW);
    expect(d('powerLimit.deviceWatts')).toBe(o.powerLimits.deviceW);
    expect(d('corners.processKpPercent')).toBe((o.corners.processKpTolerance ?? 0) * 100);
    expect(d('corners.processVtoShiftVolts')).toBe(o.corners.processVtoShift ?? 0);
    expect(d('variation.enabled')).toBe(o.variation.enabled);
    expect(d('variation.resistorTolerancePercent')).toBe(o.variation.resistorTolerance ?? null);
    expect(d('variation.yieldTargetPercent')).toBeCloseTo(o.variation.yieldTarget * 100, 12);
    expect(d('inlayHints.detail')).toBe(DEFAULT_SETTINGS.inlayDetail);
    expect(d('analysisDelayMs')).toBe(DEFAULT_SETTINGS.analysisDelayMs);
  });

  it('reach the engine under the names they are documented by', () => {
    const { settings, problems } = settingsFromConfiguration({ headroomMarginVolts: 0.5, powerLimit: { resistorWatts: 1, deviceWatts: 2 } });
    expect(problems).toEqual([]);
    const o = resolveOptions(settings.options);
    expect(o.headroomMarginV).toBe(0.5);
    expect(o.powerLimits).toEqual({ resistorW: 1, deviceW: 2 });
  });

  it('use real finding codes in their examples', () => {
    const codes = new Set(Object.keys(findingCatalogue()));
    for (const [key, p] of Object.entries(props)) {
      for (const m of (p.description ?? (p as { markdownDescription?: string }).markdownDescription ?? '').matchAll(/"([a-z]+(?:-[a-z]+)+)"/g)) expect(codes.has(m[1]!), `${key} names ${m[1]}`).toBe(true);
    }
  });

  it('describe the headroom edge the checks use (VBC = 0, not VCE(sat))', () => {
    expect(props['qpoint.headroomMarginVolts']!.description).toMatch(/VBC = 0/);
  });
});

describe('the inlay placement setting', () => {
  it('defaults to the place documented in package.json and reads both values', () => {
    expect(props['qpoint.inlayHints.placement']!.default).toBe(DEFAULT_SETTINGS.inlayPlacement);
    expect(settingsFromConfiguration({ inlayHints: { placement: 'afterComment' } }).settings.inlayPlacement).toBe('afterComment');
    const bad = settingsFromConfiguration({ 'inlayHints.placement': 'middle' });
    expect(bad.settings.inlayPlacement).toBe('afterCode');
    expect(bad.problems.join(' ')).toMatch(/inlayHints\.placement/);
  });
});
