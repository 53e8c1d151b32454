// The analysis worker thread: runs the engine off the server's main thread and answers sweeps, sizing and sizing fixes from its own last analyses.

import { parentPort, threadId, workerData } from 'node:worker_threads';
import type { Analysis } from '../../shared-analysis/src/analysis';
import { outputCharacteristic } from '../../shared-analysis/src/features/sweep';
import type { SizingResult } from '../../shared-analysis/src/fixes/resistor-for-current';
import { sizingFixes } from '../../shared-analysis/src/fixes/index';
import { addCorners, analyseSession, AnalysisStopped, monteCarloChunk, prepareMonteCarlo, type MonteCarloSetup } from '../../shared-analysis/src/service';
import { monteCarloFigures } from '../../shared-analysis/src/variation/monte-carlo';
import { histogramText, spreadText } from '../../shared-analysis/src/variation/text';
import { formatEngineering } from '../../shared-analysis/src/fixes/format';
import type { MonteCarloReply } from './protocol';
import type { DcSolver, DcSolveResult } from '../../shared-analysis/src/solve/dc';
import { cornerColumns, plainColumns, type CornerColumns } from '../../shared-analysis/src/structures/corner-columns';
import type { ParsedDocument } from '../../shared-analysis/src/syntax/ast';
import { LineIndex } from '../../shared-analysis/src/syntax/line-index';
import type { Span } from '../../shared-analysis/src/types';
import { COLLECT_FROM_ELEMENTS, collectAndReleaseGarbage, collectGarbage } from './collect';
import { FileWorkspace } from './file-workspace';
import { splitAnalysisLazily, type AnalysisPart, type SentAnalysis } from './analysis-transfer';
import { sizeResistor } from './sizing';
import { SMALL_RESULT_PARTS, STOP_GENERATION, type FromWorker, type ToWorker } from './worker-messages';
import { nameTable } from '../../shared-analysis/src/names';
import type { WarmStart } from '../../shared-analysis/src/solve/warm-start';
import { revertValueEdit, type IncrementalState } from '../../shared-analysis/src/incremental';
import { SpreadSender } from './spread-transfer';
import { pushParts } from './pushed-parts';
import type { Finding } from '../../shared-analysis/src/types';

const workspace = new FileWorkspace();
/** The stop flag shared with the main thread (absent when the worker was started without one). */
const stopFlag: Int32Array | undefined = workerData && (workerData as { stop?: Int32Array }).stop;
/** The check the engine makes before each stage and corner: has the main thread moved the generation past `generation`? */
const stopper = (generation: number) => (stopFlag ? () => Atomics.load(stopFlag, STOP_GENERATION) !== generation : undefined);
const openTexts = new Map<string, string>();
/** The part builders of the last analysis still being taken in by the main thread, by request id (each dropped once sent). */
let outgoing: { id: number; parts: ((() => AnalysisPart) | undefined)[] } | undefined;

/** What a corner phase came to: its findings, or why it did not finish. */
type CornerOutcome = { findings: Finding[] } | { failed: string; stopped: boolean };

/** What the worker keeps of a root's last analysis to answer sweeps and sizing without re-solving. */
interface Kept {
  /** The id of the `analyse` request it answered. */
  requestId: number;
  /** The analysis; its `documents` are the parsed ones only when a finding asks for sizing (cards are then needed), else text-only stand-ins. */
  analysis: Analysis;
  texts: Map<string, string>;
  solver?: DcSolver;
  /** The converged nominal solution, kept only until the corner phase has run. */
  nominal?: DcSolveResult;
  /** Sizing results shared by the fixes of this analysis (a finding asked twice is sized once). */
  sizingCache: Map<string, SizingResult>;
}
const lastAnalysis = new Map<string, Kept>();
/** The last spread result posted for each root: the next one sends only the outputs whose record changed (`spread-transfer.ts`). */
const spreads = new SpreadSender(`${threadId}`);
/**
 * Per root, what was sent of its recent analyses (cards, elements), by request id: the latest and the one the
 * main thread last said it holds (the only ones a next analysis can be compared with).
 */
const sentAnalyses = new Map<string, Map<number, SentAnalysis>>();
/** Per root, the last converged nominal solution, for the next analysis of an edited text to start Newton from. */
const warmStarts = new Map<string, WarmStart>();
/** Per root, what the next analysis of a value edit reuses (its solver, structures and hand analysis); see `incremental.ts`. */
const incrementals = new Map<string, IncrementalState>();

