// Re-analysis after a value edit: the prepared solver takes the new values in place, and only the structures the edit can have changed are analysed again.

import type { ResolvedOptions } from './analysis';
import type { Circuit, Element, Model } from './circuit';
import type { ElaborationResult } from './elaborate/index';
import type { DcSolver, DcSolveResult } from './solve/dc';
import type { SolveOptions } from './solve/types';
import type { WarmStart } from './solve/warm-start';
import type { CornerContext, CornerRecord } from './checks/corners';
import { followRails, railsByIndex } from './structures/rails';
import { followTopology } from './structures/topology';
import type { Structure } from './structures/types';
import { copyStructure } from './structures/corner-columns';
import type { Finding, Span } from './types';
import { nameTable } from './names';
import type { Card, ParsedDocument, SyntaxError } from './syntax/ast';
import { parseElementLine } from './syntax/parser';
import { movedCard } from './syntax/moved-card';
import { PartStarts, partsAreSeparate, resistancesOf, type PartCircuit } from './solve/part-starts';
import { topologyOf } from './structures/topology';
import type { OutputSpec } from './variation/outputs';
import type { SpreadRecord, SpreadReuse } from './variation/reuse';
import { patchedElaboration, type EditRegion, type KeptElaboration, type PatchedElaboration } from './incremental-elaborate';

/**
 * An unknown counts as moved when it differs from the value its structures were analysed at by more than
 * this, relative to the larger magnitude (plus `MOVED_FLOOR`). Two converged Newton runs from different
 * starts agree to about 1e-15 (a cell the edit does not reach usually to the last bit); a structure kept
 * within this tolerance differs from a cold analysis's by about as much times its gain, and a figure made
 * of a difference (an estimate's error against its target) by that over the difference, far below the
 * digits any finding prints.
 */
const MOVED_RELATIVE = 1e-13;
/** Absolute part of the moved test (volts or amperes): a node at 0 V is not moved by rounding noise. */
const MOVED_FLOOR = 1e-15;

/** One recognised structure as a re-analysis may reuse it. */
interface KeptStructure {
  /** As recognition made it, before any analysis wrote into it. */
  pristine: Structure;
  /** As the first pass left it (hand analysis, no corners, no spread); nested records shared, never written again. */
  firstPass: Structure;
  /** Its hand-analysis findings, severities mapped, before fixes were attached. */
  findings: Finding[];
}

/**
 * What an analysis leaves for the next analysis of an edited version of the same text (`AnalysisSession.incremental`).
 * Not plain data; it stays in the process that analysed. The solver is shared with the session.
 */
export interface IncrementalState {
  uri: string;
  text: string;
  optionsKey: string;
  circuit: Circuit;
  solver: DcSolver;
  /** Per unknown, the value the kept structures were analysed at (refreshed where an unknown moves). */
  basis: Float64Array;
  structures: KeptStructure[];
  /** Element name -> index, node -> incident elements, rail nodes: the same for every value edit. */
  index: CircuitIndex;
  /** Which structures a moved node or element concerns (see `watchers`), and each structure's own elements (`memberElements`): the same for every value edit. */
  watch: { byNode: Watchers; byElement: Watchers; members: number[][] };
  /** Which structure feeds which (see `feedPairs`): the same for every value edit. */
  feeds: Int32Array;
  /** The fingerprint of the MNA unknowns (`unknownsFingerprint`), which a value edit keeps. */
  unknowns: string;
  /** The connectivity check's findings, which read nodes, kinds and current sources' values only: a value edit keeps them (`keptConnectivity`). */
  connectivity: Finding[];
  /** Set while an edit has moved the solver to its circuit and the analysis has not finished (see `revertValueEdit`). */
  adopted?: { circuit: Circuit; changed: number[] };
  /** Per corner label, the last converged solution of that corner on this state or one it came from by value edits (see `cornerStarts`). */
  corners?: Map<string, CornerSolution>;
  /** The last finished corner phase's figures and findings on this state or one it came from by value edits, with the resistances it was solved with (see `keptCorners`). */
  cornerRecord?: { record: CornerRecord; resistances: Float64Array; text: string };
  /** The last spread analysis on this state or one it came from by value edits, with the resistances it was made with (see `keptSpread`). */
  spreadRecord?: { record: SpreadRecord; resistances: Float64Array };
  /** The parse of `text`, for the next analysis to read again only the card an edit changed (see `reparsedDocument`). Never written. */
  document?: ParsedDocument;
  /** What the elaboration of `text` left for the next one to patch (see `patchedElaboration`). */
  elaboration?: KeptElaboration;
  /** The device judgements of this analysis element by element, before the flood limit (`judgeEachDevice`); undefined when nothing was judged. */
  devices?: (Finding[] | undefined)[];
  /** The part solves of this analysis's nominal start (`ValueEdit.nominalStart`), which the next edit of the same parts moves on. */
  nominalParts?: PartStarts;
}

/** A corner's converged solution, the nominal solution it was solved around and the resistances it was solved with (`resistancesOf`). */
interface CornerSolution {
  x: Float64Array;
  nominal: Float64Array;
  resistances: Float64Array;
}

/**
 * The corner solves' starts and their record, for `runCorners` on the analysis `state` belongs to: corner k starts
 * from the last solution of the same corner moved by the change of the nominal solution since (x_c + x_nominal −
 * x_nominal,then: after a value edit only the unknowns near the edit move, and by about as much at every corner),
 * made exact in the parts of the circuit holding a changed resistor by solving those parts alone (`PartStarts`), so
 * the whole circuit's Newton needs one iteration to confirm the corner's point instead of two to four; and each
 * converged corner's solution is kept for the next phase. A value edit keeps the unknowns, and a state is kept
 * only for a circuit without a self-biased loop, whose corner point does not depend on where Newton starts (so the
 * corner phase need not search for one: `loopFree`).
 * Nothing when `state` is not this circuit's.
 */
