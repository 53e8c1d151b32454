// The engine's facade: one call from netlist text to a complete, plain-data Analysis.

import { resolveOptions, type Analysis, type AnalysisOptions, type ResolvedOptions } from './analysis';
import { parse, startsWithDefinitionCard } from './syntax/parser';
import { elaborate } from './elaborate/index';
import { checkConnectivity } from './checks/connectivity';
import { DcSolver, withoutNetlistDuplicates, type DcSolveResult } from './solve/dc';
import { SolveStopped } from './solve/newton';
import { unknownsFingerprint, type WarmStart } from './solve/warm-start';
import { feedLoops } from './structures/loops';
import { topologyOf } from './structures/topology';
import { recogniseStructures } from './structures/recognise';
import { analyseStructures } from './checks/structures';
import { judgeEachDevice, limitDeviceFlood } from './checks/devices/index';
import { checkPlausibility } from './checks/plausibility';
import { runCorners, type CornerStats } from './checks/corners';
import { checkStartup, fillStartupCorners } from './checks/startup';
import { readTargets, checkTargets } from './checks/targets';
import { attachFixes, attachSizingFixes, sizingFixes, type SizingFixContext } from './fixes/index';
import type { ParsedDocument } from './syntax/ast';
import { limitIncludedExcerpts } from './excerpts';
import type { Finding, Fix, Location, Workspace } from './types';
import { netlistSeverity } from './checks/netlist';
import { pushAll } from './arrays';
import type { Circuit } from './circuit';
import type { Structure } from './structures/types';
import type { Target } from './checks/targets';
import { seriesTolerance } from './fixes/e-series';
import { checkYield } from './checks/variation';
import { analyseVariation, attachVariation, spreadRecordOf, unkeptSpread, type VariationDetail } from './variation/index';
import type { SpreadReuse } from './variation/reuse';
import type { VariationResult } from './variation/types';
import { runMonteCarlo, type MonteCarloOptions, type MonteCarloResult } from './variation/monte-carlo';
import { nameTable } from './names';
import { clampFindingSpans, keepFinite } from './output-guard';
import { cornerStarts, IncrementalKeeper, keptCorners, keptSpread, patchedElaborationOf, reparsedDocument, ValueEdit, type IncrementalState } from './incremental';
import { elaborationSettings, keptElaboration } from './incremental-elaborate';

declare const performance: { now(): number };

/** The text of the netlist to analyse; `uri` is the id the Workspace resolves includes against. */
export interface AnalysisInput {
  uri: string;
  text: string;
  version?: number;
}

/**
 * An Analysis together with what a host keeps to answer later requests on it without
 * re-solving: the prepared solver of the analysed circuit and its nominal solution (both
 * absent when nothing was solved). Not plain data; it stays in the process that analysed.
 */
export interface AnalysisSession {
  analysis: Analysis;
  solver?: DcSolver;
  nominal?: DcSolveResult;
  /** The spread analysis behind `analysis.variation` (sources and derivatives), for Monte Carlo. */
  variation?: VariationDetail;
  /** What the next analysis of an edited version may start its nominal solve from (absent when it must start cold). */
  warmStart?: WarmStart;
  /** What the next analysis of an edited version may reuse when only values changed (asked for with `AnalysisControl.keepIncremental`). */
  incremental?: IncrementalState;
}

/**
 * Analyses one top-level netlist: parse, elaborate, netlist checks, DC operating point,
 * structure recognition and hand analysis, corners, targets, fixes. Never throws for any
 * input text; every problem is a finding. Resistor-sizing fixes of `target-missed` findings
 * are not computed here (each costs several solves): the finding carries `data.sizing`, and
 * `sizingFixesOf` computes them on demand.
 */
export function analyse(input: AnalysisInput, workspace: Workspace, options: AnalysisOptions = {}): Analysis {
  return analyseSession(input, workspace, options).analysis;
}

/**
 * Thrown out of `analyseSession` and `addCorners` when their `shouldStop` answers true at one of
 * their checks (before each stage, between corner solves): the analysis was of a text that is no
 * longer current. Nothing half-done is returned.
 */
