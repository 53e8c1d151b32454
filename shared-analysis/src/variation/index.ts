// Variation of every output: adjoint sensitivities, worst case and RSS spread with ranked contributors, drift, supply sensitivity and yield against targets (docs/VARIATION.md).

import { float64Column, int32Column, uint8Column } from '../columns';
import type { Circuit } from '../circuit';
import type { DcSolveResult, DcSolver } from '../solve/dc';
import type { Structure } from '../structures/types';
import type { ParsedDocument } from '../syntax/ast';
import type { Target } from '../checks/targets';
import { targetElements, targetIndexOf } from '../checks/targets';
import { nameTable } from '../names';
import { registerLazyTable } from '../output-guard';
import { topologyOf } from '../structures/topology';
import { elementCurrent, structureOutputs, type OutputSpec } from './outputs';
import { sensitivities, type OutputFunctional, type SensitivityResult, type VariedParameter } from './sensitivity';
import { ParameterList, SOURCE_ORIGINS, madeFromStructures, patchedSources, readCardTolerances, sourceListWithFacts, structureDeviceSlots, structureDevices, type SourceFacts, type SourceList, type SourceSettings, type StructureDevices, type ToleranceSource } from './sources';
import type { Contribution, OutputVariation, Sensitivity, SourceSummary, VariationResult } from './types';
import { rankOf } from './rank';
import { keptOutputs, type SpreadRecord, type SpreadReuse } from './reuse';

declare const performance: { now(): number };

/** Normalised sensitivities kept per output (the largest). */
const SHOWN_SENSITIVITIES = 10;

export type { OutputVariation, VariationResult } from './types';

/** Standard normal cumulative distribution Φ(z), from erfc by the rational Chebyshev approximation of W. J. Cody (Math. Comp. 23, 1969) as given in Numerical Recipes §6.2 (fractional error below 1.2e-7). */
export function normalCdf(z: number): number {
  if (z === Infinity) return 1;
  if (z === -Infinity) return 0;
  const x = -z / Math.SQRT2;
  const t = 1 / (1 + 0.5 * Math.abs(x));
  const y =
    t *
    Math.exp(
      -x * x -
        1.26551223 +
        t * (1.00002368 + t * (0.37409196 + t * (0.09678418 + t * (-0.18628806 + t * (0.27886807 + t * (-1.13520398 + t * (1.48851587 + t * (-0.82215223 + t * 0.17087277)))))))),
    );
  const erfc = x >= 0 ? y : 2 - y;
  return 0.5 * erfc;
}

/** Fraction of a normal population N(mean, σ) inside [lo, hi]. */
export function fractionWithin(mean: number, sigma: number, lo: number, hi: number): number {
  if (!(sigma > 0)) return mean >= lo && mean <= hi ? 1 : 0;
  return Math.max(0, Math.min(1, normalCdf((hi - mean) / sigma) - normalCdf((lo - mean) / sigma)));
}

export interface VariationContext {
  circuit: Circuit;
  structures: Structure[];
  documents: Record<string, ParsedDocument>;
  solver: DcSolver;
  nominal: DcSolveResult;
  targets: Target[];
  settings: SourceSettings;
  /** Target tolerance when an `expect` gives none. */
  defaultTargetTolerance: number;
}

/** The tolerance sources an output depends on and its derivatives with respect to them. */
export interface SourceRow {
  index: ArrayLike<number>;
  value: ArrayLike<number>;
}

/**
 * Every output's source row in compressed form: output o depends on sources
 * `index[start[o] … start[o + 1] − 1]` with d(output)/d(source) in `value` at the same places.
 */
export interface SourceRows {
  start: Int32Array;
  index: Int32Array;
  value: Float64Array;
}

/** Output o's row of `rows` (views, no copy). */
export function sourceRowOf(rows: SourceRows, o: number): SourceRow {
  const from = rows.start[o];
  const to = rows.start[o + 1];
  return { index: rows.index.subarray(from, to), value: rows.value.subarray(from, to) };
}

/** Everything the yield finding and Monte Carlo need beyond the plain result. */
export interface VariationDetail {
  result: VariationResult;
  specs: OutputSpec[];
  sources: ToleranceSource[];
  /** Per output: the tolerance sources it depends on (indices into `sources`) and d(output)/d(source). */
  bySource: SourceRows;
  /** Time of the derivatives alone, ms: the Jacobian factored at the solution, ∂F/∂p and every transposed solve (the benchmark's figure). */
  sensitivityMs: number;
  /** Per output, 1 when every figure of its record is finite (what a later analysis may keep: see `SpreadRecord`). */
  finite: Uint8Array;
  /** Per output, 1 when its record is the last analysis's, kept (see `keptOutputs`); undefined when none was. */
  kept?: Uint8Array;
  /** Device instances whose partial derivatives were computed: every instance after a cold analysis, those the derived outputs reach after an edit (`SpreadReuse.scope`). */
  devicesDerived: number;
  /** `sources` with what the next analysis needs to patch them; `changed` set when they were patched from the last analysis's. */
  sourceList: SourceList;
  varied: VariedParameters;
  /** How many of `specs` are the structures' outputs (`structureOutputs`); the target elements' follow. */
  structureSpecs: number;
}

/**
 * The spread of every structure output and target element at the nominal solution; undefined when it did not converge.
 * With `reuse` (after a value edit), an output the edit cannot reach keeps the last analysis's record (`keptOutputs`),
 * and only the others are derived: their transposed solves, rows and records.
 */
export function analyseVariation(ctx: VariationContext, reuse?: SpreadReuse): VariationDetail | undefined {
  const t0 = performance.now();
  const { circuit, structures, solver, nominal } = ctx;
  if (!nominal.op.converged) return undefined;
  // The structures' devices as element indices, looked up once for the outputs and the mismatch sources when either is made.
  const devices = new DevicesOnce(circuit, structures);
  const specs = outputsOfStructures(circuit, structures, reuse?.last, devices);
  const structureSpecs = specs.length;
  const targetOf = ctx.targets.length > 0 ? addTargetOutputs(circuit, structures, ctx.targets, ctx.defaultTargetTolerance, specs) : new Map<string, TargetWindow>();
  if (specs.length === 0) return undefined;
  const { list: sourceList, facts } = sourcesOf(ctx, reuse, devices);
  const sources = sourceList.sources;
  const kept = reuse ? keptOutputs(reuse, specs, sourceList, (spec) => targetWindowOf(targetOf, spec)) : undefined;
  const fresh = freshOutputs(specs.length, kept);
  const varied = (sourceList.changed && reuse && followedParameters(reuse.last.varied, circuit, reuse.changed)) || variedParameters(circuit, sources, facts);
  const derived = fresh.length > 0 ? derivedOutputs(ctx, specs, fresh, sources, varied, targetOf, kept && reuse ? reuse.scope : undefined) : nothingDerived(specs.length);
  if (!derived) return undefined;
  const outputs = derived.outputs;
  let bySource = derived.bySource;
  let finite = derived.finite;
  if (kept && reuse) {
    const last = reuse.last;
    const merged = mergedOutputs(kept, derived, last);
    bySource = merged.bySource;
    finite = merged.finite;
    for (let o = 0; o < outputs.length; o++) if (kept[o]) outputs[o] = last.outputs[o];
  }
  // Field by field, in the order the JSON shows them.
  const result = { outputs } as VariationResult;
  attachSources(result, sources, reuse && sourceList.changed ? { columns: reuse.last.sourceColumns, changed: sourceList.changed } : undefined, facts);
  result.stats = { adjointSolves: derived.adjointSolves, parameters: varied.params.list.length, ms: performance.now() - t0 };
  return { result, specs, sources, bySource, sensitivityMs: derived.sensitivityMs, finite, ...(kept ? { kept } : {}), devicesDerived: derived.devicesDerived, sourceList, varied, structureSpecs };
}