export function cornerStarts(state: IncrementalState | undefined, circuit: Circuit, nominal: DcSolveResult): Pick<CornerContext, 'startOf' | 'solved' | 'loopFree'> {
  if (!state || state.circuit !== circuit || state.solver.unknownCount !== nominal.x.length) return {};
  const byLabel = (state.corners ??= new Map());
  const around = Float64Array.from(nominal.x);
  const whole: PartCircuit = { circuit, unknowns: state.solver.unknowns, rail: state.index.rail, partOf: state.index.parts.ofElement };
  // One per set of resistances the last solutions were solved with (a phase stopped half-way leaves two).
  const partStarts = new Map<Float64Array, PartStarts>();
  let resistances: Float64Array | undefined;
  return {
    startOf: (spec, _k, options) => {
      const last = byLabel.get(spec.label);
      if (!last || last.x.length !== around.length) return undefined;
      const start = new Float64Array(around.length);
      for (let k = 0; k < start.length; k++) start[k] = last.x[k] + (around[k] - last.nominal[k]);
      let parts = partStarts.get(last.resistances);
      if (!parts) partStarts.set(last.resistances, (parts = PartStarts.of(whole, last.resistances)));
      const point = parts.refine(start, last.x, options);
      return point ? { x: start, parts: point } : { x: start };
    },
    solved: (spec, _k, x) => byLabel.set(spec.label, { x: Float64Array.from(x), nominal: around, resistances: (resistances ??= resistancesOf(circuit)) }),
    loopFree: true,
  };
}

/**
 * What the corner phase of the analysis `state` belongs to may keep of the last finished one (`CornerContext.reuse`),
 * and the record of this one for the next. At a corner, the circuit's parts joined through nodes that are not rails
 * (rails are held by ideal sources at the corner's values) share nothing but those sources' currents when every
 * element reads only the nodes it lists: a part holding no resistor whose value differs from the last phase's solves
 * to the same point there (to the solver's tolerance), so a structure whose elements and voltage nodes all lie in such
 * parts measures as last time. A structure naming a source that holds a rail reads a current every part shares, so it
 * is measured again whenever anything changed. Nothing is kept when `state` is not this circuit's, the circuit has an
 * element reading across parts, or the structures are not the recorded ones (`runCorners` checks the corners and
 * the structures' shapes too).
 */
export function keptCorners(state: IncrementalState | undefined, circuit: Circuit, structures: readonly Structure[]): Pick<CornerContext, 'reuse' | 'record'> {
  if (!state || state.circuit !== circuit) return {};
  const resistances = resistancesOf(circuit);
  const record = (r: CornerRecord) => (state.cornerRecord = { record: r, resistances, text: state.text });
  const last = state.cornerRecord;
  if (!last || last.resistances.length !== resistances.length || !partsAreSeparate(circuit)) return { record };
  const touched = touchedStructures(state, structures, touchedParts(state.index.parts, resistances, last.resistances));
  if (!touched) return { record };
  const region = editRegion(last.text, state.text);
  const members = new Set<number>();
  structures.forEach((s, i) => touched[i] === 1 && membersOf(state, structures, i).forEach((e) => members.add(e)));
  return { record, reuse: { record: last.record, touched, members: Int32Array.from(members), moved: (f) => movedFinding(f, state.uri, region) } };
}

/**
 * What the spread analysis of the analysis `state` belongs to may keep of the last one (`SpreadReuse`), and the record
 * of this one for the next. An output's derivatives come from one transposed solve whose solution lives in the part of
 * the circuit holding the output's terms and in the rows of the rail sources (at a rail the adjoint's KCL row is zero:
 * its source's branch current is read by no output of another part), when every element reads only the nodes it lists.
 * So an output none of whose terms lies in a part holding a changed resistor (or reads the current of a source holding
 * a rail, which every part shares) has the same value and row as last time, to the solver's tolerance. Nothing is kept
 * when `state` is not this circuit's or the circuit has an element reading across parts; `analyseVariation` checks the
 * outputs, the sources and the targets.
 */
export function keptSpread(state: IncrementalState | undefined, circuit: Circuit): { reuse?: SpreadReuse; record: (r: SpreadRecord) => void } {
  if (!state || state.circuit !== circuit) return { record: () => undefined };
  const resistances = resistancesOf(circuit);
  const record = (r: SpreadRecord) => (state.spreadRecord = { record: r, resistances });
  const last = state.spreadRecord;
  if (!last || last.resistances.length !== resistances.length || !partsAreSeparate(circuit)) return { record };
  const { parts, rail } = state.index;
  const touched = touchedParts(parts, resistances, last.resistances);
  const changed = changedElements(resistances, last.resistances);
  const anyTouched = changed.length > 0;
  const reachedElement = (e: number) => touched[parts.ofElement[e]!] === 1 || (anyTouched && holdsRail(circuit.elements[e]!, rail));
  const reached = (spec: OutputSpec) => spec.functional.terms.some((t) => (t.kind === 'node' ? parts.ofNode[t.node]! >= 0 && touched[parts.ofNode[t.node]!] === 1 : reachedElement(t.element)));
  return { record, reuse: { last: last.record, changed, reached, scope: (outputs) => adjointScope(circuit, state.index, outputs) } };
}

/**
 * The elements an output's adjoint can reach when every element reads only the nodes it lists: the parts holding the
 * outputs' terms (the adjoint's KCL rows at a rail are zero: a rail's source fixes the node) and the sources holding
 * rails (their branch rows carry the supply's derivative). Undefined when a term lies on a rail (its row is the rail's).
 */