export class AnalysisStopped extends Error {
  constructor() {
    super('The analysis was stopped: its text was superseded.');
  }
}

/** How a host can stop an analysis it no longer needs: asked before each stage, before every Newton iteration of the nominal and corner solves, and between corner solves. */
export interface AnalysisControl {
  shouldStop?: () => boolean;
  /**
   * The `warmStart` of the session of the previous version of this text: the nominal solve starts
   * Newton from its solution when the unknowns are the same (see `analyseSession`).
   */
  warmStart?: WarmStart;
  /**
   * The host analyses this text once and starts no later analysis from it (the CLI): the session gets no
   * `warmStart`, whose fingerprint of the unknowns costs a pass over every element's name and nodes.
   */
  oneShot?: boolean;
  /**
   * The `incremental` state of the session of the previous version of this text. When the edit changed only
   * resistor values, the analysis takes the state's prepared solver (moved to the new values in place) and
   * structures, and analyses again only the structures the edit can have changed (`incremental.ts`); the
   * result is a cold analysis's. The state is then the new session's: reuse it only through that session.
   * When the analysis stops half-way, `revertValueEdit(previous)` makes it usable again.
   */
  previous?: IncrementalState;
  /** Keep what the next analysis of an edited version may reuse (`AnalysisSession.incremental`): the first pass of a host that solves corners later. */
  keepIncremental?: boolean;
}

