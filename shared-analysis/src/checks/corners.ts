// Re-solves the circuit at supply, temperature and beta corners and reports outputs that leave their region, lose headroom or spread.

import { float64Column, int32Column, uint8Column } from '../columns';
import { technologyFacts } from '../structures/technology';
import type { ResolvedOptions } from '../analysis';
import type { Circuit, Element } from '../circuit';
import { belowFloor, formatEngineering, formatPercent } from '../fixes/format';
import type { DcSolver, DcSolveResult } from '../solve/dc';
import type { SolveOptions } from '../solve/types';
import { SolveStopped } from '../solve/newton';
import { BipolarColumnsMeasurement, FigureSink, plannedMeasurements, readerOf, runMeasurement, type MeasurementPlans, type OutputSink, type PointIndexReader } from '../structures/measure';
import { pointVectors } from '../solve/point';
import { SolvedVectors } from '../solve/solved-point';
import { railsByIndex } from '../structures/rails';
import { structureVoltages, summariseVoltageCorners } from '../structures/voltages';
import type { Structure } from '../structures/types';
import { CornerColumnViews, setCornerColumns, type CornerAxis, type CornerColumns, type CornerStore } from '../structures/corner-columns';
import { topologyOf } from '../structures/topology';
import type { Finding, RelatedLocation, Severity } from '../types';
import { pushAll } from '../arrays';
import { modelValue } from '../variation/sensitivity';
import { nameTable } from '../names';
import { feedLoops } from '../structures/loops';
import { CornerStarts } from './corner-starts';
import type { PartPoint } from '../solve/part-starts';

/** Finding codes this module owns, with their default severity and a one-line summary for the README. */
export const CORNER_CODES: Record<string, { severity: Severity; summary: string }> = {
  'corner-output-out-of-region': {
    severity: 'warning',
    summary: 'A mirror output that is active at nominal leaves forward-active (BJT) or saturation (MOSFET) at some supply/temperature/beta corner; the message names the worst corner and by how much.',
  },
  'corner-headroom-low': {
    severity: 'warning',
    summary: 'A mirror output stays active at every corner but its headroom falls below the margin at some corner.',
  },
  'corner-current-spread': {
    severity: 'info',
    summary: 'A mirror output current moves by more than ±20 % of nominal across the corners (not said of a mirror whose reference carries nothing at nominal: its outputs carry only leakage, and the nominal error says why).',
  },
  'corner-no-convergence': {
    severity: 'info',
    summary: 'The operating point did not converge at some corners; those corners are left out of the other corner checks.',
  },
};

/** Output current spread beyond which `corner-current-spread` is reported (±20 %). */
export const SPREAD_LIMIT = 0.2;
/** At most this many supply sources get their own single-source corners. */
export const MAX_SINGLE_SOURCE_CORNERS = 8;

/** One corner to solve: what changes against nominal. */
export interface CornerSpec {
  label: string;
  /** Scale applied to every supply source (1 when only one source moves). */
  supplyScale: number;
  /** The single source moved alone, when this is a single-source corner. */
  singleSource?: string;
  /** Scale of that single source. */
  singleScale?: number;
  temperatureC: number;
  betaScale: number;
  /** MOS process corner: every MOSFET slow (KP down, |VTO| up) or fast (the reverse), when the options enable it. */
  process?: 'slow' | 'fast';
}

/** Inputs of `runCorners`. */
export interface CornerContext {
  circuit: Circuit;
  solver: DcSolver;
  structures: Structure[];
  options: ResolvedOptions;
  nominal: DcSolveResult;
  /** When given, filled with where the time went (for benchmarks and the host's logs). */
  stats?: CornerStats;
  /** Asked before each corner solve; true stops the corners by throwing `stop()`. */
  shouldStop?: () => boolean;
  /** What to throw when `shouldStop` says so (the facade passes its `AnalysisStopped`). */
  stop?: () => Error;
  /**
   * Where corner k's Newton starts instead of the nominal solution (after a value edit: the last corner phase's
   * solution of that corner, moved by the change of the nominal one), given the corner's solve options. A start that does not converge is dropped
   * for the nominal one, so a corner converges whenever it would from the nominal start.
   */
  startOf?: (spec: CornerSpec, k: number, options: SolveOptions) => CornerStart | undefined;
  /** Told each converged corner's solution (the solver's own vector, overwritten by the next solve: copy what is kept). */
  solved?: (spec: CornerSpec, k: number, x: Float64Array) => void;
  /**
   * False: every corner without a start of the host's starts from the nominal point (the plain path, for tests).
   * Otherwise a corner that moves several axes starts from a prediction of the corners solved before it (`CornerStarts`).
   */
  predictStarts?: boolean;
  /**
   * True when the structures are known to hold no self-biased loop (an edit's incremental state is kept only for such a
   * circuit, and a value edit keeps the topology and the structures): the loop search before predicting starts is skipped.
   */
  loopFree?: boolean;
  /**
   * The last corner phase's results and which structures may differ from them (after a value edit: see `keptCorners`
   * in incremental.ts). Only the structures marked in `touched` are measured at a corner that converged both times;
   * the others keep the record's figures, and their findings when every corner converged as before.
   */
  reuse?: CornerReuse;
  /** Told this phase's results, for the next phase's `reuse`. */
  record?: (record: CornerRecord) => void;
}