function adjointScope(circuit: Circuit, index: CircuitIndex, outputs: readonly OutputSpec[]): Uint8Array | undefined {
  const { parts, rail } = index;
  const inPart = new Uint8Array(parts.count);
  for (const spec of outputs) {
    for (const t of spec.functional.terms) {
      const part = t.kind === 'node' ? parts.ofNode[t.node]! : parts.ofElement[t.element]!;
      if (part < 0) return undefined;
      inPart[part] = 1;
    }
  }
  const elements = circuit.elements;
  const scope = new Uint8Array(elements.length);
  for (let e = 0; e < elements.length; e++) if (inPart[parts.ofElement[e]!] === 1 || holdsRail(elements[e]!, rail)) scope[e] = 1;
  return scope;
}

/** The elements whose resistance differs between `now` and `before` (per element, NaN but for resistors). */
function changedElements(now: Float64Array, before: Float64Array): Int32Array {
  const out: number[] = [];
  for (let e = 0; e < now.length; e++) if (!Object.is(now[e], before[e])) out.push(e);
  return Int32Array.from(out);
}

/** Per part (see `circuitParts`), 1 where a resistor's value differs between `now` and `before` (per element, NaN but for resistors). */
function touchedParts(parts: CircuitParts, now: Float64Array, before: Float64Array): Uint8Array {
  const touched = new Uint8Array(parts.count);
  for (let e = 0; e < now.length; e++) if (!Object.is(now[e], before[e])) touched[parts.ofElement[e]!] = 1;
  return touched;
}

/** Per structure, 1 when its corner figures may differ from the last phase's (see `keptCorners`); undefined when a structure cannot be placed. */
function touchedStructures(state: IncrementalState, structures: readonly Structure[], parts: Uint8Array): Uint8Array | undefined {
  const { index, circuit } = state;
  const anyTouched = parts.some((p) => p === 1);
  const nodeIndex = topologyOf(circuit).nodeIndex;
  const out = new Uint8Array(structures.length);
  for (let i = 0; i < structures.length; i++) {
    const s = structures[i]!;
    const members = membersOf(state, structures, i);
    let touched = members.some((e) => parts[index.parts.ofElement[e]!] === 1 || (anyTouched && holdsRail(circuit.elements[e]!, index.rail)));
    for (const v of s.voltages ?? []) {
      for (const name of v.from === undefined ? [v.node] : [v.node, v.from]) {
        const n = nodeIndex.get(name);
        if (n === undefined) return undefined;
        const part = index.parts.ofNode[n]!;
        if (part >= 0 && parts[part] === 1) touched = true;
      }
    }
    out[i] = touched ? 1 : 0;
  }
  return out;
}

/**
 * Structure i's own elements (`memberElements`), as the state's watchers worked them out when `structures` are the
 * state's (a value edit keeps every structure's names, in order).
 */
function membersOf(state: IncrementalState, structures: readonly Structure[], i: number): number[] {
  const kept = state.watch.members;
  return kept.length === structures.length && state.structures.length === structures.length ? kept[i]! : memberElements(structures[i]!, state.index);
}

/** Whether an element with a branch current of its own sits on rails alone: its current changes with any part's. */
function holdsRail(el: Element, rail: Uint8Array): boolean {
  return (el.kind === 'V' || el.kind === 'L' || el.kind === 'E' || el.kind === 'H') && el.nodes.every((n) => rail[n] === 1);
}

/** Name and incidence tables of a circuit; a value edit keeps all of them. */
interface CircuitIndex {
  elementOf: Map<string, number>;
  /** Incident elements of node n: `incident[start[n] .. start[n + 1])`. */
  start: Int32Array;
  incident: Int32Array;
  rail: Uint8Array;
  /** The circuit's parts as the device judgements see them (see `circuitParts`). */
  parts: CircuitParts;
}

/**
 * The parts of a circuit joined through nodes that are not rails: each element's part (an element on rails only is a
 * part of its own) and each such node's. A device judgement reads the point of its own part only (its walks stop at
 * rails), except where a transistor's control and output sit on one rail: another part's diode-connected device
 * there is read, and `sound` is false.
 */
interface CircuitParts {
  ofElement: Int32Array;
  ofNode: Int32Array;
  count: number;
  sound: boolean;
}

function circuitParts(circuit: Circuit, rail: Uint8Array): CircuitParts {
  const n = circuit.nodes.length;
  const root = Int32Array.from({ length: n }, (_, k) => k);
  const find = (k: number): number => {
    while (root[k] !== k) k = root[k] = root[root[k]!]!;
    return k;
  };
  const inside = (node: number) => node >= 0 && node < n && !rail[node];
  let sound = true;
  for (const el of circuit.elements) {
    let first = -1;
    for (const node of el.nodes) {
      if (!inside(node)) continue;
      if (first < 0) first = find(node);
      else root[find(node)] = first;
    }
    if ((el.kind === 'Q' || el.kind === 'M') && el.nodes[0] === el.nodes[1] && !inside(el.nodes[0]!)) sound = false;
  }
  const ofNode = new Int32Array(n).fill(-1);
  let count = 0;
  for (let k = 0; k < n; k++) if (inside(k) && find(k) === k) ofNode[k] = count++;
  for (let k = 0; k < n; k++) if (inside(k)) ofNode[k] = ofNode[find(k)]!;
  const ofElement = new Int32Array(circuit.elements.length);
  circuit.elements.forEach((el, i) => {
    const node = el.nodes.find(inside);
    ofElement[i] = node === undefined ? count++ : ofNode[node]!;
  });
  return { ofElement, ofNode, count, sound };
}