/** `analyse`, also returning the prepared solver and the nominal solution for `addCorners` and `sizingFixesOf`. */
export function analyseSession(input: AnalysisInput, workspace: Workspace, options: AnalysisOptions = {}, control: AnalysisControl = {}): AnalysisSession {
  const resolved = resolveOptions(options);
  const timings: Record<string, number> = nameTable();
  const timed = <T>(stage: string, run: () => T): T => {
    if (control.shouldStop?.()) throw new AnalysisStopped();
    const t0 = performance.now();
    try {
      return run();
    } finally {
      timings[stage] = (timings[stage] ?? 0) + performance.now() - t0;
    }
  };

  // A file whose first line is a definition card is a model or library file opened on its own: it has no title.
  // After an edit inside one element card only that card is read again (`reparsedDocument`).
  const previous = control.previous?.uri === input.uri ? control.previous : undefined;
  const reread = previous?.document ? timed('parse', () => reparsedDocument(previous.document!, input.text)) : undefined;
  const root = reread ?? timed('parse', () => parse(input.uri, input.text, { hasTitle: !startsWithDefinitionCard(input.text) }));
  // After an edit of one resistor's number only that element changes (`patchedElaboration`).
  const settings = { temperatureC: resolved.temperatureC, includeFolders: options.includeFolders, maxElements: options.maxElements };
  const patched = previous && reread ? timed('elaborate', () => patchedElaborationOf(previous, reread, elaborationSettings(settings))) : undefined;
  const elab = patched?.result ?? timed('elaborate', () => elaborate(root, workspace, settings));
  // What the next edit's patch starts from, taken before the analysis attaches fixes to the findings.
  const keptElab = control.keepIncremental ? (patched?.kept ?? keptElaboration(elab, elaborationSettings(settings))) : undefined;
  // Text in an `.if` branch no instance takes does not exist for the analysis: its syntax problems are not reported.
  const findings: Finding[] = [...withoutInactive(syntaxFindings(elab.documents), elab.inactive), ...elab.findings];
  const circuit = elab.circuit;
  // A value edit keeps the structures recognition found (recognition reads a resistor only as positive and finite, which such an edit keeps).
  const edit = control.previous ? timed('structures', () => ValueEdit.of(control.previous!, input.uri, input.text, elab, resolved, patched)) : undefined;
  const connectivity = timed('connectivity', () => edit?.keptConnectivity() ?? checkConnectivity(circuit));
  // Copies into the analysis: fixes are attached to its findings and spans clamped in place, and the kept ones stay as the check made them.
  pushAll(findings, connectivity.map((f) => ({ ...f })));
  const structures = edit ? [] : timed('structures', () => recogniseStructures(circuit));
  const keeper = control.keepIncremental ? new IncrementalKeeper(edit, structures) : undefined;
  let operatingPoint: Analysis['operatingPoint'];
  let solver: DcSolver | undefined;
  let nominal: DcSolveResult | undefined;
  let variation: VariationResult | undefined;
  let variationDetail: VariationDetail | undefined;
  let devices: (Finding[] | undefined)[] | undefined;
  // A value edit keeps the unknowns, and so their fingerprint.
  let fingerprint: string | undefined = edit?.previous.unknowns;
  if (resolved.solve && circuit.elements.length > 0) {
    timed('solve', () => {
      solver = edit?.solver ?? new DcSolver(circuit);
      try {
        // The stop check is also asked before every Newton iteration, so a long solve of a superseded text ends early.
        const cold = { temperatureC: resolved.temperatureC, shouldStop: control.shouldStop };
        const warm = control.warmStart;
        // A value edit keeps the unknowns: Newton starts from the last version's solution and needs a few
        // iterations instead of a cold start's many. Not for a circuit with a self-biased loop, which has a
        // second (off) state a warm start could keep where a cold start would not; and a warm start that
        // does not converge is dropped for the cold one, so the answer is always the cold start's point. After a value
        // edit the start is also solved anew in the parts the edit reached (`nominalStart`): one iteration then.
        const tryWarm = warm !== undefined && warm.x.length === solver.unknownCount && warm.unknowns === (fingerprint ??= unknownsFingerprint(circuit)) && !hasSelfBiasedLoop(circuit, structures);
        if (tryWarm) {
          const w = solver.solve({ ...cold, initialGuess: edit?.nominalStart(warm, cold) ?? warm.x, initialGuessTemperatureC: warm.temperatureC });
          if (w.op.converged) nominal = w;
        }
        nominal ??= solver.solve(cold);
      } catch (e) {
        if (e instanceof SolveStopped) throw new AnalysisStopped();
        throw e;
      }
    });
    if (nominal && solver) {
      const result = nominal;
      const dc = solver;
      operatingPoint = result.op;
      if (edit) pushAll(structures, timed('structures', () => edit.structuresAt(result)));
      pushAll(findings, withoutNetlistDuplicates(result.findings, findings));
      pushAll(findings, timed('hand-analysis', () => analyseStructures({ circuit, op: result.op, structures, options: resolved, kept: edit?.keptFindings, record: keeper?.record })));
      // A value edit judges again only the devices of the parts of the circuit where the point moved.
      const judge = (only?: (element: number) => boolean) => judgeEachDevice({ circuit, op: result.op, structures, options: resolved }, only);
      devices = timed('devices', () => (edit ? edit.deviceFindings(judge) : judge()));
      pushAll(findings, limitDeviceFlood(devices ?? []));
      // A value edit keeps the structures of an analysis that had no self-biased loop, which is all the start-up check looks at.
      if (result.op.converged && !edit) pushAll(findings, timed('startup', () => checkStartup({ circuit, structures, op: result.op, options: resolved })));
      if (resolved.corners.enabled && structures.length > 0 && result.op.converged) {
        pushAll(findings, timed('corners', () => runCorners({ circuit, solver: dc, structures, options: resolved, nominal: result, shouldStop: control.shouldStop, stop: () => new AnalysisStopped() })));
        // The state each corner's solve chose, into the self-biased loops' start-up records (as addCorners does).
        fillStartupCorners(structures);
      }
      const targets = timed('targets', () => readTargets(elab.documents));
      targetsRead.set(elab.documents, targets.targets);
      pushAll(findings, targets.findings);
      pushAll(findings, timed('targets', () =>
          checkTargets({ circuit, op: result.op, structures, targets: targets.targets, options: resolved }),
        ));
      // A host that solves the corners in a second phase gets the spread of a large circuit there too (it costs a few solves' worth).
      const spreadNow = resolved.corners.enabled || dc.unknownCount <= FIRST_PASS_VARIATION_UNKNOWNS;
      if (resolved.variation.enabled && result.op.converged && spreadNow) {
        const failed = (e: unknown) => findings.push(partFailed('tolerance spread analysis', e, input.uri));
        const detail = timed('variation', () => variationOf(circuit, structures, elab.documents, dc, result, targets.targets, resolved, undefined, failed));
        if (detail) {
          variationDetail = detail;
          variation = detail.result;
          attachVariation(structures, detail.result);
          pushAll(findings, checkYield(circuit, structures, targets.targets, detail, resolved.variation.yieldTarget, elab.documents));
        }
      }
    }
  } else {
    pushAll(findings, analyseStructures({ circuit, op: undefined, structures, options: resolved }));
  }
  const implausible = timed('plausibility', () => checkPlausibility({ circuit, documents: elab.documents, op: nominal?.op, options: resolved }));
  if (implausible.length > 0) {
    // A device carrying kiloamperes is over its power rating too; the implausible current says why, once.
    const named = new Set(implausible.filter((f) => f.code === 'current-implausible').map((f) => String(f.data?.['device'])));
    // Likewise every element on a node driven far outside the rails: the node's finding names the cause.
    const far = new Set(implausible.filter((f) => f.code === 'node-outside-rails').map((f) => circuit.nodes.indexOf(String(f.data?.['node']))));
    for (const e of circuit.elements) if (e.nodes.some((n) => far.has(n))) named.add(e.name);
    let kept = 0;
    for (const f of findings) if (!(f.code === 'power-over-rating' && named.has(String(f.data?.['device'])))) findings[kept++] = f;
    findings.length = kept;
    pushAll(findings, implausible);
  }
  timed('fixes', () => attachFixes(findings, { documents: elab.documents, circuit, structures, options: resolved }));
  // Nothing leaves the engine with a range past its document's end or a number that is not finite.
  clampFindingSpans(findings, elab.documents);
  // A kept structure was walked when it was analysed (a state is kept only when nothing was removed), and nothing has written into it since.
  const notFinite = keepFinite(findings, { operatingPoint, ...(edit ? edit.analysedParts(structures) : { structures }), variation }, input.uri);
  if (notFinite) findings.push(notFinite);

  const analysis: Analysis = {
    uri: input.uri,
    version: input.version,
    documents: elab.documents,
    circuit,
    symbols: elab.symbols,
    inactive: elab.inactive,
    findings: capFindings(sortFindings(applySeverities(limitIncludedExcerpts(findings, input.uri, elab.documents, elab.symbols.includes), resolved), input.uri)),
    operatingPoint,
    structures,
    ...(variation ? { variation } : {}),
    options: resolved,
    timings,
  };
  const converged = nominal && nominal.op.converged ? nominal : undefined;
  const warmStart: WarmStart | undefined = converged && !control.oneShot ? { unknowns: (fingerprint ??= unknownsFingerprint(circuit)), x: converged.x, temperatureC: converged.op.temperatureC } : undefined;
  // A self-biased loop's state depends on where Newton starts, and a removed number leaves no finding to keep: the next edit starts afresh.
  const dc: DcSolver | undefined = solver;
  const incremental =
    keeper && converged && dc && !notFinite && (edit !== undefined || !hasSelfBiasedLoop(circuit, structures))
      ? keeper.state(input, resolved, { circuit, solver: dc, nominal: converged, structures, unknowns: (fingerprint ??= unknownsFingerprint(circuit)), connectivity, document: root, elaboration: keptElab, devices })
      : undefined;
  return { analysis, solver, nominal: converged, ...(variationDetail && converged ? { variation: variationDetail } : {}), ...(warmStart ? { warmStart } : {}), ...(incremental ? { incremental } : {}) };
}