/**
 * Where a corner's Newton starts (`CornerContext.startOf`), and when the parts an edit reached were solved alone for
 * it (the rest of the start being the corner's last solution, see `PartStarts`), their point: a corner whose
 * figures are kept for every structure outside those parts is measured there, without a whole-circuit solve.
 */
export interface CornerStart {
  x: Float64Array;
  parts?: PartPoint;
}

/** What one corner phase measured, for the next phase of an edited circuit (`CornerContext.reuse`). */
export interface CornerRecord {
  labels: string[];
  converged: Uint8Array;
  /** Structure ids in the order the buffers and findings follow. */
  ids: string[];
  buffers: CornerBuffers;
  /** Per structure, its corner findings as `runCorners` made them (before severities and sorting). */
  findings: Finding[][];
  /**
   * The structures' measurement plans (names resolved to element and node indices): a value edit keeps every name and
   * index, so a phase that keeps this record measures with them instead of resolving 5,000 structures' names again.
   */
  plans: MeasurementPlans;
}

/** A record and which structures can differ from it. */
export interface CornerReuse {
  record: CornerRecord;
  /** 1 for a structure that must be measured again at every corner. */
  touched: Uint8Array;
  /** The elements the touched structures name (devices, reference chains, degenerations), whole-circuit indices. */
  members: Int32Array;
  /** A finding of the record moved past the edit, or undefined when it cannot be (it touches the edit). */
  moved: (f: Finding) => Finding | undefined;
}

/** Effort of one `runCorners` call. */
export interface CornerStats {
  corners: number;
  converged: number;
  /** Newton iterations over every corner solve. */
  iterations: number;
  /** Milliseconds in the corner solves, and in measuring every structure at every corner and wording the findings. */
  solveMs: number;
  measureMs: number;
  /** Structures that kept the last phase's figures at every corner that converged both times (`CornerContext.reuse`), and of those, how many kept its findings. */
  keptFigures: number;
  keptFindings: number;
  /** Corners measured on the point of the parts an edit reached, solved alone, without a whole-circuit solve (see `CornerStart`). */
  partCorners: number;
}

const clock: () => number = (() => {
  const perf = (globalThis as { performance?: { now(): number } }).performance;
  return perf ? () => perf.now() : () => Date.now();
})();

/** The independent voltage sources that set the supply rails (every V source on a rail path with a non-zero value). */
export function supplySources(circuit: Circuit): string[] {
  const names = new Set<string>();
  // The rails the checks found for this circuit (kept per circuit), not a walk of every element again.
  for (const rail of railsByIndex(circuit).values()) for (const s of rail.sources) names.add(s);
  const out: string[] = [];
  // Indexed, as the other walks of every element here: a for-of that runs once is not compiled, and then makes an object per step.
  const elements = circuit.elements;
  for (let i = 0; i < elements.length; i++) {
    const e = elements[i];
    if (e.kind === 'V' && names.has(e.name) && e.dc !== 0 && Number.isFinite(e.dc)) out.push(e.name);
  }
  return out;
}

function signedPct(scale: number): string {
  const pct = Number(((scale - 1) * 100).toPrecision(3));
  return `${pct < 0 ? '\u2212' : '+'}${Math.abs(pct)} %`;
}

function degrees(t: number): string {
  return `${t < 0 ? '\u2212' : ''}${Math.abs(Number(t.toPrecision(4)))} °C`;
}

/**
 * The corner list, in a fixed order: the full cross product of supply (all supply sources
 * together at −tol, nominal, +tol) × temperature (cold, nominal, hot) × beta (low, 1, high),
 * without the all-nominal point — at most 3 × 3 × 3 − 1 = 26 corners — followed, when the
 * circuit has more than one supply source, by each source alone at ±tol (nominal temperature
 * and beta), for at most 8 sources: at most 26 + 16 = 42 solves per circuit, shared by every
 * structure. Levels equal to nominal (a zero tolerance, a beta factor of 1) are dropped, and so
 * is the beta axis for a circuit without bipolar devices and the temperature axis for one where
 * nothing depends on temperature (no junction, FET or resistor with a coefficient): no corner
 * repeats another. Current sources keep their value: the
 * supply tolerance applies to voltage sources on the rails only.
 */