/**
 * The structures' outputs: after a value edit the last analysis's, when the structures are those it was made of (the
 * same ids and device lists: a value edit does not recognise the structures again, so every name an output reads is
 * kept); else made (`structureOutputs`).
 */
function outputsOfStructures(circuit: Circuit, structures: readonly Structure[], last: SpreadRecord | undefined, devices: DevicesOnce): OutputSpec[] {
  if (last && madeFromStructures(last.sourceList, structures)) return last.specs.slice(0, last.structureSpecs);
  return structureOutputs(circuit, structures, devices.toFill());
}

/** The structures' devices as element indices: filled by `structureOutputs` as it looks them up, else made on first ask (`structureDevices`). */
class DevicesOnce {
  private made: StructureDevices | undefined = undefined;

  constructor(
    private readonly circuit: Circuit,
    private readonly structures: readonly Structure[],
  ) {}

  /** The lists for `structureOutputs` to fill (read by `get` from then on). */
  toFill(): StructureDevices {
    return (this.made = structureDeviceSlots(this.structures));
  }

  get(): StructureDevices {
    return (this.made ??= structureDevices(this.circuit, this.structures));
  }
}

/**
 * The tolerance sources: after a value edit patched from the last analysis's (`patchedSources`: the edited elements' and
 * those whose written tolerance changed made again), with the σ and bound columns followed; else made afresh, with
 * their facts in columns (when every σ is normal), whose σ and bound columns are the ranking's.
 */
function sourcesOf(ctx: VariationContext, reuse: SpreadReuse | undefined, devices: DevicesOnce): { list: SourceList; facts: SourceFacts | undefined } {
  const tolerances = readCardTolerances(ctx.documents);
  const temperatureC = ctx.nominal.op.temperatureC;
  const last = reuse?.last.sourceList;
  const patched = last ? patchedSources(last, ctx.circuit, ctx.structures, tolerances, ctx.settings, temperatureC, reuse!.changed) : undefined;
  if (!patched) {
    const made = sourceListWithFacts(ctx.circuit, ctx.structures, tolerances, ctx.settings, temperatureC, devices.get());
    if (made.facts) sourceFigures.set(made.list.sources, { sigma: made.facts.sigma, bound: made.facts.bound, aloneName: new Array(made.list.sources.length).fill(undefined) });
    return made;
  }
  followSourceFigures(last!.sources, patched);
  return { list: patched, facts: undefined };
}

/**
 * What the finiteness walk after a spread analysis needs to look at: every output but the kept ones, whose records were
 * walked when they were made and are finite (`keptOutputs` keeps no other), named as paths under `variation`, and the
 * result's other parts but a table not made yet (`parts`); and the structures whose spread holds such an output.
 */
export function unkeptSpread(detail: VariationDetail): { parts: Record<string, unknown>; structures: Set<string> } {
  const parts = nameTable<unknown>();
  const structures = new Set<string>();
  const { result, kept, specs } = detail;
  for (let o = 0; o < specs.length; o++) if (!kept?.[o] && specs[o].structure !== undefined) structures.add(specs[o].structure!);
  for (let o = 0; o < result.outputs.length; o++) if (!kept?.[o]) parts[`variation.outputs[${o}]`] = result.outputs[o];
  for (const key of Object.keys(result)) {
    if (key !== 'outputs' && !Object.getOwnPropertyDescriptor(result, key)?.get) parts[`variation.${key}`] = (result as unknown as Record<string, unknown>)[key];
  }
  return { parts, structures };
}

/** What a later spread analysis may keep of this one (see `keptSpread`). */
export function spreadRecordOf(detail: VariationDetail): SpreadRecord {
  return { specs: detail.specs, structureSpecs: detail.structureSpecs, sourceList: detail.sourceList, sourceColumns: sourceColumnsOf(detail.result), varied: detail.varied, outputs: detail.result.outputs, rows: detail.bySource, finite: detail.finite };
}

/** The outputs whose records are derived now: those not kept (all of them without `kept`), ascending. */
function freshOutputs(count: number, kept: Uint8Array | undefined): Int32Array {
  let n = 0;
  for (let o = 0; o < count; o++) if (!kept?.[o]) n++;
  const out = int32Column(n);
  for (let o = 0, at = 0; o < count; o++) if (!kept?.[o]) out[at++] = o;
  return out;
}

/** The derived part of an analysis: records at the places of the fresh outputs (the others left empty), and the fresh outputs' rows in their order. */
interface DerivedOutputs {
  outputs: OutputVariation[];
  bySource: SourceRows;
  finite: Uint8Array;
  adjointSolves: number;
  devicesDerived: number;
  sensitivityMs: number;
}

/** What `derivedOutputs` gives when every one of `count` outputs is kept: no record, no row, no solve. */
function nothingDerived(count: number): DerivedOutputs {
  return { outputs: new Array(count), bySource: { start: new Int32Array(1), index: new Int32Array(0), value: new Float64Array(0) }, finite: new Uint8Array(0), adjointSolves: 0, devicesDerived: 0, sensitivityMs: 0 };
}

/**
 * The records of the outputs `fresh` (indices into `specs`), from the Jacobian at the solution; undefined when it cannot
 * be factored. With `scopeOf`, the device derivatives and the columns ∂F/∂p are made for the elements it gives for the
 * fresh outputs (see `sensitivities`).
 */
function derivedOutputs(
  ctx: VariationContext,
  specs: readonly OutputSpec[],
  fresh: Int32Array,
  sources: readonly ToleranceSource[],
  varied: VariedParameters,
  targetOf: Map<string, TargetWindow>,
  scopeOf: SpreadReuse['scope'] | undefined,
): DerivedOutputs | undefined {
  const tLinearise = performance.now();
  const lin = ctx.solver.linearise(ctx.nominal);
  if (!lin) return undefined;
  const freshSpecs: OutputSpec[] = new Array(fresh.length);
  for (let r = 0; r < fresh.length; r++) freshSpecs[r] = specs[fresh[r]];
  const functionals: OutputFunctional[] = new Array(fresh.length);
  for (let r = 0; r < fresh.length; r++) functionals[r] = freshSpecs[r].functional;
  const sens = sensitivities(lin, functionals, varied.params.list, scopeOf?.(freshSpecs));
  // The derivatives proper: the Jacobian factored at the solution, ∂F/∂p and one transposed solve per output.
  const sensitivityMs = performance.now() - tLinearise;
  const count = varied.params.list.length;
  const shown = shownForms(count, sources, varied.sourceParam, varied.resistors, varied.supplies);
  const bySource = sourceRowsOf(sens, varied.sourceParam, count, sources.length);
  const lists = new OutputLists(new RankedContributors(bySource), new TopSensitivities(SHOWN_SENSITIVITIES, fresh.length, shown, sens));
  const records = new OutputRecords(sens, sources, bySource, varied, lists, targetOf);
  const outputs: OutputVariation[] = new Array(specs.length);
  const finite = uint8Column(fresh.length);
  for (let r = 0; r < fresh.length; r++) {
    outputs[fresh[r]] = records.of(specs[fresh[r]], r);
    finite[r] = records.finite(outputs[fresh[r]], r) ? 1 : 0;
  }
  return { outputs, bySource, finite, adjointSolves: sens.adjointSolves, devicesDerived: sens.devicesDerived, sensitivityMs };
}