/** Whether recognised structures feed each other round (a self-biased loop, which also balances at zero current). */
function hasSelfBiasedLoop(circuit: Circuit, structures: Structure[]): boolean {
  return structures.length > 0 && feedLoops(topologyOf(circuit), structures).length > 0;
}

/** Circuits up to this many unknowns get their spread in the first pass even when the corners come later (a few milliseconds). */
const FIRST_PASS_VARIATION_UNKNOWNS = 400;

/** What `addCorners` needs besides the Analysis: the session's solver and converged nominal solution. */
export interface CornerPhaseContext {
  solver: DcSolver;
  nominal: DcSolveResult;
  /** When given, filled with the corner solves' effort (solve vs measurement time). */
  stats?: CornerStats;
  /** Asked between corner solves; true stops the phase with `AnalysisStopped`. */
  shouldStop?: () => boolean;
  /**
   * The `incremental` state of the session whose analysis this is: after a value edit the corner solves start from
   * the last corner phase's solutions (see `cornerStarts`), and leave theirs for the next. Ignored when it belongs
   * to another analysis.
   */
  incremental?: IncrementalState;
}

/**
 * The targets the first pass read from each analysis' documents, for its corner phase: reading every
 * card's comments again cost about a tenth of a second per 40,000 elements. A host that rebuilt the
 * documents (another thread) reads them again.
 */