export function cornerSpecs(options: ResolvedOptions, nominalC: number, sources: string[], scope: { bipolar: boolean; mos?: boolean; thermal?: boolean } = { bipolar: true }): CornerSpec[] {
  const c = options.corners;
  // The MOS process axis (slow, typical, fast) exists only when a setting gives it a size and the circuit has MOSFETs.
  const processOn = scope.mos === true && ((c.processKpTolerance ?? 0) > 0 || (c.processVtoShift ?? 0) > 0);
  const processes: ('slow' | 'fast' | undefined)[] = processOn ? ['slow', undefined, 'fast'] : [undefined];
  const tol = Number.isFinite(c.supplyTolerance) ? Math.abs(c.supplyTolerance) : 0;
  const supply = uniq(sources.length > 0 ? [1 - tol, 1, 1 + tol] : [1]);
  // Temperature only moves junctions, FETs and resistors with a coefficient; without any, a temperature corner would repeat nominal.
  const temps = scope.thermal === false ? [nominalC] : uniq([c.coldC, nominalC, c.hotC].filter(Number.isFinite));
  // Beta only moves bipolar devices; a circuit without any keeps its corner count down to supply × temperature.
  const betas = scope.bipolar ? uniq([c.betaLow, 1, c.betaHigh].filter((b) => Number.isFinite(b) && b > 0)) : [1];
  const specs: CornerSpec[] = [];
  for (const s of supply) {
    for (const t of temps) {
      for (const b of betas) {
        for (const process of processes) {
          if (s === 1 && t === nominalC && b === 1 && !process) continue;
          const parts: string[] = [];
          if (s !== 1) parts.push(`supply ${signedPct(s)}`);
          if (t !== nominalC) parts.push(degrees(t));
          if (b !== 1) parts.push(`beta ×${Number(b.toPrecision(3))}`);
          if (process) parts.push(`${process} MOS`);
          specs.push({ label: parts.join(', '), supplyScale: s, temperatureC: t, betaScale: b, ...(process ? { process } : {}) });
        }
      }
    }
  }
  if (sources.length > 1 && tol > 0) {
    for (const name of sources.slice(0, MAX_SINGLE_SOURCE_CORNERS)) {
      for (const s of [1 - tol, 1 + tol]) {
        specs.push({ label: `${name} alone ${signedPct(s)}`, supplyScale: 1, singleSource: name, singleScale: s, temperatureC: nominalC, betaScale: 1 });
      }
    }
  }
  return specs;
}

/** The supply values of one corner: every supply scaled, or one supply alone (a single-source corner). */
export function cornerSourceValues(spec: CornerSpec, sources: string[], dcOf: Map<string, number>): Record<string, number> {
  const sourceValues: Record<string, number> = nameTable();
  for (const name of sources) {
    const scale = spec.singleSource === undefined ? spec.supplyScale : name === spec.singleSource ? spec.singleScale ?? 1 : 1;
    if (scale !== 1) sourceValues[name] = (dcOf.get(name) ?? 0) * scale;
  }
  return sourceValues;
}

/** Which corner axes a circuit has: beta with bipolar devices, the MOS process with MOSFETs, temperature with anything that moves with it. */
export function cornerScope(circuit: Circuit): { bipolar: boolean; mos: boolean; thermal: boolean } {
  return { bipolar: circuit.elements.some((e) => e.kind === 'Q'), mos: circuit.elements.some((e) => e.kind === 'M'), thermal: circuit.elements.some(movesWithTemperature) };
}

/** The model parameters of a MOS process corner: slow is KP·(1 − tol) with the threshold magnitude raised by the shift, fast the reverse (every MOSFET together). */
export function processCornerParameters(circuit: Circuit, options: ResolvedOptions, process: 'slow' | 'fast'): Record<string, Record<string, number>> {
  const sign = process === 'slow' ? 1 : -1;
  const out: Record<string, Record<string, number>> = nameTable();
  for (const e of circuit.elements) {
    if (e.kind !== 'M') continue;
    const kp = modelValue(e, 'KP');
    const vto = modelValue(e, 'VTO');
    const polarity = e.model.kind === 'pmos' ? -1 : 1;
    out[e.name] = { KP: kp * (1 - sign * (options.corners.processKpTolerance ?? 0)), VTO: vto + polarity * sign * (options.corners.processVtoShift ?? 0) };
  }
  return out;
}

/** Whether an element's DC behaviour depends on temperature (docs/DEVICE-MODELS.md): diodes, transistors, JFETs, and resistors with TC1/TC2. */
export function movesWithTemperature(el: Element): boolean {
  switch (el.kind) {
    case 'D':
    case 'Q':
    case 'M':
    case 'J':
      return true;
    case 'R':
      return Boolean(el.tc1 || el.tc2);
    default:
      return false;
  }
}

function uniq(xs: number[]): number[] {
  const out: number[] = [];
  for (const x of xs) if (!out.includes(x)) out.push(x);
  return out;
}

/**
 * Solves every corner once for the whole circuit (warm-started from the nominal solution, or from a
 * prediction of the corners solved before it: see `CornerStarts`),
 * measures every structure from each corner's point, fills `structure.corners`, and returns the
 * corner findings in a deterministic order (structures in the given order, outputs in order).
 */
