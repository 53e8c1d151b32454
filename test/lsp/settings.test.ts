// The one mapping from the editor's qpoint.* settings to AnalysisOptions and the server's own knobs.

import { describe, expect, it } from 'vitest';
import { readFileSync } from 'node:fs';
import { join } from 'node:path';
import { settingsFromConfiguration } from '../../server/src/settings';
import { resolveOptions } from '../../shared-analysis/src/analysis';

/** The one helper of this feature: map `raw`, compare the resolved options and the problems logged. */
function check(raw: unknown, expected: { options?: Record<string, unknown>; inlay?: string; delay?: number; problems?: RegExp[] }): void {
  const { settings, problems } = settingsFromConfiguration(raw);
  if (expected.options) expect(settings.options).toEqual(expected.options);
  if (expected.inlay) expect(settings.inlayDetail).toBe(expected.inlay);
  if (expected.delay !== undefined) expect(settings.analysisDelayMs).toBe(expected.delay);
  expect(problems.length).toBe(expected.problems?.length ?? 0);
  expected.problems?.forEach((p, i) => expect(problems[i]).toMatch(p));
}

describe('settings mapping', () => {
  it('maps every setting of package.json contributes.configuration', () => {
    check(
      {
        temperatureCelsius: 85,
        corners: { enabled: false, supplyTolerancePercent: 10, coldCelsius: -20, hotCelsius: 100, betaLowFactor: 0.4, betaHighFactor: 3 },
        headroomMarginVolts: 0.5,
        resistorSeries: 'E96',
        inlayHints: { detail: 'terse' },
        findingSeverity: { 'mirror-output-out-of-region': 'error', 'node-single-connection': 'off' },
        analysisDelayMs: 50,
      },
      {
        options: {
          temperatureC: 85,
          corners: { enabled: false, supplyTolerance: 0.1, coldC: -20, hotC: 100, betaLow: 0.4, betaHigh: 3 },
          headroomMarginV: 0.5,
          resistorSeries: 'E96',
          severities: { 'mirror-output-out-of-region': 'error', 'node-single-connection': 'off' },
        },
        inlay: 'terse',
        delay: 50,
      },
    );
  });

  it('maps the process-corner and spread settings to the engine options, in percent and volts', () => {
    check(
      { corners: { processKpPercent: 10, processVtoShiftVolts: 0.05 }, variation: { enabled: false, resistorTolerancePercent: 1, yieldTargetPercent: 99 } },
      {
        options: {
          corners: { processKpTolerance: 0.1, processVtoShift: 0.05 },
          variation: { enabled: false, resistorTolerance: 0.01, yieldTarget: 0.99 },
        },
      },
    );
    // 0 means "no process corners", as the package.json default says; out-of-range values are logged and ignored.
    check({ corners: { processKpPercent: 0 } }, { options: {} });
    check({ variation: { yieldTargetPercent: 100, resistorTolerancePercent: -1, enabled: 'no' } }, {
      options: {},
      problems: [/variation.enabled/, /resistorTolerancePercent/, /yieldTargetPercent/],
    });
  });

  it('reads flat dotted keys as well as nested objects', () => {
    check({ 'corners.enabled': false, 'inlayHints.detail': 'off' }, { options: { corners: { enabled: false } }, inlay: 'off' });
  });

  it('leaves everything at the defaults when nothing is set (null temperature means the netlist decides)', () => {
    check({ temperatureCelsius: null }, { options: {}, inlay: 'full', delay: 200 });
    check(undefined, { options: {}, inlay: 'full', delay: 200 });
    // The engine's own defaults then apply: 5 % supply, −40/125 °C, beta ×0.5/×2 (as declared in package.json).
    expect(resolveOptions(settingsFromConfiguration({}).settings.options).corners).toEqual({
      enabled: true,
      supplyTolerance: 0.05,
      coldC: -40,
      hotC: 125,
      betaLow: 0.5,
      betaHigh: 2,
    });
  });

  it('refuses a hot corner at or below the cold one, and beta factors that swap the corners', () => {
    check({ corners: { coldCelsius: 50, hotCelsius: 20 } }, { options: {}, problems: [/qpoint.corners.hotCelsius \(20 °C\) must be above qpoint.corners.coldCelsius \(50 °C\)/] });
    check({ corners: { hotCelsius: -50 } }, { options: {}, problems: [/must be above/] });
    check({ corners: { betaLowFactor: 1.5, betaHighFactor: 0.5 } }, { options: {}, problems: [/betaLowFactor/, /betaHighFactor/] });
  });

  it('declares limited support for untrusted workspaces, with the read-anywhere setting restricted there', () => {
    const pkg = JSON.parse(readFileSync(join(__dirname, '../../package.json'), 'utf8'));
    expect(pkg.capabilities.untrustedWorkspaces.supported).toBe('limited');
    expect(pkg.capabilities.untrustedWorkspaces.restrictedConfigurations).toContain('qpoint.includes.readOutsideWorkspace');
    expect(settingsFromConfiguration({ includes: { readOutsideWorkspace: true } }).settings.includesAnywhere).toBe(true);
    expect(settingsFromConfiguration({}).settings.includesAnywhere).toBe(false);
  });

  it('ignores bad values one by one, saying why', () => {
    check(
      {
        temperatureCelsius: -300,
        corners: { supplyTolerancePercent: 90, betaLowFactor: 0, enabled: 'yes' },
        resistorSeries: 'E7',
        inlayHints: { detail: 'loud' },
        findingSeverity: { 'mirror-output-out-of-region': 'fatal', ok: 'hint' },
        analysisDelayMs: 'soon',
      },
      {
        options: { severities: { ok: 'hint' } },
        inlay: 'full',
        delay: 200,
        problems: [/temperatureCelsius/, /corners.enabled/, /supplyTolerancePercent/, /betaLowFactor/, /resistorSeries/, /findingSeverity\["mirror-output-out-of-region"\]/, /inlayHints.detail/, /analysisDelayMs/],
      },
    );
    check('not an object', { options: {}, problems: [/not an object/] });
  });
});