function post(msg: FromWorker, transfer?: ArrayBuffer[]): void {
  parentPort?.postMessage(msg, transfer);
}

function errorText(e: unknown): string {
  return e instanceof Error ? `${e.message}${e.stack ? `\n${e.stack}` : ''}` : String(e);
}

/** The kept analysis that holds `uri`: its own, or one of a netlist that includes it. */
function keptHolding(uri: string): Kept | undefined {
  const own = lastAnalysis.get(uri);
  if (own) return own;
  for (const a of lastAnalysis.values()) if (a.texts.has(uri)) return a;
  return undefined;
}

/** Text-only documents (no cards): enough for reading a value field's text; the parsed cards are large and the main thread has them. */
function textDocuments(texts: Map<string, string>): Record<string, ParsedDocument> {
  const out: Record<string, ParsedDocument> = nameTable();
  for (const [uri, text] of texts) out[uri] = { uri, text, cards: [], errors: [] };
  return out;
}

/** Monte Carlo in progress per root: the rebuilt setup and every run's values so far. */
const monteCarlo = new Map<string, { analysis: Analysis; seed: number; setup: MonteCarloSetup; samples: number[][]; runs: number; converged: number }>();

/** One chunk of Monte Carlo runs; `first` = 0 starts afresh on the current analysis. */
function monteCarloStep(uri: string, analysis: Analysis, msg: { seed: number; first: number; count: number; finish: boolean }): MonteCarloReply | { error: string } {
  let state = monteCarlo.get(uri);
  if (msg.first === 0 || !state || state.analysis !== analysis || state.seed !== msg.seed || state.runs !== msg.first) {
    if (msg.first !== 0) return { error: 'The netlist changed while Monte Carlo ran; start it again.' };
    const setup = prepareMonteCarlo(analysis);
    if (!setup) return { error: 'Monte Carlo needs a converged operating point with recognised structures or targets.' };
    state = { analysis, seed: msg.seed, setup, samples: setup.detail.specs.map(() => []), runs: 0, converged: 0 };
    monteCarlo.set(uri, state);
  }
  if (msg.count > 0) {
    const r = monteCarloChunk(state.setup, { runs: msg.count, seed: msg.seed, first: msg.first });
    r.samples.forEach((xs, o) => {
      for (const x of xs) state!.samples[o].push(x);
    });
    state.runs += r.runs;
    state.converged += r.converged;
  }
  if (!msg.finish) return { runs: state.runs, converged: state.converged };
  monteCarlo.delete(uri);
  const report: string[] = [];
  // The analysis's own outputs (and so its structures') get the figures: an output-characteristic request on this analysis shows the histogram.
  const own = new Map((state.analysis.variation?.outputs ?? []).map((o) => [o.key, o]));
  state.setup.detail.result.outputs.forEach((o, k) => {
    const figures = monteCarloFigures(state!.samples[k], 20, o.target, state!.runs);
    const mine = own.get(o.key);
    if (mine && figures) mine.monteCarlo = figures;
    else if (mine) delete mine.monteCarlo;
    const shown = { ...o, monteCarlo: figures };
    report.push(`${o.structure ? `${o.structure} ` : ''}${o.output}: nominal ${formatEngineering(o.nominal, { unit: o.unit, digits: 4 })}`);
    report.push(`  linear: ${spreadText(o)}`);
    const line = histogramText(shown);
    if (line) report.push(`  ${line}`);
  });
  return { runs: state.runs, converged: state.converged, report };
}