export function runCorners(ctx: CornerContext): Finding[] {
  const { circuit, solver, structures, options, nominal } = ctx;
  const findings: Finding[] = [];
  if (!options.corners.enabled || structures.length === 0 || !nominal.op.converged) return findings;

  const nominalC = nominal.op.temperatureC;
  const sources = supplySources(circuit);
  const dcOf = new Map<string, number>();
  for (let i = 0; i < circuit.elements.length; i++) {
    const e = circuit.elements[i];
    if (e.kind === 'V') dcOf.set(e.name, e.dc);
  }
  const specs = cornerSpecs(options, nominalC, sources, cornerScope(circuit));
  const processParameters = (process: 'slow' | 'fast'): Record<string, Record<string, number>> => processCornerParameters(circuit, options, process);

  let solveMs = 0;
  const tStart = clock();
  let iterations = 0;
  // Results go straight into one typed array per quantity per structure (corner k of output o at
  // o·C + k); no corner's full operating point is kept, and its name-keyed tables are never built.
  const C = specs.length;
  const axis: CornerAxis = {
    labels: specs.map((s) => s.label),
    supplyScale: Float64Array.from(specs, (s) => (s.singleSource ? s.singleScale ?? 1 : s.supplyScale)),
    temperatureC: Float64Array.from(specs, (s) => s.temperatureC),
    betaScale: Float64Array.from(specs, (s) => s.betaScale),
    process: specs.map((s) => s.process),
    converged: uint8Column(C),
  };
  const { columns, buffers } = cornerColumnsOf(structures, axis);
  // After a value edit, the structures the edit cannot reach keep the last phase's figures: only the others are measured.
  const reuse = usableReuse(ctx.reuse, axis.labels, structures, buffers);
  const touchedOnly = reuse ? touchedIndices(reuse.touched) : undefined;
  const onParts = reuse ? new PartMeasurement(reuse, structures, touchedOnly!) : undefined;
  let partCorners = 0;
  const topology = topologyOf(circuit);
  // Every name a measurement reads resolved once per list of structures (the nominal check planned the same list), not once per corner.
  const flat = reuse ? reuse.record.plans : plannedMeasurements(topology, structures);
  const withVoltages = structures.flatMap((_, i) => (columns[i].voltageNames.length > 0 ? [i] : []));
  let failedCount = 0;
  // The structures read straight from the BJT table's columns (null until the first corner measured in full).
  let direct: BipolarColumnsMeasurement | undefined | null = null;
  // A self-biased loop also balances at zero current, and a predicted start could keep a state the nominal start would not.
  const starts = ctx.predictStarts === false || (!ctx.loopFree && feedLoops(topology, structures).length > 0) ? undefined : new CornerStarts(specs, nominalC, nominal.x);
  for (const k of starts?.order() ?? specs.map((_, k) => k)) {
    const spec = specs[k];
    if (ctx.shouldStop?.()) throw ctx.stop?.() ?? new Error('The corner solves were stopped.');
    const sourceValues = cornerSourceValues(spec, sources, dcOf);
    // Each corner's point is read here and dropped before the next solve: its vectors can be reused; its findings are never read.
    const opts: SolveOptions = { temperatureC: spec.temperatureC, betaScale: spec.betaScale, sourceValues, initialGuess: nominal.x, shouldStop: ctx.shouldStop, reuseResult: true, pointOnly: true, ...(spec.process ? { deviceParameters: processParameters(spec.process) } : {}) };
    const ts = clock();
    const own = ctx.startOf?.(spec, k, opts);
    // Kept figures everywhere but in the parts the start solved alone: the corner is measured on their point.
    if (reuse?.record.converged[k] === 1 && own?.parts && onParts!.covers(own.parts)) {
      solveMs += clock() - ts;
      axis.converged[k] = 1;
      starts?.solved(k, own.x);
      ctx.solved?.(spec, k, own.x);
      onParts!.measure(own.parts, flat, buffers, k);
      partCorners++;
      continue;
    }
    const solved = solveCorner(solver, opts, own?.x, starts, k, ctx.stop);
    solveMs += clock() - ts;
    iterations += solved.iterations;
    const result = solved.result;
    if (!result || !result.op.converged) {
      failedCount++;
      if (reuse?.record.converged[k] === 1) clearCorner(buffers, k);
      continue;
    }
    axis.converged[k] = 1;
    starts?.solved(k, result.x);
    ctx.solved?.(spec, k, result.x);
    const op = result.op;
    // A corner that did not converge last time has no figures to keep: every structure is measured there.
    const only = reuse?.record.converged[k] === 1 ? touchedOnly : undefined;
    if (only) measureListed(flat, readerOf(op, topology), buffers, k, only);
    else {
      // Every corner's point is the solver's: which table and instance each device has is resolved at the first one.
      const vec = pointVectors(op);
      if (direct === null) direct = vec ? BipolarColumnsMeasurement.of(flat, vec) : undefined;
      measureCorner(flat, readerOf(op, topology), buffers, k, direct && vec instanceof SolvedVectors ? direct : undefined, vec);
    }
    for (const i of withVoltages) {
      if (only && reuse!.touched[i] !== 1) continue;
      const col = columns[i];
      const volts = col.voltages;
      for (let v = 0; v < col.voltageNames.length; v++) volts[v * C + k] = NaN;
      const vs = structureVoltages(structures[i], op, circuit);
      col.voltageNames.forEach((name, v) => {
        const x = vs?.[name];
        if (x !== undefined) volts[v * C + k] = x;
      });
    }
  }

  const failed = axis.labels.filter((_, k) => axis.converged[k] !== 1);
  // The topology's table (the last element of a name, as a map filled in order would hold): a map of its own was a pass
  // over every element in each corner phase.
  const elements = topology.elementByName;

  // One note per circuit: the corner solves are shared by every structure.
  const first = elements.get(structures[0].reference.device);
  if (failed.length > 0 && first) {
    findings.push({
      code: 'corner-no-convergence',
      severity: CORNER_CODES['corner-no-convergence'].severity,
      message: `The operating point did not converge at ${failed.length} of ${specs.length} corners (${listLabels(failed)}), so the corner checks of every structure leave them out.`,
      uri: first.origin.uri,
      span: first.origin.span,
      data: { corners: failed, cornersTotal: specs.length },
    });
  }

  const converged = C - failedCount;
  // A finding counts the converged corners and names those where an output leaves its region: kept only when they are the last phase's.
  const sameCorners = reuse !== undefined && sameBytes(reuse.record.converged, axis.converged);
  // The nominal point measured as the corners were, as a one-corner column of every output whose findings are made
  // afresh: the plans already flat, one reader for every structure, and no name-keyed record per structure.
  const nominalFigures = new CornerBuffers(structures.length, flat.outStart[structures.length], 0, 1);
  const nominalReader = readerOf(nominal.op, topology);
  const byStructure: Finding[][] = new Array(structures.length);
  let keptFindings = 0;
  structures.forEach((s, index) => {
    setCornerColumns(s, columns[index]);
    summariseVoltageCorners(s);
    const kept = sameCorners && reuse!.touched[index] !== 1 ? movedAll(reuse!.record.findings[index], reuse!.moved) : undefined;
    if (!kept) measureStructureAt(flat, index, nominalReader, nominalFigures, 0, index, flat.outStart[index]);
    const own = kept ?? structureFindings(s, nominalFigures.sink, flat.outStart[index], columns[index], elements, options, converged);
    if (kept) keptFindings++;
    byStructure[index] = own;
    pushAll(findings, own);
  });
  ctx.record?.({ labels: axis.labels, converged: axis.converged, ids: structures.map((s) => s.id), buffers, findings: byStructure, plans: flat });
  if (ctx.stats) {
    const keptFigures = reuse ? structures.length - touchedOnly!.length : 0;
    Object.assign(ctx.stats, { corners: specs.length, converged, iterations, solveMs, measureMs: clock() - tStart - solveMs, keptFigures, keptFindings, partCorners });
  }
  return findings;
}

