// The messages between the language server's main thread and its analysis worker.

import type { Analysis, AnalysisOptions } from '../../shared-analysis/src/analysis';
import type { AnalysisPart } from './analysis-transfer';
import type { OutputCharacteristicResult } from '../../shared-analysis/src/features/sweep';
import type { PositionEncoding } from '../../shared-analysis/src/syntax/line-index';
import type { Finding, Fix, TextEdit } from '../../shared-analysis/src/types';
import type { SpreadMessage } from './spread-transfer';
import type { CornerColumns } from '../../shared-analysis/src/structures/corner-columns';
import type { ReadPolicy } from './read-policy';
import type { MonteCarloReply } from './protocol';
import type { PushedPart } from './pushed-parts';

/** One standard-value candidate for a resistor, with the engine's offset-based edit. */
export interface SizingCandidateData {
  label: string;
  valueText: string;
  current: number;
  error: number;
  /** The edit in engine offsets, and the same edit as an LSP range in the requested encoding (converted in the worker, against the text it analysed). */
  edit: TextEdit;
  range: { start: { line: number; character: number }; end: { line: number; character: number } };
}

/** The worker's answer to a sizing request. */
export interface SizingData {
  ideal: number;
  candidates: SizingCandidateData[];
  /** A caveat the engine raised (e.g. the target could only be approached), as a sentence. */
  problem?: string;
  /** The version of the analysed root document the edits apply to. */
  version?: number;
}

/** Main thread → worker. */
export type ToWorker =
  /** The editor's text of an open document changed (text undefined: the document was closed). */
  | { type: 'set-document'; uri: string; text: string | undefined }
  /** Files changed on disk: forget what was read of them (`uris` absent: of every file). */
  | { type: 'files-changed'; uris?: string[] }
  /** What the worker may read from disk (trust, allowed roots); each root netlist's folder is added per analysis. */
  | { type: 'read-policy'; policy: ReadPolicy }
  /**
   * `cornersLater`: analyse without corners and keep what the `corners` request needs to solve them next.
   * `held`: the id of the `analyse` request whose result the main thread holds for `uri`, whose unchanged
   * cards it can keep (`cards-kept` parts).
   */
  | { type: 'analyse'; id: number; uri: string; version: number; options: AnalysisOptions; cornersLater?: boolean; generation: number; held?: number }
  /**
   * The corner phase of the last analysis of root `uri` (second phase; it must be of `version` and, when
   * `analysisId` is given, the answer to that `analyse` request): the worker ran it as soon as it had sent that
   * result, and this collects it. `heldSpread`: the spread result the main thread holds for the root.
   */
  | { type: 'corners'; id: number; uri: string; version: number; generation: number; heldSpread?: string; analysisId?: number }
  /** The main thread stopped taking in the analysis answered to request `analysisId` (superseded): drop its remaining parts. */
  | { type: 'drop-parts'; analysisId: number }
  /** Send these parts of the analysis answered to request `analysisId`, in order, each answered under its own id (one message asks for several: each message costs the main thread a post). */
  | { type: 'next-parts'; analysisId: number; asks: { id: number; index: number }[] }
  | { type: 'sweep'; id: number; uri: string; device: string; points: number }
  /** One chunk of Monte Carlo runs on the last analysis of root `uri`. */
  | { type: 'monte-carlo'; id: number; uri: string; seed: number; first: number; count: number; finish: boolean }
  | { type: 'size-resistor'; id: number; uri: string; resistor: string; target: string; encoding: PositionEncoding }
  /** Compute the resistor-sizing fixes of these `target-missed` findings (with `data.sizing`) of the analysis of root `uri` at `version`. */
  | { type: 'sizing-fixes'; id: number; uri: string; version: number | undefined; findings: Finding[] };

/** Worker → main thread. */
export type FromWorker =
  /**
   * The analysis without its big arrays; `parts` more slices follow, the first `findingParts` of them its findings: each
   * on request, or for a small result (`partsFollow`: at most SMALL_RESULT_PARTS parts) all in one `parts` message under
   * the same id, which the worker sends unasked right after this one (the main thread publishes the findings first);
   * or, for a large result the worker solves the corners of next (`pushed`: it could not answer requests until the phase
   * ends), each in a `pushed-part` message sent unasked right after this one.
   * `ms`: the engine's time; `sendMs`: the time after it to make the header (and a small result's parts).
   */
  | { type: 'analysed'; id: number; analysis: Analysis; parts: number; findingParts: number; ms: number; sendMs: number; partsFollow?: boolean; pushed?: boolean }
  /** Every part of a small result, in order; `sendMs`: the time after the engine's to make the header and them. */
  | { type: 'parts'; id: number; parts: AnalysisPart[]; sendMs: number }
  | { type: 'part'; id: number; index: number; part: AnalysisPart }
  | PushedPart
  | { type: 'swept'; id: number; result: OutputCharacteristicResult | { error: string } }
  | { type: 'monte-carlo-ran'; id: number; result: MonteCarloReply | { error: string } }
  | { type: 'sized'; id: number; result: SizingData | { error: string } }
  /** The fixes of each finding of a `sizing-fixes` request, in its order (edits in engine offsets); `stale` when the worker's analysis is of another version. */
  | { type: 'sizing-fixed'; id: number; fixes: Fix[][]; stale?: boolean }
  /** The corner phase's findings and each structure's corner results by structure id; `stale` when the worker holds another version. */
  | { type: 'cornered'; id: number; findings: Finding[]; corners: Record<string, CornerColumns>; variation?: SpreadMessage; stale?: boolean }
  /** `stopped`: the request was cancelled (the stop generation moved past the request's) at one of the engine's checks. */
  | { type: 'failed'; id: number; message: string; stopped?: boolean };

/** A result of at most this many parts (a netlist of a few thousand elements) travels in two messages, the header and then every part, unasked. */
export const SMALL_RESULT_PARTS = 32;

/**
 * The stop flag the main thread and the worker share (an Int32Array over a SharedArrayBuffer):
 * element 0 is the stop generation. An analysis or corner request carries the generation it was
 * sent at; the worker stops it at the engine's next check once the generation has moved on.
 */
export const STOP_GENERATION = 0;