function handle(msg: ToWorker): void {
  switch (msg.type) {
    case 'set-document':
      workspace.setOpen(msg.uri, msg.text);
      if (msg.text === undefined) {
        // A closed big netlist's analysis is left to V8 here, not collected at once: a full collection then gave up the
        // compiled code the next netlist's edits run on, and a 2,000-element netlist edited after a closed 20,000-element
        // one took twice the engine time per edit (docs/PERFORMANCE.md, "At the end of the late-evening session").
        openTexts.delete(msg.uri);
        lastAnalysis.delete(msg.uri);
        sentAnalyses.delete(msg.uri);
        warmStarts.delete(msg.uri);
        incrementals.delete(msg.uri);
        spreads.forget(msg.uri);
      } else openTexts.set(msg.uri, msg.text);
      return;
    case 'files-changed':
      workspace.invalidate(msg.uris);
      return;
    case 'read-policy':
      workspace.setPolicy(msg.policy);
      workspace.invalidate();
      return;
    case 'analyse': {
      const text = openTexts.get(msg.uri);
      if (text === undefined) {
        post({ type: 'failed', id: msg.id, message: `The document ${msg.uri} is not open in the server.` });
        return;
      }
      const t0 = performance.now();
      // The state is the next session's once an analysis takes it: it comes back only when the analysis stops half-way.
      const previous = incrementals.get(msg.uri);
      incrementals.delete(msg.uri);
      try {
        // Free the previous analysis of this root before building the next (peak memory holds one, not two).
        // Not when its incremental state is handed on: the state keeps that circuit and solver alive through the
        // analysis anyway, so a full collection (150–200 ms at 20,000 elements) would free little, on the path to
        // the diagnostics of an edit.
        const dropped = lastAnalysis.get(msg.uri)?.analysis.circuit?.elements.length ?? 0;
        lastAnalysis.delete(msg.uri);
        outgoing = undefined;
        if (dropped >= COLLECT_FROM_ELEMENTS && !previous) collectGarbage();
        const options = msg.cornersLater ? { ...msg.options, corners: { ...(msg.options.corners ?? {}), enabled: false } } : msg.options;
        const control = { shouldStop: stopper(msg.generation), warmStart: warmStarts.get(msg.uri), previous, keepIncremental: msg.cornersLater === true };
        const session = analyseSession({ uri: msg.uri, text, version: msg.version }, workspace.forRoot(msg.uri), options, control);
        if (session.warmStart) warmStarts.set(msg.uri, session.warmStart);
        else warmStarts.delete(msg.uri);
        if (session.incremental) incrementals.set(msg.uri, session.incremental);
        // The corner phase needs the requested corner settings back, with corners on.
        if (msg.cornersLater) session.analysis.options = { ...session.analysis.options, corners: { ...session.analysis.options.corners, ...(msg.options.corners ?? {}), enabled: true } };
        const cornersNext = msg.cornersLater === true && session.nominal !== undefined && session.analysis.structures.length > 0;
        const analysis = session.analysis;
        const texts = new Map(Object.entries(analysis.documents).map(([u, d]) => [u, d.text] as [string, string]));
        const needsCards = analysis.findings.some((f) => f.data?.['sizing'] !== undefined);
        const kept: Kept = {
          requestId: msg.id,
          // The corner phase reads the targets from the parsed cards (stand-ins without cards gave it none): kept until it has run.
          analysis: { ...analysis, documents: needsCards || cornersNext ? analysis.documents : textDocuments(texts) },
          texts,
          // The prepared solver is large for big circuits; keep it only when a finding will ask for sizing (the refactor builds its own).
          solver: needsCards || cornersNext ? session.solver : undefined,
          nominal: cornersNext ? session.nominal : undefined,
          sizingCache: new Map(),
        };
        lastAnalysis.set(msg.uri, kept);
        const sentBefore = sentAnalyses.get(msg.uri);
        const held = msg.held !== undefined ? sentBefore?.get(msg.held) : undefined;
        const { header, parts, findingParts, prepare } = splitAnalysisLazily(analysis, held, session.incremental?.structures.map((k) => k.firstPass));
        const keep = (sent: SentAnalysis) => sentAnalyses.set(msg.uri, new Map([...(held ? [[msg.held!, held] as const] : []), [msg.id, sent] as const]));
        const ms = performance.now() - t0;
        if (parts.length <= SMALL_RESULT_PARTS) {
          // Small: the header, whose findings the main thread publishes before it merges anything, then every part in
          // one message. Made before either is posted: while they are made the main thread answers from the last
          // result, whose diagnostics the editor still has (requests wait only for the merge).
          keep(prepare());
          const all = parts.map((make) => make());
          post({ type: 'analysed', id: msg.id, analysis: header, parts: parts.length, findingParts, ms, sendMs: performance.now() - t0 - ms, partsFollow: true });
          post({ type: 'parts', id: msg.id, parts: all, sendMs: performance.now() - t0 - ms });
        } else if (cornersNext) {
          // Every part goes now: the main thread asks for the corner phase once it has taken them in, and the worker
          // answers no part request while that phase runs.
          post({ type: 'analysed', id: msg.id, analysis: header, parts: parts.length, findingParts, ms, sendMs: performance.now() - t0 - ms, pushed: true });
          pushParts(post, msg.id, parts, 0, findingParts);
          keep(prepare());
          pushParts(post, msg.id, parts, findingParts, parts.length);
        } else {
          outgoing = { id: msg.id, parts };
          post({ type: 'analysed', id: msg.id, analysis: header, parts: parts.length, findingParts, ms, sendMs: performance.now() - t0 - ms });
          // The main thread publishes the findings while the cards are encoded here.
          keep(prepare());
        }
        // The session (parsed cards, solver scratch) is garbage once this handler returns: collected, and collected again so
        // that its pages go back to the system before the main thread's take-in peaks (see collectAndReleaseGarbage). Not after a value edit that
        // reused the last analysis's solver: a full collection then frees only that edit's garbage, but also gives up
        // the compiled code that held objects of the replaced analysis, and the next edit ran on that code's slower
        // tiers (on the 20,000-element array the worker's CPU for an edit about 1.6 times as much; docs/PERFORMANCE.md).
        const valueEdit = previous !== undefined && session.solver === previous.solver;
        if ((analysis.circuit?.elements.length ?? 0) >= COLLECT_FROM_ELEMENTS && !valueEdit) setImmediate(collectAndReleaseGarbage);
      } catch (e) {
        if (e instanceof AnalysisStopped && previous) {
          revertValueEdit(previous);
          incrementals.set(msg.uri, previous);
        }
        if (e instanceof AnalysisStopped) post({ type: 'failed', id: msg.id, message: e.message, stopped: true });
        else post({ type: 'failed', id: msg.id, message: `The analysis stopped with an internal error: ${errorText(e)}` });
      }
      return;
    }
    case 'drop-parts':
      if (outgoing && outgoing.id === msg.analysisId) outgoing = undefined;
      return;
    case 'next-parts':
      for (const { id, index } of msg.asks) {
        const build = outgoing && outgoing.id === msg.analysisId ? outgoing.parts[index] : undefined;
        if (!build) {
          post({ type: 'failed', id, message: `Part ${index} of analysis ${msg.analysisId} is no longer available.` });
          continue;
        }
        outgoing!.parts[index] = undefined;
        if (index === outgoing!.parts.length - 1) outgoing = undefined;
        post({ type: 'part', id, index, part: build() });
      }
      return;
    case 'monte-carlo': {
      const kept = keptHolding(msg.uri);
      if (!kept) {
        post({ type: 'monte-carlo-ran', id: msg.id, result: { error: `There is no finished analysis of ${msg.uri} yet.` } });
        return;
      }
      try {
        post({ type: 'monte-carlo-ran', id: msg.id, result: monteCarloStep(msg.uri, kept.analysis, msg) });
      } catch (e) {
        post({ type: 'failed', id: msg.id, message: `Monte Carlo stopped with an internal error: ${errorText(e)}` });
      }
      return;
    }
    case 'sweep': {
      const kept = keptHolding(msg.uri);
      if (!kept) {
        post({ type: 'swept', id: msg.id, result: { error: `There is no finished analysis of ${msg.uri} yet.` } });
        return;
      }
      try {
        post({ type: 'swept', id: msg.id, result: outputCharacteristic(kept.analysis, msg.device, msg.points) });
      } catch (e) {
        post({ type: 'failed', id: msg.id, message: `The sweep stopped with an internal error: ${errorText(e)}` });
      }
      return;
    }
    case 'size-resistor': {
      const kept = keptHolding(msg.uri);
      if (!kept) {
        post({ type: 'sized', id: msg.id, result: { error: `There is no finished analysis of ${msg.uri} yet.` } });
        return;
      }
      try {
        const toRange = (uri: string, span: Span) => {
          const text = kept.texts.get(uri);
          if (text === undefined) return undefined;
          const index = new LineIndex(text);
          return { start: index.positionAt(span.start, msg.encoding), end: index.positionAt(span.end, msg.encoding) };
        };
        post({ type: 'sized', id: msg.id, result: sizeResistor(kept.analysis, msg.resistor, msg.target, { documents: kept.analysis.documents, toRange, solver: kept.solver }) });
      } catch (e) {
        post({ type: 'failed', id: msg.id, message: `Sizing stopped with an internal error: ${errorText(e)}` });
      }
      return;
    }
    case 'corners': {
      const kept = lastAnalysis.get(msg.uri);
      if (!kept || kept.analysis.version !== msg.version || (msg.analysisId !== undefined && kept.requestId !== msg.analysisId) || !kept.solver || !kept.nominal) {
        post({ type: 'cornered', id: msg.id, findings: [], corners: {}, stale: true });
        return;
      }
      // Solved once: a second request finds nothing to solve (the main thread asks once per analysis).
      const outcome = solveCorners(msg.uri, kept, msg.generation);
      if ('failed' in outcome) {
        post({ type: 'failed', id: msg.id, message: outcome.failed, stopped: outcome.stopped });
        return;
      }
      // Each structure's corners as columns: a few typed arrays cross to the main thread, no per-corner records.
      const corners: Record<string, CornerColumns> = nameTable();
      for (const st of kept.analysis.structures) {
        const cols = cornerColumns(st);
        // As data members: the engine's columns are views made when read, which a structured clone would not copy.
        if (cols) corners[st.id] = plainColumns(cols);
      }
      const variation = kept.analysis.variation ? spreads.message(msg.uri, kept.analysis.variation, msg.heldSpread) : undefined;
      post({ type: 'cornered', id: msg.id, findings: outcome.findings, corners, ...(variation ? { variation } : {}) });
      return;
    }
    case 'sizing-fixes': {
      const kept = lastAnalysis.get(msg.uri);
      const a = kept?.analysis;
      if (!kept || !a || !a.circuit || !kept.solver || a.version !== msg.version) {
        post({ type: 'sizing-fixed', id: msg.id, fixes: msg.findings.map(() => []), stale: true });
        return;
      }
      const ctx = { circuit: a.circuit, solver: kept.solver, structures: a.structures, documents: a.documents, options: a.options, cache: kept.sizingCache, point: a.operatingPoint };
      // sizingFixes never throws; each finding is sized on its own (shared cache).
      post({ type: 'sizing-fixed', id: msg.id, fixes: msg.findings.map((f) => sizingFixes(f, ctx)) });
      return;
    }
  }
}

