// The qpoint language server: keeps the last analysis of every open netlist, runs new ones in a worker, and answers editor requests from the cache.

import { basename, join } from 'node:path';
import * as nodePath from 'node:path';
import {
  CodeAction,
  CodeActionKind,
  Command,
  createConnection,
  DidChangeConfigurationNotification,
  ErrorCodes,
  FileChangeType,
  LSPErrorCodes,
  MessageType,
  ProposedFeatures,
  ResponseError,
  TextDocuments,
  TextDocumentSyncKind,
  type CodeActionParams,
  type ExecuteCommandParams,
  ShowMessageNotification,
  ShowMessageRequest,
  type Connection,
  type Diagnostic,
  type InitializeParams,
  type InitializeResult,
  type Position,
  type TextDocumentContentChangeEvent,
  type WorkDoneProgressServerReporter,
} from 'vscode-languageserver/node';
import type { Analysis } from '../../shared-analysis/src/analysis';
import { hasSolvedFixes } from '../../shared-analysis/src/fixes/index';
import type { Finding, Fix } from '../../shared-analysis/src/types';
import { completionListAt } from '../../shared-analysis/src/features/completion';
import { WorkBudget } from '../../shared-analysis/src/features/budget';
import { cardAt, elementsOfCard, indexOf } from '../../shared-analysis/src/features/document-index';
import { hoverAt, prepareHoverSteps } from '../../shared-analysis/src/features/hover';
import { inlayHints } from '../../shared-analysis/src/features/inlay';
import { definitionAt, prepareRename, referencesAt, renameAt } from '../../shared-analysis/src/features/navigation';
import { documentSymbols } from '../../shared-analysis/src/features/symbols';
import { LineIndex, type PositionEncoding } from '../../shared-analysis/src/syntax/line-index';
import { parse } from '../../shared-analysis/src/syntax/parser';
import {
  INACTIVE_TEXT_NOTIFICATION,
  LIST_OUTPUTS_REQUEST,
  MONTE_CARLO_REQUEST,
  OUTPUT_CHARACTERISTIC_REQUEST,
  REANALYSE_COMMAND,
  SIZE_RESISTOR_REQUEST,
  SIZE_COMMAND,
  type InactiveTextParams,
  SIZE_SERVER_COMMAND,
  CLIENT_COMMANDS_OPTION,
  type SizeCommandArgs,
  type SizeCommandResult,
  type ListOutputsParams,
  type ListOutputsResult,
  type MonteCarloParams,
  type MonteCarloReply,
  type OutputCharacteristicParams,
  type OutputCharacteristicResult,
  type SizeResistorParams,
  type SizeResistorResult,
} from './protocol';
import { DEFAULT_SETTINGS, layerSections, sectionOfInitializationOptions, settingsFromConfiguration, type ServerSettings } from './settings';
import {
  Converters,
  toCompletionItem,
  toDiagnostic,
  toDocumentSymbol,
  toHover,
  toInlayHint,
  toLocations,
  toQuickFix,
  toWorkspaceEdit,
  type ConverterLookup,
  type DiagnosticData,
  type PositionConverter,
} from './to-lsp';
import { structureOfResistor } from './sizing';
import { AnalysisStoppedError, inSlices, mainThreadTrace, MERGE_SLICE_MS, threadClock, traced, WorkerHost, WorkerRestartedError } from './worker-host';
import { adoptKeptCards } from './analysis-transfer';
import { COLLECT_FROM_ELEMENTS, collectGarbage } from './collect';
import { FrameError, StrictStreamReader } from './strict-reader';
import { ImmediateStreamWriter } from './stream-writer';
import { defaultPolicy, isNetworkPath, type ReadPolicy } from './read-policy';
import { fileURLToPath, pathToFileURL } from 'node:url';
import { pushAll } from '../../shared-analysis/src/arrays';
import { seriesValues } from '../../shared-analysis/src/fixes/e-series';
import { formatEngineering, formatPercent } from '../../shared-analysis/src/fixes/format';
import { attachVariationSteps } from '../../shared-analysis/src/variation/index';
import type { VariationResult } from '../../shared-analysis/src/variation/types';
import { SpreadReceiver } from './spread-transfer';
import { setCornerColumns } from '../../shared-analysis/src/structures/corner-columns';
import { summariseVoltageCorners } from '../../shared-analysis/src/structures/voltages';
import { fillStartupCorners } from '../../shared-analysis/src/checks/startup';

/** Analyses running longer than this get a progress report. */
const PROGRESS_AFTER_MS = 500;
/** A run that was superseded by an edit is abandoned (worker restarted) once it has run this much longer than expected. */
const SUPERSEDED_GRACE_MS = 3000;
/** Nothing the worker does may take longer than this. */
const HARD_DEADLINE_MS = 120_000;
/**
 * Every editor feature answered on the main thread runs within a work budget: at most this long
 * (the clock is read every few hundred units of work) ...
 */
const FEATURE_DEADLINE_MS = 150;
/**
 * ... and at most this many units of work (a card, an instance, a use looked at). Past either the
 * feature returns what it has, marked partial its own way (an outline entry, an incomplete completion
 * list, a line in the hover), and a rename refuses rather than rename some uses. The count can be
 * lowered for tests with QPOINT_FEATURE_BUDGET_UNITS, so a cut is reproducible without timing.
 */
const FEATURE_UNITS = Number(process.env['QPOINT_FEATURE_BUDGET_UNITS']) > 0 ? Number(process.env['QPOINT_FEATURE_BUDGET_UNITS']) : 5_000_000;

/** A fresh budget for one editor request. */
function featureBudget(): WorkBudget {
  return new WorkBudget(FEATURE_UNITS, FEATURE_DEADLINE_MS);
}

/** Logs that a feature's answer was cut at its budget (the answer itself says so where the protocol lets it). */
function noteCut(name: string, uri: string, budget: WorkBudget): void {
  if (budget.exhausted) log(`The ${name} answer for ${basename(uri)} was cut at the editor's budget (${FEATURE_DEADLINE_MS} ms or ${FEATURE_UNITS.toLocaleString('en-US')} units of work; ${budget.spent.toLocaleString('en-US')} spent).`);
}
/**
 * How long a code-action request waits for the worker to size resistors for missed targets.
 * A worker busy with a long analysis answers later; the request then goes without those fixes,
 * and the late answer is kept for the next request on the same analysis.
 */
const SIZING_WAIT_MS = 800;
/** Completion parses the live text of a document up to this size (characters); a bigger one is read from its last analysis. */
const LIVE_PARSE_LIMIT = 250_000;

/** One open editor document, its text kept in sync by incremental changes in the negotiated encoding. */
class OpenDocument {
  constructor(
    readonly uri: string,
    readonly languageId: string,
    public version: number,
    public text: string,
  ) {}
}

/** What the server keeps of one root netlist: its last finished analysis. */
interface CacheEntry {
  analysis: Analysis;
  /** How long the worker took for it (ms), to judge when a superseded run is far past its time. */
  ms: number;
}

/**
 * Over stdio the messages are read strictly: a malformed frame ends the server with a logged
 * reason (the client then restarts it) instead of leaving it alive and silent. Over node IPC
 * there is no framing to go wrong.
 */
const strictReader = process.argv.includes('--stdio')
  ? new StrictStreamReader(process.stdin, Number(process.env['QPOINT_FRAME_STALL_MS']) > 0 ? Number(process.env['QPOINT_FRAME_STALL_MS']) : undefined)
  : undefined;
const connection: Connection = strictReader
  ? createConnection(ProposedFeatures.all, strictReader, new ImmediateStreamWriter(process.stdout))
  : createConnection(ProposedFeatures.all);