function indexCircuit(circuit: Circuit): CircuitIndex {
  const elementOf = new Map<string, number>();
  const n = circuit.nodes.length;
  const start = new Int32Array(n + 1);
  circuit.elements.forEach((el, i) => {
    if (!elementOf.has(el.name)) elementOf.set(el.name, i);
    for (const node of el.nodes) if (node >= 0 && node < n) start[node + 1]++;
  });
  for (let k = 0; k < n; k++) start[k + 1] += start[k];
  const fill = start.slice(0, n);
  const incident = new Int32Array(start[n]);
  circuit.elements.forEach((el, i) => {
    for (const node of el.nodes) if (node >= 0 && node < n) incident[fill[node]++] = i;
  });
  const rail = new Uint8Array(n);
  rail[0] = 1;
  for (const k of railsByIndex(circuit).keys()) rail[k] = 1;
  return { elementOf, start, incident, rail, parts: circuitParts(circuit, rail) };
}

/** Characters compared at once by `editRegion` (native string equality) before the last stretch is compared one by one. */
const COMPARED_AT_ONCE = 2048;

/** The text that an edit replaced: `[start, oldEnd)` of the old text became `[start, oldEnd + delta)` of the new one. */
export function editRegion(before: string, after: string): EditRegion {
  const most = Math.min(before.length, after.length);
  let p = 0;
  while (p + COMPARED_AT_ONCE <= most && before.substring(p, p + COMPARED_AT_ONCE) === after.substring(p, p + COMPARED_AT_ONCE)) p += COMPARED_AT_ONCE;
  while (p < most && before.charCodeAt(p) === after.charCodeAt(p)) p++;
  let s = 0;
  const room = most - p;
  while (s + COMPARED_AT_ONCE <= room && before.substring(before.length - s - COMPARED_AT_ONCE, before.length - s) === after.substring(after.length - s - COMPARED_AT_ONCE, after.length - s)) s += COMPARED_AT_ONCE;
  while (s < room && before.charCodeAt(before.length - 1 - s) === after.charCodeAt(after.length - 1 - s)) s++;
  return { start: p, oldEnd: before.length - s, delta: after.length - before.length };
}

/** Whether `text` holds a line break in `[from, to)`. */
function hasLineBreak(text: string, from: number, to: number): boolean {
  for (let i = from; i < to; i++) {
    const c = text.charCodeAt(i);
    if (c === 10 || c === 13) return true;
  }
  return false;
}

/** The index of the last card starting at or before `offset` (cards are in text order and never overlap), or −1. */
function cardAt(cards: readonly Card[], offset: number): number {
  let lo = 0;
  let hi = cards.length - 1;
  let found = -1;
  while (lo <= hi) {
    const mid = (lo + hi) >>> 1;
    if (cards[mid]!.span.start <= offset) {
      found = mid;
      lo = mid + 1;
    } else hi = mid - 1;
  }
  return found;
}

/**
 * The parse of `text` made from `previous` (the parse of the text before an edit, which stays as it is) when the
 * edit lies within one element card of a single line, after its first character, and changes no line break:
 * that card is read again (an element card reads nothing of the cards around it, and the lines around it keep
 * their reading), the cards before it are shared and those after it copied with their offsets moved. Undefined
 * for any other edit, or when the card had or has a problem, and the whole text must be parsed: the result is
 * then what `parse` makes of `text` (`test/unit/incremental-parse.test.ts` compares the two on random edits).
 */
export function reparsedDocument(previous: ParsedDocument, text: string): ParsedDocument | undefined {
  const before = previous.text;
  if (before === text) return previous;
  const r = editRegion(before, text);
  const k = cardAt(previous.cards, r.start);
  const card = previous.cards[k];
  if (!card || card.kind !== 'element' || r.start <= card.span.start || r.oldEnd > card.span.end) return undefined;
  // The card's line whole (its span runs from its first character to the end of its line), and the edit keeps it one line.
  if (hasLineBreak(before, card.span.start, card.span.end) || hasLineBreak(text, r.start, r.oldEnd + r.delta)) return undefined;
  if (previous.errors.some((e) => e.span.end >= card.span.start && e.span.start <= card.span.end)) return undefined;
  const { card: reread, errors } = parseElementLine(text, card.span.start, card.span.end + r.delta);
  if (reread.kind !== 'element' || errors.length > 0) return undefined;
  const cards = previous.cards.slice(0, k);
  cards.push(reread);
  for (let j = k + 1; j < previous.cards.length; j++) cards.push(r.delta === 0 ? previous.cards[j]! : movedCard(previous.cards[j]!, r.delta));
  const moved = (e: SyntaxError): SyntaxError => (e.span.start > card.span.end && r.delta !== 0 ? { ...e, span: { start: e.span.start + r.delta, end: e.span.end + r.delta } } : e);
  const document: ParsedDocument = { uri: previous.uri, text, cards, errors: previous.errors.map(moved) };
  rereads.set(document, { from: previous, card: k, region: r });
  return document;
}

/** For each parse `reparsedDocument` made: the parse it was made from, which card it read again, and the edit. */
const rereads = new WeakMap<ParsedDocument, { from: ParsedDocument; card: number; region: EditRegion }>();

/** The edit from `from` to `document` when `reparsedDocument` made the one from the other. */
function rereadFrom(from: ParsedDocument | undefined, document: ParsedDocument | undefined): { card: number; region: EditRegion } | undefined {
  const edit = document ? rereads.get(document) : undefined;
  return edit && from && edit.from === from ? edit : undefined;
}

/**
 * The elaboration of `document` patched from `state`'s (see `patchedElaboration`) when `document` is the parse
 * `reparsedDocument` made of an edit to `state`'s text; undefined when it must be elaborated afresh.
 */
export function patchedElaborationOf(state: IncrementalState, document: ParsedDocument, settings: string): PatchedElaboration | undefined {
  const edit = rereadFrom(state.document, document);
  if (!edit || !state.document || !state.elaboration || state.document.text !== state.text) return undefined;
  return patchedElaboration({ circuit: state.circuit, document: state.document, kept: state.elaboration }, document, edit, settings);
}

