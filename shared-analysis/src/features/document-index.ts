// Finds what sits at an offset of an analysed document: the card, the token, its subcircuit scope and the elaborated elements behind it.

import type { Analysis } from '../analysis';
import type { Circuit, Element } from '../circuit';
import type { Card, ElementCard, ParsedDocument, SubcktCard, Token } from '../syntax/ast';
import type { Span } from '../types';

/** A `.subckt` … `.ends` body in one document. */
export interface SubcktScope {
  card: SubcktCard;
  /** Lower-case subcircuit name. */
  name: string;
  /** From the `.subckt` card's start to the end of its `.ends` card (or the document end). */
  span: Span;
}

/** The lookup tables of one analysis. */
interface AnalysisIndex {
  /** The elaborated elements of every element card, by document and card start (numbers, so no key string per card). */
  elementsByCard: Map<string, Map<number, Element[]>>;
  /** Lower-case node name -> node index. */
  nodeByName: Map<string, number>;
  /** Node index -> the element terminals that touch it. */
  links: NodeLinks;
  /** Lower-case element name -> the element's index in the circuit. */
  elementByName: Map<string, number>;
}

/**
 * The element terminals on each node as compressed rows: node n's are entries `start[n]` to `start[n + 1] − 1`
 * of `element` (an index into the circuit's elements) and `terminal`, in element order. Three typed arrays
 * instead of an object per terminal and a list per node (14 MB for the 50,000-element netlist, held twice
 * while a result is taken in beside the last one).
 */
interface NodeLinks {
  start: Int32Array;
  element: Int32Array;
  terminal: Int32Array;
}

/** Element terminals collected in the order they are added, made into `NodeLinks` once all are in. */
class LinkCollector {
  private node = new Int32Array(1024);
  private element = new Int32Array(1024);
  private terminal = new Int32Array(1024);
  private count = 0;

  add(node: number, element: number, terminal: number): void {
    if (this.count === this.node.length) {
      const grow = (a: Int32Array) => {
        const b = new Int32Array(a.length * 2);
        b.set(a);
        return b;
      };
      this.node = grow(this.node);
      this.element = grow(this.element);
      this.terminal = grow(this.terminal);
    }
    this.node[this.count] = node;
    this.element[this.count] = element;
    this.terminal[this.count] = terminal;
    this.count++;
  }

  /** The rows of `nodeCount` nodes: a counting sort, stable, so each node's terminals stay in the order added. */
  links(nodeCount: number): NodeLinks {
    return drain(this.linkSteps(nodeCount));
  }

  /** `links` in steps: it yields after every LINK_STEP terminals counted or placed (150,000 terminals took 5–10 ms in one go). */
  *linkSteps(nodeCount: number): Generator<void, NodeLinks, undefined> {
    const start = new Int32Array(nodeCount + 1);
    for (let k = 0; k < this.count; k++) {
      start[this.node[k]! + 1]!++;
      if (k % LINK_STEP === LINK_STEP - 1) yield;
    }
    for (let n = 0; n < nodeCount; n++) start[n + 1]! += start[n]!;
    const next = start.slice(0, nodeCount);
    const element = new Int32Array(this.count);
    const terminal = new Int32Array(this.count);
    for (let k = 0; k < this.count; k++) {
      const at = next[this.node[k]!]!++;
      element[at] = this.element[k]!;
      terminal[at] = this.terminal[k]!;
      if (k % LINK_STEP === LINK_STEP - 1) yield;
    }
    return { start, element, terminal };
  }
}

/** Terminals counted or placed between two yields of `linkSteps`. */
const LINK_STEP = 20_000;

/** Runs a generator of steps to its end and returns its result. */
function drain<T>(steps: Generator<void, T, undefined>): T {
  for (;;) {
    const r = steps.next();
    if (r.done) return r.value;
  }
}

const analysisIndexes = new WeakMap<Analysis, AnalysisIndex>();
const scopeCache = new WeakMap<ParsedDocument, SubcktScope[]>();

/** Empty tables for a circuit's nodes; `nodeByName` is filled by `addNodeNames`, `links` made by a `LinkCollector`. */
function emptyIndex(circuit: Circuit | undefined): AnalysisIndex {
  // No terminal on any node: every row starts and ends at 0 (what sorting no terminals gives, without the sort).
  const links = { start: new Int32Array((circuit?.nodes.length ?? 0) + 1), element: new Int32Array(0), terminal: new Int32Array(0) };
  return { elementsByCard: new Map(), nodeByName: new Map(), links, elementByName: new Map() };
}

/** Adds the circuit's node names `from` up to `to` to `nodeByName`; returns where it stopped. */
function addNodeNames(idx: AnalysisIndex, circuit: Circuit | undefined, from: number, to = Number.POSITIVE_INFINITY): number {
  const nodes = circuit?.nodes ?? [];
  const end = Math.min(to, nodes.length);
  for (let i = from; i < end; i++) idx.nodeByName.set(nodes[i]!.toLowerCase(), i);
  return end;
}