strictReader?.onError((e) => {
  if (!(e instanceof FrameError)) return;
  process.stderr.write(`[qpoint] The connection is closed: ${e.message} The client should start the server again.\n`);
  host.dispose();
  // Exit code 1: the editor's client restarts a server that ends this way.
  setTimeout(() => process.exit(1), 50);
});
let encoding: PositionEncoding = 'utf-16';
let settings: ServerSettings = DEFAULT_SETTINGS;
/** The `qpoint` section of initializationOptions (the starting values), and the client's own section, pulled or pushed, laid over it. */
let initialSection: unknown;
let clientSection: unknown;
let canPullConfiguration = false;
let canRefreshInlays = false;
let canReportProgress = false;
/** The client takes snippets in completion items (placeholders in element and model templates). */
let canSnippet = false;
/** The client applies workspace edits the server sends (workspace/applyEdit). */
let canApplyEdit = false;
/** The client answers window/showMessageRequest with the action the user picked. */
let canAskUser = false;
/** The client runs SIZE_COMMAND itself (it says so in initializationOptions.clientCommands): the sizing refactor runs that. */
let clientSizes = false;
const converters = new Converters();
const cache = new Map<string, CacheEntry>();
/** The spread result of each root's last corner phase taken in, which the next one's message is told against (`spread-transfer.ts`). */
const spreads = new SpreadReceiver();
const published = new Set<string>();
const timers = new Map<string, ReturnType<typeof setTimeout>>();
const queue = new Set<string>();
let running: { uri: string; version: number; started: number; superseded: boolean } | undefined;
let shuttingDown = false;
/** Set by the client (`initializationOptions.workspaceTrusted: false`) for an untrusted workspace: no file is read from disk. */
let workspaceTrusted = true;
/** The open folders, as local paths: includes may read their trees. */
let workspaceRoots: string[] = [];

/** Tells the worker what it may read: the open folders' trees (and each netlist's own), or anything when the setting allows. */
function sendReadPolicy(): void {
  const folders = searchFolderPaths();
  // The search folders are the engine's too: it looks there for an include not found beside its netlist.
  settings.options.includeFolders = folders.map((f) => pathToFileURL(f).href);
  const policy: ReadPolicy = { ...defaultPolicy([...workspaceRoots, ...folders]), trusted: workspaceTrusted, anywhere: settings.includesAnywhere };
  host.setReadPolicy(policy);
}

/** `qpoint.includes.searchFolders` as local paths: absolute ones as written, relative ones under the first workspace folder; never network paths. */
function searchFolderPaths(): string[] {
  const out: string[] = [];
  for (const f of settings.includeSearchFolders) {
    if (isNetworkPath(f)) {
      log(`The search folder ${JSON.stringify(f)} is a network path; qpoint never reads those.`);
      continue;
    }
    if (nodePath.isAbsolute(f)) out.push(nodePath.resolve(f));
    else if (workspaceRoots[0] !== undefined) out.push(nodePath.resolve(workspaceRoots[0], f));
    else log(`The search folder ${JSON.stringify(f)} is relative, but no workspace folder is open to resolve it against; it is not searched.`);
  }
  return out;
}

/** Local paths of the workspace folders an initialize request names (file: URIs only). */
function folderPaths(params: InitializeParams): string[] {
  const uris = params.workspaceFolders?.map((f) => f?.uri) ?? (params.rootUri ? [params.rootUri] : []);
  const out: string[] = [];
  for (const u of uris) {
    if (typeof u !== 'string' || !u.startsWith('file:')) continue;
    try {
      const url = new URL(u);
      if (url.host === '' || url.host === 'localhost') out.push(fileURLToPath(url));
    } catch {
      // Not a usable folder URI: it adds no root.
    }
  }
  return out;
}

function log(message: string): void {
  connection.console.log(`[qpoint] ${message}`);
}

const host = new WorkerHost({ script: join(__dirname, 'analysis-worker.js'), log, hardDeadlineMs: HARD_DEADLINE_MS });

const documents = new TextDocuments<OpenDocument>({
  create: (uri, languageId, version, content) => {
    if (!isVersion(version)) log(`${uri} was opened with version ${JSON.stringify(version)}, which is not a whole number; it is taken as version 0.`);
    return new OpenDocument(uri, languageId, isVersion(version) ? version : 0, typeof content === 'string' ? content : '');
  },
  update: (doc, changes, version) => applyChanges(doc, changes, version),
});

/** Applies incremental changes with positions in the negotiated encoding; out-of-order versions are refused and logged. */
/** A document version as the protocol defines it: an integer (a string "5" is not one). */
function isVersion(v: unknown): v is number {
  return typeof v === 'number' && Number.isSafeInteger(v);
}

function applyChanges(doc: OpenDocument, changes: TextDocumentContentChangeEvent[], version: number): OpenDocument {
  if (!isVersion(version)) {
    log(`Ignored a change to ${doc.uri} with version ${JSON.stringify(version)}: a version must be a whole number.`);
    return doc;
  }
  if (version <= doc.version) {
    log(`Ignored a change to ${doc.uri} with version ${version}: the document is already at version ${doc.version} (changes must arrive in order).`);
    return doc;
  }
  let text = doc.text;
  for (const change of changes) {
    if (!change || typeof change.text !== 'string') continue;
    if ('range' in change && change.range) {
      const index = new LineIndex(text);
      const a = index.offsetAt(change.range.start, encoding);
      const b = index.offsetAt(change.range.end, encoding);
      const [start, end] = a <= b ? [a, b] : [b, a];
      text = text.slice(0, start) + change.text + text.slice(end);
    } else text = change.text;
  }
  doc.text = text;
  doc.version = version;
  return doc;
}

// ---- Analysis cache lookups -------------------------------------------------------------

/** The cached analysis that holds `uri`: its own when it is a root, else that of a netlist including it. */
function holderOf(uri: string): CacheEntry | undefined {
  const own = cache.get(uri);
  if (own) return own;
  for (const entry of cache.values()) if (entry.analysis.documents[uri]) return entry;
  return undefined;
}

/** True when another analysed netlist includes this document, so it is not analysed as a netlist of its own. */
function includedByAnother(uri: string): boolean {
  for (const [root, entry] of cache) if (root !== uri && entry.analysis.documents[uri]) return true;
  return false;
}

/** Converters for the texts an analysis read (so positions and offsets agree with what was analysed). */
function lookupFor(analysis: Analysis): ConverterLookup {
  return (uri) => {
    const text = analysis.documents[uri]?.text ?? documents.get(uri)?.text;
    return text === undefined ? undefined : converters.get(uri, text);
  };
}

/** The holder of a document and the converter of its analysed text, or undefined when nothing is known of it. */
function featureContext(uri: unknown): { analysis: Analysis; conv: PositionConverter; lookup: ConverterLookup } | undefined {
  if (typeof uri !== 'string') return undefined;
  const entry = holderOf(uri);
  if (!entry) return undefined;
  const lookup = lookupFor(entry.analysis);
  const conv = lookup(uri);
  return conv ? { analysis: entry.analysis, conv, lookup } : undefined;
}

function checkPosition(pos: unknown): Position {
  const p = pos as Position | undefined;
  if (!p || typeof p.line !== 'number' || typeof p.character !== 'number' || !Number.isFinite(p.line) || !Number.isFinite(p.character)) {
    throw new ResponseError(ErrorCodes.InvalidParams, 'The request needs a position with numeric line and character.');
  }
  return { line: Math.max(0, Math.floor(p.line)), character: Math.max(0, Math.floor(p.character)) };
}

/** When the editor last asked something; a full collection waits for a quiet moment so it does not land inside a hover. */
let lastRequestAt = 0;
/** Quiet time a deferred collection of a replaced analysis waits for. */
const COLLECT_QUIET_MS = 300;
/**
 * Quiet time before a closed large netlist's analysis is collected: a short lull, so requests already coming in
 * (the next document's) are answered first. Closing is a single event, not a stream of edits, and what the closed
 * analysis holds is garbage from then on; waited for as long as a replaced one's, it stayed resident while the worker
 * analysed the next netlist, whose edits grow the worker's heap by a few megabytes each until its own next collection:
 * in `bench:server` the 2,000-element netlist's ten edits ran before the main thread's collection on a quiet machine,
 * and the whole run peaked about 40 MB above the large netlist's take-in (docs/PERFORMANCE.md).
 */