/** A span of the old text moved to the new one, or undefined when it touches the edited text. */
function movedSpan(span: Span, r: EditRegion): Span | undefined {
  if (span.end < r.start) return { start: span.start, end: span.end };
  if (span.start > r.oldEnd) return { start: span.start + r.delta, end: span.end + r.delta };
  return undefined;
}

/** A kept finding with its spans moved past the edit, or undefined when it cannot be moved (it touches the edit, or carries edits of its own). */
function movedFinding(f: Finding, uri: string, r: EditRegion): Finding | undefined {
  if (f.uri !== uri || f.fixes) return undefined;
  const span = movedSpan(f.span, r);
  if (!span) return undefined;
  if (!f.related) return { ...f, span };
  const related: NonNullable<Finding['related']> = [];
  for (const x of f.related) {
    const at = x.uri === uri ? movedSpan(x.span, r) : undefined;
    if (!at) return undefined;
    related.push({ ...x, span: at });
  }
  return { ...f, span, related };
}

/** Whether two lists hold the same items in the same order (numbers compared as \`Object.is\` does: NaN equals NaN, −0 differs from 0). */
function sameItems<T>(a: readonly T[], b: readonly T[]): boolean {
  if (a.length !== b.length) return false;
  for (let i = 0; i < a.length; i++) if (!Object.is(a[i], b[i])) return false;
  return true;
}

function sameRecord(a: Record<string, unknown> | undefined, b: Record<string, unknown> | undefined): boolean {
  if (!a || !b) return a === b;
  const ka = Object.keys(a);
  if (ka.length !== Object.keys(b).length) return false;
  return ka.every((k) => Object.prototype.hasOwnProperty.call(b, k) && Object.is(a[k], b[k]));
}

/** Whether two elaborated models solve and read alike (their card's place aside). */
function sameModel(a: Model | undefined, b: Model | undefined, seen: Map<Model, Model>): boolean {
  if (!a || !b) return a === b;
  if (seen.get(a) === b) return true;
  const same = a.name === b.name && a.kind === b.kind && sameRecord(a.params, b.params) && sameItems(a.given, b.given) && sameRecord(a.ratings, b.ratings);
  if (same) seen.set(a, b);
  return same;
}

/**
 * The elements of `after` whose values differ from `before`'s, when nothing else differs: the same title,
 * temperatures, parameters, models, nodes and, element by element, kind, name, nodes and every field but
 * the place in the text; only a resistor's resistance may change. Undefined for any other difference
 * (a field that is not a plain value, such as a behavioural program, counts as a difference).
 */
export function valueChanges(before: Circuit, after: Circuit): number[] | undefined {
  const models = new Map<Model, Model>();
  if (before.title !== after.title || !Object.is(before.temperatureC, after.temperatureC) || !Object.is(before.tnomC, after.tnomC)) return undefined;
  if (!sameItems(before.nodes, after.nodes) || !sameItems(before.detachedNodes ?? [], after.detachedNodes ?? []) || !sameRecord(before.params, after.params)) return undefined;
  const names = Object.keys(before.models);
  if (names.length !== Object.keys(after.models).length || !names.every((k) => sameModel(before.models[k], after.models[k], models))) return undefined;
  if (before.elements.length !== after.elements.length) return undefined;
  const changed: number[] = [];
  for (let i = 0; i < after.elements.length; i++) {
    const d = elementDifference(before.elements[i], after.elements[i], models);
    if (d === 'other') return undefined;
    if (d === 'value') changed.push(i);
  }
  return changed;
}

function elementDifference(a: Element, b: Element, models: Map<Model, Model>): 'none' | 'value' | 'other' {
  if (a.kind !== b.kind || a.name !== b.name || !sameItems(a.nodes, b.nodes)) return 'other';
  const keys = Object.keys(b);
  if (keys.length !== Object.keys(a).length) return 'other';
  let value = false;
  for (const k of keys) {
    if (k === 'origin' || k === 'nodes') continue;
    const u = (a as unknown as Record<string, unknown>)[k];
    const v = (b as unknown as Record<string, unknown>)[k];
    if (k === 'model') {
      if (!sameModel(u as Model | undefined, v as Model | undefined, models)) return 'other';
    } else if (!Object.is(u, v)) {
      if (b.kind === 'R' && k === 'resistance') value = true;
      else return 'other';
    }
  }
  return value ? 'value' : 'none';
}

/** The settings that must be equal for a re-analysis to reuse anything. */
export function optionsKey(options: ResolvedOptions): string {
  return JSON.stringify(options);
}

/**
 * An edit that changed only values, under way: the session's solver holds the new values, and after the
 * nominal solve `structuresAt` says which structures are analysed again.
 */
export class ValueEdit {
  /** Per structure kept from the last analysis: its findings moved past the edit, and the first-pass snapshot it was copied from. */
  private readonly kept = new Map<Structure, { findings: Finding[]; firstPass: Structure }>();
  /** The basis of the next state: the previous one with the moved unknowns refreshed. */
  basis: Float64Array;
  /** Per structure of `structuresAt`, recognition's form of it in the edited circuit. */
  private pristine: Structure[] = [];
  /** Which nodes and elements moved from the basis (set by `structuresAt`). */
  private movement?: { movedNode: Uint8Array; movedElement: Uint8Array };
  /** The part solves of the nominal start (set by `nominalStart`), for the next edit. */
  nominalParts?: PartStarts;

  private constructor(
    readonly previous: IncrementalState,
    readonly circuit: Circuit,
    private readonly changed: number[],
    private readonly region: EditRegion,
  ) {
    this.basis = previous.basis;
  }