const targetsRead = new WeakMap<Record<string, ParsedDocument>, Target[]>();

/**
 * The second, slower phase for a host that analysed with `corners.enabled = false`: solves the
 * supply/temperature/beta corners, fills `structure.corners` of `analysis.structures`, records
 * `timings.corners`, computes the spread (`analysis.variation`, `structure.variation`) when the
 * first pass left it out, and returns the corner findings, the `target-missed-at-corner` and `target-yield-low` findings,
 * severities mapped and sorted like `analysis.findings`. `analysis.findings` itself is left as it
 * is (a host may have published indices into it). Returns [] when the nominal point did not
 * converge, there are no structures, or the options passed to `analyse` had no corners to
 * solve (every tolerance zero). Never throws.
 */
export function addCorners(analysis: Analysis, ctx: CornerPhaseContext): Finding[] {
  const circuit = analysis.circuit;
  if (!circuit || analysis.structures.length === 0 || !ctx.nominal.op.converged) return [];
  const t0 = performance.now();
  const options = { ...analysis.options, corners: { ...analysis.options.corners, enabled: true } };
  const findings: Finding[] = [];
  // A spread that kept records of the last one: the walk below looks only at what it made.
  let keptSpreadDetail: VariationDetail | undefined;
  try {
    const starts = cornerStarts(ctx.incremental, circuit, ctx.nominal);
    const kept = keptCorners(ctx.incremental, circuit, analysis.structures);
    pushAll(findings, runCorners({ circuit, solver: ctx.solver, structures: analysis.structures, options, nominal: ctx.nominal, stats: ctx.stats, shouldStop: ctx.shouldStop, stop: () => new AnalysisStopped(), ...starts, ...kept }));
    fillStartupCorners(analysis.structures);
    const targets = targetsRead.get(analysis.documents) ?? readTargets(analysis.documents).targets;
    pushAll(findings, checkTargets({ circuit, op: ctx.nominal.op, structures: analysis.structures, targets, options, findings: 'corners' }));
    if (!analysis.variation && options.variation.enabled) {
      // The spread analysis is a stage of its own: a superseded text stops before it.
      if (ctx.shouldStop?.()) throw new AnalysisStopped();
      const spread = keptSpread(ctx.incremental, circuit);
      const failed = (e: unknown) => findings.push(partFailed('tolerance spread analysis', e, analysis.uri));
      const detail = variationOf(circuit, analysis.structures, analysis.documents, ctx.solver, ctx.nominal, targets, options, spread.reuse, failed);
      if (detail) {
        spread.record(spreadRecordOf(detail));
        if (detail.kept) keptSpreadDetail = detail;
        analysis.variation = detail.result;
        attachVariation(analysis.structures, detail.result);
        pushAll(findings, checkYield(circuit, analysis.structures, targets, detail, options.variation.yieldTarget, analysis.documents));
      }
    }
  } catch (e) {
    if (e instanceof AnalysisStopped) throw e;
    // The corner phase is an addition; a failure leaves the first-phase analysis standing, and says so.
    findings.push(partFailed('corner analysis', e, analysis.uri));
  }
  analysis.timings['corners'] = (analysis.timings['corners'] ?? 0) + performance.now() - t0;
  clampFindingSpans(findings, analysis.documents);
  const unkept = keptSpreadDetail ? unkeptSpread(keptSpreadDetail) : undefined;
  const notFinite = keepFinite(findings, { ...cornerPhaseParts(analysis.structures, unkept?.structures), ...(unkept ? unkept.parts : { variation: analysis.variation }) }, analysis.uri);
  if (notFinite) findings.push(notFinite);
  return sortFindings(applySeverities(findings, analysis.options), analysis.uri);
}