const COLLECT_CLOSED_QUIET_MS = 50;
/** The collection waiting for a quiet moment (one wait serves every analysis dropped meanwhile): its quiet time, timer and what it frees. */
let collectionWaiting: { quietMs: number; timer: ReturnType<typeof setTimeout>; what: string[] } | undefined;

/**
 * Runs a full collection, freeing `what`, once no request has arrived for `quietMs`. It never runs while requests keep
 * coming: a forced full collection holds this thread for 25–500 ms at 50,000 elements (by the machine's load), longer
 * than any request may wait, and V8 collects the garbage itself meanwhile, in small steps, when the heap needs it. A
 * wait already running serves the new garbage too, and takes the shorter quiet time of the two.
 */
function freeWhenQuiet(what: string, quietMs = COLLECT_QUIET_MS): void {
  if (collectionWaiting) {
    if (!collectionWaiting.what.includes(what)) collectionWaiting.what.push(what);
    if (collectionWaiting.quietMs <= quietMs) return;
    clearTimeout(collectionWaiting.timer);
  }
  const list = collectionWaiting?.what ?? [what];
  // Checked when the quiet time since the last request would end, not a whole quiet time after each check.
  const poll = () => {
    const wait = lastRequestAt + waiting.quietMs - Date.now();
    if (wait > 0) {
      waiting.timer = setTimeout(poll, wait).unref();
      return;
    }
    collectionWaiting = undefined;
    const t0 = Date.now();
    collectGarbage();
    log(`Freed ${waiting.what.join(' and ')} in ${Date.now() - t0} ms.`);
  };
  const waiting = { quietMs, what: list, timer: setTimeout(poll, Math.max(0, lastRequestAt + quietMs - Date.now())).unref() };
  collectionWaiting = waiting;
}

/** Runs a request handler; an exception is logged and answered as an LSP error, never taking the server down. */
function guard<P, R>(name: string, fn: (params: P) => R | Promise<R>): (params: P) => Promise<R> {
  return async (params: P) => {
    lastRequestAt = Date.now();
    // The protocol: after shutdown, every request but exit fails with InvalidRequest.
    if (shuttingDown) throw new ResponseError(ErrorCodes.InvalidRequest, `The server is shutting down; the ${name} request is not answered.`);
    if (settling) await settling;
    const started = performance.now();
    const clock = mainThreadTrace.on ? threadClock() : undefined;
    try {
      return await fn(params);
    } catch (e) {
      if (e instanceof ResponseError) throw e;
      const message = e instanceof Error ? e.message : String(e);
      log(`The ${name} request failed: ${e instanceof Error && e.stack ? e.stack : message}`);
      throw new ResponseError(ErrorCodes.InternalError, `qpoint could not answer the ${name} request: ${message}`);
    } finally {
      traced(`${name} request`, started, clock);
    }
  };
}

// ---- Scheduling --------------------------------------------------------------------------

/** Re-analyses `uri` after the quiet time (each new call restarts the wait). */
function schedule(uri: string, delay = settings.analysisDelayMs): void {
  if (shuttingDown) return;
  const t = timers.get(uri);
  if (t) clearTimeout(t);
  timers.set(
    uri,
    setTimeout(() => {
      timers.delete(uri);
      queue.add(uri);
      void pump();
    }, delay),
  );
  if (running && running.uri === uri && !running.superseded) {
    running.superseded = true;
    const job = running;
    // The worker stops it at the engine's next check (before a stage, between corner solves); the
    // restart below is only for a check that never comes.
    host.stopRunning();
    // Only a run with a known typical duration can be "far past" it; a first run is left to the hard deadline.
    const expected = cache.get(uri)?.ms;
    if (expected === undefined) return;
    setTimeout(() => {
      if (running === job) {
        log(`The superseded analysis of ${uri} is still running after ${Math.round((Date.now() - job.started) / 1000)} s; restarting the worker.`);
        host.restart();
      }
    }, Math.max(SUPERSEDED_GRACE_MS, 3 * expected));
  }
}

/** The roots to re-analyse when `uri` changed: itself when it is a netlist of its own, and every netlist that reads it. */
function dependants(uri: string): string[] {
  const out = new Set<string>();
  for (const [root, entry] of cache) {
    if (root === uri) continue;
    const a = entry.analysis;
    if (a.documents[uri] || a.symbols.includes.some((i) => i.target === uri)) out.add(root);
  }
  return [...out];
}

/** While the rest of a small result whose diagnostics were published is merged: what requests wait for. */
let settling: Promise<void> | undefined;
let settled: (() => void) | undefined;

/** Lets the requests waiting for a small result's rest go on (it was accepted, or will not be). */
function settle(): void {
  settled?.();
  settling = undefined;
  settled = undefined;
}

/** Per open root, how long its last small result's merge took (ms); see `pump` for what it decides. */
const smallMergeMs = new Map<string, number>();

async function pump(): Promise<void> {
  if (running || shuttingDown) return;
  const next = queue.values().next();
  if (next.done) return;
  const uri = next.value;
  queue.delete(uri);
  const doc = documents.get(uri);
  if (!doc || includedByAnother(uri)) {
    void pump();
    return;
  }
  const job = { uri, version: doc.version, started: Date.now(), superseded: false };
  running = job;
  let progress: WorkDoneProgressServerReporter | undefined;
  let progressTimer: ReturnType<typeof setTimeout> | undefined;
  if (canReportProgress) {
    progressTimer = setTimeout(() => {
      void connection.window
        .createWorkDoneProgress()
        .then((p) => {
          if (running !== job) return p.done();
          progress = p;
          p.begin('qpoint', undefined, `Analysing ${basename(uri)}`, false);
        })
        .catch(() => undefined);
    }, PROGRESS_AFTER_MS);
  }
  try {
    // Corners cost many solves: publish the nominal findings first, the corner findings after.
    const cornersLater = settings.options.corners?.enabled !== false;
    // A large result's diagnostics go out as soon as its findings are in; while the rest is taken in (seconds, in
    // slices), hovers and the rest answer from the last analysis (a code action on a new diagnostic waits for that).
    // A small result's go out from its header too when the root's last small merge fit in one slice: requests that
    // arrive until it is accepted wait for that merge (`settling`), so each answers from the result whose diagnostics
    // the editor has, and waits about as long as for a slice. Otherwise (a netlist's first results, whose merges are the
    // slowest while V8 is not yet warmed to them, or a loaded machine) they go out when the result is accepted, and
    // requests meanwhile answer from the last analysis, whose diagnostics the editor still has, between the merge's
    // slices: waiting for all of such a merge set the 2,000-element netlist's hover and inlay p99 (docs/PERFORMANCE.md).
    let early: Set<string> | undefined;
    // A small result whose diagnostics went out is accepted even when an edit superseded it meanwhile: the editor's
    // diagnostics come from it, and the requests held for it answer from it.
    let publishedSmall = false;
    const earlySmall = (smallMergeMs.get(uri) ?? Number.POSITIVE_INFINITY) <= MERGE_SLICE_MS;
    const fresh = (a: Analysis) => !job.superseded && documents.get(uri)?.version === a.version;
    const onFindings = (partial: Analysis, small: boolean) => {
      if ((small && !earlySmall) || !fresh(partial)) return false;
      early = new Set([uri, ...Object.keys(partial.documents)]);
      const publishing = performance.now();
      publish(early, uri, partial);
      traced('publishing the findings', publishing);
      if (small) {
        settling ??= new Promise<void>((r) => (settled = r));
        publishedSmall = true;
      }
      return true;
    };
    const { analysis, ms, sendMs, transferMs, small } = await host.analyse(uri, job.version, settings.options, { cornersLater, onFindings, held: cache.get(uri)?.analysis });
    if (small && documents.get(uri)) smallMergeMs.set(uri, transferMs);
    log(`Analysed ${basename(uri)} (version ${job.version}) in ${Math.round(ms)} ms in the worker, then ${Math.round(sendMs)} ms preparing it to send; taking the result in took ${transferMs} ms; ${Math.round(Date.now() - job.started)} ms in all.`);
    const current = documents.get(uri);
    if (current && (current.version === analysis.version || publishedSmall)) {
      accept(uri, analysis, ms, early);
      settle();
      // The corners are asked for once the result is taken in: see `solveCorners` in the worker for why not sooner.
      if (cornersLater && analysis.structures.length > 0 && !job.superseded) await addCornerResults(uri, analysis, await collectCorners(uri, analysis));
    }
    // A result for an older version is dropped: its offsets no longer match the text; the newer run is queued.
  } catch (e) {
    if (!((e instanceof WorkerRestartedError || e instanceof AnalysisStoppedError) && job.superseded)) {
      const message = e instanceof Error ? e.message : String(e);
      log(`Analysis of ${uri} failed: ${message}`);
      if (!job.superseded) publishFailure(uri, message);
    }
  } finally {
    settle();
    if (progressTimer) clearTimeout(progressTimer);
    progress?.done();
    running = undefined;
    void pump();
  }
}

