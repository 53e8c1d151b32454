// The facade's data types: what a caller passes in and what one analysis returns.

import type { Circuit } from './circuit';
import type { ParsedDocument } from './syntax/ast';
import type { OperatingPoint } from './solve/types';
import type { Structure } from './structures/types';
import type { VariationResult } from './variation/types';
import type { Finding, Location, Severity, Span } from './types';

/** IEC 60063 series a resistor fix may pick from. */
export type ResistorSeries = 'E12' | 'E24' | 'E48' | 'E96' | 'E192';

/** Which corners to re-solve every structure at. */
export interface CornerOptions {
  enabled: boolean;
  /** Relative supply tolerance applied to each rail source, e.g. 0.05 for ±5 %. */
  supplyTolerance: number;
  /** Cold and hot temperature, °C. */
  coldC: number;
  hotC: number;
  /** Beta multipliers for the low and high corner. */
  betaLow: number;
  betaHigh: number;
  /**
   * MOS process corners (off at 0): every MOSFET's KP moved down (slow) and up (fast) by this
   * relative amount, together with `processVtoShift`.
   */
  processKpTolerance?: number;
  /** MOS process corners: the threshold magnitude raised (slow) and lowered (fast) by this many volts (off at 0). */
  processVtoShift?: number;
}

/** The spread analysis of docs/VARIATION.md. */
export interface VariationOptions {
  enabled: boolean;
  /** Resistor tolerance (relative) for a card without `; tol`; absent: the chosen series' tolerance. */
  resistorTolerance?: number;
  /** Predicted yield (0…1) below which a target gets `target-yield-low`: 0.997 (±3σ, common practice). */
  yieldTarget: number;
}

export const DEFAULT_VARIATION: VariationOptions = { enabled: true, yieldTarget: 0.997 };

/** Per-call analysis settings. Every field is optional; `resolveOptions` fills the defaults. */
export interface AnalysisOptions {
  /** Analysis temperature in °C; overrides the netlist's `.temp` when set. */
  temperatureC?: number;
  corners?: Partial<CornerOptions>;
  /** Minimum acceptable headroom above the edge of the active region, volts. */
  headroomMarginV?: number;
  resistorSeries?: ResistorSeries;
  /** Finding code -> severity to use instead of the default, or 'off' to drop it. */
  severities?: Record<string, Severity | 'off'>;
  /** Set false to stop after elaboration (no operating point, no structures). */
  solve?: boolean;
  /** Dissipation limits used when a part gives no `RATEDPOWER` of its own. */
  powerLimits?: Partial<PowerLimits>;
  /**
   * Folders searched, in order, for an included file not found beside the including file
   * (ids as the host's Workspace names files: paths in the CLI, file: URIs in the server).
   */
  includeFolders?: string[];
  variation?: Partial<VariationOptions>;
  /** Most elements flattening may produce before `circuit-too-large` (default 500,000; the CLI allows 2,000,000). */
  maxElements?: number;
  /**
   * Set false to leave the hand analysis's worked steps out (`estimate.steps` stays empty), for a host
   * that shows none: formatting them is a good part of the hand analysis of a large array.
   */
  handAnalysisSteps?: boolean;
}

/** Default dissipation limits, watts, for parts that do not give their own. */
export interface PowerLimits {
  /** An ordinary resistor: 0.25 W (common practice: the usual through-hole and 1206 rating). */
  resistorW: number;
  /** A small-signal transistor or diode: 0.5 W (common practice: TO-92 and glass-package parts are rated 0.5–0.625 W at 25 °C). */
  deviceW: number;
}

export const DEFAULT_POWER_LIMITS: PowerLimits = { resistorW: 0.25, deviceW: 0.5 };

/** AnalysisOptions with every default filled in. */
export interface ResolvedOptions {
  temperatureC?: number;
  corners: CornerOptions;
  headroomMarginV: number;
  resistorSeries: ResistorSeries;
  severities: Record<string, Severity | 'off'>;
  solve: boolean;
  powerLimits: PowerLimits;
  variation: VariationOptions;
  handAnalysisSteps: boolean;
}