/** Every output's row and finite flag: the last analysis's for a kept output, the derived one's for a fresh one (in output order). */
function mergedOutputs(kept: Uint8Array, derived: DerivedOutputs, last: SpreadRecord): { bySource: SourceRows; finite: Uint8Array } {
  const count = kept.length;
  const rows = derived.bySource;
  const lastRows = last.rows;
  const start = int32Column(count + 1);
  for (let o = 0, r = 0; o < count; o++) {
    const length = kept[o] ? lastRows.start[o + 1] - lastRows.start[o] : rows.start[r + 1] - rows.start[r++];
    start[o + 1] = start[o] + length;
  }
  const bySource: SourceRows = { start, index: int32Column(start[count]), value: float64Column(start[count]) };
  const finite = uint8Column(count);
  for (let o = 0, r = 0; o < count; o++) {
    if (kept[o]) {
      copyRow(lastRows, o, bySource, start[o]);
      finite[o] = last.finite[o];
    } else {
      copyRow(rows, r, bySource, start[o]);
      finite[o] = derived.finite[r++];
    }
  }
  return { bySource, finite };
}

/** Row o of `from` into `to` at `at` (a plain loop: a row holds a few entries, and two views per row made 20,000 objects an edit). */
function copyRow(from: SourceRows, o: number, to: SourceRows, at: number): void {
  const a = from.start[o];
  const b = from.start[o + 1];
  for (let q = a; q < b; q++) {
    to.index[at + q - a] = from.index[q];
    to.value[at + q - a] = from.value[q];
  }
}

/** An output's target window, when it reads an element with a target. */
function targetWindowOf(targetOf: Map<string, TargetWindow>, spec: OutputSpec): TargetWindow | undefined {
  return spec.element && (spec.role === 'element' || spec.role === 'iout') ? targetOf.get(spec.element) : undefined;
}

/** The varied parameters: every tolerance source's, the temperature, and every voltage source (for %/V) and resistor (for % per %). */
export interface VariedParameters {
  params: ParameterList;
  /** Per tolerance source: its parameter. */
  sourceParam: Int32Array;
  temperature: number;
  supplies: { name: string; j: number }[];
  resistors: VariedResistor[];
}

/** A resistor among the varied parameters: its element, name, parameter and value. */
interface VariedResistor {
  element: number;
  name: string;
  j: number;
  ohms: number;
}

function variedParameters(circuit: Circuit, sources: readonly ToleranceSource[], facts?: SourceFacts): VariedParameters {
  // The facts of a list made afresh hold the sources' parameters already, listed as below.
  const params = facts ? facts.params : new ParameterList(circuit.elements.length);
  const sourceParam = facts ? facts.sourceParam : sourceParameters(params, sources);
  const temperature = params.add({ kind: 'temperature' });
  const supplies: { name: string; j: number }[] = [];
  const resistors: VariedResistor[] = [];
  const elements = circuit.elements;
  for (let i = 0; i < elements.length; i++) {
    const el = elements[i];
    if (el.kind === 'V' && Number.isFinite(el.dc) && el.dc !== 0) supplies.push({ name: el.name, j: params.ofElement('source', i) });
    if (isVariedResistor(el)) resistors.push({ element: i, name: el.name, j: params.ofElement('resistance', i), ohms: el.resistance });
  }
  return { params, sourceParam, temperature, supplies, resistors };
}

function isVariedResistor(el: Circuit['elements'][number]): el is Extract<Circuit['elements'][number], { kind: 'R' }> {
  return el.kind === 'R' && Number.isFinite(el.resistance) && el.resistance > 0;
}

/**
 * The varied parameters of a circuit that differs from the one `last` was made for only in the resistances of the
 * elements `changed`, with a source list patched from that one's (the same parameters in the same order): `last` with
 * those resistors' values read again. Undefined when one of them is no longer varied, or now is.
 */
function followedParameters(last: VariedParameters, circuit: Circuit, changed: Int32Array): VariedParameters | undefined {
  if (changed.length === 0) return last;
  const resistors = last.resistors.slice();
  for (let q = 0; q < changed.length; q++) {
    const e = changed[q];
    const k = resistors.findIndex((r) => r.element === e);
    const el = circuit.elements[e];
    if (!isVariedResistor(el) || k < 0) return undefined;
    resistors[k] = { ...resistors[k], ohms: el.resistance };
  }
  return { ...last, resistors };
}

/** Each tolerance source's parameter, listed. */
function sourceParameters(params: ParameterList, sources: readonly ToleranceSource[]): Int32Array {
  const out = int32Column(sources.length);
  for (let k = 0; k < sources.length; k++) out[k] = params.add(sources[k].parameter);
  return out;
}

/** Each source's kind as a code: its position in this list (the origin's: in `SOURCE_ORIGINS`). */
const SOURCE_KINDS: readonly SourceSummary['kind'][] = ['resistor', 'source', 'mismatch', 'part spread'];

/** A source's kind as a code: its position in `SOURCE_KINDS`. */
function kindCode(s: ToleranceSource): number {
  return s.parameter.kind === 'resistance' ? 0 : s.parameter.kind === 'source' ? 1 : s.partSpread ? 3 : 2;
}

/**
 * The sources as the report lists them, in columns (name, kind, figure and origin of each). The
 * result's `sources` are made from them when first read, and the JSON writes each entry from the
 * columns (`sourceSummaries`): 30,001 records at 20k that the analysis no longer makes, the finiteness
 * walk no longer enters and the heap no longer keeps until the document is written.
 */
export class SourceColumns {
  readonly count: number;
  /** Each source's name; undefined when read from the sources themselves (`list`: made from the list's facts). */
  private readonly name: string[] | undefined;
  private readonly list: readonly ToleranceSource[];
  private readonly kind: Uint8Array;
  private readonly figure: Float64Array;
  private readonly origin: Uint8Array;

  /** With `facts` (those of `sources`), their columns are taken as they are, and each name is read from its source when asked. */
  constructor(sources: readonly ToleranceSource[], facts?: SourceFacts) {
    this.count = sources.length;
    this.list = sources;
    if (facts) {
      this.name = undefined;
      this.kind = facts.kind;
      this.figure = facts.figure;
      this.origin = facts.origin;
      return;
    }
    const count = sources.length;
    this.name = new Array<string>(count);
    this.kind = uint8Column(count);
    this.figure = float64Column(count);
    this.origin = uint8Column(count);
    for (let k = 0; k < count; k++) {
      const s = sources[k];
      this.name[k] = s.label;
      this.kind[k] = kindCode(s);
      this.figure[k] = s.figure;
      this.origin[k] = SOURCE_ORIGINS.indexOf(s.from);
    }
  }

  /** Whether these columns show `sources` (the list they were made from, patched where `changed` is 1) as they stand. */
  shows(sources: readonly ToleranceSource[], changed: Uint8Array): boolean {
    if (sources.length !== this.count) return false;
    for (let k = 0; k < changed.length; k++) {
      if (!changed[k]) continue;
      const s = sources[k];
      if (s.label !== this.nameOf(k) || kindCode(s) !== this.kind[k] || !Object.is(s.figure, this.figure[k]) || SOURCE_ORIGINS.indexOf(s.from) !== this.origin[k]) return false;
    }
    return true;
  }