/**
 * Solves the corners of the analysis sent last (analysed with `cornersLater`) when the main thread asks, once it has
 * taken the result in. Solved beside that take-in instead, the phase and the take-in shared the two cores with the
 * editor, and the 20k array's hover p99 while editing rose from about 30 to 70-170 ms with the corner findings no sooner
 * (docs/PERFORMANCE.md). A newer edit stops it at the engine's next check, as it stops an analysis.
 */
function solveCorners(uri: string, kept: Kept, generation: number): CornerOutcome {
  const nominal = kept.nominal!;
  // Spent either way: after a stop the next analysis replaces this one, and its structures keep no half-filled corners.
  kept.nominal = undefined;
  let findings: Finding[];
  try {
    plantedCornerFault(generation);
    findings = addCorners(kept.analysis, { solver: kept.solver!, nominal, shouldStop: stopper(generation), incremental: incrementals.get(uri) });
  } catch (e) {
    return e instanceof AnalysisStopped ? { failed: e.message, stopped: true } : { failed: `The corner phase stopped with an internal error: ${errorText(e)}`, stopped: false };
  }
  if (!kept.analysis.findings.some((f) => f.data?.['sizing'] !== undefined)) {
    kept.solver = undefined;
    kept.analysis = { ...kept.analysis, documents: textDocuments(kept.texts) };
  }
  return { findings };
}

/**
 * For the server's tests only: `QPOINT_TEST_CORNER_FAULT=hold` makes a corner phase wait before it starts until the
 * stop generation moves (at most 20 s), so a test can supersede it at a known point; `throw` makes it throw there (an
 * internal error outside the engine's own guard). Unset, it does nothing.
 */
function plantedCornerFault(generation: number): void {
  const fault = process.env['QPOINT_TEST_CORNER_FAULT'];
  if (fault === 'throw') throw new Error('planted corner-phase fault for the tests');
  if (fault !== 'hold' || !stopFlag) return;
  // The main thread moves the generation without a notify: look every 5 ms.
  const until = Date.now() + 20_000;
  while (Atomics.load(stopFlag, STOP_GENERATION) === generation && Date.now() < until) Atomics.wait(stopFlag, STOP_GENERATION, generation, 5);
}

parentPort?.on('message', (msg: ToWorker) => {
  try {
    handle(msg);
  } catch (e) {
    const id = 'id' in msg && typeof msg.id === 'number' ? msg.id : -1;
    post({ type: 'failed', id, message: errorText(e) });
  }
});
