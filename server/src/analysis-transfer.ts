// Splits an Analysis into a small header and parts so the main thread can take it in slices, answering editor requests between slices.

import type { Analysis } from '../../shared-analysis/src/analysis';
import type { Circuit, Element, Origin } from '../../shared-analysis/src/circuit';
import type { Card, ParsedDocument, Token } from '../../shared-analysis/src/syntax/ast';
import type { DeviceRecord, OperatingPoint } from '../../shared-analysis/src/solve/types';
import { pointVectors, type PointVectors } from '../../shared-analysis/src/solve/point';
import { addWholeRecords, elementsByName, installPointTables, pointColumns, wholeRecordCount, type PointColumns } from './point-tables';
import type { Structure } from '../../shared-analysis/src/structures/types';
import type { Finding, Span } from '../../shared-analysis/src/types';
import { nameTable, restoreNameTables, restoreStructureTables } from '../../shared-analysis/src/names';
import { indexBuilder, positionsByLowerName } from '../../shared-analysis/src/features/document-index';
import { isSpan, tokenFinder } from '../../shared-analysis/src/syntax/moved-card';
import { SpanToken, isSpanToken } from '../../shared-analysis/src/syntax/span-token';
import { editRegion } from '../../shared-analysis/src/incremental';
import { copyStructure } from '../../shared-analysis/src/structures/corner-columns';

/** Items per part: small enough that taking one in keeps the main thread free within a few milliseconds. */
const PART_SIZE = 400;
/** Node entries per part: a name and a number each, so more fit in the same few milliseconds (4,000 took 47 ms to merge at load 12). */
const NODE_PART_SIZE = 1000;
/**
 * A sender keeps the elements it sent of a circuit up to this size (about 600 bytes an element, 15 MB at
 * the most), to send only the changed ones next time; a larger circuit's elements all travel.
 */
const KEEP_ELEMENTS_UP_TO = 25_000;
/**
 * Structures per part: a structure carries its hand-analysis steps (about 2 KB each as JSON), and 400 of
 * them took 120 ms to deserialise on the main thread at load 10 (the 20k array has 5,000).
 */
const STRUCTURE_PART_SIZE = 50;

/** One slice of the big arrays of an analysis. */
export type AnalysisPart =
  /**
   * Cards as JSON text (far cheaper to cross the thread boundary than a structured clone of many
   * small objects). Tokens travel once, as `[start, end, isExpression]`, and the card's fields
   * refer to them by index; their text is sliced back out of the document on arrival. Every offset
   * is written from its card's start (`starts`), so a card that only moved encodes the same.
   */
  | { kind: 'cards'; uri: string; json: string; starts: number[] }
  /**
   * The next `count` cards of document `uri` are the receiver's held cards `start` to `start + count − 1`
   * (of the analysis it named as held): the same objects before `moved`, and from `moved` on the same
   * cards moved by `delta` characters (moved in place when the result is adopted). The sender checked
   * that each has the held card's span in the text the edit left alone (see `howCardsTravel`).
   */
  | { kind: 'cards-kept'; uri: string; start: number; count: number; moved: number; delta: number }
  /**
   * Elements as JSON text: each an element, its model replaced by its key into `circuit.models` and
   * non-finite numbers spelled out, or a run `[start, count]` of the receiver's held elements that are
   * the same but for their spans, moved by `moves` (per document of the held analysis,
   * `[uri, prefix, tail, delta]`: see `TextMove`).
   */
  | { kind: 'elements'; json: string; moves?: [string, number, number, number][] }
  | { kind: 'devices'; items: [string, DeviceRecord][] }
  /** The point's tables as columns (see `PointColumns`): one part, before its `point-records` parts. */
  | { kind: 'point'; columns: PointColumns }
  /** Records of the point's devices table that do not fit the columns, by position in the table. */
  | { kind: 'point-records'; items: [number, DeviceRecord][] }
  /** Entries of the operating point's node table: names and their volts, in the table's order. */
  | { kind: 'nodes'; names: string[]; volts: Float64Array }
  | { kind: 'findings'; items: Finding[] }
  | { kind: 'structures'; items: Structure[] }
  /**
   * The next `count` structures are the receiver's held structures `start` to `start + count − 1` as it took them in:
   * copies without what it added to them since (corner results, the spread; see `copyStructure`). The sender
   * checked that each is the engine's same first-pass snapshot as the held one (see `structureRuns`).
   */
  | { kind: 'structures-kept'; start: number; count: number };

/**
 * Where an edit left a document's text alone, in the held (older) text's offsets: nothing before `prefix`
 * moved, and everything from `tail` on moved by `delta` characters.
 */
interface TextMove {
  prefix: number;
  tail: number;
  delta: number;
}

function textMove(before: string, after: string): TextMove {
  // The engine's comparison, which compares long stretches at once: one character at a time took milliseconds for a
  // 20,000-element netlist's text, on the path to the diagnostics.
  const { start, oldEnd, delta } = editRegion(before, after);
  return { prefix: start, tail: oldEnd, delta };
}

/** How far a held span moves: 0 in the unchanged prefix, `delta` in the unchanged suffix, undefined when it touches the edit or its document has no move. */
function shiftOf(span: Span, move: TextMove | undefined): number | undefined {
  if (!move) return undefined;
  if (span.end <= move.prefix) return 0;
  return span.start >= move.tail ? move.delta : undefined;
}

/** What a sender keeps of an analysis it sent, to send only what changed next time. */
export interface SentAnalysis {
  /** Per document: its text, whether its first card is a title, and every card's span. */
  documents: Map<string, SentDocument>;
  /** The circuit's elements and each model object's key, while the circuit is small enough to keep them. */
  elements?: SentElements;
  /**
   * Per structure sent, the engine's first-pass snapshot it was equal to when sent (`IncrementalState`), or undefined
   * where none is known or the structure carried more than its snapshot holds (a spread, a start-up record).
   */
  structures?: readonly (Structure | undefined)[];
}
interface SentElements {
  list: readonly Element[];
  modelKeys: Map<unknown, string>;
}
interface SentDocument {
  text: string;
  /** Whether the first card is a title: the parser's `hasTitle`, which decides how line 0 and a lone `.lib` field read. */
  titled: boolean;
  /** Card k's span is `[spans[2k], spans[2k + 1])`. */
  spans: Int32Array;
}