  /** Whether every figure is finite. */
  finite(): boolean {
    for (let k = 0; k < this.figure.length; k++) if (!Number.isFinite(this.figure[k])) return false;
    return true;
  }

  /** Source k's name. */
  nameOf(k: number): string {
    return this.name === undefined ? this.list[k].label : this.name[k];
  }

  /** Source k as a record. */
  at(k: number): SourceSummary {
    return { name: this.nameOf(k), kind: SOURCE_KINDS[this.kind[k]], figure: this.figure[k], from: SOURCE_ORIGINS[this.origin[k]] };
  }

  /** Every source as a record. */
  all(): SourceSummary[] {
    const out: SourceSummary[] = new Array(this.count);
    for (let k = 0; k < out.length; k++) out[k] = this.at(k);
    return out;
  }
}

/**
 * Gives `result` its `sources`, made on first read unless a figure is not finite (then now, so the finiteness walk removes
 * it as from any record). With `from` (a source list patched from the last analysis's, whose result read its sources
 * from `from.columns`), those columns when no source the patch made again shows otherwise (a resistor's value is not
 * in its summary): the worker then tells the main thread the sources are the ones it holds without comparing them.
 */
function attachSources(result: VariationResult, sources: readonly ToleranceSource[], from: { columns: SourceColumns | undefined; changed: Uint8Array } | undefined, facts: SourceFacts | undefined): void {
  const columns = from?.columns?.shows(sources, from.changed) ? from.columns : new SourceColumns(sources, facts);
  if (!columns.finite()) {
    result.sources = columns.all();
    return;
  }
  (result as LazySources)[SOURCE_COLUMNS] = columns;
  Object.defineProperty(result, 'sources', LAZY_SOURCES);
}

/** The columns a result reads its sources from while they are not made (undefined when they are). */
export function sourceColumnsOf(result: VariationResult): SourceColumns | undefined {
  const columns = (result as Partial<LazySources>)[SOURCE_COLUMNS];
  return columns !== undefined && Object.getOwnPropertyDescriptor(result, 'sources')?.get ? columns : undefined;
}

/**
 * A result's sources for a writer: how many, and each as a record, made from the columns while the
 * list is not made (each record can be collected once written), else read from the list.
 */
export function sourceSummaries(result: VariationResult): { length: number; at: (k: number) => SourceSummary } {
  const columns = sourceColumnsOf(result);
  if (columns !== undefined) return { length: columns.count, at: (k) => columns.at(k) };
  const list = result.sources;
  return { length: list.length, at: (k) => list[k] };
}

/** Where a result with its sources not yet made finds them (a symbol key: no copy, JSON or walk sees it). */
const SOURCE_COLUMNS = Symbol('source columns');
type LazySources = VariationResult & { [SOURCE_COLUMNS]: SourceColumns };

const LAZY_SOURCES: PropertyDescriptor = {
  enumerable: true,
  configurable: true,
  get(this: LazySources): SourceSummary[] {
    const list = this[SOURCE_COLUMNS].all();
    keepValue(this, 'sources', list);
    return list;
  },
  set(this: VariationResult, value: SourceSummary[]): void {
    keepValue(this, 'sources', value);
  },
};
// Read or assigned, the list is a plain data property (`keepValue`): while the accessor is there it is the columns' list.
registerLazyTable('sources', LAZY_SOURCES);

/** Makes each output's record from its row of derivatives: value, σ, worst case, drift, %/V, contributors, sensitivities, yield. */
class OutputRecords {
  private readonly supplyOfParam: Int32Array;
  private readonly supplySlope: Float64Array;
  private readonly figures: SourceFigures;
  /** Whether both lists of output `listsFiniteOf` (the last `of` made) have only finite figures. */
  private listsFinite = true;
  private listsFiniteOf = -1;

  constructor(
    private readonly sens: SensitivityResult,
    private readonly sources: readonly ToleranceSource[],
    private readonly bySource: SourceRows,
    private readonly varied: VariedParameters,
    private readonly lists: OutputLists,
    private readonly targetOf: Map<string, TargetWindow>,
  ) {
    this.supplyOfParam = int32Column(varied.params.list.length).fill(-1);
    varied.supplies.forEach((s, k) => (this.supplyOfParam[s.j] = k));
    this.supplySlope = float64Column(varied.supplies.length);
    this.figures = sourceFiguresOf(sources);
  }

  of(spec: OutputSpec, o: number): OutputVariation {
    const { sens, supplySlope, supplyOfParam, bySource } = this;
    const y = sens.value[o];
    const scale = Math.abs(y) > 0 ? Math.abs(y) : 1;
    let tempco = 0;
    supplySlope.fill(0);
    for (let q = sens.rowStart[o]; q < sens.rowStart[o + 1]; q++) {
      const j = sens.index[q];
      if (j === this.varied.temperature) tempco = sens.derivative[q];
      if (supplyOfParam[j] >= 0) supplySlope[supplyOfParam[j]] = sens.derivative[q];
    }
    spreadOfRange(this.sources, this.figures, bySource.index, bySource.value, bySource.start[o], bySource.start[o + 1], undefined);
    const { sigma, worstCase } = KEPT;
    const supplyPercentPerVolt = supplyTable();
    const supplies = this.varied.supplies;
    for (let k = 0; k < supplies.length; k++) supplyPercentPerVolt[supplies[k].name] = (supplySlope[k] / scale) * 100;
    const target = targetWindowOf(this.targetOf, spec);
    const out = recordOf(spec, y, sigma, worstCase, (tempco / scale) * 1e6, scale, supplyPercentPerVolt);
    this.lists.contributors.add(o);
    this.lists.top.add(o, scale);
    this.listsFinite = this.lists.attach(out, o);
    this.listsFiniteOf = o;
    if (target) {
      const lo = target.current * (1 - target.tolerance);
      const hi = target.current * (1 + target.tolerance);
      out.target = { ...target, yield: fractionWithin(Math.abs(y), sigma, lo, hi) };
    }
    return out;
  }

  /** Whether every figure of `out`, made by `of` as output o, is finite (its lists read from the columns). */
  finite(out: OutputVariation, o: number): boolean {
    // Figure by figure: a list of the figures and a walk of the supply table's names were made for each of 10,000 outputs.
    if (!(Number.isFinite(out.nominal) && Number.isFinite(out.sigma) && Number.isFinite(out.sigmaRelative) && Number.isFinite(out.worstCase))) return false;
    if (!(Number.isFinite(out.worstCaseRelative) && Number.isFinite(out.tempcoPpmPerC) && (out.target === undefined || Number.isFinite(out.target.yield)))) return false;
    // The supply table holds one figure per supply name, and nothing else.
    const supplies = this.varied.supplies;
    for (let k = 0; k < supplies.length; k++) if (!Number.isFinite(out.supplyPercentPerVolt[supplies[k].name])) return false;
    // `of` found it for the output it just made (each list's figures tested once per output, not twice).
    return this.listsFiniteOf === o ? this.listsFinite : this.lists.contributors.finite(o) && this.lists.top.finite(o);
  }
}

/**
 * An output's %/V table, keyed by supply names: prototype-free as a `nameTable` is, but made from an empty literal, so
 * V8 keeps it in fast mode (`Object.create(null)` gives a hash table of about 200 bytes) and the outputs' tables, all
 * with the same names in the same order, share one layout: about 120 bytes less per output (50,000 outputs at 100k
 * elements) and quicker to make, walk and write.
 */
function supplyTable(): Record<string, number> {
  return Object.setPrototypeOf({}, null) as Record<string, number>;
}