/**
 * What the corner phase writes into the structures, named as their paths under `structures`: the
 * voltages' corner ranges, the start-up records' corners and the spread. The first pass's walk
 * covered the rest of every structure, and the walk leaves the corner columns (typed arrays) and the
 * lazily built `corners` records alone anyway; walking every structure again cost about a tenth of
 * the engine's corner phase at 100,000 elements. With `spreadOf`, only those structures' spread (the others
 * hold only records a spread analysis kept, finite).
 */
function cornerPhaseParts(structures: Structure[], spreadOf?: Set<string>): Record<string, unknown> {
  const parts = nameTable<unknown>();
  structures.forEach((s, i) => {
    if (s.voltages) parts[`structures[${i}].voltages`] = s.voltages;
    if (s.startup) parts[`structures[${i}].startup`] = s.startup;
    if (s.variation && (!spreadOf || spreadOf.has(s.id))) parts[`structures[${i}].variation`] = s.variation;
  });
  return parts;
}

/**
 * The resistor-value fixes of one `target-missed` finding of `session.analysis` (or a copy of
 * it, e.g. after a JSON round trip), computed now: a few DC solves. Empty for any other
 * finding, or when the session has no solver.
 */
export function sizingFixesOf(session: AnalysisSession, finding: Finding): Fix[] {
  const { analysis, solver } = session;
  if (!solver || !analysis.circuit) return [];
  return sizingFixes(finding, { circuit: analysis.circuit, solver, structures: analysis.structures, documents: analysis.documents, options: analysis.options, spread: spreadOf(analysis), point: analysis.operatingPoint });
}

/** The relative σ of each element's current from `analysis.variation`, for the sizing fixes' predicted yield. */
function spreadOf(analysis: Analysis): SizingFixContext['spread'] {
  const outputs = analysis.variation?.outputs;
  if (!outputs) return undefined;
  // Element (lower case) -> the first output current of it, built on first ask: a scan of every output per target cost targets × outputs.
  let byElement: Map<string, number | undefined> | undefined;
  return {
    yieldTarget: analysis.options.variation.yieldTarget,
    sigmaRelative: (element) => {
      if (!byElement) {
        byElement = new Map();
        for (const v of outputs) {
          const lower = v.element?.toLowerCase();
          if (lower !== undefined && !byElement.has(lower) && !v.key.endsWith(' iref') && v.unit === 'A') byElement.set(lower, v.sigmaRelative);
        }
      }
      return byElement.get(element.toLowerCase());
    },
  };
}

/**
 * Appends the sizing fixes to every `target-missed` finding of the session's analysis (for reports
 * that list all fixes). `stop`, asked before each target, ends the sizing early (a host's time
 * budget); returns how many missed targets were left unsized because of it.
 */
export function attachAllSizingFixes(session: AnalysisSession, stop?: () => boolean): number {
  const { analysis, solver } = session;
  // Sizing re-solves from the nominal solution; with none (no convergence) it would only spend time and find nothing.
  if (!solver || !analysis.circuit || !session.nominal) return 0;
  return attachSizingFixes(analysis.findings, { circuit: analysis.circuit, solver, structures: analysis.structures, documents: analysis.documents, options: analysis.options, spread: spreadOf(analysis), point: analysis.operatingPoint }, stop);
}