/** The analysis with its big arrays emptied, and the parts that refill them in order. */
export function splitAnalysis(analysis: Analysis): { header: Analysis; parts: AnalysisPart[] } {
  const { header, parts, prepare } = splitAnalysisLazily(analysis);
  prepare();
  return { header, parts: parts.map((make) => make()) };
}

/** What `splitAnalysisLazily` gives the sender. */
export interface LazySplit {
  /** The analysis without its big arrays; it carries the findings itself when they fit in one part. */
  header: Analysis;
  parts: (() => AnalysisPart)[];
  /** How many of the parts, the first ones, are findings (0 when the header carries them). */
  findingParts: number;
  /**
   * Encodes the cards and lists the point's entries, so the card objects need not be kept; to call
   * after the header is sent (the receiver can publish the findings meanwhile) and before any part is
   * built. Returns what was sent of the cards, to compare the next analysis with.
   */
  prepare: () => SentAnalysis;
}

/**
 * `splitAnalysis` with the parts of elements, devices, findings and structures built only when
 * asked for (the sender keeps those objects anyway), and the cards encoded by `prepare` (their
 * JSON is smaller than the parsed cards, which the sender need not keep). The builders read
 * `analysis`, which must not change until the last part is built. Where the receiver holds the
 * previous analysis of the same root (`held`: what `prepare` returned for it), unchanged cards are
 * sent as `cards-kept` parts and unchanged elements as runs of the held ones. `firstPasses`: for each structure of
 * `analysis`, the first-pass snapshot the engine keeps of it for the next edit (`IncrementalState.structures`);
 * a structure whose snapshot is the held one's at the same index is sent as `structures-kept`.
 */
export function splitAnalysisLazily(analysis: Analysis, held?: SentAnalysis, firstPasses?: readonly Structure[]): LazySplit {
  const parts: (() => AnalysisPart)[] = [];
  const slices = <T>(list: T[], make: (items: T[]) => AnalysisPart, size = PART_SIZE) => {
    for (let i = 0; i < list.length; i += size) parts.push(() => make(list.slice(i, i + size)));
  };
  // Findings first (in the header when few): the receiver can publish the diagnostics before the rest is taken in.
  const inHeader = analysis.findings.length <= PART_SIZE;
  if (!inHeader) slices(analysis.findings, (items) => ({ kind: 'findings', items }));
  const findingParts = parts.length;
  const documents: Analysis['documents'] = {};
  // Which cards travel and which the receiver keeps is known now (from the spans); the changed ones are encoded by `prepare`.
  const cardSlots: (AnalysisPart | undefined)[] = [];
  const sent: SentAnalysis = { documents: new Map() };
  const moves = new Map<string, TextMove>();
  let toEncode: { uri: string; cards: Card[]; slot: number }[] = [];
  for (const [uri, doc] of Object.entries(analysis.documents)) {
    documents[uri] = { ...doc, cards: [] };
    const before = held?.documents.get(uri);
    if (before) moves.set(uri, textMove(before.text, doc.text));
    const plan = cardRuns(uri, doc, before, moves.get(uri));
    sent.documents.set(uri, plan.sent);
    for (const run of plan.runs) {
      const slot = cardSlots.length;
      if ('part' in run) cardSlots.push(run.part);
      else {
        cardSlots.push(undefined);
        toEncode.push({ uri, cards: doc.cards.slice(run.from, run.to), slot });
      }
      parts.push(() => cardSlots[slot]!);
    }
  }
  let circuit: Circuit | undefined;
  if (analysis.circuit) {
    circuit = { ...analysis.circuit, elements: [] };
    const elements = analysis.circuit.elements;
    const keyOf = new Map<unknown, string>();
    for (const [key, m] of Object.entries(analysis.circuit.models)) keyOf.set(m, key);
    const heldAt = held?.elements ? heldElementFinder(elements, keyOf, held.elements, moves) : undefined;
    const moveList = [...moves].map(([uri, m]) => [uri, m.prefix, m.tail, m.delta] as [string, number, number, number]);
    for (let i = 0; i < elements.length; i += PART_SIZE) parts.push(() => elementPart(elements, i, Math.min(i + PART_SIZE, elements.length), keyOf, heldAt, moveList));
    if (elements.length <= KEEP_ELEMENTS_UP_TO) sent.elements = { list: elements, modelKeys: keyOf };
  }
  let operatingPoint = analysis.operatingPoint;
  let entries: (() => void) | undefined;
  if (operatingPoint) {
    const v = pointVectors(operatingPoint);
    const elementOf = v && analysis.circuit ? elementsByName(analysis.circuit) : undefined;
    entries = v && elementOf && analysis.circuit ? pointColumnParts(parts, analysis.circuit, v, elementOf) : namedPointParts(parts, operatingPoint, v, analysis.circuit);
    // The header's copy has empty tables (own fields copied without reading the lazily built tables),
    // and must not share them with the analysis the builders read.
    const head: Record<string, unknown> = {};
    for (const [key, d] of Object.entries(Object.getOwnPropertyDescriptors(operatingPoint))) if (key !== 'nodes' && key !== 'devices') head[key] = d.get ? d.get.call(operatingPoint) : d.value;
    operatingPoint = { ...(head as Omit<OperatingPoint, 'nodes' | 'devices'>), nodes: nameTable(), devices: nameTable() };
  }
  const structurePlan = structureRuns(analysis.structures, held?.structures, firstPasses);
  if (structurePlan.sent.some((f) => f !== undefined)) sent.structures = structurePlan.sent;
  for (const run of structurePlan.runs) {
    if ('kept' in run) parts.push(() => ({ kind: 'structures-kept', start: run.from, count: run.to - run.from }));
    else for (let i = run.from; i < run.to; i += STRUCTURE_PART_SIZE) parts.push(() => ({ kind: 'structures', items: analysis.structures.slice(i, Math.min(i + STRUCTURE_PART_SIZE, run.to)) }));
  }
  const header: Analysis = { ...analysis, documents, circuit, operatingPoint, findings: inHeader ? analysis.findings : [], structures: [] };
  const prepare = (): SentAnalysis => {
    for (const { uri, cards, slot } of toEncode) cardSlots[slot] = { kind: 'cards', uri, json: `[${cards.map(encodeCard).join(',')}]`, starts: cards.map((c) => c.span.start) };
    // The part builders share this scope: without this they would keep the changed cards alive until the last part is sent.
    toEncode = [];
    entries?.();
    return sent;
  };
  return { header, parts, findingParts, prepare };
}