/**
 * One structure's corner findings from its columns and its nominal figures (its first output at `first` of `nominal`), outputs in
 * order. An output that gives no finding costs one pass over its columns and nothing else: at 100,000 elements a summary and
 * sweep object per output were a dozen objects for each of 25,000 outputs, nearly all of which give none.
 */
function structureFindings(s: Structure, nominal: OutputSink, first: number, cols: CornerColumns, elements: { get(name: string): Element | undefined }, options: ResolvedOptions, converged: number): Finding[] {
  let out: Finding[] | undefined;
  for (let oi = 0; oi < s.outputs.length; oi++) out = outputFindings(s, s.outputs[oi].device, elements, nominal, first + oi, cols, oi, options, converged, out);
  return out ?? [];
}

/** `ctx.reuse` when its record was made for the same corners and structures (same outputs and voltages), with its figures copied into `buffers`. */
function usableReuse(reuse: CornerReuse | undefined, labels: readonly string[], structures: readonly Structure[], buffers: CornerBuffers): CornerReuse | undefined {
  if (!reuse) return undefined;
  const { record } = reuse;
  const from = record.buffers;
  const same =
    record.labels.length === labels.length &&
    record.labels.every((l, k) => l === labels[k]) &&
    record.ids.length === structures.length &&
    structures.every((s, i) => s.id === record.ids[i]) &&
    from.iref.length === buffers.iref.length &&
    from.sink.current.length === buffers.sink.current.length &&
    from.volts.length === buffers.volts.length;
  if (!same) return undefined;
  buffers.iref.set(from.iref);
  buffers.sink.current.set(from.sink.current);
  buffers.sink.headroom.set(from.sink.headroom);
  buffers.sink.outOfRegion.set(from.sink.outOfRegion);
  buffers.volts.set(from.volts);
  return reuse;
}

function touchedIndices(touched: Uint8Array): Int32Array {
  let n = 0;
  for (let i = 0; i < touched.length; i++) n += touched[i];
  const out = int32Column(n);
  for (let i = 0, j = 0; i < touched.length; i++) if (touched[i] === 1) out[j++] = i;
  return out;
}

/** Every structure's figures at corner k as a corner that did not converge leaves them (0, voltages NaN). */
function clearCorner(buffers: CornerBuffers, k: number): void {
  const { corners: C, iref, sink, volts } = buffers;
  for (let at = k; at < iref.length; at += C) iref[at] = 0;
  for (let at = k; at < sink.current.length; at += C) {
    sink.current[at] = 0;
    sink.headroom[at] = 0;
    sink.outOfRegion[at] = 0;
  }
  for (let at = k; at < volts.length; at += C) volts[at] = NaN;
}

function sameBytes(a: Uint8Array, b: Uint8Array): boolean {
  if (a.length !== b.length) return false;
  for (let i = 0; i < a.length; i++) if (a[i] !== b[i]) return false;
  return true;
}

