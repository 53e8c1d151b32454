// The main thread's side of the analysis worker: one request at a time, deadlines, and a restart when the worker dies or hangs.

import { Worker } from 'node:worker_threads';
import { PerformanceObserver } from 'node:perf_hooks';
import { readFileSync } from 'node:fs';
import type { Analysis, AnalysisOptions } from '../../shared-analysis/src/analysis';
import type { PositionEncoding } from '../../shared-analysis/src/syntax/line-index';
import type { OutputCharacteristicResult } from '../../shared-analysis/src/features/sweep';
import { partMerger, type AnalysisPart } from './analysis-transfer';
import { collectYoungGenerationPast } from './collect';
import { restoreNameTables } from '../../shared-analysis/src/names';
import type { Finding, Fix } from '../../shared-analysis/src/types';
import type { SpreadMessage } from './spread-transfer';
import type { MonteCarloReply } from './protocol';
import type { CornerColumns } from '../../shared-analysis/src/structures/corner-columns';
import { SMALL_RESULT_PARTS, STOP_GENERATION, type FromWorker, type SizingData, type ToWorker } from './worker-messages';
import type { ReadPolicy } from './read-policy';
import { PartInbox, pushedPart } from './pushed-parts';

/** Options for {@link WorkerHost}. */
export interface WorkerHostOptions {
  /** Path of the bundled worker script (dist/analysis-worker.js). */
  script: string;
  log: (message: string) => void;
  /** A request still running after this long is abandoned and the worker restarted (ms). */
  hardDeadlineMs: number;
}

type Pending = {
  resolve: (msg: FromWorker) => void;
  reject: (e: Error) => void;
  started: number;
  label: string;
  timer: ReturnType<typeof setTimeout>;
};

/**
 * Part requests kept in flight while an analysis is taken in: when half are in, the other half is asked
 * for in one message (a post to the worker cost the main thread about a millisecond at load 7, as much
 * as merging a small part).
 */
export const PARTS_IN_FLIGHT = 8;

/**
 * The longest the main thread merges a part before queued editor requests get a turn (ms): the part is merged in
 * steps (`mergePartSteps`) and the clock read at each. Parts of a few hundred items took 10–90 ms merged whole.
 */
export const MERGE_SLICE_MS = 4;

/**
 * While a large result is taken in, the young generation is collected between parts once it holds this much
 * (see `collectYoungGenerationPast`). `test/bench/take-in-bench.ts` (50,000 elements, one run each at load 7): the
 * take-in's tasks' p99 11.4 / 11.3 / 13.2 ms of CPU with 2 / 4 / 8 MB, from 47 / 26 / 13 collections.
 */
export const TAKE_IN_YOUNG_BYTES = 4 * 2 ** 20;

/**
 * The worker's young generation (V8's default is 48 MB, three 16 MB semispaces). A smaller one is collected
 * more often while an analysis builds its tables, so less of what an analysis throws away is promoted and
 * kept committed: the 50,000-element analysis peaked about 85 MB lower in resident memory, in no more time.
 * The old generation's limit is left at its default.
 */
const WORKER_YOUNG_GENERATION_MB = 16;

/**
 * Lets the editor's requests that arrived meanwhile be answered before this thread goes on. A request read from
 * the connection is handled in a `setImmediate` the connection queues when it reads it, behind any immediate queued
 * before, so a single hop would run the next slice of work first (about 4 ms, before the request's own time); the
 * second hop queues the work behind the requests read during the first.
 */
/**
 * With QPOINT_TRACE_MAIN_THREAD=1 (for `bench:server`): the main thread's stretches of the take-in of 1 ms or more,
 * as [what, start (ms since the epoch), duration (ms)], and V8's collections on it, which the server logs once a
 * result is accepted; the benchmark sets them beside its slow answers. Off, nothing is recorded.
 */
export const mainThreadTrace: { on: boolean; spans: [string, number, number][] } = {
  on: process.env['QPOINT_TRACE_MAIN_THREAD'] === '1',
  spans: [],
};

/**
 * Tracing: this thread's CPU time and its time waiting for a core, ms (Linux's scheduler statistics; zeros where
 * they cannot be read), so a long stretch shows whether it ran or waited.
 */
export function threadClock(): [number, number] {
  try {
    const [run, wait] = readFileSync('/proc/thread-self/schedstat', 'utf8').split(' ').map(Number);
    return [run! / 1e6, wait! / 1e6];
  } catch {
    return [0, 0];
  }
}