/**
 * Whether a structure holds only what its first-pass snapshot holds: the spread (attached in the first pass of a small
 * circuit) and a start-up record (whose corners the corner phase fills in) are left out of the snapshot. (Its corners
 * are empty: the engine keeps snapshots only of analyses without corners, and the worker sends before solving them.)
 */
function onlyFirstPass(s: Structure): boolean {
  return s.variation === undefined && s.startup === undefined;
}

/**
 * The runs of structures `[from, to)` that travel (`sent`) or that the receiver's held ones stand for (`kept`), and what
 * is sent, to compare the next analysis with. Structure i is the held structure i when the engine made both from the
 * same first-pass snapshot (`firstPasses[i]`, an object a value edit hands on unchanged to the structures it keeps and
 * never writes into) and neither carries more than the snapshot: the engine's own rule for a structure an edit cannot
 * have changed (`ValueEdit.structuresAt`), so nothing is compared.
 */
function structureRuns(structures: readonly Structure[], held: readonly (Structure | undefined)[] | undefined, firstPasses: readonly Structure[] | undefined): { runs: ({ from: number; to: number; kept?: true })[]; sent: (Structure | undefined)[] } {
  const sent = structures.map((s, i) => (firstPasses && firstPasses.length === structures.length && onlyFirstPass(s) ? firstPasses[i] : undefined));
  const keptAt = (i: number) => sent[i] !== undefined && held?.[i] === sent[i];
  const runs: { from: number; to: number; kept?: true }[] = [];
  for (let i = 0; i < structures.length; ) {
    const kept = keptAt(i);
    let end = i + 1;
    while (end < structures.length && keptAt(end) === kept) end++;
    runs.push(kept ? { from: i, to: end, kept } : { from: i, to: end });
    i = end;
  }
  return { runs, sent };
}

/** The last part of a list sent `size` at a time takes whatever is left, so a count that fell short loses nothing. */
function upTo(i: number, size: number, count: number): number | undefined {
  return i + size >= count ? undefined : i + size;
}

/**
 * Plans the parts of a point whose element names are unique and that has the solver's vectors: one part of
 * columns (volts, and the two-terminal records), then the other records a part at a time. Returns what makes
 * them, to run in `prepare`.
 */
function pointColumnParts(parts: (() => AnalysisPart)[], circuit: Circuit, v: PointVectors, elementOf: ReadonlyMap<string, number>): () => void {
  let made: ReturnType<typeof pointColumns> | undefined;
  parts.push(() => ({ kind: 'point', columns: made!.columns }));
  const bound = wholeRecordCount(circuit, v);
  for (let i = 0; i < bound; i += PART_SIZE) parts.push(() => ({ kind: 'point-records', items: made!.whole.slice(i, upTo(i, PART_SIZE, bound)) }));
  return () => {
    made = pointColumns(circuit, v, elementOf);
  };
}

/**
 * Plans the parts of a point's tables as entries: its nodes, then its devices by name (a point without the
 * solver's vectors, or whose circuit has two elements of one name). Returns what lists the entries, to run in `prepare`.
 */
function namedPointParts(parts: (() => AnalysisPart)[], point: OperatingPoint, v: PointVectors | undefined, circuit: Circuit | undefined): () => void {
  // The node table goes in parts too: one table of every node in the header was the longest stall
  // of the main thread (a structured clone of 50,000 keys). Read from the solver's vectors when the
  // point has them, so the worker does not build the table for it.
  let nodes: [string, number][] = [];
  let devices: [string, DeviceRecord][] = [];
  // Counted without building the tables: a node per volt of the vectors, at most one device record per element.
  const nodeCount = v ? v.volts.length : Object.keys(point.nodes).length;
  for (let i = 0; i < nodeCount; i += NODE_PART_SIZE) {
    parts.push(() => {
      const slice = nodes.slice(i, upTo(i, NODE_PART_SIZE, nodeCount));
      return { kind: 'nodes', names: slice.map(([name]) => name), volts: Float64Array.from(slice, ([, volts]) => volts) };
    });
  }
  const deviceBound = v ? (circuit?.elements.length ?? 0) : Object.keys(point.devices).length;
  for (let i = 0; i < deviceBound; i += PART_SIZE) parts.push(() => ({ kind: 'devices', items: devices.slice(i, upTo(i, PART_SIZE, deviceBound)) }));
  return () => {
    nodes = v ? [...v.nodeEntries()] : Object.entries(point.nodes);
    // From the vectors, record by record: the name-keyed table of every device is not built for this.
    devices = v ? [...v.deviceEntries()] : Object.entries(point.devices);
  };
}

/** A run of a document's cards: kept by the receiver (a `cards-kept` part), or new cards `[from, to)` to encode (at most a part's worth). */
type CardRun = { part: AnalysisPart } | { from: number; to: number };

/** How a card travels: encoded, kept where the receiver holds it, or kept and moved by the change in length. */
const SENT = 0;
const KEPT = 1;
const MOVED = 2;

/**
 * The runs of a document's cards, each either encoded or, where the receiver holds the same card
 * (`held`: what was sent of its previous analysis), kept; and what is sent, to compare the next
 * analysis with. Decided from the spans alone, without encoding a card (see `howCardsTravel`).
 */
function cardRuns(uri: string, doc: ParsedDocument, held: SentDocument | undefined, move: TextMove | undefined): { runs: CardRun[]; sent: SentDocument } {
  const n = doc.cards.length;
  const spans = new Int32Array(2 * n);
  doc.cards.forEach((c, k) => {
    spans[2 * k] = c.span.start;
    spans[2 * k + 1] = c.span.end;
  });
  const sent: SentDocument = { text: doc.text, titled: doc.cards[0]?.kind === 'title', spans };
  const travel = held && move && held.titled === sent.titled ? howCardsTravel(held, sent, move) : undefined;
  const how = (k: number) => (travel ? travel.how[k]! : SENT);
  const runs: CardRun[] = [];
  for (let k = 0; k < n; ) {
    const kind = how(k);
    let end = k + 1;
    while (end < n && how(end) === kind && (kind !== SENT || end - k < PART_SIZE)) end++;
    if (kind === SENT) runs.push({ from: k, to: end });
    else {
      const moved = kind === MOVED;
      runs.push({ part: { kind: 'cards-kept', uri, start: moved ? k - travel!.shift : k, count: end - k, moved: moved ? 0 : end - k, delta: moved ? travel!.delta : 0 } });
    }
    k = end;
  }
  return { runs, sent };
}