/** Adds elements `from` on to the tables, their terminals to `links`. Lists start as one-item literals: an empty array grown by `push` reserves 17 slots, which over 50,000 cards is megabytes of nothing. */
function addElements(idx: AnalysisIndex, links: LinkCollector, nodeCount: number, elements: readonly Element[], from: number): void {
  const { elementsByCard, elementByName } = idx;
  for (let i = from; i < elements.length; i++) {
    const el = elements[i]!;
    let byStart = elementsByCard.get(el.origin.uri);
    if (!byStart) elementsByCard.set(el.origin.uri, (byStart = new Map()));
    const list = byStart.get(el.origin.span.start);
    if (list) list.push(el);
    else byStart.set(el.origin.span.start, [el]);
    elementByName.set(el.name.toLowerCase(), i);
    for (let t = 0; t < el.nodes.length; t++) {
      const n = el.nodes[t]!;
      if (n >= 0 && n < nodeCount) links.add(n, i, t);
    }
  }
}

/** The per-analysis lookup tables, built once and cached on the analysis object. */
export function indexOf(analysis: Analysis): AnalysisIndex {
  let idx = analysisIndexes.get(analysis);
  if (idx) return idx;
  idx = emptyIndex(analysis.circuit);
  addNodeNames(idx, analysis.circuit, 0);
  if (analysis.circuit) {
    const links = new LinkCollector();
    addElements(idx, links, analysis.circuit.nodes.length, analysis.circuit.elements, 0);
    idx.links = links.links(analysis.circuit.nodes.length);
  }
  analysisIndexes.set(analysis, idx);
  return idx;
}

/** Node names a builder's `add` adds beside the elements, so the node table is made over many slices too (a pass over 50,000 names in one slice took 10–70 ms). */
const NODE_NAMES_PER_ADD = 1000;

/**
 * Builds the lookup tables of `indexOf` a slice of elements at a time, for a host that takes an
 * analysis in parts and wants no long pause when the first request arrives. `add` takes the
 * circuit's elements from index `from` on (and the next few node names); `finish` adds the node
 * names still missing and registers the tables for `analysis`, whose circuit must by then hold
 * every element added and no others.
 */
export function indexBuilder(circuit: Circuit): {
  add(elements: readonly Element[], from: number): void;
  finish(analysis: Analysis): void;
  finishSteps(analysis: Analysis): Generator<void, void, undefined>;
} {
  const idx = emptyIndex(circuit);
  const links = new LinkCollector();
  let named = 0;
  const builder = {
    add(elements: readonly Element[], from: number) {
      addElements(idx, links, circuit.nodes.length, elements, from);
      named = addNodeNames(idx, circuit, named, named + NODE_NAMES_PER_ADD);
    },
    finish(analysis: Analysis) {
      drain(builder.finishSteps(analysis));
    },
    /** `finish` in steps, for a host that gives queued requests a turn between them. */
    *finishSteps(analysis: Analysis): Generator<void, void, undefined> {
      while (named < circuit.nodes.length) {
        named = addNodeNames(idx, circuit, named, named + NODE_NAMES_PER_ADD);
        yield;
      }
      idx.links = yield* links.linkSteps(circuit.nodes.length);
      if (analysis.circuit === circuit && !analysisIndexes.has(analysis)) analysisIndexes.set(analysis, idx);
    },
  };
  return builder;
}

/** A key naming a card of a document (`uri#cardStart`). */
export function cardKey(uri: string, start: number): string {
  return `${uri}#${start}`;
}

/** The elaborated elements (one per subcircuit instance, or one at top level) of an element card. */
export function elementsOfCard(analysis: Analysis, uri: string, card: Card): Element[] {
  return indexOf(analysis).elementsByCard.get(uri)?.get(card.span.start) ?? [];
}

/** The element with this hierarchical name (case-insensitive). */
export function elementByName(analysis: Analysis, name: string): Element | undefined {
  const i = indexOf(analysis).elementByName.get(name.toLowerCase());
  return i === undefined ? undefined : analysis.circuit?.elements[i];
}

/**
 * The index's tables of node and element positions by lower-case name (a node's index in `circuit.nodes`, an element's
 * in `circuit.elements`): for a host's tables keyed by the same names, which need not hold 50,000 keys of their own.
 */
export function positionsByLowerName(analysis: Analysis): { nodes: ReadonlyMap<string, number>; elements: ReadonlyMap<string, number> } {
  const idx = indexOf(analysis);
  return { nodes: idx.nodeByName, elements: idx.elementByName };
}