/**
 * Records the stretch `what` that began at `started` (performance.now()) when tracing is on; with `clock` (the
 * `threadClock()` at its start), how much of it the thread ran and how much it waited for a core.
 */
export function traced(what: string, started: number, clock?: [number, number]): void {
  if (!mainThreadTrace.on) return;
  const ms = performance.now() - started;
  if (ms < 1) return;
  if (clock) {
    const [run, wait] = threadClock();
    what += ` (ran ${(run - clock[0]).toFixed(1)} ms, waited ${(wait - clock[1]).toFixed(1)} ms for a core)`;
  }
  mainThreadTrace.spans.push([what, performance.timeOrigin + started, ms]);
}

if (mainThreadTrace.on) {
  const kinds: Record<number, string> = { 1: 'young collection', 2: 'full collection', 4: 'incremental marking', 8: 'weak callbacks' };
  new PerformanceObserver((list) => {
    for (const e of list.getEntries()) {
      const kind = (e as unknown as { detail?: { kind?: number } }).detail?.kind ?? 0;
      mainThreadTrace.spans.push([kinds[kind] ?? `collection ${kind}`, performance.timeOrigin + e.startTime, e.duration]);
    }
  }).observe({ entryTypes: ['gc'] });
}

export function turnForRequests(): Promise<void> {
  return new Promise((r) => setImmediate(() => setImmediate(r)));
}

/**
 * Runs `steps` to their end on this thread, giving queued editor requests a turn whenever a slice has run
 * MERGE_SLICE_MS (the clock read at each step); the first slice began at `started`.
 */
export async function inSlices(steps: Iterable<void>, started = performance.now(), what = 'slice'): Promise<void> {
  let slice = started;
  let step = started;
  let k = 0;
  let clock = mainThreadTrace.on ? threadClock() : undefined;
  for (const _ of steps) {
    // Tracing: a single step of 2 ms or more, which the slice cannot cut.
    if (clock && performance.now() - step >= 2) traced(`${what}: step ${k}`, step, clock);
    k++;
    if (performance.now() - slice < MERGE_SLICE_MS) {
      if (clock) {
        step = performance.now();
        clock = threadClock();
      }
      continue;
    }
    traced(what, slice);
    await turnForRequests();
    slice = step = performance.now();
    if (clock) clock = threadClock();
  }
  if (clock && performance.now() - step >= 2) traced(`${what}: step ${k}, the last`, step, clock);
  traced(what, slice);
}

/** Thrown when a request was abandoned because the worker was restarted. */
export class WorkerRestartedError extends Error {}

/** Thrown when an analysis or corner request was stopped by `stopRunning` at the engine's next check. */
export class AnalysisStoppedError extends Error {}

/**
 * Owns the worker thread. Open-document texts are mirrored into it so a restarted worker
 * can carry on; requests are answered in order by message id.
 */
export class WorkerHost {
  private worker: Worker | undefined;
  private nextId = 1;
  private readonly pending = new Map<number, Pending>();
  private readonly texts = new Map<string, string>();
  private disposed = false;
  /** How many times the worker was restarted (for logs and tests). */
  restarts = 0;
  /** The id of the `analyse` request each taken-in result answered (what the worker knows it by). */
  private readonly analysisIds = new WeakMap<Analysis, number>();
  /** The stop generation shared with the worker (see STOP_GENERATION). */
  private readonly stopFlag = new Int32Array(new SharedArrayBuffer(4));
  /** The parts the worker pushes of each result being taken in, by the id of the `analyse` request it answered. */
  private readonly inboxes = new Map<number, PartInbox>();

  constructor(private readonly options: WorkerHostOptions) {
    this.start();
  }

  private policy: ReadPolicy | undefined;

  private start(): void {
    const w = new Worker(this.options.script, { workerData: { stop: this.stopFlag }, resourceLimits: { maxYoungGenerationSizeMb: WORKER_YOUNG_GENERATION_MB } });
    w.on('message', (msg: FromWorker) => this.onMessage(msg));
    w.on('error', (e) => {
      this.options.log(`The analysis worker failed: ${e.message}`);
    });
    w.on('exit', (code) => {
      if (this.worker !== w) return;
      this.worker = undefined;
      if (this.disposed) return;
      this.options.log(`The analysis worker exited (code ${code}); starting a new one.`);
      this.failAll(new WorkerRestartedError('The analysis worker stopped before answering; the request was abandoned.'));
      this.restarts++;
      this.start();
    });
    // The worker must not keep the server process alive on shutdown.
    w.unref();
    this.worker = w;
    if (this.policy) w.postMessage({ type: 'read-policy', policy: this.policy } satisfies ToWorker);
    for (const [uri, text] of this.texts) w.postMessage({ type: 'set-document', uri, text } satisfies ToWorker);
  }