/**
 * For each new card, whether the receiver's held card is the same. A card is a function of its span's
 * text and of whether the document has a title (the parser reads a document line by line; which lines
 * make a card shows in its span, and a card never reads text outside it), so a card is the held one
 * when both have the same span in the text the edit left alone: in the shared prefix at the same index,
 * or in the shared suffix at the same index from the end, moved by the change in length. The title
 * (card 0, the first line whatever it holds) is kept only from the prefix.
 */
function howCardsTravel(held: SentDocument, sent: SentDocument, { prefix, tail: heldTail, delta }: TextMove): { how: Uint8Array; shift: number; delta: number } {
  const n = sent.spans.length / 2;
  const heldCount = held.spans.length / 2;
  const shift = n - heldCount;
  const tail = heldTail + delta;
  const how = new Uint8Array(n);
  for (let k = 0; k < n; k++) {
    const start = sent.spans[2 * k]!;
    const end = sent.spans[2 * k + 1]!;
    const h = k - shift;
    if (k < heldCount && end <= prefix && held.spans[2 * k] === start && held.spans[2 * k + 1] === end) how[k] = KEPT;
    else if (k >= 1 && h >= 1 && h < heldCount && start >= tail && held.spans[2 * h] === start - delta && held.spans[2 * h + 1] === end - delta) how[k] = MOVED;
  }
  return { how, shift, delta };
}

/**
 * Items merged between two yields of `mergePartSteps`: a step of any kind takes well under a millisecond,
 * so a receiver that checks its clock at each yield never holds its thread much past its budget.
 */
const MERGE_STEP = 50;

/**
 * Per analysis being taken in, the held cards it shares that the edit moved, and by how much: moved by `adoptKeptCards`.
 * `uri` and `from` say where they sit in the analysis's own cards (from `from` on, `cards.length` of them).
 */
const pendingMoves = new WeakMap<Analysis, { cards: Card[]; delta: number; uri: string; from: number }[]>();

/**
 * Puts one part back into an analysis being assembled from its header, all at once. `held` is the analysis the
 * receiver holds of the same root: `cards-kept` parts share its cards (left unchanged until the result is
 * adopted, see `adoptKeptCards`).
 */
export function mergePart(target: Analysis, part: AnalysisPart, held?: Analysis): void {
  for (const _ of mergePartSteps(target, part, held));
}

/**
 * `mergePart` in steps: the generator yields after every few dozen items, so a receiver can answer queued
 * requests inside a large part instead of after it (a part of 400 elements merged in one go held the main
 * thread for 10–90 ms at load 6). `target` is complete once the generator is done.
 */
export function* mergePartSteps(target: Analysis, part: AnalysisPart, held?: Analysis): Generator<void, void, undefined> {
  switch (part.kind) {
    case 'cards': {
      const doc = target.documents[part.uri];
      if (!doc) return;
      const cards = JSON.parse(part.json) as EncodedCard[];
      for (let k = 0; k < cards.length; k++) {
        doc.cards.push(decodeCard(doc.text, cards[k]!, part.starts[k]!));
        if (k % MERGE_STEP === MERGE_STEP - 1) yield;
      }
      return;
    }
    case 'cards-kept': {
      const doc = target.documents[part.uri];
      const from = held?.documents[part.uri];
      if (!doc || !from || from.cards.length < part.start + part.count) throw new Error(`The held cards of ${part.uri} are not the ones the worker kept.`);
      const at = doc.cards.length;
      for (let k = part.start; k < part.start + part.count; k++) doc.cards.push(from.cards[k]!);
      // The cards past the edit are moved when the result is adopted: the held analysis answers requests until then.
      // An edit that kept the text's length moves nothing.
      if (part.moved < part.count && part.delta !== 0) {
        const moves = pendingMoves.get(target) ?? [];
        moves.push({ cards: from.cards.slice(part.start + part.moved, part.start + part.count), delta: part.delta, uri: part.uri, from: at + part.moved });
        pendingMoves.set(target, moves);
      }
      return;
    }
    case 'elements': {
      const circuit = target.circuit;
      if (!circuit) return;
      const moves = new Map((part.moves ?? []).map(([uri, prefix, tail, delta]) => [uri, { prefix, tail, delta }]));
      const uris = documentUris(target.documents);
      const cardOf = cardFinder(target);
      let since = 0;
      for (const e of JSON.parse(part.json) as (Record<string, unknown> | [number, number])[]) {
        if (Array.isArray(e)) {
          // A run of held elements, copied a step at a time.
          for (let k = e[0]; k < e[0] + e[1]; k += MERGE_STEP) {
            pushHeldElements(circuit, held, k, Math.min(MERGE_STEP, e[0] + e[1] - k), moves);
            yield;
          }
        } else circuit.elements.push(shareCardSpans(decodeElement(circuit, e, uris), cardOf));
        if (++since % MERGE_STEP === 0) yield;
      }
      return;
    }
    case 'devices':
      if (target.operatingPoint) for (const [name, rec] of part.items) target.operatingPoint.devices[name] = rec;
      return;
    case 'point':
      if (target.operatingPoint && target.circuit) installPointTables(target.operatingPoint, target.circuit, part.columns, () => positionsByLowerName(target));
      return;
    case 'point-records':
      if (target.operatingPoint) addWholeRecords(target.operatingPoint, part.items);
      return;
    case 'nodes':
      if (target.operatingPoint) {
        const nodes = target.operatingPoint.nodes;
        part.names.forEach((name, k) => (nodes[name] = part.volts[k]));
      }
      return;
    case 'findings':
      for (const f of part.items) target.findings.push(f);
      return;
    case 'structures-kept': {
      const from = held?.structures;
      if (!from || from.length < part.start + part.count) throw new Error('The held structures are not the ones the worker kept.');
      for (let k = part.start; k < part.start + part.count; k++) {
        // As taken in: without the corner results and the spread added to it since (the new result's corner phase brings its own).
        target.structures.push(copyStructure(from[k]!, 'variation'));
        if ((k - part.start) % MERGE_STEP === MERGE_STEP - 1) yield;
      }
      return;
    }
    case 'structures':
      for (const s of part.items) {
        // Restored as they arrive: the merger's finish restores the rest of the result without them.
        restoreStructureTables(s);
        target.structures.push(s);
      }
      return;
  }
}