/**
 * An output's record up to its supply table, in the order the JSON shows its fields (the optional structure and element
 * in their places). An output of a structure with its element (IREF and each output current, nearly every output of a
 * large array) is made in one literal: a record grown field by field reallocated its property store several times,
 * about 230 bytes more per output.
 */
function recordOf(spec: OutputSpec, y: number, sigma: number, worstCase: number, tempcoPpmPerC: number, scale: number, supplyPercentPerVolt: Record<string, number>): OutputVariation {
  if (spec.structure && spec.element) {
    const { label: output, key, unit, structure, element } = spec;
    return { output, key, unit, structure, element, nominal: y, sigma, sigmaRelative: sigma / scale, worstCase, worstCaseRelative: worstCase / scale, tempcoPpmPerC, supplyPercentPerVolt } as OutputVariation;
  }
  const out = { output: spec.label, key: spec.key, unit: spec.unit } as OutputVariation;
  if (spec.structure) out.structure = spec.structure;
  if (spec.element) out.element = spec.element;
  out.nominal = y;
  out.sigma = sigma;
  out.sigmaRelative = sigma / scale;
  out.worstCase = worstCase;
  out.worstCaseRelative = worstCase / scale;
  out.tempcoPpmPerC = tempcoPpmPerC;
  out.supplyPercentPerVolt = supplyPercentPerVolt;
  return out;
}

/** A target's window: its current and relative tolerance. */
interface TargetWindow {
  current: number;
  tolerance: number;
}

/** The window of every element with a target, by element name; each such element not yet among `specs` joins them as an output. */
function addTargetOutputs(circuit: Circuit, structures: Structure[], targets: readonly Target[], defaultTolerance: number, specs: OutputSpec[]): Map<string, TargetWindow> {
  const targetOf = new Map<string, TargetWindow>();
  const have = new Set(specs.map((s) => s.key));
  // A target on a structure's output device reads that output: its figures are not computed and listed twice.
  for (let k = 0; k < specs.length; k++) if (specs[k].role === 'iout' && specs[k].element) have.add(`element ${specs[k].element}`);
  const index = targetIndexOf(circuit, structures);
  const elementIndex = topologyOf(circuit).elementIndex;
  for (const t of targets) {
    for (const el of targetElements(circuit, t, index)) {
      const key = `element ${el.name}`;
      targetOf.set(el.name, { current: t.current, tolerance: t.tolerance ?? defaultTolerance });
      if (have.has(key)) continue;
      const f = elementCurrent(circuit, elementIndex.get(el.name)!);
      if (!f) continue;
      have.add(key);
      specs.push({ key, label: el.name, unit: 'A', role: 'element', element: el.name, functional: f });
    }
  }
  return targetOf;
}

/** How each parameter's derivative is shown normalised: value · factor / |y|, in `unit`, under `name` (`isShown` 0: not shown). */
export interface ShownForms {
  isShown: Uint8Array;
  factor: Float64Array;
  name: string[];
  unit: string[];
}

function shownForms(count: number, sources: readonly ToleranceSource[], sourceParam: ArrayLike<number>, resistors: readonly VariedResistor[], supplies: readonly { name: string; j: number }[]): ShownForms {
  const forms: ShownForms = { isShown: uint8Column(count), factor: float64Column(count), name: new Array<string>(count).fill(''), unit: new Array<string>(count).fill('') };
  for (const r of resistors) showForm(forms, r.j, r.name, '%/%', r.ohms);
  for (const s of supplies) showForm(forms, s.j, s.name, '%/V', 100);
  showModelForms(forms, sources, sourceParam);
  return forms;
}

function showForm(forms: ShownForms, j: number, name: string, unit: string, factor: number): void {
  forms.isShown[j] = 1;
  forms.name[j] = name;
  forms.unit[j] = unit;
  forms.factor[j] = factor;
}

/** A device parameter's form: a VBE or VTO shift per millivolt, a gain parameter per cent per per cent. */
function showModelForms(forms: ShownForms, sources: readonly ToleranceSource[], sourceParam: ArrayLike<number>): void {
  for (let k = 0; k < sources.length; k++) {
    const s = sources[k];
    if (s.parameter.kind !== 'model') continue;
    const j = sourceParam[k];
    // A VBE shift ΔV is the IS ratio e^(−ΔV/(NF·VT)): dIS/dΔV = −σ_IS/σ_V (docs/VARIATION.md); per millivolt of the device's own shift.
    if (s.aspect === 'VBE') showForm(forms, j, s.label, '%/mV', (-s.sigma / s.figure) * 1e-3 * 100);
    else if (s.parameter.param === 'VTO') showForm(forms, j, s.label, '%/mV', 1e-3 * 100);
    else showForm(forms, j, s.label, '%/%', s.nominal);
  }
}

/** Every output's derivatives with respect to the tolerance sources, picked out of its parameter row (parameter order kept). */
export function sourceRowsOf(sens: SensitivityResult, sourceParam: ArrayLike<number>, paramCount: number, sourceCount: number): SourceRows {
  // Several sources may vary one parameter (a JFET's part-to-part VTO spread and its VTO mismatch
  // within a structure): each is an independent term with the parameter's derivative, so the
  // parameter's sources are listed together (compressed, in source order) and every one gets a row entry.
  // One loop per function: a function run once with several long loops is compiled again for each loop.
  const firstOfParam = int32Column(paramCount + 1);
  countSourcesOfParams(sourceParam, sourceCount, firstOfParam);
  const sourcesOfParam = sourcesByParam(sourceParam, sourceCount, firstOfParam);
  const outputs = sens.rowStart.length - 1;
  const entries = rowEntries(sens.index, firstOfParam);
  const rows: SourceRows = { start: int32Column(outputs + 1), index: int32Column(entries), value: float64Column(entries) };
  fillSourceRows(sens, firstOfParam, sourcesOfParam, rows);
  return rows;
}

/** `firstOfParam[j]`: where parameter j's sources start in the list by parameter (a running sum of the sources per parameter). */
function countSourcesOfParams(sourceParam: ArrayLike<number>, sourceCount: number, firstOfParam: Int32Array): void {
  for (let k = 0; k < sourceCount; k++) firstOfParam[sourceParam[k] + 1]++;
  for (let j = 0; j + 1 < firstOfParam.length; j++) firstOfParam[j + 1] += firstOfParam[j];
}

/** The sources listed by parameter, in source order within each. */
function sourcesByParam(sourceParam: ArrayLike<number>, sourceCount: number, firstOfParam: Int32Array): Int32Array {
  const sourcesOfParam = int32Column(sourceCount);
  const fill = firstOfParam.slice(0, firstOfParam.length - 1);
  for (let k = 0; k < sourceCount; k++) sourcesOfParam[fill[sourceParam[k]]++] = k;
  return sourcesOfParam;
}

/** How many source entries the parameter rows `index` make. */
function rowEntries(index: Int32Array, firstOfParam: Int32Array): number {
  let entries = 0;
  for (let q = 0; q < index.length; q++) entries += firstOfParam[index[q] + 1] - firstOfParam[index[q]];
  return entries;
}

/** Each output's source row: an entry per source of each parameter in its row, with the parameter's derivative. */
function fillSourceRows(sens: SensitivityResult, firstOfParam: Int32Array, sourcesOfParam: Int32Array, rows: SourceRows): void {
  const outputs = rows.start.length - 1;
  let at = 0;
  for (let o = 0; o < outputs; o++) {
    for (let q = sens.rowStart[o]; q < sens.rowStart[o + 1]; q++) {
      const j = sens.index[q];
      for (let m = firstOfParam[j]; m < firstOfParam[j + 1]; m++) {
        rows.index[at] = sourcesOfParam[m];
        rows.value[at++] = sens.derivative[q];
      }
    }
    rows.start[o + 1] = at;
  }
}