  /** The `parts` message each small result's header announced, by request id, until `analyse` takes it. */
  private readonly following = new Map<number, Promise<FromWorker>>();

  private onMessage(msg: FromWorker): void {
    if (msg.type === 'pushed-part') {
      // A part of a result no longer taken in (stopped, failed) is dropped.
      this.inboxes.get(msg.analysisId)?.put(msg.index, msg.bytes);
      return;
    }
    // Its parts follow in the same queue: the inbox must be there before the first of them is delivered.
    if (msg.type === 'analysed' && msg.pushed) this.inboxes.set(msg.id, new PartInbox());
    const p = this.pending.get(msg.id);
    if (!p) return;
    this.pending.delete(msg.id);
    clearTimeout(p.timer);
    // Waited for from here, before the next message can arrive: the worker sends the parts unasked, right after the header.
    if (msg.type === 'analysed' && msg.partsFollow) {
      const parts = this.answerTo(msg.id, `${p.label} (its parts)`);
      // Seen where `analyse` awaits it; this only keeps a failure before then from counting as unhandled.
      parts.catch(() => undefined);
      this.following.set(msg.id, parts);
    }
    p.resolve(msg);
  }

  private failAll(e: Error): void {
    for (const [id, p] of this.pending) {
      clearTimeout(p.timer);
      p.reject(e);
      this.pending.delete(id);
    }
    for (const inbox of this.inboxes.values()) inbox.fail(e);
    this.inboxes.clear();
  }

  /** Mirrors an open document's text into the worker (undefined: closed). */
  setDocument(uri: string, text: string | undefined): void {
    if (text === undefined) this.texts.delete(uri);
    else this.texts.set(uri, text);
    this.worker?.postMessage({ type: 'set-document', uri, text } satisfies ToWorker);
  }

  /** Sets what the worker may read from disk (kept, and sent again to a restarted worker). */
  setReadPolicy(policy: ReadPolicy): void {
    this.policy = policy;
    this.worker?.postMessage({ type: 'read-policy', policy } satisfies ToWorker);
  }

  /** Tells the worker these files changed on disk (none given: any file may have changed). */
  filesChanged(uris?: string[]): void {
    this.worker?.postMessage({ type: 'files-changed', uris } satisfies ToWorker);
  }

  private request(build: (id: number) => ToWorker, label: string): Promise<FromWorker> {
    return this.requests(1, ([id]) => build(id!), label)[0]!;
  }

  /** `count` requests sent in one message (`build` gets their ids), each answered on its own. */
  private requests(count: number, build: (ids: number[]) => ToWorker, label: string): Promise<FromWorker>[] {
    if (this.disposed) return Array.from({ length: count }, () => Promise.reject(new Error('The server is shutting down.')));
    if (!this.worker) this.start();
    const ids = Array.from({ length: count }, () => this.nextId++);
    const answers = ids.map((id) => this.answerTo(id, label));
    this.worker!.postMessage(build(ids));
    return answers;
  }

  /** The worker's next message under `id`, within the hard deadline. */
  private answerTo(id: number, label: string): Promise<FromWorker> {
    return new Promise<FromWorker>((resolve, reject) => {
      this.pending.set(id, { resolve, reject, started: Date.now(), label, timer: this.deadline(label) });
    });
  }

  /** Restarts the worker if `label` is still waited for after the hard deadline; clear the timer when it is answered. */
  private deadline(label: string): ReturnType<typeof setTimeout> {
    return setTimeout(() => {
      this.options.log(`${label} ran past ${Math.round(this.options.hardDeadlineMs / 1000)} s; restarting the analysis worker.`);
      this.restart(new Error(`${label} took longer than ${Math.round(this.options.hardDeadlineMs / 1000)} s and was stopped.`));
    }, this.options.hardDeadlineMs);
  }

  /**
   * Stops the analysis or corner phase the worker is running (and any already sent) at the engine's
   * next check, between stages or corner solves: their requests fail with AnalysisStoppedError.
   * Requests sent afterwards are not affected.
   */
  stopRunning(): void {
    Atomics.add(this.stopFlag, STOP_GENERATION, 1);
  }

  private generation(): number {
    return Atomics.load(this.stopFlag, STOP_GENERATION);
  }