/** Every finding moved, or undefined when one cannot be. */
function movedAll(findings: readonly Finding[], moved: (f: Finding) => Finding | undefined): Finding[] | undefined {
  const out: Finding[] = [];
  for (const f of findings) {
    const m = moved(f);
    if (!m) return undefined;
    out.push(m);
  }
  return out;
}

/** Newton iterations at most from a predicted start before the corner is solved from the nominal start instead. */
const PREDICTED_START_ITERATIONS = 40;

/**
 * One corner's solve: from `own` (the host's start) when given, else from the predicted start when there is
 * one, and from the nominal start (`opts.initialGuess`) when neither converges. A predicted start is tried
 * with Newton alone (no stepping continuation), and its solution kept only when it stayed near the
 * prediction; `iterations` counts every attempt's. An undefined result: the solver threw other than stopping.
 */
function solveCorner(
  solver: DcSolver,
  opts: SolveOptions,
  own: Float64Array | undefined,
  starts: CornerStarts | undefined,
  k: number,
  stop: (() => Error) | undefined,
): { result?: DcSolveResult; iterations: number } {
  let iterations = 0;
  try {
    if (own) {
      const r = solver.solve({ ...opts, initialGuess: own, initialGuessTemperatureC: opts.temperatureC });
      iterations += r.stats.iterations;
      if (r.op.converged) return { result: r, iterations };
    } else {
      const predicted = starts?.start(k);
      if (predicted) {
        const r = solver.solve({ ...opts, initialGuess: predicted, initialGuessTemperatureC: opts.temperatureC, fallbacks: false, maxIterations: PREDICTED_START_ITERATIONS });
        iterations += r.stats.iterations;
        if (r.op.converged && starts!.near(predicted, r.x)) return { result: r, iterations };
      }
    }
    const r = solver.solve(opts);
    return { result: r, iterations: iterations + r.stats.iterations };
  } catch (e) {
    // Stopped inside the solve (the same check as between solves, asked before each Newton iteration).
    if (e instanceof SolveStopped) throw stop?.() ?? e;
    // The solver promises not to throw otherwise; a corner that does anyway counts as not converged.
    return { iterations };
  }
}

/**
 * The circuit's corner figures, one buffer per quantity: structure i's IREF at corner k at i·C + k, output o's
 * (counted over every structure in order) at o·C + k; zeroed, the voltages NaN. A class for the reason
 * `FigureSink` is one.
 */
export class CornerBuffers {
  readonly iref: Float64Array;
  readonly sink: FigureSink;
  /** Voltage v (counted over every structure in order) at corner k at v·C + k. */
  readonly volts: Float64Array;

  constructor(structures: number, outputs: number, voltages: number, readonly corners: number) {
    this.iref = float64Column(structures * corners);
    this.sink = new FigureSink(outputs * corners, corners);
    this.volts = float64Column(voltages * corners).fill(NaN);
  }
}

/**
 * Measures every planned structure at corner k into `buffers`, straight into the circuit-wide buffers
 * (one sink for all, moved to each structure's first output), figures that are not finite as 0.
 */
function measureCorner(flat: MeasurementPlans, reader: PointIndexReader, buffers: CornerBuffers, k: number, direct: BipolarColumnsMeasurement | undefined, vec: unknown): void {
  // Each loop is a function of its own: a function compiled while its first loop ran held code for the
  // second that had never run, and gave up its compiled code at every corner.
  // Read from the columns, non-finite figures are made 0 as they are written.
  if (direct) direct.measure(flat, vec as SolvedVectors, reader, buffers.sink, buffers.iref, buffers.corners, k);
  else {
    measureEachStructure(flat, reader, buffers, k);
    keepFiniteFigures(buffers.sink, flat.outStart[flat.outStart.length - 1], buffers.corners, k);
  }
}

/** Every planned structure's IREF and output figures at corner k into `buffers` (see `measureCorner`). */
function measureEachStructure(flat: MeasurementPlans, reader: PointIndexReader, buffers: CornerBuffers, k: number): void {
  const { corners: C, iref, sink } = buffers;
  const count = flat.outStart.length - 1;
  for (let i = 0; i < count; i++) {
    sink.first = flat.outStart[i] * C + k;
    runMeasurement(flat, i, reader, sink, iref, i * C + k);
    iref[i * C + k] = finite(iref[i * C + k]);
  }
}

/** Corner k's current and headroom of each of the first `outputs` outputs in `sink` (C corners an output), 0 where not finite. */
function keepFiniteFigures(sink: OutputSink, outputs: number, C: number, k: number): void {
  const { current, headroom } = sink;
  for (let o = outputs - 1; o >= 0; o--) {
    current[o * C + k] = finite(current[o * C + k]);
    headroom[o * C + k] = finite(headroom[o * C + k]);
  }
}

/** `measureCorner` for the structures listed in `only` alone. */
function measureListed(flat: MeasurementPlans, reader: PointIndexReader, buffers: CornerBuffers, k: number, only: Int32Array): void {
  for (let j = 0; j < only.length; j++) measureStructureAt(flat, only[j], reader, buffers, k, only[j], flat.outStart[only[j]]);
}

