// Maps the editor's `qpoint.*` settings to the engine's AnalysisOptions and the server's own knobs, in one place.

import type { AnalysisOptions, ResistorSeries } from '../../shared-analysis/src/analysis';
import type { InlayDetail, InlayPlacement } from '../../shared-analysis/src/features/inlay';
import type { Severity } from '../../shared-analysis/src/types';
import { crossCheckCorners, OPTION_RULES, type NumberRule } from './option-rules';
import { nameTable } from '../../shared-analysis/src/names';

/** Everything the server takes from the `qpoint` configuration section. */
export interface ServerSettings {
  options: AnalysisOptions;
  inlayDetail: InlayDetail;
  /** `qpoint.inlayHints.placement`: labels right after the card's fields, or after its end-of-line comment. */
  inlayPlacement: InlayPlacement;
  analysisDelayMs: number;
  /** Lets `.include` read files outside the workspace and the netlist's folder tree (still regular files within the limits). */
  includesAnywhere: boolean;
  /** `qpoint.includes.searchFolders` as written: folders searched for included files (absolute, or relative to the first workspace folder). */
  includeSearchFolders: string[];
}

/** The settings when the client sends none. */
export const DEFAULT_SETTINGS: ServerSettings = { options: {}, inlayDetail: 'full', inlayPlacement: 'afterCode', analysisDelayMs: 200, includesAnywhere: false, includeSearchFolders: [] };

const SERIES: ResistorSeries[] = ['E12', 'E24', 'E48', 'E96', 'E192'];
const SEVERITIES: (Severity | 'off')[] = ['error', 'warning', 'info', 'hint', 'off'];
const DETAILS: InlayDetail[] = ['off', 'terse', 'full'];
const PLACEMENTS: InlayPlacement[] = ['afterCode', 'afterComment'];

/**
 * Reads the `qpoint` section (nested objects as VS Code sends them, or flat dotted keys)
 * into server settings. Values of the wrong type or out of range are ignored, each with a
 * sentence in `problems` for the server log, so one bad setting never stops the analysis.
 */