/** A corner phase collected from the worker, and when it was asked for. */
interface CornerOutcome {
  result: Awaited<ReturnType<WorkerHost['corners']>>;
  asked: number;
}

/** Has the worker solve the corner phase of `analysis`, just accepted, and collects it (undefined when it did not finish). */
async function collectCorners(uri: string, analysis: Analysis): Promise<CornerOutcome | undefined> {
  const asked = Date.now();
  let result: CornerOutcome['result'];
  try {
    result = await host.corners(uri, analysis.version ?? 0, { heldSpread: spreads.heldId(uri), of: analysis });
  } catch (e) {
    // The nominal diagnostics stay published; only the corner additions are lost.
    log(`The corner phase of ${basename(uri)} did not finish: ${e instanceof Error ? e.message : String(e)}`);
    return undefined;
  }
  return { result, asked };
}

function addCornerFindings(uri: string, analysis: Analysis, outcome: CornerOutcome): void {
  // Appended, so the indices of published diagnostics stay valid.
  pushAll(analysis.findings, outcome.result.findings);
  const n = outcome.result.findings.length;
  log(`Solved the corners of ${basename(uri)} in ${Date.now() - outcome.asked} ms: ${n} finding${n === 1 ? '' : 's'}.`);
}

/**
 * Adds the corner phase's results and findings to a just-accepted analysis, then re-publishes. Over slices (`inSlices`): on the 20,000-element array, 5,000 structures' columns and spreads took
 * 20–150 ms in one task at load 8. A request meanwhile reads each structure with its corners or as it was without;
 * the analysis's spread is set once every structure has its own. No name table needs restoring again: the corners
 * arrive as columns read through an accessor, which `restoreNameTables` skips, and the spread is not among the tables
 * it covers.
 */
async function addCornerResults(uri: string, analysis: Analysis, outcome: CornerOutcome | undefined): Promise<void> {
  if (!outcome || outcome.result.stale || cache.get(uri)?.analysis !== analysis) return;
  const r = outcome.result;
  const variation = r.variation && spreads.takeIn(uri, r.variation);
  await inSlices(cornerResultSteps(analysis, r, variation && !analysis.variation ? variation : undefined));
  addCornerFindings(uri, analysis, outcome);
  publish(new Set([uri, ...Object.keys(analysis.documents)]), uri);
  if (canRefreshInlays) void connection.languages.inlayHint.refresh().catch(() => undefined);
}

/** Structures given their corner columns between two yields of `cornerResultSteps`. */
const CORNER_COLUMNS_STEP = 250;

/** The structures' corner columns, their start-up corners and (when given) the spread, in steps. */
function* cornerResultSteps(analysis: Analysis, r: CornerOutcome['result'], variation: VariationResult | undefined): Generator<void, void, undefined> {
  const structures = analysis.structures;
  for (let k = 0; k < structures.length; k++) {
    const c = r.corners[structures[k]!.id];
    if (c) {
      setCornerColumns(structures[k]!, c);
      // The derived voltages' corner range and drift, which the worker's phase worked out on its own copy, as the one pass does.
      summariseVoltageCorners(structures[k]!);
    }
    if (k % CORNER_COLUMNS_STEP === CORNER_COLUMNS_STEP - 1) yield;
  }
  // The self-biased loops' start-up records take the state each corner's solve chose from those corners, as the one pass does.
  fillStartupCorners(structures);
  if (!variation) return;
  yield* attachVariationSteps(structures, variation);
  analysis.variation = variation;
}

/**
 * Makes `analysis` the cached one of root `uri` and publishes what that changes. `early`: the documents whose diagnostics
 * were published from this analysis when its findings were in; they are the same now (every finding was in, and the rest
 * of the result adds none), so they go out again only when a document it includes stops being a root of its own here.
 */
function accept(uri: string, analysis: Analysis, ms: number, early?: Set<string>): void {
  const before = cache.get(uri);
  // The replaced analysis gives up the cards the new one shares with it past the edit: they are moved now.
  const adopting = performance.now();
  adoptKeptCards(analysis);
  traced('accepting: moving the kept cards', adopting);
  cache.set(uri, { analysis, ms });
  // Documents this netlist includes are no longer netlists of their own.
  let includedRoots = false;
  for (const inc of Object.keys(analysis.documents)) {
    if (inc === uri || !cache.has(inc)) continue;
    cache.delete(inc);
    includedRoots = true;
  }
  const touched = new Set<string>([uri, ...Object.keys(analysis.documents), ...(before ? Object.keys(before.analysis.documents) : [])]);
  for (const u of published) if (!holderOf(u) && !documents.get(u)) touched.add(u);
  if (early && !includedRoots) for (const u of early) touched.delete(u);
  const publishing = performance.now();
  publish(touched, uri);
  traced('accepting: publishing', publishing);
  // Only the size: the callback must not keep the replaced analysis alive.
  const replacedElements = before?.analysis.circuit?.elements.length ?? 0;
  // Build the lookup tables now rather than inside the first hover.
  setImmediate(() => {
    if (cache.get(uri)?.analysis === analysis) {
      const indexing = performance.now();
      indexOf(analysis);
      traced('after accepting: the lookup tables', indexing);
      // Over slices: the hover's table of structures by device was one task of 10–30 ms on the 20k array at load 7.
      // A failure here is met again, and reported, by the hover that builds the table itself.
      inSlices(prepareHoverSteps(analysis), undefined, 'after accepting: the hover tables').catch(() => undefined);
    }
    if (mainThreadTrace.on) setTimeout(() => log(`Main-thread trace: ${JSON.stringify(mainThreadTrace.spans.splice(0))}`), 1000);
    // The replaced analysis of a big netlist is garbage now; collect it before the next one is taken in beside this one.
    if (replacedElements >= COLLECT_FROM_ELEMENTS) freeWhenQuiet(`the previous analysis of ${basename(uri)}`);
  });
  if (canRefreshInlays) void connection.languages.inlayHint.refresh().catch(() => undefined);
}

/**
 * The cached analyses by root, with `partial` (a result of root `root` whose findings are in but not yet
 * the rest) in place of that root's cached one.
 */
function publishedAnalyses(root: string | undefined, partial: Analysis | undefined): [string, Analysis][] {
  const out: [string, Analysis][] = [...cache].map(([r, entry]) => [r, partial && r === root ? partial : entry.analysis]);
  if (partial && root !== undefined && !cache.has(root)) out.push([root, partial]);
  return out;
}

/** Documents the client was told have inactive text (so a later analysis without any clears it). */
const faded = new Set<string>();

/**
 * Publishes, for each document, the findings of every cached analysis that read it (`always`: even when
 * there are none, so the client sees the new version; `partial`: a newer result of root `always` whose
 * findings are in, published in place of its cached analysis).
 */