/** The variation analysis with the settings of `options` (resistor tolerance from the setting or the series, supply tolerance from the corners), keeping what `reuse` allows of the last one. */
export function variationOf(
  circuit: Circuit,
  structures: Structure[],
  documents: Record<string, ParsedDocument>,
  solver: DcSolver,
  nominal: DcSolveResult,
  targets: Target[],
  options: ResolvedOptions,
  reuse?: SpreadReuse,
  onFailure?: (e: unknown) => void,
): VariationDetail | undefined {
  try {
    const seriesTol = seriesTolerance(options.resistorSeries);
    const set = options.variation.resistorTolerance;
    const settings = { resistorTolerance: set ?? seriesTol, resistorFrom: set !== undefined ? ('setting' as const) : ('series' as const), supplyTolerance: options.corners.supplyTolerance };
    return analyseVariation({ circuit, structures, documents, solver, nominal, targets, settings, defaultTargetTolerance: seriesTol }, reuse);
  } catch (e) {
    // The spread is an addition; a failure leaves the rest of the analysis standing, and the caller says so.
    onFailure?.(e);
    return undefined;
  }
}

/**
 * The finding for a stage after the operating point (the corner analysis, the tolerance spread) that stopped on an
 * internal defect: what it would have added is left out and the rest of the analysis stands. Without it a document
 * would simply lack the stage's results, with nothing saying why.
 */
export function partFailed(part: string, e: unknown, uri: string): Finding {
  const reason = e instanceof Error ? e.message : String(e);
  return {
    code: 'analysis-part-failed',
    severity: 'warning',
    message: `The ${part} stopped because of an internal error (${reason}); its results are left out and the rest of the analysis stands. Please report this netlist.`,
    uri,
    span: { start: 0, end: 0 },
    data: { part, reason },
  };
}

/**
 * Monte Carlo on a session (docs/VARIATION.md): `options.runs` seeded re-solves drawing every
 * source of spread, on the session's prepared solver. Fills `monteCarlo` of every output of
 * `analysis.variation` (and so of `structure.variation`) and `analysis.variation.monteCarlo`.
 * Undefined when the session has no converged spread analysis. Never throws.
 */
export function monteCarloOf(session: AnalysisSession, options: MonteCarloOptions): MonteCarloResult | undefined {
  const { analysis, solver, nominal, variation } = session;
  if (!solver || !nominal || !variation || !analysis.circuit || !analysis.variation) return undefined;
  try {
    const t0 = performance.now();
    const r = runMonteCarlo(analysis.circuit, analysis.structures, solver, nominal, variation, options);
    analysis.variation.outputs.forEach((o, k) => {
      const figures = r.figures[k];
      if (figures) o.monteCarlo = figures;
      else delete o.monteCarlo;
    });
    analysis.variation.monteCarlo = { runs: r.runs, seed: r.seed, converged: r.converged, ms: r.ms };
    analysis.timings['monte-carlo'] = (analysis.timings['monte-carlo'] ?? 0) + performance.now() - t0;
    return r;
  } catch {
    return undefined;
  }
}

/** What a host keeps to run Monte Carlo on a finished analysis in chunks (`prepareMonteCarlo`). */
export interface MonteCarloSetup {
  analysis: Analysis;
  solver: DcSolver;
  nominal: DcSolveResult;
  detail: VariationDetail;
}

/**
 * Rebuilds what Monte Carlo needs from a finished analysis alone (a host that did not keep the
 * session): a prepared solver, the nominal solution and the spread analysis, re-reading the
 * documents' cards when the host kept only their texts. Undefined when nothing converges.
 */
export function prepareMonteCarlo(analysis: Analysis): MonteCarloSetup | undefined {
  const circuit = analysis.circuit;
  if (!circuit || circuit.elements.length === 0) return undefined;
  const documents: Record<string, ParsedDocument> = nameTable();
  for (const [uri, d] of Object.entries(analysis.documents)) {
    documents[uri] = d.cards.length > 0 || d.text.length === 0 ? d : parse(uri, d.text, { hasTitle: uri === analysis.uri && !startsWithDefinitionCard(d.text) });
  }
  const solver = new DcSolver(circuit);
  const nominal = solver.solve({ temperatureC: analysis.options.temperatureC });
  if (!nominal.op.converged) return undefined;
  const { targets } = readTargets(documents);
  const detail = variationOf(circuit, analysis.structures, documents, solver, nominal, targets, analysis.options);
  return detail ? { analysis, solver, nominal, detail } : undefined;
}