/** Measures plan p of `plans` at corner k into the buffers' places of structure i, whose first output is output `first` of the circuit. */
function measureStructureAt(plans: MeasurementPlans, p: number, reader: PointIndexReader, buffers: CornerBuffers, k: number, i: number, first: number): void {
  const { corners: C, iref, sink } = buffers;
  sink.first = first * C + k;
  runMeasurement(plans, p, reader, sink, iref, i * C + k);
  iref[i * C + k] = finite(iref[i * C + k]);
  const { current, headroom } = sink;
  const last = first + plans.outStart[p + 1] - plans.outStart[p];
  for (let o = first; o < last; o++) {
    current[o * C + k] = finite(current[o * C + k]);
    headroom[o * C + k] = finite(headroom[o * C + k]);
  }
}

/**
 * Measures the structures an edit reached on the point of the parts solved alone (`CornerStart.parts`), which holds
 * every element they read when it `covers` them: those elements, and no derived voltage (read by node name, which a
 * part's circuit may lack).
 */
class PartMeasurement {
  private readonly touched: Structure[];
  private covered: { circuit: Circuit; covers: boolean } | undefined;

  constructor(
    private readonly reuse: CornerReuse,
    structures: readonly Structure[],
    private readonly indices: Int32Array,
  ) {
    this.touched = Array.from(indices, (i) => structures[i]);
  }

  covers(parts: PartPoint): boolean {
    if (this.covered?.circuit !== parts.circuit) {
      const held = new Set(parts.elements);
      const covers = this.touched.every((s) => !s.voltages?.length) && this.reuse.members.every((e) => held.has(e));
      this.covered = { circuit: parts.circuit, covers };
    }
    return this.covered.covers;
  }

  measure(parts: PartPoint, flat: MeasurementPlans, buffers: CornerBuffers, k: number): void {
    const topo = topologyOf(parts.circuit);
    const plans = plannedMeasurements(topo, this.touched);
    const reader = readerOf(parts.op, topo);
    const { indices } = this;
    for (let j = 0; j < indices.length; j++) measureStructureAt(plans, j, reader, buffers, k, indices[j], flat.outStart[indices[j]]);
  }
}

/** The voltage names of a structure that produces none, shared (a corner column only reads them). */
const NO_VOLTAGES = Object.freeze([]) as unknown as string[];

/**
 * Empty corner columns for every structure, each a view of one buffer per quantity for the whole
 * circuit: a typed array per quantity per structure was an allocation of its own (100,000 of them
 * at 100,000 elements) scattered over the heap, which every corner then wrote into. The corner loop
 * writes the buffers themselves.
 */
function cornerColumnsOf(structures: Structure[], axis: CornerAxis): { columns: CornerColumns[]; buffers: CornerBuffers } {
  const C = axis.labels.length;
  let outputs = 0;
  let voltages = 0;
  for (let i = 0; i < structures.length; i++) {
    outputs += structures[i].outputs.length;
    voltages += structures[i].voltages?.length ?? 0;
  }
  const buffers = new CornerBuffers(structures.length, outputs, voltages, C);
  const store: CornerStore = { iref: buffers.iref, iout: buffers.sink.current, headroom: buffers.sink.headroom, outOfRegion: buffers.sink.outOfRegion, volts: buffers.volts };
  let o = 0;
  let v = 0;
  const columns = new Array<CornerColumns>(structures.length);
  for (let i = 0; i < structures.length; i++) {
    const s = structures[i];
    // Most structures produce no voltage: they share one empty list, which every corner column keeps.
    const voltageNames = s.voltages && s.voltages.length > 0 ? s.voltages.map((x) => x.name) : NO_VOLTAGES;
    // Views of the buffers made when read; the output names read from the structure's list of outputs (never changed after recognition).
    columns[i] = new CornerColumnViews(axis, store, i, o, s.outputs, v, voltageNames);
    o += s.outputs.length;
    v += voltageNames.length;
  }
  return { columns, buffers };
}

const V = (v: number): string => formatEngineering(v, { unit: 'V' });
const A = (v: number): string => formatEngineering(v, { unit: 'A' });

function regionName(s: Structure): string {
  return technologyFacts(s.technology)?.activeRegion ?? 'active';
}

function edgeName(s: Structure): string {
  return technologyFacts(s.technology)?.edge ?? 'the edge of its active region';
}

function listLabels(labels: string[], max = 4): string {
  if (labels.length <= max) return labels.join('; ');
  return `${labels.slice(0, max).join('; ')}; and ${labels.length - max} more`;
}

function relatedOf(el: Element): RelatedLocation[] | undefined {
  if (el.origin.instances.length === 0) return undefined;
  return el.origin.instances.map((i) => ({ uri: i.uri, span: i.span, message: `instance ${i.name}` }));
}

/**
 * Output o's corner findings, appended to `out` (made when the first is): its nominal figures are at `at` of `nominal`
 * (measured as a one-corner column, non-finite figures 0), its corner figures in `cols`, and only converged corners count.
 * Each extreme is the first corner that reaches it (as the corner summary names it); the output's element is looked up and
 * the messages made only when there is a finding.
 */