function publish(uris: Iterable<string>, always?: string, partial?: Analysis): void {
  for (const uri of uris) {
    const diagnostics: Diagnostic[] = [];
    const seen = new Set<string>();
    const inactive: InactiveTextParams['ranges'] = [];
    let version: number | undefined;
    for (const [root, a] of publishedAnalyses(always, partial)) {
      if (!a.documents[uri] && root !== uri) continue;
      const lookup = lookupFor(a);
      const conv = lookup(uri);
      if (!conv) continue;
      if (root === uri) version = a.version;
      for (const r of a.inactive ?? []) if (r.uri === uri) inactive.push(conv.toRange(r.span));
      a.findings.forEach((f, i) => {
        if (f.uri !== uri) return;
        const key = `${f.code}|${f.span.start}|${f.span.end}|${f.message}`;
        if (seen.has(key)) return;
        seen.add(key);
        diagnostics.push(toDiagnostic(f, i, a.version, conv, lookup));
      });
    }
    // Text no instance takes, for the client to fade (sent when there is some, or to clear what was sent).
    if (inactive.length > 0 || faded.has(uri)) {
      void connection.sendNotification(INACTIVE_TEXT_NOTIFICATION, { uri, ranges: inactive } satisfies InactiveTextParams);
      if (inactive.length > 0) faded.add(uri);
      else faded.delete(uri);
    }
    if (diagnostics.length === 0 && !published.has(uri) && uri !== always) continue;
    void connection.sendDiagnostics({ uri, version, diagnostics });
    if (diagnostics.length) published.add(uri);
    else published.delete(uri);
  }
}

function publishFailure(uri: string, message: string): void {
  const doc = documents.get(uri);
  if (!doc) return;
  void connection.sendDiagnostics({
    uri,
    version: doc.version,
    diagnostics: [
      {
        range: { start: { line: 0, character: 0 }, end: { line: 0, character: 0 } },
        severity: 1,
        code: 'analysis-stopped',
        source: 'qpoint',
        message: `qpoint could not finish analysing this netlist: ${message}`,
      },
    ],
  });
  published.add(uri);
}

/** Makes the settings from the starting section and the client's section (see layerSections), logging every value that is ignored. */
function applySettings(source: string): void {
  const { settings: next, problems } = settingsFromConfiguration(layerSections(initialSection, clientSection));
  for (const p of problems) log(`${p} (from ${source})`);
  settings = next;
  sendReadPolicy();
}

async function pullSettings(): Promise<void> {
  if (!canPullConfiguration) return;
  try {
    const [raw] = await connection.workspace.getConfiguration([{ section: 'qpoint' }]);
    // null: the client has no qpoint section; the starting values stay.
    clientSection = raw ?? undefined;
    applySettings('workspace/configuration');
  } catch (e) {
    log(`Could not read the qpoint settings: ${e instanceof Error ? e.message : String(e)}`);
  }
}

// ---- Lifecycle -----------------------------------------------------------------------------

connection.onInitialize((params: InitializeParams): InitializeResult => {
  const caps = params.capabilities ?? {};
  const offered = caps.general?.positionEncodings ?? [];
  // The client lists encodings by preference; take the first one the LineIndex can count in.
  const supported: PositionEncoding[] = ['utf-16', 'utf-8', 'utf-32'];
  encoding = (offered.find((e) => (supported as string[]).includes(e)) as PositionEncoding | undefined) ?? 'utf-16';
  converters.encoding = encoding;
  canPullConfiguration = !!caps.workspace?.configuration;
  canRefreshInlays = !!caps.workspace?.inlayHint?.refreshSupport;
  canReportProgress = !!caps.window?.workDoneProgress;
  canApplyEdit = !!caps.workspace?.applyEdit;
  canSnippet = !!caps.textDocument?.completion?.completionItem?.snippetSupport;
  canAskUser = !!caps.window?.showMessage;
  const init = params.initializationOptions as { workspaceTrusted?: unknown } | undefined;
  const fromInit = sectionOfInitializationOptions(init);
  for (const p of fromInit.problems) log(p);
  initialSection = fromInit.section;
  const { settings: s, problems } = settingsFromConfiguration(initialSection);
  settings = s;
  for (const p of problems) log(`${p} (from initializationOptions)`);
  workspaceTrusted = !(init && typeof init === 'object' && init.workspaceTrusted === false);
  const clientCommands = init && typeof init === 'object' ? (init as Record<string, unknown>)[CLIENT_COMMANDS_OPTION] : undefined;
  clientSizes = Array.isArray(clientCommands) && clientCommands.includes(SIZE_COMMAND);
  workspaceRoots = folderPaths(params);
  if (!workspaceTrusted) log('The workspace is not trusted: only open documents are analysed; no included file is read from disk.');
  sendReadPolicy();
  return {
    capabilities: {
      positionEncoding: encoding,
      textDocumentSync: { openClose: true, change: TextDocumentSyncKind.Incremental, save: false },
      hoverProvider: true,
      inlayHintProvider: { resolveProvider: false },
      documentSymbolProvider: { label: 'qpoint' },
      definitionProvider: true,
      referencesProvider: true,
      renameProvider: { prepareProvider: true },
      completionProvider: { triggerCharacters: ['.', '{', ' ', '='], resolveProvider: false },
      codeActionProvider: { codeActionKinds: [CodeActionKind.QuickFix, CodeActionKind.Refactor] },
      // Only server-side commands belong here; SIZE_COMMAND runs in a client that has it (it asks for the target first).
      executeCommandProvider: { commands: [REANALYSE_COMMAND, SIZE_SERVER_COMMAND] },
    },
    serverInfo: { name: 'qpoint-language-server', version: '0.1.0' },
  };
});

connection.onInitialized(() => {
  if (canPullConfiguration) {
    void connection.client.register(DidChangeConfigurationNotification.type, { section: 'qpoint' }).catch(() => undefined);
    void pullSettings().then(() => {
      for (const d of documents.all()) schedule(d.uri, 0);
    });
  }
});

connection.onDidChangeConfiguration(async (change) => {
  // A client that can be asked is asked (its notification may carry nothing); otherwise the notification's settings.qpoint is read.
  if (canPullConfiguration) await pullSettings();
  else {
    const pushed = change?.settings as unknown;
    clientSection = pushed && typeof pushed === 'object' ? (pushed as { qpoint?: unknown }).qpoint ?? undefined : undefined;
    applySettings('workspace/didChangeConfiguration');
  }
  for (const d of documents.all()) schedule(d.uri, 0);
});

documents.onDidOpen((e) => {
  host.setDocument(e.document.uri, e.document.text);
});

documents.onDidChangeContent((e) => {
  const uri = e.document.uri;
  host.setDocument(uri, e.document.text);
  if (!includedByAnother(uri)) schedule(uri);
  for (const root of dependants(uri)) schedule(root);
});

documents.onDidClose((e) => {
  const uri = e.document.uri;
  host.setDocument(uri, undefined);
  const t = timers.get(uri);
  if (t) clearTimeout(t);
  timers.delete(uri);
  queue.delete(uri);
  const entry = cache.get(uri);
  cache.delete(uri);
  smallMergeMs.delete(uri);
  converters.forget(uri);
  spreads.forget(uri);
  // A closed big netlist's analysis is garbage now: its memory goes back rather than stay until V8 needs the room.
  if ((entry?.analysis.circuit?.elements.length ?? 0) >= COLLECT_FROM_ELEMENTS) freeWhenQuiet(`the analysis of ${basename(uri)}, closed,`, COLLECT_CLOSED_QUIET_MS);
  const touched = new Set<string>([uri, ...(entry ? Object.keys(entry.analysis.documents) : [])]);
  // Netlists that include the closed file now read it from disk again.
  for (const root of dependants(uri)) schedule(root);
  touched.delete(uri);
  publish(touched);
  // A closed netlist's problems go away with it, unless another open netlist includes the file.
  if (holderOf(uri)) publish([uri]);
  else {
    void connection.sendDiagnostics({ uri, diagnostics: [] });
    published.delete(uri);
  }
});

connection.onDidChangeWatchedFiles((params) => {
  const uris = (params?.changes ?? []).filter((c) => c && typeof c.uri === 'string').map((c) => c.uri);
  if (uris.length === 0) return;
  host.filesChanged(uris);
  const roots = new Set<string>();
  for (const c of params.changes) {
    if (documents.get(c.uri) && c.type !== FileChangeType.Deleted) continue; // the editor's text wins over the disk
    for (const r of dependants(c.uri)) roots.add(r);
  }
  for (const r of roots) schedule(r, 0);
});