/**
 * The two ranked lists of every output, kept in typed arrays and made into records when an output's
 * list is first read: its contributors (the default JSON writes three of up to eight) and its largest
 * sensitivities (the default JSON writes none). They were most of the spread's objects, and the
 * finiteness walk entered each one.
 */
class OutputLists {
  constructor(
    readonly contributors: RankedContributors,
    readonly top: TopSensitivities,
  ) {}

  /**
   * Gives `out` output o's lists as `contributors` and `sensitivities`, in that order: each built on
   * first read, unless one of its figures is not finite (then now, so the finiteness walk removes it
   * as from any record). Returns whether both lists' figures are all finite.
   */
  attach(out: OutputVariation, o: number): boolean {
    const contributorsLater = this.contributors.finite(o);
    const sensitivitiesLater = this.top.finite(o);
    if (contributorsLater || sensitivitiesLater) {
      const holder = out as LazyLists;
      holder[LISTS] = this;
      holder[LIST_INDEX] = o;
    }
    if (contributorsLater) Object.defineProperty(out, 'contributors', LAZY_CONTRIBUTORS);
    else out.contributors = this.contributors.madeOf(o);
    if (sensitivitiesLater) Object.defineProperty(out, 'sensitivities', LAZY_SENSITIVITIES);
    else out.sensitivities = this.top.listOf(o);
    return contributorsLater && sensitivitiesLater;
  }
}

/**
 * Every output's ranked contributors (`spreadOfRange`'s kept list) in columns: output o's are
 * `name`, `share`, `sigma`, `worst` from `start[o]` to `start[o + 1]`. `made[o]` is set once the
 * output holds its list as records (read, assigned, or made at once because a figure is not finite).
 */
class RankedContributors {
  readonly made: Uint8Array;
  private readonly start: Int32Array;
  private readonly name: string[] = [];
  private readonly share: Float64Array;
  private readonly sigma: Float64Array;
  private readonly worst: Float64Array;

  /** For the outputs of `rows`, each ranking at most one contributor per entry of its source row. */
  constructor(rows: SourceRows) {
    const outputs = rows.start.length - 1;
    this.made = uint8Column(outputs);
    this.start = int32Column(outputs + 1);
    // Sized once for the most every output can keep: grown by doubling from a guess, the columns were copied and
    // reallocated about ten times at 100k elements (a fifth of the records' time there).
    const size = keptBound(rows);
    this.share = float64Column(size);
    this.sigma = float64Column(size);
    this.worst = float64Column(size);
  }

  /** Output o's list (the next) from what the last `spreadOfRange` kept. */
  add(o: number): void {
    let at = this.start[o];
    for (let c = 0; c < KEPT.count; c++, at++) {
      this.name[at] = rankedName[c];
      this.share[at] = KEPT.shares[c];
      this.sigma[at] = KEPT.sigmas[c];
      this.worst[at] = KEPT.worsts[c];
    }
    this.start[o + 1] = at;
  }

  /** Whether every figure of output o's list is finite. */
  finite(o: number): boolean {
    for (let k = this.start[o]; k < this.start[o + 1]; k++) if (!(Number.isFinite(this.share[k]) && Number.isFinite(this.sigma[k]) && Number.isFinite(this.worst[k]))) return false;
    return true;
  }

  /** Output o's list as records, now kept by the output. */
  madeOf(o: number): Contribution[] {
    this.made[o] = 1;
    return this.leading(o, MAX_CONTRIBUTORS);
  }

  /** The first `count` of output o's list as records. */
  leading(o: number, count: number): Contribution[] {
    const from = this.start[o];
    const to = Math.min(this.start[o + 1], from + count);
    const out: Contribution[] = new Array(to - from);
    for (let k = from; k < to; k++) out[k - from] = { name: this.name[k], share: this.share[k], sigma: this.sigma[k], worstCase: this.worst[k] };
    return out;
  }
}

/** How many contributors the outputs of `rows` keep at most: each one per entry of its row (a group sums entries), up to `MAX_CONTRIBUTORS`. */
function keptBound(rows: SourceRows): number {
  let size = 0;
  for (let o = 0; o + 1 < rows.start.length; o++) size += Math.min(rows.start[o + 1] - rows.start[o], MAX_CONTRIBUTORS);
  return size;
}

/**
 * The first `count` ranked contributors of an output, as records: read from the columns when the
 * output has not made its list yet (the JSON writes three of up to eight), else from its list.
 */
export function leadingContributors(out: OutputVariation, count: number): Contribution[] {
  const holder = out as Partial<LazyLists>;
  const lists = holder[LISTS];
  const o = holder[LIST_INDEX];
  if (lists !== undefined && o !== undefined && !lists.contributors.made[o]) return lists.contributors.leading(o, count);
  return out.contributors.slice(0, count);
}

/**
 * The largest normalised sensitivities of every output by `rankOf`, kept in the order they are
 * offered when equal (ties keep the parameter order). An output's list is ranked from its row of
 * `sens` when it is first read (the default JSON leaves them out): ranking every row up front was a
 * `rankOf` per derivative, about 80,000 at 20k elements, for lists nobody read.
 */
export class TopSensitivities {
  /** Per output, the magnitude its figures are normalised by. */
  private readonly scale: Float64Array;
  /** The list being ranked: `count` figures, largest first. */
  private readonly param: Int32Array;
  private readonly value: Float64Array;
  private readonly rank: Float64Array;
  private count = 0;

  constructor(
    private readonly size: number,
    outputs: number,
    private readonly shown: ShownForms,
    private readonly sens: SensitivityResult,
  ) {
    this.scale = float64Column(outputs);
    this.param = int32Column(size);
    this.value = float64Column(size);
    this.rank = float64Column(size);
  }

  /** Output o's magnitude `scale` (its list is ranked from its row when read). */
  add(o: number, scale: number): void {
    this.scale[o] = scale;
  }

  /** Whether every figure of output o's list is finite: at once when every shown figure of its row is, else from the ranked list. */
  finite(o: number): boolean {
    if (this.rowFinite(o)) return true;
    this.ranked(o);
    for (let k = 0; k < this.count; k++) if (!Number.isFinite(this.value[k])) return false;
    return true;
  }

  /** Output o's list as records. */
  listOf(o: number): Sensitivity[] {
    this.ranked(o);
    const shown = this.shown;
    const out: Sensitivity[] = new Array(this.count);
    for (let k = 0; k < this.count; k++) {
      const j = this.param[k];
      out[k] = { parameter: shown.name[j], unit: shown.unit[j], value: this.value[k] };
    }
    return out;
  }

  /** Whether every shown figure of output o's row is finite (then so is every figure its list keeps). */
  private rowFinite(o: number): boolean {
    const { sens, shown } = this;
    const scale = this.scale[o];
    for (let q = sens.rowStart[o]; q < sens.rowStart[o + 1]; q++) {
      const j = sens.index[q];
      if (shown.isShown[j] && !Number.isFinite((sens.derivative[q] * shown.factor[j]) / scale)) return false;
    }
    return true;
  }