  /** The error a 'failed' answer stands for. */
  private failure(msg: FromWorker): Error {
    if (msg.type === 'failed') return msg.stopped ? new AnalysisStoppedError(msg.message) : new Error(msg.message);
    return new Error('The worker answered with something unexpected.');
  }

  /** How long the oldest unanswered request has been running (ms), or 0. */
  busyForMs(): number {
    let oldest = 0;
    const now = Date.now();
    for (const p of this.pending.values()) oldest = Math.max(oldest, now - p.started);
    return oldest;
  }

  /** Stops the worker (abandoning what it is doing) and starts a fresh one with the same open documents. */
  restart(reason: Error = new WorkerRestartedError('The analysis worker was restarted.')): void {
    const w = this.worker;
    this.worker = undefined;
    this.failAll(reason);
    if (w) void w.terminate();
    if (!this.disposed) {
      this.restarts++;
      this.start();
    }
  }

  /**
   * Analyses an open document in the worker. A large result comes over in parts, each fetched
   * after the previous one was merged and the event loop had a turn, so editor requests are
   * answered between parts instead of waiting for one long deserialisation; a small one comes in
   * one message and is merged at once.
   */
  async analyse(
    uri: string,
    version: number,
    options: AnalysisOptions,
    phases: {
      cornersLater?: boolean;
      /** Called after each part is merged (a hook for tests and logs). */
      onPart?: (index: number, parts: number) => void;
      /**
       * Called once every finding is in, before the rest (cards, elements, the point, structures) is taken in:
       * `partial` has the header and the complete findings, enough to publish diagnostics. It is the object later
       * parts are merged into, and the one `analyse` returns: a `corners` request may name it (`of`) and its findings
       * may be added to, nothing else until it is returned. `small`: the rest is a small result's, which arrives
       * whole in one message and is merged in a few milliseconds; a large one's is taken in over many messages.
       * Returns whether the caller made the findings public: a small result so announced is merged to its end even
       * when its text is superseded meanwhile (else it is dropped at its next part, as a large one is).
       */
      onFindings?: (partial: Analysis, small: boolean) => boolean | void;
      /**
       * The result of an earlier `analyse` of this root that the caller holds: the new result shares the cards the
       * worker finds unchanged. `held` is left as it is until the caller adopts the result (`adoptKeptCards`), which
       * moves the shared cards past the edit: adopt only a result that replaces `held`.
       */
      held?: Analysis;
    } = {},
  ): Promise<{ analysis: Analysis; ms: number; sendMs: number; transferMs: number; small: boolean }> {
    const generation = this.generation();
    const held = phases.held && this.analysisIds.get(phases.held);
    const msg = await this.request((rid) => ({ type: 'analyse', id: rid, uri, version, options, cornersLater: phases.cornersLater, generation, held }), `The analysis of ${uri}`);
    if (msg.type !== 'analysed') throw this.failure(msg);
    const t0 = Date.now();
    // A worker message rebuilds plain objects: name-keyed tables get their prototype-free form back before parts are merged into them.
    const restoring = performance.now();
    const analysis = restoreNameTables(msg.analysis);
    traced('the header: name tables', restoring);
    // Known by its request from the start, so a corner request can name the analysis it is for.
    this.analysisIds.set(analysis, msg.id);
    const merger = partMerger(analysis, phases.held);
    const merge = function* (index: number, part: AnalysisPart): Generator<void, void, undefined> {
      yield* merger.steps(part);
      phases.onPart?.(index, msg.parts);
    };
    // Taking in a result of a superseded text is wasted work on this thread: the stop check applies here too, before each part.
    const stopIfSuperseded = (index: number) => {
      if (this.generation() === generation) return;
      if (!msg.partsFollow && !msg.pushed) this.worker?.postMessage({ type: 'drop-parts', analysisId: msg.id } satisfies ToWorker);
      throw new AnalysisStoppedError(`Taking in the analysis of ${uri} (version ${version}) was stopped after ${index} of ${msg.parts} parts: its text was superseded.`);
    };
    if (msg.partsFollow) {
      const { whole, announced: inHeader } = await this.smallParts(msg, analysis, phases.onFindings);
      const t1 = Date.now();
      // A small result's parts came whole; they are merged in slices all the same, so that requests and an edit arriving
      // meanwhile (an editor's next keystroke) are taken in at once. Until its findings are made public a superseded
      // result is dropped at its next part; once they are (the caller answers from it), it is merged to its end, a few
      // milliseconds.
      let announced = inHeader;
      const steps = function* (): Generator<void, void, undefined> {
        for (let index = 0; index < whole.parts.length; index++) {
          if (!announced) stopIfSuperseded(index);
          yield* merge(index, whole.parts[index]!);
          if (index !== msg.findingParts - 1) continue;
          announced = phases.onFindings?.(analysis, true) === true;
        }
        yield* merger.finishSteps();
      };
      await inSlices(steps());
      return { analysis, ms: msg.ms, sendMs: whole.sendMs, transferMs: Date.now() - t1, small: true };
    }
    try {
      await this.takeInParts(msg, merge, stopIfSuperseded, phases.onFindings, uri);
    } finally {
      this.inboxes.delete(msg.id);
    }
    await inSlices(merger.finishSteps(), undefined, 'finishing the merge');
    return { analysis, ms: msg.ms, sendMs: msg.sendMs, transferMs: Date.now() - t0, small: false };
  }