connection.onShutdown(() => {
  shuttingDown = true;
  for (const t of timers.values()) clearTimeout(t);
  timers.clear();
  host.dispose();
});

connection.onExit(() => {
  host.dispose();
});

// ---- Requests ------------------------------------------------------------------------------

connection.onHover(
  guard('hover', (params) => {
    const ctx = featureContext(params?.textDocument?.uri);
    if (!ctx) return null;
    const budget = featureBudget();
    const h = hoverAt(ctx.analysis, params.textDocument.uri, ctx.conv.toOffset(checkPosition(params.position)), budget);
    noteCut('hover', params.textDocument.uri, budget);
    return h ? toHover(h, ctx.conv) : null;
  }),
);

connection.languages.inlayHint.on(
  guard('inlay hint', (params) => {
    const ctx = featureContext(params?.textDocument?.uri);
    if (!ctx || !params.range) return [];
    const span = { start: ctx.conv.toOffset(checkPosition(params.range.start)), end: ctx.conv.toOffset(checkPosition(params.range.end)) };
    const budget = featureBudget();
    const hints = inlayHints(ctx.analysis, params.textDocument.uri, span, settings.inlayDetail, settings.inlayPlacement, budget);
    noteCut('inlay hint', params.textDocument.uri, budget);
    return hints.map((h) => toInlayHint(h, ctx.conv));
  }),
);

connection.onDocumentSymbol(
  guard('document symbol', (params) => {
    const ctx = featureContext(params?.textDocument?.uri);
    if (!ctx) return [];
    const budget = featureBudget();
    const symbols = documentSymbols(ctx.analysis, params.textDocument.uri, budget);
    noteCut('outline', params.textDocument.uri, budget);
    return symbols.map((s) => toDocumentSymbol(s, ctx.conv));
  }),
);

connection.onDefinition(
  guard('definition', (params) => {
    const ctx = featureContext(params?.textDocument?.uri);
    if (!ctx) return [];
    return toLocations(definitionAt(ctx.analysis, params.textDocument.uri, ctx.conv.toOffset(checkPosition(params.position))), ctx.lookup);
  }),
);

connection.onReferences(
  guard('references', (params) => {
    const ctx = featureContext(params?.textDocument?.uri);
    if (!ctx) return [];
    const offset = ctx.conv.toOffset(checkPosition(params.position));
    const budget = featureBudget();
    const refs = referencesAt(ctx.analysis, params.textDocument.uri, offset, { includeDeclaration: params.context?.includeDeclaration !== false }, budget);
    noteCut('references', params.textDocument.uri, budget);
    return toLocations(refs, ctx.lookup);
  }),
);

connection.onPrepareRename(
  guard('prepare rename', (params) => {
    const ctx = featureContext(params?.textDocument?.uri);
    if (!ctx) throw new ResponseError(ErrorCodes.InvalidRequest, 'This document has not been analysed yet; try again in a moment.');
    const r = prepareRename(ctx.analysis, params.textDocument.uri, ctx.conv.toOffset(checkPosition(params.position)));
    if ('error' in r) throw new ResponseError(ErrorCodes.InvalidRequest, r.error);
    return { range: ctx.conv.toRange(r.span), placeholder: r.placeholder };
  }),
);

connection.onRenameRequest(
  guard('rename', (params) => {
    const ctx = featureContext(params?.textDocument?.uri);
    if (!ctx) throw new ResponseError(ErrorCodes.InvalidRequest, 'This document has not been analysed yet; try again in a moment.');
    if (typeof params.newName !== 'string') throw new ResponseError(ErrorCodes.InvalidParams, 'The rename request needs a new name.');
    const uri = params.textDocument.uri;
    const doc = documents.get(uri);
    if (doc && ctx.analysis.documents[uri] && doc.text !== ctx.analysis.documents[uri].text) {
      throw new ResponseError(LSPErrorCodes.ContentModified, 'The netlist changed since its last analysis; try the rename again in a moment.');
    }
    const r = renameAt(ctx.analysis, uri, ctx.conv.toOffset(checkPosition(params.position)), params.newName.trim(), featureBudget());
    if ('error' in r) throw new ResponseError(ErrorCodes.InvalidRequest, r.error);
    const edit = toWorkspaceEdit(r.edits, ctx.lookup);
    if (!edit) throw new ResponseError(ErrorCodes.InternalError, 'The rename touches a file whose text is not known.');
    return edit;
  }),
);

connection.onCompletion(
  guard('completion', (params) => {
    const ctx = featureContext(params?.textDocument?.uri);
    if (!ctx) return [];
    const uri = params.textDocument.uri;
    const doc = documents.get(uri);
    // Completion follows the live text: the cached analysis supplies models, subcircuits and parameters; the live
    // text, parsed again, supplies the context and the node names (so a node typed since the analysis is offered).
    const analysed = ctx.analysis.documents[uri];
    if (doc && analysed && doc.text !== analysed.text) {
      const cards = doc.text.length <= LIVE_PARSE_LIMIT ? parse(uri, doc.text, { hasTitle: analysed.cards[0]?.kind === 'title' }).cards : [];
      const live = { ...ctx.analysis, documents: { ...ctx.analysis.documents, [uri]: { ...analysed, text: doc.text, cards } } };
      const conv = converters.get(`${uri}#live`, doc.text);
      const budget = featureBudget();
      const list = completionListAt(live, uri, conv.toOffset(checkPosition(params.position)), budget);
      noteCut('completion', uri, budget);
      const items = list.items.map((c) => toCompletionItem(c, conv, canSnippet));
      return list.incomplete ? { isIncomplete: true, items } : items;
    }
    const budget = featureBudget();
    const list = completionListAt(ctx.analysis, uri, ctx.conv.toOffset(checkPosition(params.position)), budget);
    noteCut('completion', uri, budget);
    const items = list.items.map((c) => toCompletionItem(c, ctx.conv, canSnippet));
    // A complete answer is a plain list; a partial one says so, and the editor asks again as the word grows.
    return list.incomplete ? { isIncomplete: true, items } : items;
  }),
);

/** The first card that starts after `offset` (cards are in text order: a binary search). */
function cardAfter(doc: Analysis['documents'][string], offset: number): Analysis['documents'][string]['cards'][number] | undefined {
  const cards = doc.cards;
  let lo = 0;
  let hi = cards.length;
  while (lo < hi) {
    const mid = (lo + hi) >> 1;
    if (cards[mid]!.span.start <= offset) lo = mid + 1;
    else hi = mid;
  }
  return cards[lo];
}

/** Sizing fixes computed on demand, by analysis and finding index (an analysis replaced in the cache takes its entries with it). */
const sizedFixes = new WeakMap<Analysis, Map<number, Fix[]>>();
/** Sizing requests sent to the worker and not yet answered, by analysis (so a second code-action request does not ask again). */
const sizingInFlight = new WeakMap<Analysis, Promise<void>>();

/** The root netlist whose cached analysis is `analysis`. */
function rootOf(analysis: Analysis): string | undefined {
  for (const [root, entry] of cache) if (entry.analysis === analysis) return root;
  return undefined;
}

/**
 * The sizing fixes of the findings at `indices` of `analysis` (marked `target-missed` ones), from
 * the worker, waiting at most SIZING_WAIT_MS; what is not known by then is left out of this answer.
 */
async function sizingFixesFor(analysis: Analysis, indices: number[]): Promise<Map<number, Fix[]>> {
  let known = sizedFixes.get(analysis);
  if (!known) sizedFixes.set(analysis, (known = new Map()));
  const missing = indices.filter((i) => !known!.has(i));
  const root = rootOf(analysis);
  if (missing.length > 0 && root !== undefined) {
    let pending = sizingInFlight.get(analysis);
    if (!pending) {
      const store = known;
      pending = host
        .sizingFixes(root, analysis.version, missing.map((i) => analysis.findings[i]))
        .then(({ fixes, stale }) => {
          // A stale answer (the worker holds a newer analysis) sizes nothing; this analysis is on its way out.
          if (!stale) missing.forEach((i, k) => store.set(i, fixes[k] ?? []));
        })
        .catch((e) => log(`Sizing the fixes of ${root} failed: ${e instanceof Error ? e.message : String(e)}`))
        .finally(() => sizingInFlight.delete(analysis));
      sizingInFlight.set(analysis, pending);
    }
    let timer: ReturnType<typeof setTimeout> | undefined;
    await Promise.race([pending, new Promise<void>((r) => (timer = setTimeout(r, SIZING_WAIT_MS)))]);
    clearTimeout(timer);
  }
  return known;
}