/** What merges the parts of one result into its header (see `partMerger`). */
export interface PartMerger {
  /** Merges one part in steps (see `mergePartSteps`), indexing the elements it brought at each step. */
  steps(part: AnalysisPart): Generator<void, void, undefined>;
  /** Once every part is in: finishes the element index and gives the name-keyed tables their prototype-free form. */
  finish(): void;
  /** `finish` in steps (the element index's node rows are sorted in a few), for a receiver that slices its work. */
  finishSteps(): Generator<void, void, undefined>;
}

/**
 * Merges a result's parts into `analysis` (the header as it arrived, its tables already restored) as the
 * receiver takes them in, and builds its element index meanwhile, so the first request after the merge finds
 * the tables built. `held`: as for `mergePartSteps`.
 */
export function partMerger(analysis: Analysis, held?: Analysis): PartMerger {
  // Made with the first elements part, not before the findings are published (its node table alone is a pass over every node).
  let elementIndex: ReturnType<typeof indexBuilder> | undefined;
  const merger: PartMerger = {
    *steps(part) {
      let indexed = analysis.circuit?.elements.length ?? 0;
      const indexNew = () => {
        if (!analysis.circuit || part.kind !== 'elements') return;
        elementIndex ??= indexBuilder(analysis.circuit);
        elementIndex.add(analysis.circuit.elements, indexed);
        indexed = analysis.circuit.elements.length;
      };
      for (const _ of mergePartSteps(analysis, part, held)) {
        indexNew();
        yield;
      }
      indexNew();
    },
    finish() {
      for (const _ of merger.finishSteps());
    },
    *finishSteps() {
      if (elementIndex) yield* elementIndex.finishSteps(analysis);
      restoreNameTables(analysis, { structures: false });
    },
  };
  return merger;
}

/**
 * Makes a taken-in result whole: the held cards it shares that lie past the edit get their offsets moved,
 * in place (no second copy of every card past the edit, whose allocation set off collections inside the
 * take-in). The held analysis they came from gives them up: call this only when the result replaces it,
 * before anything reads the result's cards.
 */
export function adoptKeptCards(analysis: Analysis): void {
  for (const { cards, delta } of pendingMoves.get(analysis) ?? []) for (const card of cards) moveCard(card, delta);
  pendingMoves.delete(analysis);
}

/**
 * Moves every offset of a card `delta` characters, in place. A card taken in shares no object with another
 * card, and within it only its tokens are reached twice (in `tokens` and in the field that holds one): they are
 * moved first and skipped in the fields, so no table of moved objects is needed. Plain loops that allocate
 * nothing: this runs for every card past an edit that changed the text's length (25,000 cards in the middle of
 * the 50,000-element netlist), in the turn that accepts the result.
 */
function moveCard(card: Card, delta: number): void {
  const tokens = card.tokens;
  for (let i = 0; i < tokens.length; i++) {
    const span = tokens[i]!.span;
    span.start += delta;
    span.end += delta;
  }
  const listed = tokenFinder(tokens);
  const fields = card as unknown as Record<string, unknown>;
  for (const k in fields) if (k !== 'tokens') moveValue(fields[k], listed, delta);
}

/** Moves the offsets within a card's field: a span is moved, a token (moved already) skipped, anything else walked. */
function moveValue(v: unknown, listed: (v: object) => number, delta: number): void {
  if (v === null || typeof v !== 'object') return;
  if (Array.isArray(v)) {
    for (let i = 0; i < v.length; i++) moveValue(v[i], listed, delta);
    return;
  }
  if (listed(v) >= 0) return;
  // A token that is its own span and not among the card's tokens: moved once (its `span` is itself).
  if (isSpanToken(v)) {
    v.start += delta;
    v.end += delta;
    return;
  }
  const o = v as Record<string, unknown>;
  let keys = 0;
  for (const k in o) {
    keys++;
    moveValue(o[k], listed, delta);
  }
  // A span: an offset pair and nothing else.
  if (keys === 2 && typeof o['start'] === 'number' && typeof o['end'] === 'number') {
    (o as unknown as Span).start += delta;
    (o as unknown as Span).end += delta;
  }
}

/** A card with its tokens as `[start, end, 1 for an expression]` and token-valued fields as `{ $t: index }`. */
interface EncodedCard {
  tokens: [number, number, number][];
  [field: string]: unknown;
}

/**
 * A card's JSON, written directly (no intermediate objects: this runs for every changed card of
 * every analysis). Every offset is written from the card's start. Fields are written as
 * `JSON.stringify` would write them (an undefined field left out).
 */
function encodeCard(card: Card): string {
  const base = card.span.start;
  const offset = (x: number): number => x - base;
  const tokenAt = tokenFinder(card.tokens);
  const token = (t: Token): string => `[${offset(t.span.start)},${offset(t.span.end)},${t.kind === 'expr' ? 1 : 0}]`;
  const encode = (v: unknown): string | undefined => {
    if (v === null || typeof v !== 'object') return JSON.stringify(v);
    if (Array.isArray(v)) return `[${v.map((x) => encode(x) ?? 'null').join(',')}]`;
    const i = tokenAt(v);
    if (i >= 0) return `{"$t":${i}}`;
    if (isToken(v)) return `{"$tok":${token(v)}}`;
    if (isSpan(v)) return `{"start":${offset(v.start)},"end":${offset(v.end)}}`;
    return `{${fields(v)}}`;
  };
  const fields = (o: object, skip?: string): string => {
    const out: string[] = [];
    for (const [k, x] of Object.entries(o)) {
      const json = k === skip ? undefined : encode(x);
      if (json !== undefined) out.push(`${JSON.stringify(k)}:${json}`);
    }
    return out.join(',');
  };
  const rest = fields(card, 'tokens');
  return `{"tokens":[${card.tokens.map(token).join(',')}]${rest ? `,${rest}` : ''}}`;
}

/**
 * The inverse of {@link encodeCard} for a card starting at `base`, rebuilding the parsed JSON in
 * place (its objects are this card's own): tokens and spans get their absolute offsets back.
 */