/** Whether the structure's reference carries no current at the nominal point (below the noise floor of currents). */
function referenceOff(s: Structure): boolean {
  const iref = s.solved?.iref;
  return iref !== undefined && belowFloor(iref, 'A');
}

function outputFindings(s: Structure, device: string, elements: { get(name: string): Element | undefined }, nominal: OutputSink, at: number, cols: CornerColumns, o: number, options: ResolvedOptions, converged: number, out: Finding[] | undefined): Finding[] | undefined {
  // An output already out of region (or short of headroom) at nominal is the nominal checks' finding, not a corner one.
  if (nominal.outOfRegion[at] === 1) return out;
  const C = cols.axis.labels.length;
  const { labels } = cols.axis;
  const { iout, headroom, outOfRegion } = cols;
  const start = o * C;
  // Positions in the columns: the least and largest current, the least headroom, and the worst corner out of region.
  let minCurrent = -1;
  let maxCurrent = -1;
  let minHeadroom = -1;
  let worst = -1;
  let outCount = 0;
  for (let q = start; q < start + C; q++) {
    if (cols.axis.converged[q - start] !== 1) continue;
    if (minCurrent < 0 || iout[q] < iout[minCurrent]) minCurrent = q;
    if (maxCurrent < 0 || iout[q] > iout[maxCurrent]) maxCurrent = q;
    if (minHeadroom < 0 || headroom[q] < headroom[minHeadroom]) minHeadroom = q;
    if (outOfRegion[q]) {
      outCount++;
      if (worst < 0 || headroom[q] < headroom[worst]) worst = q;
    }
  }
  if (minCurrent < 0) return out;
  const margin = options.headroomMarginV;
  const nominalHeadroom = nominal.headroom[at];
  const nom = nominal.current[at];
  const lowHeadroom = outCount === 0 && headroom[minHeadroom] < margin && nominalHeadroom >= margin;
  const low = iout[minCurrent] / nom - 1;
  const high = iout[maxCurrent] / nom - 1;
  // A mirror whose reference carries nothing at nominal (no feed, or a supply that cannot bias it: the nominal checks'
  // error) has outputs that carry only leakage; how leakage moves across the corners is no spread of a bias current.
  const spread = nom > 0 && (low < -SPREAD_LIMIT || high > SPREAD_LIMIT) && !referenceOff(s);
  if (outCount === 0 && !lowHeadroom && !spread) return out;
  const el = elements.get(device);
  if (!el) return out;
  out ??= [];
  const base = { uri: el.origin.uri, span: el.origin.span, related: relatedOf(el) };
  if (outCount > 0) {
    const outLabels: string[] = [];
    const others: string[] = [];
    for (let q = start; q < start + C; q++) {
      if (cols.axis.converged[q - start] !== 1 || !outOfRegion[q]) continue;
      outLabels.push(labels[q - start]);
      if (q !== worst) others.push(labels[q - start]);
    }
    const worstHeadroom = headroom[worst];
    const past = Math.max(0, -worstHeadroom);
    out.push({
      ...base,
      code: 'corner-output-out-of-region',
      severity: CORNER_CODES['corner-output-out-of-region'].severity,
      message:
        `${el.name} is ${regionName(s)} at nominal (headroom ${V(nominalHeadroom)}) but leaves it at ${outCount} of ${converged} corners; ` +
        `the worst is ${labels[worst - start]}, ${past > 0 ? `${V(past)} past ${edgeName(s)}` : `at ${edgeName(s)}`} (headroom ${V(worstHeadroom)}).` +
        (outCount > 1 ? ` Also out at: ${listLabels(others)}.` : ''),
      data: {
        structureId: s.id,
        device: el.name,
        corner: labels[worst - start],
        headroom: worstHeadroom,
        nominalHeadroom,
        corners: outLabels,
      },
    });
  } else if (lowHeadroom) {
    const corner = labels[minHeadroom - start];
    out.push({
      ...base,
      code: 'corner-headroom-low',
      severity: CORNER_CODES['corner-headroom-low'].severity,
      message: `${el.name} stays ${regionName(s)} at every corner, but its headroom falls from ${V(nominalHeadroom)} at nominal to ${V(headroom[minHeadroom])} at ${corner}, below the ${V(margin)} margin.`,
      data: { structureId: s.id, device: el.name, corner, headroom: headroom[minHeadroom], nominalHeadroom, margin },
    });
  }
  if (spread) {
    const minCorner = labels[minCurrent - start];
    const maxCorner = labels[maxCurrent - start];
    out.push({
      ...base,
      code: 'corner-current-spread',
      severity: CORNER_CODES['corner-current-spread'].severity,
      message: `${el.name}'s output current of ${A(nom)} ranges from ${A(iout[minCurrent])} (${formatPercent(low)}, at ${minCorner}) to ${A(iout[maxCurrent])} (${formatPercent(high)}, at ${maxCorner}) across ${converged} corners.`,
      data: {
        structureId: s.id,
        device: el.name,
        nominal: nom,
        min: iout[minCurrent],
        max: iout[maxCurrent],
        minCorner,
        maxCorner,
      },
    });
  }
  return out;
}

function finite(x: number | undefined): number {
  return x !== undefined && Number.isFinite(x) ? x : 0;
}