connection.onCodeAction(
  guard('code action', async (params: CodeActionParams) => {
    const uri = params?.textDocument?.uri;
    const ctx = featureContext(uri);
    if (!ctx || !params.range) return [];
    const actions: CodeAction[] = [];
    const wanted: { d: Diagnostic; f: Finding; index: number }[] = [];
    for (const d of params.context?.diagnostics ?? []) {
      if (d?.source !== 'qpoint') continue;
      const data = d.data as DiagnosticData | undefined;
      if (!data || typeof data.index !== 'number' || data.version !== ctx.analysis.version) continue;
      const f = ctx.analysis.findings[data.index];
      if (!f || f.code !== d.code) continue;
      wanted.push({ d, f, index: data.index });
    }
    const toSize = wanted.filter((w) => hasSolvedFixes(w.f)).map((w) => w.index);
    const sized = toSize.length > 0 ? await sizingFixesFor(ctx.analysis, toSize) : undefined;
    // Replaced while the fixes were sized: its cards past the edit now carry the new text's offsets, so no refactor is read from them.
    const replaced = sized !== undefined && holderOf(uri)?.analysis !== ctx.analysis;
    for (const { d, f, index } of wanted) {
      for (const fix of [...(f.fixes ?? []), ...(sized?.get(index) ?? [])]) {
        const a = toQuickFix(fix, d, ctx.lookup);
        if (a) actions.push(a);
      }
    }
    // A refactor on every resistor line in the range: pick a standard value for a target current,
    // offered only to a client that can run it (its own command, or the server's with a question and an edit).
    if (replaced || (!clientSizes && !(canApplyEdit && canAskUser))) return actions;
    const doc = ctx.analysis.documents[uri];
    const span = ctx.conv.toSpan(params.range);
    const seen = new Set<number>();
    // A selection can span a whole netlist: the refactors are offered for the lines looked at within the budget.
    const budget = featureBudget();
    for (let off = span.start; off <= span.end; ) {
      if (!budget.spend()) {
        noteCut('code action', uri, budget);
        break;
      }
      const card = cardAt(doc, off);
      if (!card) {
        const nextCard = cardAfter(doc, off);
        if (!nextCard || nextCard.span.start > span.end) break;
        off = nextCard.span.start;
        continue;
      }
      if (card.kind === 'element' && card.letter === 'R' && !seen.has(card.span.start)) {
        seen.add(card.span.start);
        const els = elementsOfCard(ctx.analysis, uri, card);
        if (els.length) {
          // The first instance that sets a structure's current (reference or emitter resistor), else the first instance.
          const setter = els.find((e) => structureOfResistor(ctx.analysis.structures, e.name) !== undefined);
          const feeds = setter && structureOfResistor(ctx.analysis.structures, setter.name);
          const resistor = (setter ?? els[0]).name;
          const title = feeds
            ? `Size ${card.name.text} for a target output current of ${feeds.outputs.map((o) => o.device).join(', ') || feeds.reference.device}…`
            : `Size ${card.name.text} for a target current…`;
          const args: SizeCommandArgs = { uri, resistor };
          const action = CodeAction.create(title, Command.create(title, clientSizes ? SIZE_COMMAND : SIZE_SERVER_COMMAND, args), CodeActionKind.Refactor);
          actions.push(action);
        }
      }
      off = card.span.end + 1;
    }
    return actions;
  }),
);

connection.onExecuteCommand(
  guard<ExecuteCommandParams, SizeCommandResult | { netlists: number }>('execute command', (params) => {
    const command = params?.command;
    if (command === SIZE_SERVER_COMMAND) return runSizeCommand(Array.isArray(params.arguments) ? params.arguments[0] : undefined);
    if (command !== REANALYSE_COMMAND) {
      throw new ResponseError(ErrorCodes.InvalidParams, `qpoint's server has no command ${JSON.stringify(command)}; it runs only ${REANALYSE_COMMAND} and ${SIZE_SERVER_COMMAND}.`);
    }
    return reanalyseAll();
  }),
);

/**
 * Forgets every file read from disk and re-analyses each open netlist now (included files that
 * another netlist reads are analysed through it). Returns how many netlists were queued.
 */
function reanalyseAll(): { netlists: number } {
  host.filesChanged();
  let netlists = 0;
  for (const d of documents.all()) {
    if (includedByAnother(d.uri)) continue;
    schedule(d.uri, 0);
    netlists++;
  }
  log(`Re-analysing ${netlists} open netlist${netlists === 1 ? '' : 's'} with included files read again from disk.`);
  return { netlists };
}

connection.onRequest(
  LIST_OUTPUTS_REQUEST,
  guard('list outputs', (params: ListOutputsParams): ListOutputsResult => {
    const entry = typeof params?.uri === 'string' ? holderOf(params.uri) : undefined;
    if (!entry) return { outputs: [] };
    return {
      outputs: entry.analysis.structures.flatMap((s) => s.outputs.map((o) => ({ device: o.device, structureId: s.id, kind: s.kind, node: o.node }))),
    };
  }),
);

connection.onRequest(
  OUTPUT_CHARACTERISTIC_REQUEST,
  guard('output characteristic', async (params: OutputCharacteristicParams): Promise<OutputCharacteristicResult> => {
    if (typeof params?.uri !== 'string' || typeof params.device !== 'string') {
      throw new ResponseError(ErrorCodes.InvalidParams, 'The output-characteristic request needs a document uri and a device name.');
    }
    const points = params.points ?? 81;
    if (typeof points !== 'number') throw new ResponseError(ErrorCodes.InvalidParams, 'points must be a number.');
    const entry = holderOf(params.uri);
    if (!entry) throw new ResponseError(ErrorCodes.InvalidRequest, `${params.uri} has not been analysed (is it open?).`);
    const root = [...cache].find(([, e]) => e === entry)![0];
    const r = await host.sweep(root, params.device, points);
    if ('error' in r) throw new ResponseError(LSPErrorCodes.RequestFailed, r.error);
    return r;
  }),
);

connection.onRequest(
  MONTE_CARLO_REQUEST,
  guard('Monte Carlo', async (params: MonteCarloParams): Promise<MonteCarloReply> => {
    const ok = (v: unknown, max: number): v is number => typeof v === 'number' && Number.isInteger(v) && v >= 0 && v <= max;
    if (typeof params?.uri !== 'string' || !ok(params.seed, 4294967295) || !ok(params.first, 100000) || !ok(params.count, 100000)) {
      throw new ResponseError(ErrorCodes.InvalidParams, 'The Monte Carlo request needs a document uri, a whole seed and a run range (first, count) up to 100000.');
    }
    const entry = holderOf(params.uri);
    if (!entry) throw new ResponseError(ErrorCodes.InvalidRequest, `${params.uri} has not been analysed (is it open?).`);
    const root = [...cache].find(([, e]) => e === entry)![0];
    const r = await host.monteCarlo(root, params.seed, params.first, params.count, params.finish === true);
    if ('error' in r) throw new ResponseError(LSPErrorCodes.RequestFailed, r.error);
    return r;
  }),
);

connection.onRequest(
  SIZE_RESISTOR_REQUEST,
  guard('size resistor', async (params: SizeResistorParams): Promise<SizeResistorResult> => {
    if (typeof params?.uri !== 'string' || typeof params.resistor !== 'string' || typeof params.target !== 'string') {
      throw new ResponseError(ErrorCodes.InvalidParams, 'The size-resistor request needs a document uri, a resistor name and a target current text.');
    }
    return sizingCandidates(params.uri, params.resistor, params.target);
  }),
);