/** Runs `runs` Monte Carlo runs from run `first` on a setup (chunks of one seed add up to the same runs as one call). */
export function monteCarloChunk(setup: MonteCarloSetup, options: MonteCarloOptions): MonteCarloResult {
  const { analysis, solver, nominal, detail } = setup;
  return runMonteCarlo(analysis.circuit!, analysis.structures, solver, nominal, detail, options);
}

/** Findings that do not lie inside one of the inactive ranges. */
function withoutInactive(findings: Finding[], inactive: readonly Location[]): Finding[] {
  if (inactive.length === 0) return findings;
  return findings.filter((f) => !inactive.some((r) => r.uri === f.uri && r.span.start <= f.span.start && f.span.end <= r.span.end));
}

/** Parser errors of every document read, as findings. */
function syntaxFindings(documents: Record<string, ParsedDocument>): Finding[] {
  const out: Finding[] = [];
  for (const doc of Object.values(documents)) {
    for (const e of doc.errors) {
      const f: Finding = { code: e.code, severity: e.severity ?? 'error', message: e.message, uri: doc.uri, span: e.span };
      if (e.data) f.data = e.data;
      out.push(f);
    }
  }
  return out;
}

/** The one place user severity settings apply: a code mapped to 'off' is dropped. */
export function applySeverities(findings: Finding[], options: ResolvedOptions): Finding[] {
  const out: Finding[] = [];
  for (const f of findings) {
    const override = options.severities[f.code];
    if (override === 'off') continue;
    out.push(override ? { ...f, severity: override } : f);
  }
  return out;
}

/** Per document, a code raised more often than this is listed this many times plus one summary. */
export const MAX_FINDINGS_PER_CODE = 50;

/**
 * Flood control: in each document, the first MAX_FINDINGS_PER_CODE findings of a code are kept and
 * the rest replaced by one `findings-capped` finding (at the first one left out) that gives the
 * count in its message and in `data` (`code`, `total`, `shown`, `hidden`). Keeps the order.
 */
export function capFindings(findings: Finding[]): Finding[] {
  const totals = new Map<string, number>();
  let over = false;
  for (const f of findings) {
    const key = `${f.uri}\u0000${f.code}`;
    const n = (totals.get(key) ?? 0) + 1;
    totals.set(key, n);
    if (n > MAX_FINDINGS_PER_CODE) over = true;
  }
  if (!over) return findings;
  const seen = new Map<string, number>();
  const out: Finding[] = [];
  for (const f of findings) {
    const key = `${f.uri}\u0000${f.code}`;
    const n = (seen.get(key) ?? 0) + 1;
    seen.set(key, n);
    if (n <= MAX_FINDINGS_PER_CODE) out.push(f);
    else if (n === MAX_FINDINGS_PER_CODE + 1) {
      const total = totals.get(key)!;
      const hidden = total - MAX_FINDINGS_PER_CODE;
      out.push({
        code: 'findings-capped',
        severity: netlistSeverity('findings-capped'),
        message: `\`${f.code}\` is raised ${total} times in this file; the first ${MAX_FINDINGS_PER_CODE} are listed and the other ${hidden} are not.`,
        uri: f.uri,
        span: { start: f.span.start, end: f.span.end },
        data: { code: f.code, total, shown: MAX_FINDINGS_PER_CODE, hidden },
      });
    }
  }
  return out;
}

/** Root document first, then by document id, offset and code, so output is deterministic. */
function sortFindings(findings: Finding[], rootUri: string): Finding[] {
  return findings.sort((a, b) => {
    if (a.uri !== b.uri) {
      if (a.uri === rootUri) return -1;
      if (b.uri === rootUri) return 1;
      return a.uri < b.uri ? -1 : 1;
    }
    return a.span.start - b.span.start || a.span.end - b.span.end || (a.code < b.code ? -1 : a.code > b.code ? 1 : 0);
  });
}