function decodeCard(text: string, enc: EncodedCard, base: number): Card {
  // Each token its own span, as the parser makes them.
  const token = ([s, e, expr]: [number, number, number]): Token => new SpanToken(text.slice(s + base, e + base), s + base, e + base, expr ? 'expr' : 'word');
  const tokens = enc.tokens.map(token);
  const decode = (v: unknown): unknown => {
    if (v === null || typeof v !== 'object') return v;
    if (Array.isArray(v)) {
      for (let i = 0; i < v.length; i++) v[i] = decode(v[i]);
      return v;
    }
    const tagged = v as { $t?: number; $tok?: [number, number, number] };
    if (typeof tagged.$t === 'number') return tokens[tagged.$t];
    if (tagged.$tok) return token(tagged.$tok);
    if (isSpan(v)) {
      v.start += base;
      v.end += base;
      return v;
    }
    const o = v as Record<string, unknown>;
    for (const k of Object.keys(o)) o[k] = decode(o[k]);
    return o;
  };
  const card = enc as Record<string, unknown>;
  card['tokens'] = tokens;
  for (const k of Object.keys(card)) if (k !== 'tokens') card[k] = decode(card[k]);
  return card as unknown as Card;
}

/** A token (`word` or `expr`), not a card that also has text, kind and span (a comment card inside a card's `comments`). */
function isToken(v: object): v is Token {
  const t = v as Partial<Token> & { tokens?: unknown };
  return typeof t.text === 'string' && (t.kind === 'word' || t.kind === 'expr') && !!t.span && typeof t.span.start === 'number' && t.tokens === undefined;
}

/**
 * For the elements of a circuit being sent, the index of the same element among those sent before
 * (`held`), or −1: tried at the same index, then at the same index from the end (an element added or
 * removed before it).
 */
function heldElementFinder(elements: readonly Element[], keyOf: Map<unknown, string>, held: SentElements, moves: Map<string, TextMove>): (i: number) => number {
  const shift = elements.length - held.list.length;
  const same = (i: number, h: number) => h >= 0 && h < held.list.length && sameElement(elements[i]!, held.list[h]!, keyOf, held.modelKeys, moves);
  return (i) => (same(i, i) ? i : shift !== 0 && same(i, i - shift) ? i - shift : -1);
}

/**
 * Whether element `a` of the circuit being sent is `b`, sent before, but for its spans moved past the edit:
 * the same fields in the same order with the same values, the same model by key. No objects are made: this
 * runs for every element of every analysis.
 */
function sameElement(a: Element, b: Element, keyOf: Map<unknown, string>, heldKeyOf: Map<unknown, string>, moves: Map<string, TextMove>): boolean {
  // The same object: an element the elaboration patch shared with the last circuit (an edit of another card). The engine
  // writes into no element once elaborated but a behavioural source (its program keeps the solver's scratch values), so
  // the object holds what was sent; it is the held one when its spans lie where the edit left them in place.
  if (a === b) return a.kind !== 'B' && originFate(a.origin, moves) === SPAN_KEPT;
  const fields = Object.keys(a);
  const heldFields = Object.keys(b);
  if (fields.length !== heldFields.length) return false;
  for (let i = 0; i < fields.length; i++) {
    const k = fields[i]!;
    if (k !== heldFields[i]) return false;
    const u = (a as unknown as Record<string, unknown>)[k];
    const v = (b as unknown as Record<string, unknown>)[k];
    if (k === 'origin') {
      if (!sameOrigin(u as Origin, v as Origin, moves)) return false;
    } else if (k === 'model' && u && typeof u === 'object') {
      const key = keyOf.get(u);
      if (key === undefined || key !== heldKeyOf.get(v)) return false;
    } else if (!sameData(u, v)) return false;
  }
  return true;
}

/** Whether two values hold the same data: arrays item by item, objects field by field in order, numbers as `Object.is` compares them. */
function sameData(u: unknown, v: unknown): boolean {
  if (Object.is(u, v)) return true;
  if (!u || !v || typeof u !== 'object' || typeof v !== 'object') return false;
  if (Array.isArray(u)) {
    if (!Array.isArray(v) || u.length !== v.length) return false;
    for (let i = 0; i < u.length; i++) if (!sameData(u[i], v[i])) return false;
    return true;
  }
  if (Array.isArray(v)) return false;
  const a = u as Record<string, unknown>;
  const b = v as Record<string, unknown>;
  const keys = Object.keys(a);
  const heldKeys = Object.keys(b);
  if (keys.length !== heldKeys.length) return false;
  for (let i = 0; i < keys.length; i++) if (keys[i] !== heldKeys[i] || !sameData(a[keys[i]!], b[keys[i]!])) return false;
  return true;
}

/** The fields of an `Origin` that hold spans in the origin's document (every other field but `instances` is compared and kept as it is). */
const ORIGIN_SPANS = new Set(['span', 'valueSpan', 'modelSpan']);

/** Whether a new element's origin is a held one's with its spans moved past the edit (see `movedOrigin`). */
function sameOrigin(a: Origin, b: Origin, moves: Map<string, TextMove>): boolean {
  const fields = Object.keys(a);
  const heldFields = Object.keys(b);
  if (fields.length !== heldFields.length || a.uri !== b.uri) return false;
  const move = moves.get(a.uri);
  for (let i = 0; i < fields.length; i++) {
    const k = fields[i]!;
    if (k !== heldFields[i]) return false;
    const u = (a as unknown as Record<string, unknown>)[k];
    const v = (b as unknown as Record<string, unknown>)[k];
    if (u === undefined || v === undefined) {
      if (u !== v) return false;
    } else if (ORIGIN_SPANS.has(k)) {
      if (!sameMovedSpan(u as Span, v as Span, move)) return false;
    } else if (k === 'nodeSpans') {
      const x = u as Span[];
      const y = v as Span[];
      if (x.length !== y.length) return false;
      for (let j = 0; j < x.length; j++) if (!sameMovedSpan(x[j]!, y[j]!, move)) return false;
    } else if (k === 'instances') {
      const x = u as Origin['instances'];
      const y = v as Origin['instances'];
      if (x.length !== y.length) return false;
      for (let j = 0; j < x.length; j++) {
        const p = x[j]!;
        const q = y[j]!;
        if (p.name !== q.name || p.uri !== q.uri || Object.keys(p).length !== 3 || Object.keys(q).length !== 3 || !sameMovedSpan(p.span, q.span, moves.get(p.uri))) return false;
      }
    } else if (!sameData(u, v)) return false;
  }
  return true;
}

/**
 * Whether span `a` of the new text is held span `b` moved past the edit (and both are offsets and nothing else: plain
 * spans, or tokens that are their own spans, which travel as plain spans).
 */