  /** Ranks output o's list into `param`, `value` and `count`, its row normalised by the shown forms and its magnitude. */
  private ranked(o: number): void {
    const { sens, shown } = this;
    const scale = this.scale[o];
    this.count = 0;
    for (let q = sens.rowStart[o]; q < sens.rowStart[o + 1]; q++) {
      const j = sens.index[q];
      if (shown.isShown[j]) this.offer((sens.derivative[q] * shown.factor[j]) / scale, j);
    }
  }

  /** Inserts one figure into the list (kept sorted, at most `size` long). */
  private offer(value: number, j: number): void {
    const rank = rankOf(value);
    const ranks = this.rank;
    if (this.count === this.size && !(rank > ranks[this.size - 1])) return;
    let at = this.count < this.size ? this.count++ : this.size - 1;
    while (at > 0 && rank > ranks[at - 1]) {
      this.value[at] = this.value[at - 1];
      ranks[at] = ranks[at - 1];
      this.param[at] = this.param[at - 1];
      at--;
    }
    this.value[at] = value;
    ranks[at] = rank;
    this.param[at] = j;
  }
}

/** Where an output with a list not yet made finds it (symbol keys: no copy, JSON or walk sees them). */
const LISTS = Symbol('output lists');
const LIST_INDEX = Symbol('output list index');
type LazyLists = OutputVariation & { [LISTS]: OutputLists; [LIST_INDEX]: number };

/** Replaces the accessor of a table made on first read (`name` of `o`) with the plain value. */
function keepValue(o: object, name: string, value: unknown): void {
  Object.defineProperty(o, name, { value, writable: true, enumerable: true, configurable: true });
}

/** One accessor shared by every output whose contributors are made on first read (one getter for all keeps the outputs alike for V8). */
const LAZY_CONTRIBUTORS: PropertyDescriptor = {
  enumerable: true,
  configurable: true,
  get(this: LazyLists): Contribution[] {
    const list = this[LISTS].contributors.madeOf(this[LIST_INDEX]);
    keepValue(this, 'contributors', list);
    return list;
  },
  set(this: LazyLists, value: Contribution[]): void {
    this[LISTS].contributors.made[this[LIST_INDEX]] = 1;
    keepValue(this, 'contributors', value);
  },
};

/** The same for the sensitivities. */
const LAZY_SENSITIVITIES: PropertyDescriptor = {
  enumerable: true,
  configurable: true,
  get(this: LazyLists): Sensitivity[] {
    const list = this[LISTS].top.listOf(this[LIST_INDEX]);
    keepValue(this, 'sensitivities', list);
    return list;
  },
  set(this: OutputVariation, value: Sensitivity[]): void {
    keepValue(this, 'sensitivities', value);
  },
};
// Read or assigned, each list is a plain data property (`keepValue`): while an accessor is there the list is the ranked one.
registerLazyTable('contributors', LAZY_CONTRIBUTORS);
registerLazyTable('sensitivities', LAZY_SENSITIVITIES);

/**
 * What ranking reads of each source of a list, built once per list: its σ and worst-case bound as columns (a row's
 * spread reads them for every entry), and the name a mismatch source ranks under when it alone of its group matters
 * (`Q1 VBE`, made on first use).
 *
 * Sources of one group (the same `group` name) are summed when an output is ranked, and only within that output's row:
 * the groups are told apart among the row's few entries (`spreadOfRange`), by name. A numbering of every group of the list
 * by name (a `Map` of about 100,000 names at 100,000 elements, the spread's largest cost) is not needed for that.
 */
interface SourceFigures {
  sigma: Float64Array;
  bound: Float64Array;
  aloneName: (string | undefined)[];
}
const sourceFigures = new WeakMap<readonly ToleranceSource[], SourceFigures>();

/**
 * The figures of a list patched from `from` (`SourceList.changed`), when `from` has them: the σ and bound columns read
 * again where a source changed (a patched source keeps its element and aspect, so the names made stay right).
 */
function followSourceFigures(from: readonly ToleranceSource[], list: SourceList): void {
  const last = sourceFigures.get(from);
  const changed = list.changed;
  if (!last || !changed) return;
  const sigma = last.sigma.slice();
  const bound = last.bound.slice();
  for (let k = 0; k < changed.length; k++) {
    if (!changed[k]) continue;
    sigma[k] = list.sources[k].sigma;
    bound[k] = list.sources[k].bound;
  }
  sourceFigures.set(list.sources, { sigma, bound, aloneName: last.aloneName });
}

function sourceFiguresOf(sources: readonly ToleranceSource[]): SourceFigures {
  let f = sourceFigures.get(sources);
  if (f) return f;
  const count = sources.length;
  const sigma = float64Column(count);
  const bound = float64Column(count);
  sourceColumnsInto(sources, sigma, bound);
  f = { sigma, bound, aloneName: new Array(count).fill(undefined) };
  sourceFigures.set(sources, f);
  return f;
}

/** Each source's σ and bound into the columns (a plain loop: `Float64Array.from` with a mapping function goes through the iterator protocol per item). */
function sourceColumnsInto(sources: readonly ToleranceSource[], sigma: Float64Array, bound: Float64Array): void {
  for (let k = 0; k < sources.length; k++) {
    const s = sources[k];
    sigma[k] = s.sigma;
    bound[k] = s.bound;
  }
}

/** Source k's σ, the override's when there is one. */
function sigmaOf(figures: SourceFigures, k: number, sigmaOverride: ((k: number) => number) | undefined): number {
  return sigmaOverride === undefined ? figures.sigma[k] : sigmaOverride(k);
}

/** Whether row entry q (of a row starting at `from`) belongs to the call's group g and carries at least 1 % of its variance `v`. */
function matters(figures: SourceFigures, g: number, v: number, index: ArrayLike<number>, value: ArrayLike<number>, from: number, q: number, sigmaOverride: ((k: number) => number) | undefined): boolean {
  if (entryGroup[q - from] !== g) return false;
  const a = Math.abs(value[q] * sigmaOf(figures, index[q], sigmaOverride));
  return a * a >= 0.01 * v;
}

/** A mismatch group's ranked name: the devices that carry at least 1 % of its variance `v` in this row, in row order, then the parameter (`Q1/Q2 VBE`). */
function mismatchName(sources: readonly ToleranceSource[], figures: SourceFigures, g: number, v: number, index: ArrayLike<number>, value: ArrayLike<number>, from: number, to: number, sigmaOverride: ((k: number) => number) | undefined): string {
  let count = 0;
  let last = -1;
  for (let q = from; q < to; q++) {
    if (!matters(figures, g, v, index, value, from, q, sigmaOverride)) continue;
    count++;
    last = index[q];
  }
  if (count === 1 && figures.aloneName[last] !== undefined) return figures.aloneName[last]!;
  let members = '';
  for (let q = from; q < to; q++) if (matters(figures, g, v, index, value, from, q, sigmaOverride)) members = members ? `${members}/${sources[index[q]].element}` : sources[index[q]].element;
  const name = `${members} ${groupAspect[g]}`;
  if (count === 1) figures.aloneName[last] = name;
  return name;
}

/**
 * The groups of one call, numbered in the order the row first meets them: each entry's group, each group's name
 * (its first source's), aspect, variance and worst case; kept between calls. A row of more than `SHORT_ROW` entries
 * finds a name's group through `rowGroupOf` (emptied after the call), a shorter one by comparing with the few so far.
 */
let entryGroup = new Int32Array(64);
let groupVariance = new Float64Array(64);
let groupWorst = new Float64Array(64);
const groupName: string[] = [];
const groupAspect: (string | undefined)[] = [];
const rowGroupOf = new Map<string, number>();
const SHORT_ROW = 16;