/** Standard-value candidates for `resistor` of `uri` and a target current, each with the WorkspaceEdit that writes it. */
async function sizingCandidates(uri: string, resistor: string, target: string): Promise<SizeResistorResult> {
  const entry = holderOf(uri);
  if (!entry) throw new ResponseError(ErrorCodes.InvalidRequest, `${uri} has not been analysed (is it open?).`);
  const root = [...cache].find(([, e]) => e === entry)![0];
  const r = await host.sizeResistor(root, resistor, target, encoding);
  if ('error' in r) throw new ResponseError(LSPErrorCodes.RequestFailed, r.error);
  return {
    ideal: r.ideal,
    candidates: r.candidates.map((c) => {
      const version = c.edit.uri === root ? r.version : undefined;
      const open = documents.get(c.edit.uri);
      const edit =
        open && version !== undefined
          ? { documentChanges: [{ textDocument: { uri: c.edit.uri, version }, edits: [{ range: c.range, newText: c.edit.newText }] }] }
          : { changes: { [c.edit.uri]: [{ range: c.range, newText: c.edit.newText }] } };
      return { label: c.label, valueText: c.valueText, current: c.current, error: c.error, edit };
    }),
  };
}

/** The element whose current a resistor sets (as the sizing does: a degenerated output, a structure's first output, else itself) and that current now. */
function presentCurrent(analysis: Analysis, resistor: string): { device: string; amps: number | undefined } {
  const lower = resistor.toLowerCase();
  const s = structureOfResistor(analysis.structures, resistor);
  const device = s?.outputs.find((o) => o.degeneration?.resistor.toLowerCase() === lower)?.device ?? s?.outputs[0]?.device ?? resistor;
  const devices = analysis.operatingPoint?.devices ?? {};
  const key = Object.keys(devices).find((k) => k.toLowerCase() === device.toLowerCase());
  const rec = key === undefined ? undefined : devices[key];
  const v = !rec ? undefined : rec.type === 'bjt' ? rec.ic : 'id' in rec ? rec.id : rec.current;
  return { device: key ?? device, amps: v !== undefined && Number.isFinite(v) && v !== 0 ? Math.abs(v) : undefined };
}

/** Round targets to offer around a present current: the E12 values within a factor of two either side (IEC 60063). */
function targetChoices(amps: number): number[] {
  const out: number[] = [];
  const decade = Math.floor(Math.log10(amps));
  for (let d = decade - 1; d <= decade + 1; d++) {
    for (const m of seriesValues('E12')) {
      const v = Number((m * 10 ** d).toPrecision(3));
      if (v >= amps / 2 && v <= amps * 2) out.push(v);
    }
  }
  return out;
}

/**
 * `qpoint.server.sizeResistor`: asks for the target current (window/showMessageRequest) unless
 * the argument gives it, sizes the resistor in the worker, asks which standard value to write
 * (or takes the argument's, or the nearest when the client cannot be asked), and writes it with
 * workspace/applyEdit. Cancelling either question changes nothing.
 */
async function runSizeCommand(arg: unknown): Promise<SizeCommandResult> {
  const a = (arg && typeof arg === 'object' ? arg : {}) as Partial<Record<keyof SizeCommandArgs, unknown>>;
  if (typeof a.uri !== 'string' || typeof a.resistor !== 'string') {
    throw new ResponseError(ErrorCodes.InvalidParams, `The ${SIZE_SERVER_COMMAND} command needs one argument { uri, resistor, target?, value? }.`);
  }
  const { uri, resistor } = a as { uri: string; resistor: string };
  if (!canApplyEdit) {
    throw new ResponseError(ErrorCodes.InvalidRequest, `This client cannot apply edits the server sends (workspace/applyEdit), so ${SIZE_SERVER_COMMAND} cannot write a value; send the qpoint/sizeResistor request and apply one of its edits instead.`);
  }
  const entry = holderOf(uri);
  if (!entry) throw new ResponseError(ErrorCodes.InvalidRequest, `${uri} has not been analysed (is it open?).`);
  let target = typeof a.target === 'string' && a.target.trim() !== '' ? a.target.trim() : undefined;
  if (target === undefined) {
    if (!canAskUser) {
      throw new ResponseError(ErrorCodes.InvalidParams, `This client cannot be asked for the target current (window/showMessageRequest); give it as the argument's target, e.g. "250u".`);
    }
    const { device, amps } = presentCurrent(entry.analysis, resistor);
    if (amps === undefined) {
      throw new ResponseError(LSPErrorCodes.RequestFailed, `${device} has no solved current to choose a target around; give the target as the argument's target, e.g. "250u".`);
    }
    const choices = targetChoices(amps).map((v) => ({ title: formatEngineering(v, { unit: 'A' }), text: formatEngineering(v, { style: 'netlist' }) }));
    const picked = await ask(`Size ${resistor} for which current of ${device}? It carries ${formatEngineering(amps, { unit: 'A' })} now.`, choices.map((c) => c.title));
    const choice = choices.find((c) => c.title === picked);
    if (!choice) return { applied: false, message: `Sizing ${resistor} was cancelled; nothing was changed.` };
    target = choice.text;
  }
  const sized = await sizingCandidates(uri, resistor, target);
  const candidates = [...sized.candidates].sort((x, y) => Math.abs(x.error) - Math.abs(y.error));
  if (candidates.length === 0) return tell(false, `No standard value of ${resistor} gives ${target}; nothing was changed.`);
  let chosen = candidates[0]!;
  if (typeof a.value === 'string') {
    const want = a.value.trim().toLowerCase();
    const found = candidates.find((c) => c.valueText.toLowerCase() === want);
    if (!found) throw new ResponseError(ErrorCodes.InvalidParams, `${a.value} is not a candidate for ${resistor} at ${target}; the candidates are ${candidates.map((c) => c.valueText).join(', ')}.`);
    chosen = found;
  } else if (canAskUser) {
    const titled = candidates.map((c) => ({ title: `${c.valueText} → ${formatEngineering(c.current, { unit: 'A' })}, ${formatPercent(c.error)}`, c }));
    const exact = Number.isFinite(sized.ideal) && sized.ideal > 0 ? ` (exactly ${formatEngineering(sized.ideal, { unit: 'Ω' })} meets the target)` : '';
    const picked = await ask(`Which standard value should ${resistor} take${exact}?`, titled.map((t) => t.title));
    const t = titled.find((x) => x.title === picked);
    if (!t) return { applied: false, message: `Sizing ${resistor} was cancelled; nothing was changed.` };
    chosen = t.c;
  }
  const result = await connection.workspace.applyEdit({ label: `Set ${resistor} to ${chosen.valueText}`, edit: chosen.edit as never });
  if (!result.applied) {
    return tell(false, `The editor did not apply the edit that sets ${resistor} to ${chosen.valueText}${result.failureReason ? ` (${result.failureReason})` : ''}; the file may have changed since.`, chosen.valueText);
  }
  return tell(true, `Set ${resistor} to ${chosen.label}.`, chosen.valueText);
}

/** Asks the user with window/showMessageRequest; the title of the action picked, or undefined when the question was dismissed. */
async function ask(message: string, titles: string[]): Promise<string | undefined> {
  const picked = await connection.sendRequest(ShowMessageRequest.type, { type: MessageType.Info, message, actions: titles.map((title) => ({ title })) });
  return picked && typeof picked.title === 'string' ? picked.title : undefined;
}

/** The command's answer, also shown to the user (a client may drop a command's result). */
function tell(applied: boolean, message: string, value?: string): SizeCommandResult {
  void connection.sendNotification(ShowMessageNotification.type, { type: applied ? MessageType.Info : MessageType.Warning, message });
  return { applied, ...(value !== undefined ? { value } : {}), message };
}

documents.listen(connection);
connection.listen();

process.on('uncaughtException', (e) => {
  log(`Unexpected error (the server keeps running): ${e instanceof Error && e.stack ? e.stack : String(e)}`);
});
process.on('unhandledRejection', (e) => {
  log(`Unhandled rejection (the server keeps running): ${e instanceof Error && e.stack ? e.stack : String(e)}`);
});