export function settingsFromConfiguration(raw: unknown): { settings: ServerSettings; problems: string[] } {
  const problems: string[] = [];
  const section = isRecord(raw) ? nested(raw) : {};
  if (raw !== undefined && raw !== null && !isRecord(raw)) problems.push('The qpoint settings are not an object; using the defaults.');
  const get = (path: string): unknown => {
    if (path in section) return section[path];
    let cur: unknown = section;
    for (const part of path.split('.')) {
      if (!isRecord(cur)) return undefined;
      cur = cur[part];
    }
    return cur;
  };
  const num = (path: string, { ok, rule }: NumberRule): number | undefined => {
    const v = get(path);
    if (v === undefined || v === null) return undefined;
    if (typeof v !== 'number' || !Number.isFinite(v) || !ok(v)) {
      problems.push(`Setting qpoint.${path} = ${JSON.stringify(v)} is ignored: it must be ${rule}.`);
      return undefined;
    }
    return v;
  };

  const options: AnalysisOptions = {};
  const temperature = num('temperatureCelsius', OPTION_RULES.temperatureC);
  if (temperature !== undefined) options.temperatureC = temperature;

  const corners: NonNullable<AnalysisOptions['corners']> = {};
  const enabled = get('corners.enabled');
  if (typeof enabled === 'boolean') corners.enabled = enabled;
  else if (enabled !== undefined && enabled !== null) problems.push(`Setting qpoint.corners.enabled = ${JSON.stringify(enabled)} is ignored: it must be true or false.`);
  const tol = num('corners.supplyTolerancePercent', OPTION_RULES.supplyTolerancePercent);
  if (tol !== undefined) corners.supplyTolerance = tol / 100;
  const cold = num('corners.coldCelsius', OPTION_RULES.coldC);
  if (cold !== undefined) corners.coldC = cold;
  const hot = num('corners.hotCelsius', OPTION_RULES.hotC);
  if (hot !== undefined) corners.hotC = hot;
  const betaLow = num('corners.betaLowFactor', OPTION_RULES.betaLow);
  if (betaLow !== undefined) corners.betaLow = betaLow;
  const betaHigh = num('corners.betaHighFactor', OPTION_RULES.betaHigh);
  if (betaHigh !== undefined) corners.betaHigh = betaHigh;
  const processKp = num('corners.processKpPercent', OPTION_RULES.processKpPercent);
  if (processKp !== undefined && processKp > 0) corners.processKpTolerance = processKp / 100;
  const processVto = num('corners.processVtoShiftVolts', OPTION_RULES.processVtoShiftV);
  if (processVto !== undefined && processVto > 0) corners.processVtoShift = processVto;
  const crossed = crossCheckCorners(corners, { cold: 'qpoint.corners.coldCelsius', hot: 'qpoint.corners.hotCelsius' });
  if (crossed.length) {
    for (const c of crossed) problems.push(`${c} Both corner temperatures are ignored.`);
    delete corners.coldC;
    delete corners.hotC;
  }
  if (Object.keys(corners).length) options.corners = corners;

  const variation: NonNullable<AnalysisOptions['variation']> = {};
  const spread = get('variation.enabled');
  if (typeof spread === 'boolean') variation.enabled = spread;
  else if (spread !== undefined && spread !== null) problems.push(`Setting qpoint.variation.enabled = ${JSON.stringify(spread)} is ignored: it must be true or false.`);
  const rtol = num('variation.resistorTolerancePercent', OPTION_RULES.resistorTolerancePercent);
  if (rtol !== undefined) variation.resistorTolerance = rtol / 100;
  const yieldPct = num('variation.yieldTargetPercent', OPTION_RULES.yieldTargetPercent);
  if (yieldPct !== undefined) variation.yieldTarget = yieldPct / 100;
  if (Object.keys(variation).length) options.variation = variation;

  const margin = num('headroomMarginVolts', OPTION_RULES.headroomMarginV);
  if (margin !== undefined) options.headroomMarginV = margin;

  const powerLimits: NonNullable<AnalysisOptions['powerLimits']> = {};
  const resistorW = num('powerLimit.resistorWatts', OPTION_RULES.powerLimitW);
  if (resistorW !== undefined) powerLimits.resistorW = resistorW;
  const deviceW = num('powerLimit.deviceWatts', OPTION_RULES.powerLimitW);
  if (deviceW !== undefined) powerLimits.deviceW = deviceW;
  if (Object.keys(powerLimits).length) options.powerLimits = powerLimits;

  const series = get('resistorSeries');
  if (typeof series === 'string' && (SERIES as string[]).includes(series.toUpperCase())) options.resistorSeries = series.toUpperCase() as ResistorSeries;
  else if (series !== undefined && series !== null) problems.push(`Setting qpoint.resistorSeries = ${JSON.stringify(series)} is ignored: it must be one of ${SERIES.join(', ')}.`);

  const sev = get('findingSeverity');
  if (isRecord(sev)) {
    const severities: Record<string, Severity | 'off'> = nameTable();
    for (const [code, level] of Object.entries(sev)) {
      if (typeof level === 'string' && (SEVERITIES as string[]).includes(level)) severities[code] = level as Severity | 'off';
      else problems.push(`Setting qpoint.findingSeverity["${code}"] = ${JSON.stringify(level)} is ignored: it must be one of ${SEVERITIES.join(', ')}.`);
    }
    if (Object.keys(severities).length) options.severities = severities;
  } else if (sev !== undefined && sev !== null) problems.push('Setting qpoint.findingSeverity is ignored: it must be an object of finding code → severity.');

  const detail = get('inlayHints.detail');
  let inlayDetail: InlayDetail = DEFAULT_SETTINGS.inlayDetail;
  if (typeof detail === 'string' && (DETAILS as string[]).includes(detail)) inlayDetail = detail as InlayDetail;
  else if (detail !== undefined && detail !== null) problems.push(`Setting qpoint.inlayHints.detail = ${JSON.stringify(detail)} is ignored: it must be one of ${DETAILS.join(', ')}.`);

  const placement = get('inlayHints.placement');
  let inlayPlacement: InlayPlacement = DEFAULT_SETTINGS.inlayPlacement;
  if (typeof placement === 'string' && (PLACEMENTS as string[]).includes(placement)) inlayPlacement = placement as InlayPlacement;
  else if (placement !== undefined && placement !== null) problems.push(`Setting qpoint.inlayHints.placement = ${JSON.stringify(placement)} is ignored: it must be one of ${PLACEMENTS.join(', ')}.`);

  const delay = num('analysisDelayMs', { ok: (v) => v >= 0 && v <= 60000, rule: 'a number of milliseconds from 0 to 60000' });

  const anywhere = get('includes.readOutsideWorkspace');
  if (anywhere !== undefined && anywhere !== null && typeof anywhere !== 'boolean') {
    problems.push(`Setting qpoint.includes.readOutsideWorkspace = ${JSON.stringify(anywhere)} is ignored: it must be true or false.`);
  }

  const folders = get('includes.searchFolders');
  const includeSearchFolders: string[] = [];
  if (Array.isArray(folders)) {
    for (const f of folders) {
      if (typeof f === 'string' && f.trim() !== '') includeSearchFolders.push(f.trim());
      else problems.push(`An entry ${JSON.stringify(f)} of qpoint.includes.searchFolders is ignored: each entry must be a folder path.`);
    }
  } else if (folders !== undefined && folders !== null) {
    problems.push(`Setting qpoint.includes.searchFolders = ${JSON.stringify(folders)} is ignored: it must be a list of folder paths.`);
  }

  return {
    settings: { options, inlayDetail, inlayPlacement, analysisDelayMs: delay ?? DEFAULT_SETTINGS.analysisDelayMs, includesAnywhere: anywhere === true, includeSearchFolders },
    problems,
  };
}