  /** The value edit from `previous` to this analysis, with the solver moved to the new values; undefined when the analysis must start afresh. */
  static of(previous: IncrementalState, uri: string, text: string, elab: ElaborationResult, options: ResolvedOptions, patched?: PatchedElaboration): ValueEdit | undefined {
    const docs = Object.keys(elab.documents);
    if (previous.uri !== uri || docs.length !== 1 || docs[0] !== uri || previous.optionsKey !== optionsKey(options)) return undefined;
    if (!options.solve || options.corners.enabled || elab.circuit.elements.length === 0) return undefined;
    // A patched elaboration knows which element it changed; anything else is compared element by element.
    const changed = patched?.result === elab ? patched.changed : valueChanges(previous.circuit, elab.circuit);
    if (!changed || copiedByRecognition(previous, changed) || !previous.solver.adoptValues(elab.circuit, changed)) return undefined;
    previous.adopted = { circuit: elab.circuit, changed };
    // Only resistances changed: the topology's incidence and name tables and the rails are the last circuit's.
    followTopology(previous.circuit, elab.circuit);
    followRails(previous.circuit, elab.circuit);
    return new ValueEdit(previous, elab.circuit, changed, rereadFrom(previous.document, elab.documents[uri])?.region ?? editRegion(previous.text, text));
  }

  get solver(): DcSolver {
    return this.previous.solver;
  }

  /**
   * The nominal solve's start: the last version's solution (`warm`) made exact in the parts of the circuit holding the
   * changed resistors by solving those parts alone (`PartStarts`, as the corner phase does for its starts). The other
   * parts' unknowns already solve their equations, which the edit left alone, so the whole circuit's Newton confirms
   * the point in one iteration instead of three or four from `warm.x` itself, which is returned when there is nothing
   * to solve apart (or a part solve fails), or `warm` was solved at another temperature.
   */
  nominalStart(warm: WarmStart, options: SolveOptions): Float64Array {
    const prev = this.previous;
    const temperatureC = options.temperatureC ?? this.circuit.temperatureC;
    if (warm.temperatureC !== temperatureC) return warm.x;
    const whole = { circuit: this.circuit, unknowns: prev.solver.unknowns, rail: prev.index.rail, partOf: prev.index.parts.ofElement };
    const before = resistancesOf(prev.circuit);
    // An editor changing one value again and again: the last edit's part solvers take the new values in place.
    const parts = (this.nominalParts = prev.nominalParts ? prev.nominalParts.followedBy(whole, before) : PartStarts.of(whole, before));
    const start = Float64Array.from(warm.x);
    return parts.refine(start, warm.x, { ...options, temperatureC }) ? start : warm.x;
  }

  /**
   * The structures of the edited circuit: those the edit cannot have changed as the last first pass left them
   * (with their findings kept, see `keptFindings`), the others as recognition made them, to be analysed again.
   * A structure is analysed again when one of its elements changed value or has a moved unknown, when a node
   * of its elements moved, when an element on one of its nodes that is not a rail changed value or has a moved
   * node (the hand analysis reads the neighbours of a structure's nodes), when a finding of it touches the
   * edited text, and when a structure it feeds or that feeds it is analysed again.
   */
  structuresAt(result: DcSolveResult): Structure[] {
    const prev = this.previous;
    this.pristine = prev.structures.map((k) => withDegenerations(k.pristine, this.circuit, prev.index));
    const touched = new Array<boolean>(prev.structures.length).fill(!result.op.converged);
    const { movedNode, movedElement } = (this.movement = this.moved(result));
    const mark = (watch: Watchers, k: number) => {
      for (let j = watch.start[k]; j < watch.start[k + 1]; j++) touched[watch.structures[j]] = true;
    };
    movedNode.forEach((m, n) => m && mark(prev.watch.byNode, n));
    movedElement.forEach((m, e) => m && mark(prev.watch.byElement, e));
    prev.structures.forEach((k, i) => {
      if (!touched[i] && k.findings.some((f) => !movedFinding(f, prev.uri, this.region))) touched[i] = true;
    });
    spreadAlongFeeds(prev.feeds, touched);
    return prev.structures.map((k, i) => {
      if (touched[i]) return copyStructure(this.pristine[i]);
      const s = copyStructure(k.firstPass);
      this.kept.set(s, { findings: k.findings.map((f) => movedFinding(f, prev.uri, this.region)!), firstPass: k.firstPass });
      return s;
    });
  }

  /**
   * The last connectivity findings moved past the edit: the check reads the nodes and kinds of the elements and the
   * values of current sources, none of which a value edit changes. Undefined when one of them touches the edited text
   * (its place is made anew then), so the check runs again.
   */
  keptConnectivity(): Finding[] | undefined {
    const out: Finding[] = [];
    for (const f of this.previous.connectivity) {
      const moved = movedFinding(f, this.previous.uri, this.region);
      if (!moved) return undefined;
      out.push(moved);
    }
    return out;
  }