  /**
   * The `parts` message of a small result whose header is `msg` (`analysis` restored from it), with the findings
   * announced first when the header carries them (`announced`: the caller made them public); the parts are then merged
   * a turn later, after the writes the announcement queued.
   */
  private async smallParts(
    msg: Extract<FromWorker, { type: 'analysed' }>,
    analysis: Analysis,
    onFindings: ((partial: Analysis, small: boolean) => boolean | void) | undefined,
  ): Promise<{ whole: Extract<FromWorker, { type: 'parts' }>; announced: boolean }> {
    const whole = this.following.get(msg.id);
    this.following.delete(msg.id);
    if (!whole) throw new Error('The worker announced the parts of a result that it then did not send.');
    const announced = msg.findingParts === 0 && onFindings?.(analysis, true) === true;
    const answer = await whole;
    if (answer.type !== 'parts') throw this.failure(answer);
    if (announced) await new Promise((r) => setImmediate(r));
    return { whole: answer, announced };
  }

  /**
   * Merges the parts of a large result in order, giving queued editor requests a turn between parts;
   * `onFindings` once every finding is in.
   */
  private async takeInParts(
    msg: Extract<FromWorker, { type: 'analysed' }>,
    merge: (index: number, part: AnalysisPart) => Generator<void, void, undefined>,
    stopIfSuperseded: (index: number) => void,
    onFindings: ((partial: Analysis, small: boolean) => boolean | void) | undefined,
    uri: string,
  ): Promise<void> {
    const next = msg.pushed ? this.pushedParts(msg.id, uri) : this.requestedParts(msg, uri);
    if (msg.findingParts === 0) onFindings?.(msg.analysis, false);
    for (let index = 0; index < msg.parts; index++) {
      stopIfSuperseded(index);
      const part = await next(index);
      const started = performance.now();
      // Within this slice's budget, a short collection now rather than a long one inside some later task.
      collectYoungGenerationPast(TAKE_IN_YOUNG_BYTES);
      traced(`part ${index + 1}: young collection between parts`, started);
      const read = performance.now();
      const decoded = part();
      traced(`part ${index + 1}: reading its bytes`, read);
      await inSlices(merge(index, decoded), started, `part ${index + 1} (${decoded.kind}): merging`);
      if (index === msg.findingParts - 1) onFindings?.(msg.analysis, false);
      // Give queued editor requests a turn between parts.
      await turnForRequests();
    }
  }

  /** The parts the worker pushes (see `pushed-parts.ts`), each read from its bytes when it is merged. */
  private pushedParts(analysisId: number, uri: string): (index: number) => Promise<() => AnalysisPart> {
    const inbox = this.inboxes.get(analysisId);
    // Gone only when the worker was restarted since the result arrived (its parts never will).
    if (!inbox) throw new WorkerRestartedError(`The analysis worker was restarted before the result of ${uri} was taken in.`);
    return async (index) => {
      const timer = this.deadline(`Waiting for part ${index + 1} of the analysis of ${uri}`);
      try {
        const bytes = await inbox.take(index);
        return () => pushedPart(bytes);
      } finally {
        clearTimeout(timer);
      }
    };
  }