export const DEFAULT_CORNERS: CornerOptions = {
  enabled: true,
  supplyTolerance: 0.05,
  coldC: -40,
  hotC: 125,
  betaLow: 0.5,
  betaHigh: 2,
};

export function resolveOptions(options: AnalysisOptions = {}): ResolvedOptions {
  return {
    temperatureC: options.temperatureC,
    corners: { ...DEFAULT_CORNERS, ...(options.corners ?? {}) },
    headroomMarginV: options.headroomMarginV ?? 0.3,
    resistorSeries: options.resistorSeries ?? 'E24',
    severities: options.severities ?? {},
    solve: options.solve ?? true,
    powerLimits: { ...DEFAULT_POWER_LIMITS, ...definedOnly(options.powerLimits) },
    variation: resolveVariation(options.variation),
    handAnalysisSteps: options.handAnalysisSteps ?? true,
  };
}

/** The spread settings with defaults; a value out of range keeps the default. */
function resolveVariation(v: Partial<VariationOptions> | undefined): VariationOptions {
  const rt = v?.resistorTolerance;
  const yt = v?.yieldTarget;
  return {
    enabled: v?.enabled ?? DEFAULT_VARIATION.enabled,
    yieldTarget: typeof yt === 'number' && yt > 0 && yt < 1 ? yt : DEFAULT_VARIATION.yieldTarget,
    ...(typeof rt === 'number' && rt >= 0 && rt < 1 ? { resistorTolerance: rt } : {}),
  };
}

/** The entries of a partial record whose values are positive finite numbers (a bad setting keeps the default). */
function definedOnly<T extends object>(o: T | undefined): Partial<T> {
  const out: Partial<T> = {};
  if (!o) return out;
  for (const [k, v] of Object.entries(o)) if (typeof v === 'number' && Number.isFinite(v) && v > 0) (out as Record<string, number>)[k] = v;
  return out;
}

/** A named definition the editor can jump to or describe. */
export interface SymbolDefinition {
  /** As written. */
  name: string;
  uri: string;
  /** The whole defining card (or assignment, for a parameter). */
  span: Span;
  /** Just the name token. */
  nameSpan: Span;
}

export interface ParamSymbol extends SymbolDefinition {
  /** Evaluated value, when evaluation succeeded. */
  value?: number;
  /** The expression text as written. */
  expression: string;
  /** '' at top level, else the lower-case subcircuit name it is declared in (`.subckt` defaults included). */
  scope: string;
}

export interface ModelSymbol extends SymbolDefinition {
  kind: string;
  /** Lower-case key into Circuit.models when the model was accepted. */
  key?: string;
}

export interface SubcktSymbol extends SymbolDefinition {
  ports: string[];
  /** Parameter defaults, evaluated where possible. */
  params: Record<string, number | undefined>;
}

export interface IncludeSymbol {
  uri: string;
  /** The path field of the .include/.lib card. */
  span: Span;
  /** Resolved target id: the file read, or where it was looked for first when `found` is false. */
  target: string;
  found: boolean;
  /** How the file was found when not at the path as written (letter case, a search folder, the tail of an absolute path). */
  how?: 'letter-case' | 'search-folder' | 'path-tail';
}

/** Everything the editor features need to resolve names. */
export interface SymbolTable {
  params: ParamSymbol[];
  models: ModelSymbol[];
  subckts: SubcktSymbol[];
  includes: IncludeSymbol[];
}

/** The result of one analysis of one top-level netlist. Plain data: JSON-serialisable apart from typed arrays. */
export interface Analysis {
  uri: string;
  version?: number;
  /** Every document read: the root and each included file, by id. */
  documents: Record<string, ParsedDocument>;
  circuit?: Circuit;
  symbols: SymbolTable;
  /** The `.if` branches no instance takes: text that does not exist for the analysis (a client may grey it). */
  inactive?: Location[];
  /** Every finding, severities already mapped through the options, sorted by document and offset. */
  findings: Finding[];
  operatingPoint?: OperatingPoint;
  structures: Structure[];
  /** Spread, drift and supply sensitivity of every output (docs/VARIATION.md), when the nominal point converged. */
  variation?: VariationResult;
  options: ResolvedOptions;
  /** Milliseconds spent per stage. */
  timings: Record<string, number>;
}