  /**
   * The device judgements of the edited circuit, element by element (`judge` is `judgeEachDevice` on it): the last
   * ones moved past the edit for the elements of a part (see `circuitParts`) where nothing moved, judged again for the
   * others. Everything is judged again when a rail moved, when the parts are not sound, when a device conducts
   * reversed (that judgement counts every device of the circuit), and when a kept finding touches the edited text.
   */
  deviceFindings(judge: (only?: (element: number) => boolean) => (Finding[] | undefined)[] | undefined): (Finding[] | undefined)[] | undefined {
    const prev = this.previous;
    const last = prev.devices;
    const m = this.movement;
    const parts = prev.index.parts;
    const reversed = (each: (Finding[] | undefined)[]) => each.some((list) => list?.some((f) => f.code === 'device-reversed'));
    if (!last || !m || !parts.sound || reversed(last) || m.movedNode.some((moved, n) => moved === 1 && prev.index.rail[n] === 1)) return judge();
    const touched = new Uint8Array(parts.count);
    m.movedElement.forEach((moved, e) => moved && (touched[parts.ofElement[e]!] = 1));
    m.movedNode.forEach((moved, n) => moved && parts.ofNode[n]! >= 0 && (touched[parts.ofNode[n]!] = 1));
    const again = (e: number) => touched[parts.ofElement[e]!] === 1;
    const kept: (Finding[] | undefined)[] = new Array(last.length);
    for (let e = 0; e < last.length; e++) {
      const list = last[e];
      if (!list || again(e)) continue;
      const moved = list.map((f) => movedFinding(f, prev.uri, this.region));
      if (moved.some((f) => !f)) return judge();
      kept[e] = moved as Finding[];
    }
    const fresh = judge(again);
    if (!fresh || reversed(fresh)) return judge();
    // Holes stay holes: a loop, not `map`, so the kept entries are not skipped.
    for (let e = 0; e < kept.length; e++) if (again(e)) kept[e] = fresh[e];
    return kept;
  }

  /** The findings of a structure kept from the last analysis (moved past the edit), or undefined for one analysed again. */
  keptFindings = (s: Structure): Finding[] | undefined => this.kept.get(s)?.findings;

  /** The first-pass snapshot a kept structure was copied from (never written, so the next state shares it), or undefined for one analysed again. */
  keptSnapshot(s: Structure): Structure | undefined {
    return this.kept.get(s)?.firstPass;
  }

  /** The structures analysed again, named by their paths under `structures` (for the finiteness walk, which the kept ones passed). */
  analysedParts(structures: Structure[]): Record<string, unknown> {
    const parts = nameTable<unknown>();
    structures.forEach((s, i) => {
      if (!this.kept.has(s)) parts[`structures[${i}]`] = s;
    });
    return parts;
  }

  /** Recognition's form of structure i of `structuresAt` in the edited circuit. */
  pristineOf(i: number): Structure {
    return this.pristine[i];
  }

  /** Which unknowns moved from the basis, by node and by element (internal nodes, branch currents); refreshes the basis. */
  private moved(result: DcSolveResult): { movedNode: Uint8Array; movedElement: Uint8Array } {
    const movedNode = new Uint8Array(this.circuit.nodes.length);
    const movedElement = new Uint8Array(this.circuit.elements.length);
    for (const e of this.changed) movedElement[e] = 1;
    const x = result.x;
    const before = this.previous.basis;
    const basis = Float64Array.from(before);
    const unknowns = this.solver.unknowns;
    for (let k = 0; k < x.length; k++) {
      const a = before[k];
      const b = x[k];
      if (Math.abs(a - b) <= MOVED_RELATIVE * Math.max(Math.abs(a), Math.abs(b)) + MOVED_FLOOR) continue;
      basis[k] = b;
      const u = unknowns[k];
      if (u.kind === 'node') movedNode[u.node] = 1;
      else movedElement[u.element] = 1;
    }
    this.basis = basis;
    return { movedNode, movedElement };
  }
}

/**
 * Whether recognition copied the value of a changed resistor where `withDegenerations` does not re-derive it:
 * the source resistor of a self-biased JFET source (`params.rsOhms`), which the structure does not name.
 */
function copiedByRecognition(state: IncrementalState, changed: number[]): boolean {
  const nodes = new Set<number>();
  for (const k of state.structures) {
    if (k.pristine.kind !== 'jfet-self-biased-source') continue;
    for (const e of memberElements(k.pristine, state.index)) for (const n of state.circuit.elements[e].nodes) nodes.add(n);
  }
  return nodes.size > 0 && changed.some((e) => state.circuit.elements[e].nodes.some((n) => nodes.has(n)));
}

/** Recognition's copy of each degeneration resistor's value (`ohms`), read again from the edited circuit. */
function withDegenerations(s: Structure, circuit: Circuit, index: CircuitIndex): Structure {
  const ohms = (d: { resistor: string; ohms: number }) => {
    const e = index.elementOf.get(d.resistor);
    const el = e === undefined ? undefined : circuit.elements[e];
    return el && el.kind === 'R' ? el.resistance : d.ohms;
  };
  const stale = (d: { resistor: string; ohms: number } | undefined) => d !== undefined && !Object.is(ohms(d), d.ohms);
  if (!stale(s.reference.degeneration) && !s.outputs.some((o) => stale(o.degeneration))) return s;
  const degeneration = s.reference.degeneration;
  return {
    ...s,
    reference: degeneration ? { ...s.reference, degeneration: { ...degeneration, ohms: ohms(degeneration) } } : s.reference,
    outputs: s.outputs.map((o) => (o.degeneration ? { ...o, degeneration: { ...o.degeneration, ohms: ohms(o.degeneration) } } : o)),
  };
}

/** Structure indices by node or element: those of key k are `structures[start[k] .. start[k + 1])`. */
interface Watchers {
  start: Int32Array;
  structures: Int32Array;
}

/** Inverts per-structure lists of keys (nodes or elements) in `0 .. size`. */
function invert(lists: number[][], size: number): Watchers {
  const start = new Int32Array(size + 1);
  for (const list of lists) for (const k of list) start[k + 1]++;
  for (let k = 0; k < size; k++) start[k + 1] += start[k];
  const fill = start.slice(0, size);
  const structures = new Int32Array(start[size]);
  lists.forEach((list, i) => {
    for (const k of list) structures[fill[k]++] = i;
  });
  return { start, structures };
}

/**
 * What each structure's analysis reads, inverted: a structure is analysed again when an element it names, or one
 * on a node of those that is not a rail (the hand analysis reads the neighbours of a structure's nodes), changed
 * value or has a moved internal node or branch current, or when a node of any of those elements moved.
 */