/** Whether two tokens are the same field of the text (by span, so it holds for copies of a card too). */
export function sameToken(a: Token | undefined, b: Token | undefined): boolean {
  return !!a && !!b && a.span.start === b.span.start && a.span.end === b.span.end;
}

/** The position of `token` in a list of fields, or −1. */
export function tokenIndex(list: readonly Token[], token: Token): number {
  for (let i = 0; i < list.length; i++) if (sameToken(list[i], token)) return i;
  return -1;
}

/** The card whose span holds `offset` (a card's end counts as inside it), by binary search. */
export function cardAt(doc: ParsedDocument, offset: number): Card | undefined {
  const cards = doc.cards;
  let lo = 0;
  let hi = cards.length - 1;
  let found = -1;
  while (lo <= hi) {
    const mid = (lo + hi) >> 1;
    if (cards[mid].span.start <= offset) {
      found = mid;
      lo = mid + 1;
    } else hi = mid - 1;
  }
  if (found < 0) return undefined;
  const card = cards[found];
  return offset <= card.span.end ? card : undefined;
}

/** The token holding `offset`; a token's end counts as inside it when no token starts there. */
export function tokenAt(card: Card, offset: number): Token | undefined {
  let atEnd: Token | undefined;
  for (const t of card.tokens) {
    if (t.span.start <= offset && offset < t.span.end) return t;
    if (t.span.end === offset) atEnd = t;
  }
  return atEnd;
}

/** Every `.subckt` body of a document, outermost first. */
export function subcktScopes(doc: ParsedDocument): SubcktScope[] {
  const cached = scopeCache.get(doc);
  if (cached) return cached;
  const out: SubcktScope[] = [];
  const open: SubcktScope[] = [];
  for (const card of doc.cards) {
    if (card.kind === 'subckt') {
      const scope: SubcktScope = { card, name: card.name.text.toLowerCase(), span: { start: card.span.start, end: doc.text.length } };
      out.push(scope);
      open.push(scope);
    } else if (card.kind === 'ends') {
      const scope = open.pop();
      if (scope) scope.span = { start: scope.span.start, end: card.span.end };
    }
  }
  scopeCache.set(doc, out);
  return out;
}

/** The innermost subcircuit body holding `offset`, or undefined at top level. */
export function scopeAt(doc: ParsedDocument, offset: number): SubcktScope | undefined {
  let best: SubcktScope | undefined;
  for (const s of subcktScopes(doc)) {
    if (s.span.start <= offset && offset <= s.span.end) best = s;
  }
  return best;
}

/** The hierarchical prefix of an element's instance path (`X1.X3.`), or '' at top level. */
export function instancePrefix(el: Element): string {
  return el.origin.instances.length ? el.origin.instances.map((i) => i.name).join('.') + '.' : '';
}

/** The instance prefixes under which a subcircuit body was flattened (from the elements found in it). */
export function scopeInstances(analysis: Analysis, uri: string, scope: SubcktScope | undefined): string[] {
  if (!scope) return [''];
  const doc = analysis.documents[uri];
  if (!doc) return [];
  const prefixes = new Set<string>();
  for (const card of doc.cards) {
    if (card.kind !== 'element' || card.span.start < scope.span.start || card.span.end > scope.span.end) continue;
    if (scopeAt(doc, card.span.start) !== scope) continue;
    for (const el of elementsOfCard(analysis, uri, card)) prefixes.add(instancePrefix(el));
  }
  // Natural order (X2 before X10), as a person counts instances.
  return [...prefixes].sort(NATURAL.compare);
}

const NATURAL = new Intl.Collator('en', { numeric: true });

/** One elaborated node behind a node token: the instance it belongs to and the circuit node. */
export interface ResolvedNode {
  instance: string;
  node: number;
  name: string;
}

/** True for a token text that names the ground node. */
export function isGround(name: string): boolean {
  return name === '0';
}

/**
 * The circuit nodes a node token stands for, one per subcircuit instance. Node fields of
 * device cards map through the elaborated elements; ports and X-card nodes map through any
 * other device in the same scope that uses the same name, or the hierarchical name.
 */
export function resolveNodeToken(analysis: Analysis, uri: string, card: Card, token: Token): ResolvedNode[] {
  const circuit = analysis.circuit;
  const doc = analysis.documents[uri];
  if (!circuit || !doc) return [];
  if (card.kind === 'element' && card.letter !== 'X') {
    const i = tokenIndex(card.nodes, token);
    if (i >= 0) {
      const out: ResolvedNode[] = [];
      for (const el of elementsOfCard(analysis, uri, card)) {
        const n = el.nodes[i];
        if (n !== undefined) out.push({ instance: instancePrefix(el), node: n, name: circuit.nodes[n] });
      }
      if (out.length) return out;
    }
  }
  return resolveNodeName(analysis, uri, scopeAt(doc, token.span.start), token.text);
}