  /**
   * Asks for the parts of a large result in order (a few requests in flight, so the worker prepares the next while
   * this thread merges one).
   */
  private requestedParts(msg: Extract<FromWorker, { type: 'analysed' }>, uri: string): (index: number) => Promise<() => AnalysisPart> {
    const inFlight: Promise<FromWorker>[] = [];
    let asked = 0;
    // Asks for more parts, several in one message, once half of those in flight are in.
    const refill = () => {
      if (inFlight.length > PARTS_IN_FLIGHT / 2 || asked >= msg.parts) return;
      const from = asked;
      const count = Math.min(PARTS_IN_FLIGHT - inFlight.length, msg.parts - from);
      const answers = this.requests(count, (ids) => ({ type: 'next-parts', analysisId: msg.id, asks: ids.map((id, k) => ({ id, index: from + k })) }), `Taking in parts ${from + 1}–${from + count} of the analysis of ${uri}`);
      for (const p of answers) {
        // A failure is seen where the part is awaited; this only keeps the parts never awaited from counting as unhandled.
        p.catch(() => undefined);
        inFlight.push(p);
      }
      asked += count;
    };
    refill();
    return async () => {
      const part = await inFlight.shift()!;
      refill();
      if (part.type !== 'part') throw new Error(part.type === 'failed' ? part.message : 'The worker answered with something unexpected.');
      return () => part.part;
    };
  }

  /** One chunk of Monte Carlo runs on the last analysis of root `uri`. */
  async monteCarlo(uri: string, seed: number, first: number, count: number, finish: boolean): Promise<MonteCarloReply | { error: string }> {
    const msg = await this.request((id) => ({ type: 'monte-carlo', id, uri, seed, first, count, finish }), `Monte Carlo of ${uri}`);
    if (msg.type === 'monte-carlo-ran') return msg.result;
    throw new Error(msg.type === 'failed' ? msg.message : 'The worker answered with something unexpected.');
  }

  async sweep(uri: string, device: string, points: number): Promise<OutputCharacteristicResult | { error: string }> {
    const msg = await this.request((id) => ({ type: 'sweep', id, uri, device, points }), `The sweep of ${device}`);
    if (msg.type === 'swept') return msg.result;
    throw new Error(msg.type === 'failed' ? msg.message : 'The worker answered with something unexpected.');
  }

  async sizeResistor(uri: string, resistor: string, target: string, encoding: PositionEncoding): Promise<SizingData | { error: string }> {
    const msg = await this.request((id) => ({ type: 'size-resistor', id, uri, resistor, target, encoding }), `Sizing ${resistor}`);
    if (msg.type === 'sized') return msg.result;
    throw new Error(msg.type === 'failed' ? msg.message : 'The worker answered with something unexpected.');
  }

  /**
   * The resistor-sizing fixes of `findings` (marked `target-missed` findings of the analysis of
   * root `uri` at `version`), computed in the worker with its kept solver; one list per finding.
   * `stale` when the worker's last analysis of `uri` is not that version (nothing was sized).
   */
  async sizingFixes(uri: string, version: number | undefined, findings: Finding[]): Promise<{ fixes: Fix[][]; stale: boolean }> {
    const msg = await this.request((id) => ({ type: 'sizing-fixes', id, uri, version, findings }), `Sizing the fixes of ${uri}`);
    if (msg.type === 'sizing-fixed') return { fixes: msg.fixes, stale: msg.stale === true };
    throw new Error(msg.type === 'failed' ? msg.message : 'The worker answered with something unexpected.');
  }

  /**
   * The corner phase of the last analysis of root `uri` (analysed with `cornersLater`; the worker runs it as soon as it
   * has sent that result): its findings, each structure's corners by id and its spread told against the one held
   * (`heldSpread`). `stale` when the worker's last analysis of `uri` is not of `version`, or not `of` when given.
   */
  async corners(uri: string, version: number, held: { heldSpread?: string; of?: Analysis } = {}): Promise<{ findings: Finding[]; corners: Record<string, CornerColumns>; variation?: SpreadMessage; stale: boolean }> {
    const generation = this.generation();
    const analysisId = held.of && this.analysisIds.get(held.of);
    const msg = await this.request(
      (id) => ({ type: 'corners', id, uri, version, generation, ...(held.heldSpread !== undefined ? { heldSpread: held.heldSpread } : {}), ...(analysisId !== undefined ? { analysisId } : {}) }),
      `The corners of ${uri}`,
    );
    if (msg.type === 'cornered') return { findings: msg.findings, corners: msg.corners, ...(msg.variation ? { variation: msg.variation } : {}), stale: msg.stale === true };
    throw this.failure(msg);
  }

  /** The worker's thread id, for memory readings. */
  get threadId(): number | undefined {
    return this.worker?.threadId;
  }

  dispose(): void {
    this.disposed = true;
    this.failAll(new Error('The server is shutting down.'));
    void this.worker?.terminate();
    this.worker = undefined;
  }
}