function watchers(structures: Structure[], circuit: Circuit, index: CircuitIndex): { byNode: Watchers; byElement: Watchers; members: number[][] } {
  const nodes: number[][] = [];
  const elements: number[][] = [];
  const members = structures.map((s) => memberElements(s, index));
  for (const own of members) {
    const watched = new Set<number>();
    for (const e of own) {
      watched.add(e);
      for (const n of circuit.elements[e].nodes) {
        if (index.rail[n]) continue;
        for (let j = index.start[n]; j < index.start[n + 1]; j++) watched.add(index.incident[j]);
      }
    }
    const atNodes = new Set<number>();
    for (const e of watched) for (const n of circuit.elements[e].nodes) atNodes.add(n);
    elements.push([...watched]);
    nodes.push([...atNodes]);
  }
  return { byNode: invert(nodes, circuit.nodes.length), byElement: invert(elements, circuit.elements.length), members };
}

/** Element indices of everything a structure names: devices, parts, the reference chain and degeneration resistors. */
function memberElements(s: Structure, index: CircuitIndex): number[] {
  const names = [...s.devices, ...Object.keys(s.parts ?? {}), ...s.reference.elements];
  if (s.reference.degeneration) names.push(s.reference.degeneration.resistor);
  for (const o of s.outputs) if (o.degeneration) names.push(o.degeneration.resistor);
  const out: number[] = [];
  for (const n of names) {
    const e = index.elementOf.get(n);
    if (e !== undefined) out.push(e);
  }
  return out;
}

/** The pairs `[i, j]` (flattened) of structures where structure j feeds structure i's reference. */
function feedPairs(structures: Structure[]): Int32Array {
  const at = new Map(structures.map((s, i) => [s.id, i]));
  const pairs: number[] = [];
  structures.forEach((s, i) => {
    const j = s.reference.fedBy !== undefined ? at.get(s.reference.fedBy) : undefined;
    if (j !== undefined) pairs.push(i, j);
  });
  return Int32Array.from(pairs);
}

/** Marks every structure that feeds or is fed by a marked one (`feeds` from `feedPairs`), until nothing changes. */
function spreadAlongFeeds(feeds: Int32Array, touched: boolean[]): void {
  for (let changed = true; changed; ) {
    changed = false;
    for (let k = 0; k < feeds.length; k += 2) {
      const i = feeds[k]!;
      const j = feeds[k + 1]!;
      if (touched[i] === touched[j]) continue;
      touched[i] = touched[j] = true;
      changed = true;
    }
  }
}

/** A first-pass snapshot of a structure: what its hand analysis wrote, without the spread that each analysis attaches afresh. */
function firstPassOf(s: Structure): Structure {
  return copyStructure(s, 'variation');
}

/** Records each structure's findings during the hand analysis and makes the state the next edit starts from. */
export class IncrementalKeeper {
  private readonly findings = new Map<Structure, Finding[]>();
  private readonly pristine: Structure[];

  constructor(
    private readonly edit: ValueEdit | undefined,
    recognised: Structure[],
  ) {
    this.pristine = edit ? [] : recognised.map((s) => copyStructure(s));
  }

  record = (s: Structure, findings: Finding[]): void => {
    this.findings.set(s, findings.map((f) => ({ ...f })));
  };

  /** The state for the next edit, when this analysis can be one's start: converged, no notice of a number removed. */
  state(
    input: { uri: string; text: string },
    options: ResolvedOptions,
    analysed: { circuit: Circuit; solver: DcSolver; nominal: DcSolveResult; structures: Structure[]; unknowns: string; connectivity: Finding[]; document: ParsedDocument; elaboration?: KeptElaboration; devices?: (Finding[] | undefined)[] },
  ): IncrementalState | undefined {
    const { circuit, solver, nominal, structures, unknowns, connectivity, document, elaboration, devices } = analysed;
    if (!nominal.op.converged || !options.solve || options.corners.enabled) return undefined;
    const previous = this.edit?.previous;
    if (previous) previous.adopted = undefined;
    const kept: KeptStructure[] = [];
    const index = previous ? previous.index : indexCircuit(circuit);
    for (let i = 0; i < structures.length; i++) {
      const findings = this.findings.get(structures[i]);
      if (!findings) return undefined;
      kept.push({ pristine: this.edit ? this.edit.pristineOf(i) : this.pristine[i], firstPass: this.edit?.keptSnapshot(structures[i]) ?? firstPassOf(structures[i]), findings });
    }
    return {
      uri: input.uri,
      text: input.text,
      optionsKey: optionsKey(options),
      circuit,
      solver,
      basis: this.edit ? this.edit.basis : nominal.x,
      structures: kept,
      index,
      watch: previous ? previous.watch : watchers(kept.map((k) => k.pristine), circuit, index),
      feeds: previous ? previous.feeds : feedPairs(kept.map((k) => k.pristine)),
      unknowns,
      connectivity,
      document,
      ...(elaboration ? { elaboration } : {}),
      ...(devices ? { devices } : {}),
      ...(this.edit?.nominalParts ? { nominalParts: this.edit.nominalParts } : {}),
      ...(previous?.corners ? { corners: previous.corners } : {}),
      ...(previous?.cornerRecord ? { cornerRecord: previous.cornerRecord } : {}),
      ...(previous?.spreadRecord ? { spreadRecord: previous.spreadRecord } : {}),
    };
  }
}

/** After an analysis that took `state` as its start stopped half-way: puts the solver back to `state`'s values, so the state stays usable. */
export function revertValueEdit(state: IncrementalState): void {
  const a = state.adopted;
  if (!a) return;
  state.solver.adoptValues(state.circuit, a.changed);
  state.adopted = undefined;
}