function sameMovedSpan(a: Span, b: Span, move: TextMove | undefined): boolean {
  const d = shiftOf(b, move);
  return d !== undefined && a.start === b.start + d && a.end === b.end + d && (isSpan(a) || isSpanToken(a)) && (isSpan(b) || isSpanToken(b));
}

/** How a span fares under an edit: where it was, moved by the change in length, or touching the edited text. */
const SPAN_KEPT = 0;
const SPAN_MOVED = 1;
const SPAN_TOUCHED = 2;

function spanFate(span: Span | undefined, move: TextMove | undefined): number {
  if (span === undefined) return SPAN_KEPT;
  const d = shiftOf(span, move);
  return d === undefined ? SPAN_TOUCHED : d === 0 ? SPAN_KEPT : SPAN_MOVED;
}

/** The worst fate of an origin's spans (those `movedOrigin` moves), found without making anything. */
function originFate(origin: Origin, moves: Map<string, TextMove>): number {
  const move = moves.get(origin.uri);
  let fate = Math.max(spanFate(origin.span, move), spanFate(origin.valueSpan, move), spanFate(origin.modelSpan, move));
  const nodeSpans = origin.nodeSpans ?? [];
  for (let k = 0; k < nodeSpans.length && fate !== SPAN_TOUCHED; k++) fate = Math.max(fate, spanFate(nodeSpans[k], move));
  for (let k = 0; k < origin.instances.length && fate !== SPAN_TOUCHED; k++) fate = Math.max(fate, spanFate(origin.instances[k]!.span, moves.get(origin.instances[k]!.uri)));
  return fate;
}

/**
 * An element's origin with its spans moved past the edit (the same object when none moves), or undefined
 * when a span touches the edited text: the spans in the origin's document, and each instance's in its own.
 */
function movedOrigin(origin: Origin, moves: Map<string, TextMove>): Origin | undefined {
  // Most elements of a small edit's result lie where they were (every one, when the edit kept the length): nothing to make.
  const fate = originFate(origin, moves);
  if (fate !== SPAN_MOVED) return fate === SPAN_KEPT ? origin : undefined;
  let moved = false;
  const at = (uri: string, span: Span): Span | undefined => {
    const d = shiftOf(span, moves.get(uri));
    if (d === undefined || d === 0) return d === undefined ? undefined : span;
    moved = true;
    return { start: span.start + d, end: span.end + d };
  };
  const out: Record<string, unknown> = {};
  for (const [k, v] of Object.entries(origin)) {
    if (v === undefined) out[k] = v;
    else if (ORIGIN_SPANS.has(k)) {
      const span = at(origin.uri, v as Span);
      if (!span) return undefined;
      out[k] = span;
    } else if (k === 'nodeSpans') {
      const spans: Span[] = [];
      for (const x of v as Span[]) {
        const span = at(origin.uri, x);
        if (!span) return undefined;
        spans.push(span);
      }
      out[k] = spans;
    } else if (k === 'instances') {
      const list: Origin['instances'] = [];
      for (const x of v as Origin['instances']) {
        const span = at(x.uri, x.span);
        if (!span) return undefined;
        list.push(span === x.span ? x : { ...x, span });
      }
      out[k] = list;
    } else out[k] = v;
  }
  return moved ? (out as unknown as Origin) : origin;
}

/**
 * Elements `[from, to)` of a circuit being sent: each encoded, or, where `heldAt` finds the same element
 * among those sent before, in a run `[start, count]` of those.
 */
function elementPart(elements: readonly Element[], from: number, to: number, keyOf: Map<unknown, string>, heldAt: ((i: number) => number) | undefined, moves: [string, number, number, number][]): AnalysisPart {
  const items: string[] = [];
  let run: [number, number] | undefined;
  let kept = false;
  for (let i = from; i < to; i++) {
    const h = heldAt ? heldAt(i) : -1;
    if (h >= 0 && run && run[0] + run[1] === h) {
      run[1]++;
      continue;
    }
    if (run) items.push(`[${run[0]},${run[1]}]`);
    run = h >= 0 ? [h, 1] : undefined;
    kept ||= h >= 0;
    if (h < 0) items.push(JSON.stringify(encodeElement(elements[i]!, keyOf)));
  }
  if (run) items.push(`[${run[0]},${run[1]}]`);
  return kept ? { kind: 'elements', json: `[${items.join(',')}]`, moves } : { kind: 'elements', json: `[${items.join(',')}]` };
}

/** Each held analysis's model keys by model object, made when its elements are first kept. */
const heldModelKeys = new WeakMap<Circuit, Map<unknown, string>>();

/**
 * Appends copies of the receiver's held elements `start` to `start + count − 1` to `circuit`: spans moved
 * past the edit, the model the new circuit's of the same key.
 */
function pushHeldElements(circuit: Circuit, held: Analysis | undefined, start: number, count: number, moves: Map<string, TextMove>): void {
  const from = held?.circuit;
  if (!from || from.elements.length < start + count) throw new Error('The held elements are not the ones the worker kept.');
  let keys = heldModelKeys.get(from);
  if (!keys) heldModelKeys.set(from, (keys = new Map(Object.entries(from.models).map(([key, m]) => [m, key]))));
  for (let k = start; k < start + count; k++) {
    const el = from.elements[k]!;
    const origin = movedOrigin(el.origin, moves);
    const key = 'model' in el && el.model ? keys.get(el.model) : undefined;
    if (!origin || (key === undefined && 'model' in el && el.model)) throw new Error(`The held element ${el.name} is not the one the worker kept.`);
    const copy = { ...el, origin } as Element;
    if (key !== undefined) (copy as { model?: unknown }).model = circuit.models[key];
    circuit.elements.push(copy);
  }
}

/** An element as JSON-safe data: its model by key, non-finite numbers as `{ $num }`. */
function encodeElement(e: Element, keyOf: Map<unknown, string>): Record<string, unknown> {
  // A plain object: its keys are the element's field names, never a netlist's (and JSON writes it faster than a prototype-free table).
  const out: Record<string, unknown> = {};
  for (const [k, v] of Object.entries(e)) {
    if (k === 'model' && v && typeof v === 'object') {
      const key = keyOf.get(v);
      out[k] = key !== undefined ? { $model: key } : v;
    } else if (typeof v === 'number' && !Number.isFinite(v)) out[k] = { $num: String(v) };
    else if (k === 'origin') out[k] = plainOrigin(v as Origin);
    else out[k] = v;
  }
  return out;
}