/**
 * The one shape settings reach the server in, from every source: the `qpoint` section, nested
 * (`{ corners: { enabled: false } }`) or with dotted keys (`{ "corners.enabled": false }`).
 * - `initializationOptions.qpoint`: the starting values;
 * - the answer to `workspace/configuration` for section `qpoint` (pulled when the client can answer);
 * - `workspace/didChangeConfiguration` params `settings.qpoint` (read when the client cannot be asked).
 * The client's section (pulled or pushed) is laid over the starting values key by key; a client
 * that has no `qpoint` section (answers null, or pushes no `qpoint` key) leaves the starting values alone.
 */
export function layerSections(base: unknown, over: unknown): unknown {
  if (!isRecord(over)) return base === undefined ? over : base;
  if (!isRecord(base)) return over;
  return mergeNested(nested(base), nested(over));
}

/** Dotted keys (`corners.enabled`) spread into nested objects, so two sections can be merged key by key. */
function nested(section: Record<string, unknown>): Record<string, unknown> {
  const out: Record<string, unknown> = nameTable();
  for (const [key, value] of Object.entries(section)) {
    const parts = key.startsWith('findingSeverity.') ? ['findingSeverity', key.slice('findingSeverity.'.length)] : key.split('.');
    let cur = out;
    for (const part of parts.slice(0, -1)) {
      if (!isRecord(cur[part])) cur[part] = nameTable();
      cur = cur[part] as Record<string, unknown>;
    }
    const last = parts[parts.length - 1]!;
    cur[last] = isRecord(value) && isRecord(cur[last]) ? mergeNested(cur[last] as Record<string, unknown>, value) : value;
  }
  return out;
}

function mergeNested(a: Record<string, unknown>, b: Record<string, unknown>): Record<string, unknown> {
  const out: Record<string, unknown> = nameTable();
  for (const [k, v] of Object.entries(a)) out[k] = v;
  for (const [k, v] of Object.entries(b)) out[k] = isRecord(v) && isRecord(out[k]) ? mergeNested(out[k] as Record<string, unknown>, v) : v;
  return out;
}

/** The settings section an initialize request carries (`initializationOptions.qpoint`), and a sentence for the log when it is sent in an unread place. */
export function sectionOfInitializationOptions(init: unknown): { section: unknown; problems: string[] } {
  if (!isRecord(init)) return { section: undefined, problems: [] };
  const problems: string[] = [];
  if (init['settings'] !== undefined && init['qpoint'] === undefined) {
    problems.push('initializationOptions.settings is not read; send the qpoint settings as initializationOptions.qpoint (see docs/PROTOCOL.md).');
  }
  return { section: init['qpoint'], problems };
}

function isRecord(v: unknown): v is Record<string, unknown> {
  return typeof v === 'object' && v !== null && !Array.isArray(v);
}