/**
 * The ranking of one call: group, rank and name of each contributor in order, in scratch kept between
 * calls, so a contributor's record is made only when it is kept (the 8 largest).
 */
let rankedGroup = new Int32Array(64);
let rankedRank = new Float64Array(64);
const rankedName: string[] = [];

/** Contributors kept per output (the largest). */
const MAX_CONTRIBUTORS = 8;

/**
 * What the last `spreadOfRange` found: σ, worst case, and its kept contributors (`count`, at most
 * `MAX_CONTRIBUTORS`, names in `rankedName`) with each one's share, σ and worst case, in order.
 */
const KEPT = { sigma: 0, worstCase: 0, count: 0, shares: new Float64Array(MAX_CONTRIBUTORS), sigmas: new Float64Array(MAX_CONTRIBUTORS), worsts: new Float64Array(MAX_CONTRIBUTORS) };

/** Worst case, σ and the contributors ranked by variance (the 8 largest), summed within each group, for one output's derivatives with respect to its sources. */
export function spreadOf(sources: readonly ToleranceSource[], per: SourceRow, sigmaOverride?: (k: number) => number): { sigma: number; worstCase: number; contributors: Contribution[] } {
  spreadOfRange(sources, sourceFiguresOf(sources), per.index, per.value, 0, per.index.length, sigmaOverride);
  const contributors: Contribution[] = new Array(KEPT.count);
  for (let c = 0; c < KEPT.count; c++) contributors[c] = { name: rankedName[c], share: KEPT.shares[c], sigma: KEPT.sigmas[c], worstCase: KEPT.worsts[c] };
  return { sigma: KEPT.sigma, worstCase: KEPT.worstCase, contributors };
}

/** `spreadOf` over entries `from … to − 1` of a row's arrays, into `KEPT`. */
function spreadOfRange(
  sources: readonly ToleranceSource[],
  figures: SourceFigures,
  index: ArrayLike<number>,
  value: ArrayLike<number>,
  from: number,
  to: number,
  sigmaOverride: ((k: number) => number) | undefined,
): void {
  // Sized for the longest row so far (kept for the next call).
  if (entryGroup.length < to - from) {
    entryGroup = new Int32Array(2 * (to - from));
    groupVariance = new Float64Array(2 * (to - from));
    groupWorst = new Float64Array(2 * (to - from));
  }
  const sigmas = figures.sigma;
  const bounds = figures.bound;
  const long = to - from > SHORT_ROW;
  let groups = 0;
  let variance = 0;
  let worstCase = 0;
  for (let q = from; q < to; q++) {
    const k = index[q];
    const sigma = sigmaOf(figures, k, sigmaOverride);
    const bound = sigmaOverride === undefined ? bounds[k] : (bounds[k] / sigmas[k]) * sigma;
    const a = Math.abs(value[q] * sigma);
    const w = Math.abs(value[q] * bound);
    variance += a * a;
    worstCase += w;
    const name = sources[k].group;
    let g = long ? (rowGroupOf.get(name) ?? -1) : shortGroupOf(name, groups);
    if (g < 0) {
      g = groups++;
      groupName[g] = name;
      groupAspect[g] = sources[k].aspect;
      groupVariance[g] = 0;
      groupWorst[g] = 0;
      if (long) rowGroupOf.set(name, g);
    }
    entryGroup[q - from] = g;
    groupVariance[g] += a * a;
    groupWorst[g] += w;
  }
  if (long) rowGroupOf.clear();
  if (rankedGroup.length < groups) {
    rankedGroup = new Int32Array(groups * 2);
    rankedRank = new Float64Array(groups * 2);
  }
  // Ranked by `rankOf` of the share (worked out once per contributor), then by name: inserted in place.
  let count = 0;
  for (let g = 0; g < groups; g++) {
    const v = groupVariance[g];
    if (!(v > 0)) continue;
    const name = groupAspect[g] ? mismatchName(sources, figures, g, v, index, value, from, to, sigmaOverride) : groupName[g];
    const rank = rankOf(variance > 0 ? v / variance : 0);
    let at = count++;
    for (; at > 0 && (rank > rankedRank[at - 1] || (rank === rankedRank[at - 1] && name < rankedName[at - 1])); at--) {
      rankedGroup[at] = rankedGroup[at - 1];
      rankedRank[at] = rankedRank[at - 1];
      rankedName[at] = rankedName[at - 1];
    }
    rankedGroup[at] = g;
    rankedRank[at] = rank;
    rankedName[at] = name;
  }
  KEPT.count = Math.min(count, MAX_CONTRIBUTORS);
  for (let c = 0; c < KEPT.count; c++) {
    const g = rankedGroup[c];
    const v = groupVariance[g];
    KEPT.shares[c] = variance > 0 ? v / variance : 0;
    KEPT.sigmas[c] = Math.sqrt(v);
    KEPT.worsts[c] = groupWorst[g];
  }
  KEPT.sigma = Math.sqrt(variance);
  KEPT.worstCase = worstCase;
}

/** The group named `name` among the first `count` groups of the current call, or −1 (names compared as strings: equal names are one group). */
function shortGroupOf(name: string, count: number): number {
  for (let g = 0; g < count; g++) if (groupName[g] === name) return g;
  return -1;
}

/** Attaches each structure's output variations (`structure.variation`) from a result. */
export function attachVariation(structures: Structure[], result: VariationResult): void {
  for (const _ of attachVariationSteps(structures, result));
}

/** Structures attached between two yields of `attachVariationSteps`. */
const ATTACH_STEP = 250;

/** `attachVariation` in steps, for a host that gives queued requests a turn between them (5,000 structures at once held it 10–50 ms). */
export function* attachVariationSteps(structures: Structure[], result: VariationResult): Generator<void, void, undefined> {
  // Each structure's outputs in their order, chained by index from its first one (`next`, −1 ends a chain; `last` is
  // read at a chain's first output): no list per structure.
  const first = new Map<string, number>();
  const outputs = result.outputs;
  const next = int32Column(outputs.length).fill(-1);
  const last = int32Column(outputs.length);
  // Indexed loops: a for-of step makes an iterator result object until the function is optimised (10,000 outputs at 20k).
  for (let k = 0; k < outputs.length; k++) {
    const o = outputs[k];
    if (!o.structure) continue;
    const head = first.get(o.structure);
    if (head === undefined) {
      first.set(o.structure, k);
      last[k] = k;
    } else {
      next[last[head]] = k;
      last[head] = k;
    }
  }
  for (let k = 0; k < structures.length; k++) {
    if (k % ATTACH_STEP === ATTACH_STEP - 1) yield;
    const s = structures[k]!;
    const head = first.get(s.id);
    if (head === undefined) continue;
    const iout: Record<string, OutputVariation> = nameTable();
    let voltages: Record<string, OutputVariation> | undefined;
    let iref: OutputVariation | undefined;
    for (let m = head; m >= 0; m = next[m]) {
      const o = outputs[m];
      // An IREF's label is 'IREF', no device's name: the key (a joined string V8 flattens to search) is read for those only.
      if (o.output === 'IREF' && o.key.endsWith(' iref')) iref = o;
      else if (o.unit === 'V') (voltages ??= nameTable())[o.output] = o;
      else iout[o.output] = o;
    }
    // Made in its final shape (iref, iout, voltages in that order; no spreads of conditional parts).
    const variation: NonNullable<Structure['variation']> = iref ? { iref, iout } : { iout };
    if (voltages) variation.voltages = voltages;
    s.variation = variation;
  }
}