/**
 * An origin whose spans are plain `{ start, end }` pairs, for JSON: the engine's origins hold the parser's tokens as
 * their spans (`SpanToken`), and a span travels as its offsets (JSON would write a `SpanToken` whole, through its
 * `toJSON`, and refuses a structured clone of one, which refers to itself). Fields in the origin's order.
 */
function plainOrigin(o: Origin): Origin {
  const out: Record<string, unknown> = {};
  for (const k in o) {
    const v = (o as unknown as Record<string, unknown>)[k];
    if (k === 'nodeSpans') out[k] = (v as Span[]).map(plainOf);
    else if (v !== undefined && ORIGIN_SPANS.has(k)) out[k] = plainOf(v as Span);
    else out[k] = v;
  }
  return out as unknown as Origin;
}

function plainOf(s: Span): Span {
  return isSpanToken(s) ? { start: s.start, end: s.end } : s;
}

/**
 * The inverse of {@link encodeElement}, pointing the model at the circuit's own model object and the origin's
 * document at the analysis's own string for it (`uris`): a worker message shares no strings, so every element
 * would otherwise hold a copy of its document's URI (2.8 MB over 50,000 elements, twice while a result is taken
 * in beside the last one). No lists are made: this runs for every element a result carries.
 */
function decodeElement(circuit: Circuit, e: Record<string, unknown>, uris: DocumentUris): Element {
  for (const k in e) {
    const v = e[k];
    if (!v || typeof v !== 'object') continue;
    const tagged = v as { $model?: string; $num?: string };
    if (k === 'model' && typeof tagged.$model === 'string') e[k] = circuit.models[tagged.$model] ?? v;
    else if (typeof tagged.$num === 'string') e[k] = Number(tagged.$num);
  }
  const origin = e['origin'] as Origin | undefined;
  if (origin) {
    origin.uri = uris(origin.uri);
    if (origin.instances.length === 0) origin.instances = NO_INSTANCES;
    for (const instance of origin.instances) instance.uri = uris(instance.uri);
  }
  return e as unknown as Element;
}

/**
 * `element` with its origin's spans replaced by its card's span objects (`cardOf`), where they hold the same offsets:
 * in the engine an element's origin holds its card's span and its fields' token spans (`elaborate`), but over JSON
 * each arrives as an object of its own, four for a resistor (200,000 for the 50,000-element netlist, 8 MB, held twice
 * while a result is taken in beside the last one).
 */
function shareCardSpans(element: Element, cardOf: (origin: Origin) => Card | undefined): Element {
  const origin = element.origin;
  const card = cardOf(origin);
  if (!card) return element;
  origin.span = card.span;
  if (origin.valueSpan) origin.valueSpan = tokenSpanAt(card.tokens, origin.valueSpan);
  if (origin.modelSpan) origin.modelSpan = tokenSpanAt(card.tokens, origin.modelSpan);
  const nodeSpans = origin.nodeSpans as Span[] | undefined;
  if (nodeSpans) {
    for (let i = 0; i < nodeSpans.length; i++) nodeSpans[i] = tokenSpanAt(card.tokens, nodeSpans[i]!);
    // The card's own list of node tokens when those are the spans, in order, as the engine's elements hold it.
    const nodes = card.kind === 'element' ? (card.nodes as readonly unknown[]) : undefined;
    let same = nodes !== undefined && nodes.length === nodeSpans.length;
    for (let i = 0; same && i < nodeSpans.length; i++) same = nodeSpans[i] === nodes![i];
    if (same) origin.nodeSpans = nodes as readonly Span[];
  }
  return element;
}

/**
 * For the elements of a result being taken in, the card of `target` whose span has an origin's offsets, or undefined.
 * Never a card the adoption will move: until then its offsets are the held text's, and an element sharing its spans
 * would move with it. Elements arrive in their cards' order, so the card after the last one found is tried first (a
 * card's `span` read from cards of many shapes is a slow property read, and a binary search made 16 of them per
 * element); a card list that the edit left out of order past the edit at worst finds nothing, and the element keeps
 * its own, equal spans.
 */
function cardFinder(target: Analysis): (origin: Origin) => Card | undefined {
  const moves = pendingMoves.get(target) ?? [];
  let uri: string | undefined;
  let cards: readonly Card[] = [];
  let next = 0;
  return (origin) => {
    if (origin.uri !== uri) {
      uri = origin.uri;
      cards = target.documents[uri]?.cards ?? [];
      next = 0;
    }
    const start = origin.span.start;
    const k = next < cards.length && cards[next]!.span.start === start ? next : cardIndexAt(cards, start);
    if (k < 0 || cards[k]!.span.end !== origin.span.end || moves.some((m) => m.uri === uri && k >= m.from && k < m.from + m.cards.length)) return undefined;
    next = k + 1;
    return cards[k];
  };
}

/** The index of the card starting at `start` (cards are in text order: a binary search), or −1. */
function cardIndexAt(cards: readonly Card[], start: number): number {
  let lo = 0;
  let hi = cards.length - 1;
  while (lo <= hi) {
    const mid = (lo + hi) >> 1;
    const at = cards[mid]!.span.start;
    if (at === start) return mid;
    if (at < start) lo = mid + 1;
    else hi = mid - 1;
  }
  return -1;
}

/** The span object of the token at `span`'s offsets, or `span` itself when no token is there. */
function tokenSpanAt(tokens: readonly Token[], span: Span): Span {
  for (let i = 0; i < tokens.length; i++) {
    const s = tokens[i]!.span;
    if (s.start === span.start && s.end === span.end) return s;
  }
  return span;
}

/**
 * The one empty instance list of every top-level element taken in (a list each was 1.6 MB over 50,000 elements);
 * frozen, since nothing on the receiving side may add to an element's origin.
 */
const NO_INSTANCES: Origin['instances'] = Object.freeze([]) as unknown as Origin['instances'];

/** Gives a document URI read from a message the analysis's own string of the same text (the one it was given otherwise). */
type DocumentUris = (uri: string) => string;

/** The URIs of `documents` as their own strings, for `decodeElement`; the last one found is tried first. */
function documentUris(documents: Analysis['documents']): DocumentUris {
  const own = Object.keys(documents);
  let last = own[0];
  return (uri) => {
    if (uri === last) return last;
    const found = own.find((u) => u === uri);
    if (found === undefined) return uri;
    last = found;
    return found;
  };
}