/** The circuit nodes a node name written in `scope` of document `uri` stands for, one per instance. */
export function resolveNodeName(analysis: Analysis, uri: string, scope: SubcktScope | undefined, name: string): ResolvedNode[] {
  const circuit = analysis.circuit;
  const doc = analysis.documents[uri];
  if (!circuit || !doc) return [];
  const { nodeByName } = indexOf(analysis);
  const lower = name.toLowerCase();
  if (isGround(lower)) return [{ instance: '', node: 0, name: circuit.nodes[0] ?? '0' }];
  const out: ResolvedNode[] = [];
  // A port is no node of its own (it is the node each instance attaches there): found through a use, for every instance in one pass.
  let viaUse: Map<string, number> | undefined;
  for (const prefix of scopeInstances(analysis, uri, scope)) {
    const direct = nodeByName.get((prefix + name).toLowerCase());
    if (direct !== undefined) {
      out.push({ instance: prefix, node: direct, name: circuit.nodes[direct] });
      continue;
    }
    viaUse ??= nodesByUse(analysis, doc, scope, lower);
    const node = viaUse.get(prefix);
    if (node !== undefined) out.push({ instance: prefix, node, name: circuit.nodes[node] });
  }
  return out;
}

/**
 * The circuit node that `lower`, written in `scope`, stands for in each instance, by instance
 * prefix: from the first device card of the scope that uses the name. Linear in the elements of
 * the scope's cards (it used to search them again for every instance: quadratic in instances).
 */
function nodesByUse(analysis: Analysis, doc: ParsedDocument, scope: SubcktScope | undefined, lower: string): Map<string, number> {
  const out = new Map<string, number>();
  for (const card of doc.cards) {
    if (card.kind !== 'element' || card.letter === 'X') continue;
    if (scope && (card.span.start < scope.span.start || card.span.end > scope.span.end)) continue;
    if (scopeAt(doc, card.span.start) !== scope) continue;
    const i = card.nodes.findIndex((t) => t.text.toLowerCase() === lower);
    if (i < 0) continue;
    for (const el of elementsOfCard(analysis, doc.uri, card)) {
      const n = el.nodes[i];
      if (n === undefined) continue;
      const prefix = instancePrefix(el);
      if (!out.has(prefix)) out.set(prefix, n);
    }
  }
  return out;
}

/** Terminal names per element kind, in node order. */
export function terminalNames(el: Element): string[] {
  switch (el.kind) {
    case 'R':
    case 'C':
    case 'L':
      return ['end 1', 'end 2'];
    case 'V':
    case 'I':
      return ['plus', 'minus'];
    case 'E':
    case 'G':
      return ['output +', 'output −', 'control +', 'control −'];
    case 'F':
    case 'H':
      return ['output +', 'output −'];
    case 'D':
      return ['anode', 'cathode'];
    case 'Q':
      return ['collector', 'base', 'emitter', 'substrate'];
    case 'M':
      return ['drain', 'gate', 'source', 'bulk'];
    case 'J':
      return ['drain', 'gate', 'source'];
    case 'S':
      return ['switch +', 'switch −', 'control +', 'control −'];
    case 'W':
      return ['switch +', 'switch −'];
    case 'B':
      return ['output +', 'output −'];
    case 'T':
      return ['port 1 +', 'port 1 −', 'port 2 +', 'port 2 −'];
  }
}

/** The elements and terminals connected to a circuit node. */
export function connectionsOf(analysis: Analysis, node: number, limit = Number.POSITIVE_INFINITY): { element: Element; terminal: string }[] {
  const { start, element, terminal } = indexOf(analysis).links;
  const elements = analysis.circuit?.elements ?? [];
  const out: { element: Element; terminal: string }[] = [];
  if (!(node >= 0 && node + 1 < start.length)) return out;
  const end = Math.min(start[node + 1]!, start[node]! + Math.max(0, limit));
  for (let k = start[node]!; k < end; k++) {
    const el = elements[element[k]!]!;
    const t = terminal[k]!;
    out.push({ element: el, terminal: terminalNames(el)[t] ?? `terminal ${t + 1}` });
  }
  return out;
}

/** How many element terminals are on circuit node `node`. */
export function connectionCount(analysis: Analysis, node: number): number {
  const { start } = indexOf(analysis).links;
  return node >= 0 && node + 1 < start.length ? start[node + 1]! - start[node]! : 0;
}

/** All element cards of a document (in order). */
export function elementCards(doc: ParsedDocument): ElementCard[] {
  return doc.cards.filter((c): c is ElementCard => c.kind === 'element');
}

/** Whether a span contains an offset (end inclusive, as editors place the cursor after a word). */
export function spanHolds(span: Span, offset: number): boolean {
  return span.start <= offset && offset <= span.end;
}

export type { Circuit };
