// Elaboration: from parsed documents to a flat circuit with parameters evaluated, models filled in and subcircuits flattened.

import type { IncludeSymbol, ModelSymbol, ParamSymbol, SubcktSymbol, SymbolTable } from '../analysis';
import { elementNameKey, keepElaboratedNames, type BehaviouralSource, type BehaviourInput, type Cccs, type Ccvs, type Circuit, type CurrentSwitch, type Element, type Model, type Origin, type Resistor } from '../circuit';
import type { Assignment, ConditionCard, ElementCard, ModelCard, ParsedDocument, Token } from '../syntax/ast';
import type { Finding, Location, RelatedLocation, Span, Workspace } from '../types';
import { nearestName } from '../syntax/nearest';
import { unquote } from '../syntax/parser';
import { isSpanToken, type SpanToken } from '../syntax/span-token';
import { EvaluationContext, ParamScope, type EvalResult, type ParamDefinition, type ScopeReport } from './expressions';
import { KINDS_FOR_LETTER, elaborateModel } from './models';
import { compileBehaviour, compilePoly, compileTable } from './behaviour';
import { formatEngineering } from '../fixes/format';
import { Sink } from './sink';
import { readSources, type Body, type ConditionOracle, type Located, type SubcktDef } from './sources';
import { expressionOf, tokenValue, type ValueResult } from './values';
import { pushAll } from '../arrays';
import { lowerCase, nameTable } from '../names';
import { Branches } from './branches';

/** Per-call elaboration settings. */
export interface ElaborateOptions {
  /** Analysis temperature in °C; overrides the netlist's `.temp`. */
  temperatureC?: number;
  /** Most elements flattening may produce before it stops with `circuit-too-large` (default 500 000). */
  maxElements?: number;
  /** Folders searched, in order, for an included file not found beside the including file. */
  includeFolders?: readonly string[];
}

/** What elaboration returns: the flat circuit, every document read, the symbols and the findings. */
export interface ElaborationResult {
  circuit: Circuit;
  documents: Record<string, ParsedDocument>;
  symbols: SymbolTable;
  findings: Finding[];
  /** The `.if` branches no instance takes (from the card that opens the branch to the next one): text that does not exist for the analysis. */
  inactive: Location[];
}

/** MOSFET width and length used when a card gives none, metres. W/L = 1, so β = KP. */
export const DEFAULT_MOS_SIZE = 10e-6;
/** Nominal and analysis temperature when the netlist sets none, °C (docs/DEVICE-MODELS.md). */
export const DEFAULT_TEMPERATURE_C = 27;
const DEFAULT_MAX_ELEMENTS = 500_000;
/** Deepest chain of nested subcircuit instances flattened (keeps the recursion far from the stack limit). */
export const MAX_INSTANCE_DEPTH = 100;
const ABSOLUTE_ZERO_C = -273.15;

/** Element parameters each letter reads; others get `element-unknown-parameter`. Geometry of junction areas is accepted silently. */
const ELEMENT_PARAMS: Record<string, { used: string[]; silent: string[] }> = nameTable({
  R: { used: ['M', 'RATEDPOWER', 'TC1', 'TC2', 'TC', 'L', 'W'], silent: ['TEMP', 'DTEMP', 'NOISE', 'AC'] },
  C: { used: ['M'], silent: ['IC'] },
  L: { used: ['M'], silent: ['IC'] },
  V: { used: [], silent: ['*'] },
  I: { used: [], silent: ['*'] },
  E: { used: [], silent: [] },
  G: { used: [], silent: [] },
  F: { used: [], silent: [] },
  H: { used: [], silent: [] },
  D: { used: ['AREA', 'M', 'RATEDPOWER'], silent: [] },
  Q: { used: ['AREA', 'M', 'RATEDPOWER'], silent: [] },
  M: { used: ['W', 'L', 'M', 'RATEDPOWER'], silent: ['AD', 'AS', 'PD', 'PS', 'NRD', 'NRS'] },
  J: { used: ['AREA', 'M', 'RATEDPOWER'], silent: ['IC', 'TEMP', 'DTEMP'] },
  S: { used: [], silent: ['ON', 'OFF', 'M'] },
  T: { used: [], silent: ['*'] },
  B: { used: ['V', 'I'], silent: ['TC1', 'TC2', 'TEMP', 'DTEMP', 'SMOOTHBSRC', 'M'] },
  W: { used: [], silent: ['ON', 'OFF', 'M'] },
});

/** Nodes per element letter (a Q may add a fourth, substrate node). */
const NODE_COUNT: Record<string, number> = nameTable({ R: 2, C: 2, L: 2, V: 2, I: 2, E: 4, G: 4, F: 2, H: 2, D: 2, Q: 3, M: 4, J: 3, S: 4, W: 2, B: 2, T: 4 });

/**
 * An element's origin, with `valueSpan` and `modelSpan` only when given, in that order. Each combination is a literal
 * of its own: every element's origin is kept for the whole analysis, and fields added to a literal's object after it
 * is made are kept in a second object (docs/PERFORMANCE.md, "What the run keeps and the collector at 100k").
 */
function elementOrigin(uri: string, span: Span, nodeSpans: readonly Span[], instances: Origin['instances'], valueSpan: Span | undefined, modelSpan: Span | undefined): Origin {
  if (valueSpan && modelSpan) return { uri, span, nodeSpans, instances, valueSpan, modelSpan };
  if (valueSpan) return { uri, span, nodeSpans, instances, valueSpan };
  if (modelSpan) return { uri, span, nodeSpans, instances, modelSpan };
  return { uri, span, nodeSpans, instances };
}

/**
 * The spans of a card's node fields: the card's node list itself when each of its tokens is its own span (as the
 * parser makes them: `SpanToken`), so an element keeps no list of its own; else a list of their own length (no
 * closure per element, as `map` takes). Readers only read an origin's list.
 */
function spansOf(tokens: readonly Token[]): readonly Span[] {
  let own = true;
  for (let i = 0; i < tokens.length && own; i++) own = isSpanToken(tokens[i]!);
  if (own) return tokens as readonly SpanToken[];
  const out = new Array<Span>(tokens.length);
  for (let i = 0; i < tokens.length; i++) out[i] = tokens[i]!.span;
  return out;
}

/** The `.param` assignment of `key` (lower case) written directly in a definition's body, if any. */
function bodyParam(def: SubcktDef, key: string): { name: Token; assignment: Assignment; uri: string } | undefined {
  for (const { card, uri } of def.body.items) {
    if (card.kind !== 'param') continue;
    for (const a of card.params) if (a.name.text.toLowerCase() === key) return { name: a.name, assignment: a, uri };
  }
  return undefined;
}

/** The temperature coefficients of a resistor that gives none and has no model: read only. */
const NO_TEMPERATURE_COEFFICIENTS: { readonly tc1: number; readonly tc2: number } = Object.freeze({ tc1: 0, tc2: 0 });

/** The parameters of a card that gives none, shared so most elements allocate no map. */
const NO_PARAMS: ReadonlyMap<string, Assignment> = new Map();

/** One subcircuit instance (or the top level) being flattened. */
interface Instance {
  /** Prefix of hierarchical names, as written: `X1.X2.` (empty at top level). */
  prefix: string;
  /** The prefix in lower case, for the case-insensitive name and node maps. */
  lowerPrefix: string;
  body: Body;
  scope: ParamScope;
  /** Lower-case port name -> node index. */
  ports: Map<string, number>;
  /** Definitions entered, outermost first. */
  chain: SubcktDef[];
  instances: Origin['instances'];
  /** Lower-case names of body `.param`s an instance overrides (a convention of process kits). */
  overrides?: Set<string>;
  /**
   * Model maps to search, innermost first; `null` marks a model whose card is unusable. `pending`
   * holds the findings of a library model, reported when a device first uses it.
   */
  modelScopes: Map<string, ModelEntry>[];
}

/**
 * Elaborates a parsed top-level netlist: reads includes and library sections through `workspace`,
 * evaluates parameters, fills models with defaults, flattens subcircuits with hierarchical names
 * (`X1.Q2`, nodes `X1.out`; ground `0`/`gnd` is never prefixed) and reports every problem as a
 * located finding. Never throws.
 */
export function elaborate(root: ParsedDocument, workspace: Workspace, options: ElaborateOptions = {}): ElaborationResult {
  const sink = new Sink();
  try {
    return new Elaborator(root, workspace, options, sink).run();
  } catch (e) {
    // A last line of defence: a defect must not take the editor down. The fuzz tests make sure this stays unused.
    sink.add('elaboration-internal-error', `Elaboration stopped because of an internal error (${e instanceof Error ? e.message : String(e)}); please report this netlist.`, root.uri, { start: 0, end: 0 });
    return {
      circuit: { title: titleOf(root, undefined), nodes: ['0'], elements: [], models: nameTable(), temperatureC: DEFAULT_TEMPERATURE_C, tnomC: DEFAULT_TEMPERATURE_C, params: nameTable() },
      documents: nameTable({ [root.uri]: root }),
      symbols: { params: [], models: [], subckts: [], includes: [] },
      findings: sink.findings,
      inactive: [],
    };
  }
}

class Elaborator {
  private readonly context: EvaluationContext;
  private readonly nodes: string[] = ['0'];
  private readonly nodeIndex = new Map<string, number>([['0', 0]]);
  private readonly elements: Element[] = [];
  /**
   * `elementNameKey` of each hierarchical name -> its place in `namedItems` (elements and instances), for duplicates;
   * kept with the circuit (`keepElaboratedNames`), with `elementAt`, for the topology's name questions.
   */
  private readonly names = new Map<string, number>();
  /** By place in `names`, the card that first used the name. */
  private readonly namedItems: Located<ElementCard>[] = [];
  /** By place in `names`, the index of the element made from the card in `elements`, or -1 (an instance, a card left out). */
  private readonly elementAt: number[] = [];
  private readonly models: Record<string, Model> = nameTable();
  private readonly controls: { element: Element; token: Token; uri: string; full: string; set: (name: string) => void }[] = [];
  private readonly modelSymbols = new Map<string, ModelSymbol>();
  private readonly maxElements: number;
  private tooLarge = false;
  /** Every `.if` branch seen, by the condition card that opens it: its text range and whether any instance took it. */
  private readonly branches = new Map<ConditionCard, { uri: string; span: Span; taken: boolean }>();
  /** Indices of nodes a left-out element connects to (see `Circuit.detachedNodes`). */
  private readonly detached = new Set<number>();
  /** Lower-case names of `.global` nodes: never prefixed inside subcircuits. */
  private readonly globals = new Set<string>();
  /** Elements of letters or forms the solver does not read yet, by kind, for one finding per kind. */
  private readonly leftOut = new Map<string, Located<ElementCard>[]>();

  constructor(
    private readonly root: ParsedDocument,
    private readonly workspace: Workspace,
    private readonly options: ElaborateOptions,
    private readonly sink: Sink,
  ) {
    this.context = new EvaluationContext((r) => this.report(r));
    this.maxElements = options.maxElements ?? DEFAULT_MAX_ELEMENTS;
  }

  run(): ElaborationResult {
    const read = readSources(this.root, this.workspace, this.sink, this.options.includeFolders ?? [], this.topConditions());
    for (const def of read.allDefs) this.checkPortsUsed(def);
    // Indexed loops over a body's items here and below: these run once, in code V8 has not optimised, where a for-of
    // allocates a result object per step (about 4 MB a loop over the 100,000 cards of a large netlist).
    for (const body of [read.top, ...read.allDefs.map((d) => d.body)]) {
      const items = body.items;
      for (let i = 0; i < items.length; i++) {
        const card = items[i]!.card;
        if (card.kind === 'global') for (const t of card.nodes) this.globals.add(t.text.toLowerCase());
      }
    }
    const top = new ParamScope(this.context, { label: 'top level' });
    this.topBodies = [read.top];
    this.topScope = top;
    const allBodies = [read.top, ...read.allDefs.map((d) => d.body)];
    for (const body of allBodies) {
      const items = body.items;
      for (let i = 0; i < items.length; i++) {
        const { card, uri } = items[i]!;
        if (card.kind === 'model') {
          this.modelSymbols.set(`${uri}#${card.span.start}`, { name: card.name.text, uri, span: card.span, nameSpan: card.name.span, kind: card.type.text.toLowerCase() });
        }
      }
    }

    const topInstance: Instance = {
      prefix: '',
      lowerPrefix: '',
      body: read.top,
      scope: top,
      ports: new Map(),
      chain: [],
      instances: [],
      modelScopes: [new Map()],
    };
    this.flattenBody(topInstance);
    if (!this.root.cards.some((c) => c.kind === 'title')) this.elaborateSections();
    this.reportLeftOut();
    const elementsMoved = this.resolveControls();
    const detachedNames = [...this.detached].map((k) => this.nodes[k]!);
    const nodesMoved = this.dropUnusedNodes();
    // A set of every node's name only when a detached node is to be looked up in it.
    const kept = detachedNames.length > 0 ? new Set(this.nodes) : undefined;
    const detachedNodes = kept ? detachedNames.filter((n) => kept.has(n)) : [];
    top.entries(); // evaluates (and reports) parameters nothing refers to
    if (read.missing.length > 0) this.summariseMissing(read.missing);

    const { temperatureC, tnomC } = this.temperatures(allBodies, top);
    const params: Record<string, number> = nameTable();
    for (const e of top.entries()) if (e.result.ok) params[e.name] = e.result.value;

    const circuit: Circuit = {
      title: titleOf(this.root, read.top),
      nodes: this.nodes,
      elements: this.elements,
      models: this.models,
      temperatureC,
      tnomC,
      params,
    };
    if (detachedNodes.length > 0) circuit.detachedNodes = detachedNodes;
    // Element indices move when a controlled source is dropped: the topology then makes its own table of element names.
    if (!elementsMoved) keepElaboratedNames(circuit, { elementKeys: this.names, elementAt: this.elementAt, nodeKeys: nodesMoved ? undefined : this.nodeIndex });
    const symbols: SymbolTable = {
      params: this.paramSymbols(read.top, top, read.allDefs),
      models: [...this.modelSymbols.values()],
      subckts: this.subcktSymbols(read.allDefs, top),
      includes: read.includes as IncludeSymbol[],
    };
    return { circuit, documents: read.documents, symbols, findings: this.sink.findings, inactive: this.inactiveBranches() };
  }

  /**
   * A section-style library opened on its own (`.lib NAME` … `.endl`, no title): each section's
   * models are elaborated with the section's parameters, so hovers show their values. Nothing
   * is reported (a section is checked when a test bench reads it) and no device uses them; they
   * are keyed `lib:section:model`, apart from the circuit's own models.
   */
  private elaborateSections(): void {
    const cards = this.root.cards;
    const uri = this.root.uri;
    /** `.param` cards outside every section: a section may use them. */
    const shared: (typeof cards)[number][] = [];
    let inSection = false;
    for (const c of cards) {
      if (c.kind === 'lib' && !c.path && c.section) inSection = true;
      else if (c.kind === 'endl') inSection = false;
      else if (!inSection && c.kind === 'param') shared.push(c);
    }
    for (let i = 0; i < cards.length; i++) {
      const open = cards[i]!;
      if (open.kind !== 'lib' || open.path || !open.section) continue;
      const section = unquote(open.section).toLowerCase();
      const quiet = new Sink();
      const scope = new ParamScope(new EvaluationContext(() => undefined), { label: `library section ${section}` });
      const define = (card: (typeof cards)[number]): void => {
        if (card.kind === 'param') for (const a of card.params) scope.define(paramDefinition(a, uri));
      };
      shared.forEach(define);
      let j = i + 1;
      for (; j < cards.length && cards[j]!.kind !== 'endl'; j++) define(cards[j]!);
      for (let k = i + 1; k < j; k++) {
        const card = cards[k]!;
        if (card.kind !== 'model') continue;
        const model = elaborateModel(card, { uri, scope, sink: quiet, instances: [] });
        if (!model) continue;
        const key = `lib:${section}:${card.name.text.toLowerCase()}`;
        this.models[key] = model;
        this.modelSymbols.set(`${uri}#${card.span.start}`, { name: card.name.text, uri, span: card.span, nameSpan: card.name.span, kind: card.type.text.toLowerCase(), key });
      }
      i = j;
    }
  }

  /**
   * Decides top-level `.if` conditions while the files are read, so an include or a subcircuit in a
   * branch that is not taken is never read or defined. The parameters are evaluated in a scratch
   * scope in reading order, as `activeItems` does for the top level afterwards (which reports).
   */
  private topConditions(): ConditionOracle {
    const scratch = new ParamScope(new EvaluationContext(() => undefined), { label: 'top level' });
    return {
      define: (card, uri) => {
        if (card.kind === 'func' && card.body) {
          const { source, offset } = expressionOf(card.body);
          scratch.defineFunction({ name: card.name.text, args: card.args.map((a) => a.text.toLowerCase()), source, offset, uri, nameSpan: card.name.span });
        } else if (card.kind === 'param') {
          for (const a of card.params) scratch.define(paramDefinition(a, uri));
        }
      },
      holds: (card, uri) => {
        if (!card.condition) return false;
        const v = tokenValue(card.condition, scratch, uri);
        return v.ok && v.value !== 0;
      },
    };
  }

  /**
   * Reports each port that no card of the definition's own body names as a node (nested
   * definitions are their own scopes). Checked once per definition, whether or not it is used.
   */
  private checkPortsUsed(def: SubcktDef): void {
    const { card, uri, body } = def;
    if (card.ports.length === 0) return;
    const named = new Set<string>();
    for (const item of body.items) {
      if (item.card.kind !== 'element') continue;
      for (const t of item.card.nodes) named.add(t.text.toLowerCase());
    }
    const checked = new Set<string>();
    for (const port of card.ports) {
      const lower = port.text.toLowerCase();
      // Ground ports always mean the global ground; a repeated port has its own finding.
      if (lower === '0' || lower === 'gnd' || checked.has(lower)) continue;
      checked.add(lower);
      if (named.has(lower)) continue;
      this.sink.add(
        'subckt-port-unused',
        `Port \`${port.text}\` of subcircuit \`${card.name.text}\` is connected to nothing inside it, so the node an instance attaches there is not joined to any element of the subcircuit.`,
        uri,
        port.span,
        undefined,
        { subckt: card.name.text, port: port.text },
      );
    }
  }

  // -------------------------------------------------------------------------
  // Scopes and bodies

  private report(r: ScopeReport): void {
    this.sink.add(r.code, r.message, r.uri, r.span, r.related);
  }

  private flattenBody(inst: Instance): void {
    const { scope } = inst;
    const items = this.activeItems(inst);
    const local = inst.modelScopes[0]!;
    for (let i = 0; i < items.length; i++) {
      const { card, uri } = items[i]!;
      if (card.kind !== 'model') continue;
      const key = card.name.text.toLowerCase();
      const prev = local.get(key);
      if (prev) {
        this.sink.add('model-duplicate', `Model \`${card.name.text}\` is already defined in this scope; the first definition is used.`, uri, card.name.span, [
          { uri: prev.uri, span: prev.card.name.span, message: `\`${prev.card.name.text}\` is first defined here.` },
        ]);
        continue;
      }
      // A model read from another file (a library) reports its problems only once a device uses
      // it, so a library's unused models raise nothing.
      const own = uri === this.root.uri;
      const sink = own ? this.sink : new Sink();
      const model = elaborateModel(card, { uri, scope, sink, instances: inst.instances });
      local.set(key, own || sink.findings.length === 0 ? { model: model ?? null, card, uri } : { model: model ?? null, card, uri, pending: sink.findings });
      if (model) {
        const circuitKey = inst.lowerPrefix + key;
        this.models[circuitKey] = model;
        const sym = this.modelSymbols.get(`${uri}#${card.span.start}`);
        if (sym && sym.key === undefined) sym.key = circuitKey;
      }
    }
    for (let i = 0; i < items.length; i++) {
      if (this.tooLarge) return;
      const item = items[i]!;
      if (item.card.kind === 'element') this.addElement(item as Located<ElementCard>, inst);
    }
    scope.entries();
  }

  /**
   * The cards of an instance's body that take part: those outside `.if` blocks and those in the
   * branch each block takes, its condition evaluated with the parameters in scope. Defines the
   * `.param`s it passes (in order, so a condition sees the parameters above it); a body `.param`
   * the instance overrides is not defined again.
   */
  private activeItems(inst: Instance): Located[] {
    const { body, scope } = inst;
    const defineAll = (card: Located['card'], uri: string): void => {
      if (card.kind === 'func') {
        if (card.body) {
          const { source, offset } = expressionOf(card.body);
          scope.defineFunction({ name: card.name.text, args: card.args.map((a) => a.text.toLowerCase()), source, offset, uri, nameSpan: card.name.span });
        }
        return;
      }
      if (card.kind !== 'param') return;
      for (const a of card.params) {
        if (inst.overrides?.has(a.name.text.toLowerCase())) continue;
        this.defineParam(scope, paramDefinition(a, uri));
      }
    };
    if (!body.items.some((i) => i.card.kind === 'condition')) {
      for (let i = 0; i < body.items.length; i++) {
        const { card, uri } = body.items[i]!;
        // Only these two kinds define anything: no call for the other cards.
        if (card.kind === 'param' || card.kind === 'func') defineAll(card, uri);
      }
      return body.items;
    }
    const out: Located[] = [];
    const branches = new Branches();
    const test = (card: ConditionCard, uri: string): boolean => {
      if (!card.condition) return false;
      const v = tokenValue(card.condition, scope, uri);
      if (v.ok) return v.value !== 0;
      this.sink.add('condition-invalid', `The condition of this ${card.tokens[0]!.text} cannot be evaluated; its branch is not taken. ${capitalise(v.message)}`, uri, v.inherited ? card.condition.span : v.span, v.related);
      return false;
    };
    let opener: ConditionCard | undefined;
    const branchEnds = (next: Located | undefined, taken: boolean): void => {
      if (!opener) return;
      const entry = this.branches.get(opener);
      if (entry) entry.taken ||= taken;
      else if (next && next.uri === openerUri && next.card.span.start >= opener.span.end) {
        this.branches.set(opener, { uri: openerUri, span: { start: opener.span.end, end: next.card.span.start }, taken });
      }
    };
    let openerUri = '';
    let branchTaken = false;
    for (let i = 0; i < body.items.length; i++) {
      const item = body.items[i]!;
      const { card, uri } = item;
      if (card.kind !== 'condition') {
        if (branches.active()) {
          out.push(item);
          defineAll(card, uri);
        }
        continue;
      }
      branchEnds(item, branchTaken);
      branches.step(card, () => test(card, uri));
      // The branch this card opens (none after `.endif`), and whether it is taken in this instance.
      opener = card.branch === 'endif' ? undefined : card;
      openerUri = uri;
      branchTaken = branches.active() && branches.open();
    }
    return out;
  }

  /** The `.if` branches no instance took, as text ranges. */
  private inactiveBranches(): Location[] {
    const out: Location[] = [];
    for (const b of this.branches.values()) if (!b.taken) out.push({ uri: b.uri, span: b.span });
    return out;
  }

  private defineParam(scope: ParamScope, def: ParamDefinition): void {
    const prev = scope.define(def);
    if (prev) {
      this.sink.add('param-duplicate', `Parameter \`${def.name}\` is already defined in this scope; this later definition is used.`, def.uri, def.nameSpan, [
        { uri: prev.uri, span: prev.nameSpan, message: `\`${prev.name}\` is first defined here.` },
      ]);
    }
  }

  // -------------------------------------------------------------------------
  // Nodes and values

  private node(tok: Token, inst: Instance, uri: string): number | undefined {
    if (tok.kind === 'expr') {
      this.sink.add('node-name-invalid', `\`${tok.text}\` is an expression; a node is named by a plain word.`, uri, tok.span);
      return undefined;
    }
    const lower = lowerCase(tok.text);
    if (lower === '0' || lower === 'gnd') return 0;
    const port = inst.ports.get(lower);
    if (port !== undefined) return port;
    const global = this.globals.size > 0 && this.globals.has(lower);
    // Built from the lower-case parts so each terminal makes one key string; the name as written only for a new node.
    const key = global ? lower : inst.lowerPrefix + lower;
    let k = this.nodeIndex.get(key);
    if (k === undefined) {
      k = this.nodes.length;
      this.nodes.push(global ? tok.text : inst.prefix + tok.text);
      this.nodeIndex.set(key, k);
    }
    return k;
  }

  /** Reads a value; reports `element-value-invalid` and returns undefined when it fails. */
  private value(tok: Token, inst: Instance, uri: string, what: string, consequence: string): number | undefined {
    const v = tokenValue(tok, inst.scope, uri);
    if (v.ok) {
      if (Math.abs(v.value) > 1e15) {
        this.sink.add('value-out-of-range', `${capitalise(what)} is ${formatEngineering(v.value)}, beyond 1e15 in magnitude; check the suffix (M is milli, MEG is mega).`, uri, tok.span, undefined, { value: v.value });
      }
      return v.value;
    }
    this.reportValue(v, tok, uri, what, consequence);
    return undefined;
  }

  private reportValue(v: Extract<ValueResult, { ok: false }>, tok: Token, uri: string, what: string, consequence: string): void {
    const message = `${capitalise(what)} cannot be read. ${capitalise(v.message)}${/[.?]$/.test(v.message) ? '' : '.'} ${consequence}`;
    this.sink.add('element-value-invalid', message, uri, v.inherited ? tok.span : v.span, v.related);
  }

  // -------------------------------------------------------------------------
  // Elements

  /** Takes the name `key` for `item` (no element made from it yet); its place in `namedItems`. */
  private named(key: string, item: Located<ElementCard>): number {
    const place = this.namedItems.length;
    this.names.set(key, place);
    this.namedItems.push(item);
    this.elementAt.push(-1);
    return place;
  }

  /** Adds an element (or flattens an instance); when it is left out, its nodes are detached so topology checks do not cascade. */
  private addElement(item: Located<ElementCard>, inst: Instance): void {
    const before = this.elements.length;
    this.addElementOrInstance(item, inst);
    if (this.elements.length === before && !this.tooLarge) {
      for (const t of item.card.nodes) {
        if (t.kind === 'expr') continue;
        const k = this.node(t, inst, item.uri);
        if (k !== undefined && k !== 0) this.detached.add(k);
      }
    }
  }

  private addElementOrInstance(item: Located<ElementCard>, inst: Instance): void {
    const { card, uri } = item;
    if (card.letter === 'X') {
      this.instantiate(item, inst);
      return;
    }
    const unsolved = leftOutKind(card);
    if (unsolved) {
      let list = this.leftOut.get(unsolved);
      if (!list) this.leftOut.set(unsolved, (list = []));
      list.push(item);
      return;
    }
    const name = inst.prefix + card.name.text;
    const key = elementNameKey(name, inst.lowerPrefix, card.name.text);
    const seen = this.names.get(key);
    if (seen !== undefined) {
      const first = this.namedItems[seen]!;
      this.sink.add('element-duplicate-name', `An element named \`${card.name.text}\` already exists in this scope (names are not case-sensitive); this one is left out.`, uri, card.name.span, [
        { uri: first.uri, span: first.card.name.span, message: `\`${first.card.name.text}\` is defined here.` },
      ]);
      return;
    }
    const place = this.named(key, item);
    if (this.elements.length >= this.maxElements) {
      this.reportTooLarge(uri, card.span);
      return;
    }

    const expected = card.behaviour ? 2 : (NODE_COUNT[card.letter] ?? 2);
    const allowedMax = card.letter === 'Q' ? 4 : expected;
    if (card.nodes.length < expected || card.nodes.length > allowedMax) {
      this.sink.add(
        'element-node-count',
        `\`${card.name.text}\` has ${card.nodes.length} node${card.nodes.length === 1 ? '' : 's'}; ${describeLetter(card.letter)} needs ${card.letter === 'Q' ? '3 or 4' : expected}.`,
        uri,
        card.name.span,
      );
      return;
    }
    // Sized to its count: a list grown by push from empty reserves 17 slots, which the circuit the worker keeps
    // after an analysis held as 6 MB of nothing over 50,000 elements.
    const nodes = new Array<number>(card.nodes.length);
    for (let i = 0; i < card.nodes.length; i++) {
      const k = this.node(card.nodes[i]!, inst, uri);
      if (k === undefined) return;
      nodes[i] = k;
    }
    const params = this.elementParams(card, uri);
    const valueToken = card.letter === 'V' || card.letter === 'I' ? card.source?.value : card.value;
    const origin = elementOrigin(uri, card.span, spansOf(card.nodes), inst.instances, valueToken?.span, card.model?.span);

    let element: Element | undefined;
    switch (card.letter) {
      case 'R': {
        const resistorModel = card.model ? this.findModel(card, inst, uri) : undefined;
        let v: number | undefined;
        if (card.value) {
          v = this.value(card.value, inst, uri, `the resistance of \`${card.name.text}\``, 'The resistor is left out of the analysis.');
          if (v === undefined) return;
        } else if (resistorModel && resistorModel.given.includes('RSH')) {
          // A model resistor: R = RSH·L/W from its sheet resistance and the card's drawn size.
          v = this.sheetResistance(card, resistorModel, params, inst, uri);
          if (v === undefined) return;
        } else {
          this.sink.add('element-value-missing', `Resistor \`${card.name.text}\` has no resistance value; it is left out of the analysis.`, uri, card.name.span);
          return;
        }
        const m = this.positive(params.get('M'), inst, uri, card, 'parallel count M');
        if (v === 0) {
          this.sink.add('resistor-zero-value', `Resistor \`${card.name.text}\` is 0 Ω, as a jumper or option link is; it is solved as a short and the current through it is reported.`, uri, (card.value ?? card.name).span);
        } else if (v < 0) {
          this.sink.add('resistor-negative-value', `Resistor \`${card.name.text}\` is ${formatEngineering(v, { unit: 'Ω' })}; a negative resistance is kept as written, which bias networks rarely intend.`, uri, (card.value ?? card.name).span, undefined, { value: v });
        }
        const resistor: Resistor = { name, nodes, origin, kind: 'R', resistance: v / m };
        if (m !== 1) resistor.m = m;
        const tc = this.temperatureCoefficients(card, resistorModel, params, inst, uri);
        if (tc.tc1 !== 0) resistor.tc1 = tc.tc1;
        if (tc.tc2 !== 0) resistor.tc2 = tc.tc2;
        const modelRating = resistorModel?.ratings?.['RATEDPOWER'];
        if (modelRating !== undefined) resistor.modelRatedPowerW = modelRating;
        element = resistor;
        break;
      }
      case 'C':
      case 'L': {
        const noun = card.letter === 'C' ? 'Capacitor' : 'Inductor';
        if (!card.value) {
          this.sink.add('element-value-missing', `${noun} \`${card.name.text}\` has no value; it is kept, since at DC a ${card.letter === 'C' ? 'capacitor is open' : 'inductor is a short'} whatever its value.`, uri, card.name.span);
        }
        const v = card.value ? this.value(card.value, inst, uri, `the value of \`${card.name.text}\``, `It is kept, since at DC a ${card.letter === 'C' ? 'capacitor is open' : 'inductor is a short'} whatever its value.`) : undefined;
        element = card.letter === 'C' ? { name, nodes, origin, kind: 'C', capacitance: v ?? 0 } : { name, nodes, origin, kind: 'L', inductance: v ?? 0 };
        break;
      }
      case 'V':
      case 'I': {
        const unit = card.letter === 'V' ? 'V' : 'A';
        const tok = card.source?.value;
        let dc = 0;
        if (!tok && card.source?.form === 'none') {
          // Only an AC or transient specification: its DC value is 0.
        } else if (!tok) {
          this.sink.add('element-value-missing', `Source \`${card.name.text}\` has no DC value; it is taken as 0 ${unit}.`, uri, card.name.span);
        } else {
          const v = this.value(tok, inst, uri, `the DC value of \`${card.name.text}\``, `The source is taken as 0 ${unit}.`);
          if (v !== undefined) dc = v;
        }
        // A 0 V source between two names of one node (`Vgnd gnd 0 0`) is a consistent short: nothing to solve.
        if (card.letter === 'V' && dc === 0 && nodes[0] === nodes[1]) return;
        element = card.letter === 'V' ? { name, nodes, origin, kind: 'V', dc } : { name, nodes, origin, kind: 'I', dc };
        break;
      }
      case 'B':
      case 'E':
      case 'G':
      case 'F':
      case 'H': {
        if (card.letter === 'B' || card.behaviour) {
          element = this.behavioural(card, inst, uri, name, nodes, origin);
          if (!element) return;
          break;
        }
        if (!card.value) {
          this.sink.add('element-value-missing', `Controlled source \`${card.name.text}\` has no gain; it is left out of the analysis.`, uri, card.name.span);
          return;
        }
        const gain = this.value(card.value, inst, uri, `the gain of \`${card.name.text}\``, 'The controlled source is left out of the analysis.');
        if (gain === undefined) return;
        if (card.letter === 'E' || card.letter === 'G') {
          element = { name, nodes, origin, kind: card.letter, gain };
        } else {
          if (!card.control) return;
          const el: Cccs | Ccvs = { name, nodes, origin, kind: card.letter, control: inst.prefix + card.control.text, gain };
          this.controls.push({ element: el, token: card.control, uri, full: inst.prefix + card.control.text, set: (n) => (el.control = n) });
          element = el;
        }
        break;
      }
      case 'D':
      case 'Q':
      case 'J': {
        const model = this.findModel(card, inst, uri);
        if (!model) return;
        const areaTok = card.area ?? params.get('AREA')?.value;
        const area = areaTok ? this.positiveToken(areaTok, inst, uri, card, 'area factor') : 1;
        const m = this.positive(params.get('M'), inst, uri, card, 'parallel count M');
        element =
          card.letter === 'D'
            ? { name, nodes, origin, kind: 'D', model, area, m }
            : card.letter === 'Q'
              ? { name, nodes, origin, kind: 'Q', model, area, m }
              : { name, nodes, origin, kind: 'J', model, area, m };
        break;
      }
      case 'T':
        // At DC a lossless line is a short along each conductor; its delay and impedance do not matter.
        element = { name, nodes, origin, kind: 'T' };
        break;
      case 'S':
      case 'W': {
        const model = this.findModel(card, inst, uri);
        if (!model) return;
        if (card.letter === 'S') {
          element = { name, nodes, origin, kind: 'S', model };
        } else {
          if (!card.control) return;
          const el: CurrentSwitch = { name, nodes, origin, kind: 'W', model, control: inst.prefix + card.control.text };
          this.controls.push({ element: el, token: card.control, uri, full: inst.prefix + card.control.text, set: (n) => (el.control = n) });
          element = el;
        }
        break;
      }
      case 'M': {
        const w = this.geometry(params.get('W'), inst, uri, card, 'W');
        const l = this.geometry(params.get('L'), inst, uri, card, 'L');
        const model = this.findModel(card, inst, uri, { w, l });
        if (!model) return;
        if (!params.has('W') || !params.has('L')) {
          const missing = [params.has('W') ? '' : 'W', params.has('L') ? '' : 'L'].filter(Boolean);
          // A size far outside 1 nm–1 m (its own value-out-of-range finding) can make the ratio overflow.
          const ratio = Number.isFinite(w / l) ? `W/L = ${formatRatio(w / l)}` : `W/L = ${formatEngineering(w, { unit: 'm' })} / ${formatEngineering(l, { unit: 'm' })}, a ratio too large for a number`;
          this.sink.add(
            'mosfet-geometry-missing',
            `MOSFET \`${card.name.text}\` gives no ${missing.join(' or ')}; ${missing.join(' and ')} = 10 µm is used (${ratio}), so its currents follow KP·W/L with that ratio.`,
            uri,
            card.name.span,
            undefined,
            { missing, defaultMetres: DEFAULT_MOS_SIZE },
          );
        }
        element = { name, nodes, origin, kind: 'M', model, w, l, m: this.positive(params.get('M'), inst, uri, card, 'parallel count M') };
        break;
      }
    }
    if (element) {
      const rating = params.get('RATEDPOWER');
      if (rating) {
        const w = this.value(rating.value, inst, uri, `the rated power of \`${card.name.text}\``, 'The default limit is used.');
        if (w !== undefined && w > 0 && Number.isFinite(w)) element.ratedPowerW = w;
      }
      this.elementAt[place] = this.elements.length;
      this.elements.push(element);
    }
  }

  /**
   * R = RSH·L/W for a resistor that names a model with RSH and gives no value; the card's L and W
   * are in metres (as drawn; `.option scale` applies to MOSFETs only). Undefined, with a finding,
   * when L or W is missing or not positive.
   */
  private sheetResistance(card: ElementCard, model: Model, params: ReadonlyMap<string, Assignment>, inst: Instance, uri: string): number | undefined {
    const rsh = model.params['RSH'] ?? NaN;
    const size = (key: 'L' | 'W'): number | undefined => {
      const a = params.get(key);
      if (!a) return undefined;
      const x = this.value(a.value, inst, uri, `${key} of \`${card.name.text}\``, 'The resistor is left out of the analysis.');
      return x !== undefined && x > 0 && Number.isFinite(x) ? x : undefined;
    };
    const l = size('L');
    const w = size('W');
    if (l === undefined || w === undefined || !(rsh > 0) || !Number.isFinite(rsh)) {
      const missing = [l === undefined ? 'L' : '', w === undefined ? 'W' : ''].filter(Boolean);
      const why = missing.length > 0 ? `no usable ${missing.join(' or ')} (a length and width in metres, both above 0)` : `a sheet resistance RSH of ${String(rsh)}, which is not above 0`;
      this.sink.add(
        'element-value-missing',
        `Resistor \`${card.name.text}\` takes its value from model \`${model.name}\` as RSH·L/W, but has ${why}; it is left out of the analysis.`,
        uri,
        card.name.span,
      );
      return undefined;
    }
    return (rsh * l) / w;
  }

  /** TC1 and TC2 of a resistor: the card's `TC1=`, `TC2=` or `TC=a,b` first, then its model's; 0 when neither gives one. */
  private temperatureCoefficients(card: ElementCard, model: Model | undefined, params: ReadonlyMap<string, Assignment>, inst: Instance, uri: string): { tc1: number; tc2: number } {
    // Most resistors give neither: no closures and no object made for them.
    if (params.size === 0 && !model) return NO_TEMPERATURE_COEFFICIENTS;
    const read = (key: string): number | undefined => {
      const a = params.get(key);
      if (!a) return undefined;
      const x = this.value(a.value, inst, uri, `${key} of \`${card.name.text}\``, 'The model value or 0 is used.');
      return x !== undefined && Number.isFinite(x) ? x : undefined;
    };
    const fromModel = (key: string): number => (model && model.given.includes(key) ? (model.params[key] ?? 0) : 0);
    const tc1 = read('TC1') ?? read('TC') ?? fromModel('TC1');
    const tc2 = read('TC2') ?? fromModel('TC2');
    return { tc1, tc2 };
  }

  /**
   * A behavioural source: B with V= or I=, or E, F, G, H written as VALUE, TABLE or POLY. Its
   * function is compiled with the parameters of its scope; a function that cannot be compiled is
   * reported on its text and the element is left out.
   */
  private behavioural(card: ElementCard, inst: Instance, uri: string, name: string, nodes: number[], origin: Origin): BehaviouralSource | undefined {
    const written = card.letter as BehaviouralSource['written'];
    const valueOf = (t: Token): number | undefined => this.value(t, inst, uri, `a value of \`${card.name.text}\``, 'The source is left out of the analysis.');
    let output: 'V' | 'I';
    let form: BehaviouralSource['form'];
    let compiled: ReturnType<typeof compileBehaviour>;
    if (written === 'B') {
      const asg = card.params.find((a) => /^[vi]$/i.test(a.name.text));
      if (!asg || !card.value) return undefined;
      output = asg.name.text.toUpperCase() === 'V' ? 'V' : 'I';
      form = 'expression';
      compiled = compileBehaviour(card.value, inst.scope);
    } else {
      const b = card.behaviour!;
      output = written === 'E' || written === 'H' ? 'V' : 'I';
      form = b.form as BehaviouralSource['form'];
      const fields = card.tokens.filter((t) => t.span.start > b.keyword.span.start && t.span.start < b.span.end);
      if (form === 'VALUE') {
        const tok = fields.find((t) => t.kind === 'expr') ?? fields[0];
        compiled = tok ? compileBehaviour(tok, inst.scope) : { ok: false, error: { message: 'VALUE needs an expression in braces.', span: b.keyword.span } };
      } else if (form === 'TABLE') compiled = compileTable(fields, inst.scope, valueOf);
      else compiled = compilePoly(fields, written === 'F' || written === 'H', valueOf);
    }
    if (!compiled.ok) {
      if (!compiled.error.inherited) {
        this.sink.add('element-value-invalid', `The function of \`${card.name.text}\` cannot be read: ${lowerFirst(compiled.error.message)} The source is left out of the analysis.`, uri, compiled.error.span, compiled.error.related);
      }
      return undefined;
    }
    const inputs: BehaviourInput[] = [];
    const el: BehaviouralSource = { name, nodes, origin, kind: 'B', written, form, output, program: compiled.program, inputs };
    for (const ref of compiled.inputs) {
      if (ref.kind === 'v') {
        const a = this.node(ref.a, inst, uri);
        const b = ref.b ? this.node(ref.b, inst, uri) : 0;
        if (a === undefined || b === undefined) return undefined;
        inputs.push({ kind: 'v', a, b });
      } else {
        const input: BehaviourInput = { kind: 'i', source: inst.prefix + ref.source.text };
        inputs.push(input);
        this.controls.push({ element: el, token: ref.source, uri, full: inst.prefix + ref.source.text, set: (n) => (input.source = n) });
      }
    }
    return el;
  }

  /** Element parameters by upper-case name; reports unknown ones. */
  private elementParams(card: ElementCard, uri: string): ReadonlyMap<string, Assignment> {
    if (card.params.length === 0) return NO_PARAMS;
    const out = new Map<string, Assignment>();
    const spec = ELEMENT_PARAMS[card.letter] ?? { used: [], silent: [] };
    for (const a of card.params) {
      const key = a.name.text.toUpperCase();
      if (spec.used.includes(key)) {
        out.set(key, a);
        continue;
      }
      if (spec.silent.includes('*') || spec.silent.includes(key)) continue;
      const accepted = spec.used.length > 0 ? `; it reads ${spec.used.join(', ')}` : '; it reads no instance parameters';
      // A resistor's tolerance has a notation of its own, a comment after the card: say it where it was looked for.
      const tolerance = card.letter === 'R' && (key === 'TOL' || key === 'TOLERANCE') ? ` A resistor's tolerance is written after the card as a comment: \`; tol 1%\`.` : '';
      this.sink.add('element-unknown-parameter', `\`${a.name.text}\` is not a parameter of ${describeLetter(card.letter)}${accepted}. It is ignored.${tolerance}`, uri, a.name.span, undefined, {
        parameter: key,
        known: spec.used,
      });
    }
    return out;
  }

  /** An area factor or M from an assignment: must be > 0, else 1 with `device-area-invalid`. */
  private positive(a: Assignment | undefined, inst: Instance, uri: string, card: ElementCard, what: string): number {
    return a ? this.positiveToken(a.value, inst, uri, card, what) : 1;
  }

  private positiveToken(tok: Token, inst: Instance, uri: string, card: ElementCard, what: string): number {
    const v = this.value(tok, inst, uri, `the ${what} of \`${card.name.text}\``, '1 is used so the analysis continues.');
    if (v === undefined) return 1;
    if (v <= 0) {
      this.sink.add('device-area-invalid', `The ${what} of \`${card.name.text}\` is ${v}; it must be greater than 0, so 1 is used and the analysis continues.`, uri, tok.span, undefined, { value: v });
      return 1;
    }
    return v;
  }

  /**
   * A MOSFET's W or L in metres: the card's value times `.option scale` (which netlists use to
   * write sizes in microns), or the 10 µm default.
   */
  private geometry(a: Assignment | undefined, inst: Instance, uri: string, card: ElementCard, which: 'W' | 'L'): number {
    if (!a) return DEFAULT_MOS_SIZE;
    const written = this.value(a.value, inst, uri, `${which} of \`${card.name.text}\``, '10 µm is used so the analysis continues.');
    if (written === undefined) return DEFAULT_MOS_SIZE;
    const scale = this.scale();
    // `.option scale=` multiplies the sizes written on element cards (a process kit's drawn units).
    const v = written * scale;
    if (v <= 0) {
      this.sink.add('device-area-invalid', `${which} of \`${card.name.text}\` is ${formatEngineering(v, { unit: 'm' })}; it must be greater than 0, so 10 µm is used and the analysis continues.`, uri, a.value.span, undefined, { value: v });
      return DEFAULT_MOS_SIZE;
    }
    if (v < 1e-9 || v > 1) {
      const hint = v > 1 ? ` If ${written} µm is meant, write ${a.value.text}u${scale !== 1 ? ' or set .option scale=1u' : ''}.` : '';
      const scaled = scale !== 1 ? ` (${a.value.text} × scale ${formatEngineering(scale)})` : '';
      this.sink.add('value-out-of-range', `${which} of \`${card.name.text}\` is ${formatEngineering(v, { unit: 'm' })}${scaled}, outside 1 nm to 1 m; a size is given in metres.${hint}`, uri, a.value.span, undefined, { value: v });
    }
    return v;
  }

  /**
   * Finds the model an element names: subcircuit-local first, then outer scopes; reports not-found
   * and wrong kind. A MOSFET (`size` given) may name a binned model: `NAME` then stands for the
   * bins `NAME.1`, `NAME.2`, … and the one whose LMIN…LMAX and WMIN…WMAX cover its L and W is used.
   */
  private findModel(card: ElementCard, inst: Instance, uri: string, size?: { w: number; l: number }): Model | undefined {
    const tok = card.model;
    const letter = card.letter as keyof typeof KINDS_FOR_LETTER;
    const kinds = KINDS_FOR_LETTER[letter];
    if (!tok) return undefined;
    const keep = letter === 'R' ? ' The resistor is kept with its value.' : ' The element is left out.';
    const key = lowerCase(tok.text);
    for (const scope of inst.modelScopes) {
      let entry = scope.get(key);
      if (!entry && size) {
        const bins = binsOf(scope, key);
        if (bins.length === 0) continue;
        const chosen = chooseBin(bins, size);
        if (!chosen) {
          this.reportNoBin(card, uri, bins, size);
          return undefined;
        }
        entry = chosen;
      }
      if (!entry) continue;
      if (entry.pending) {
        for (const f of entry.pending) this.sink.add(f.code, f.message, f.uri, f.span, f.related, f.data);
        delete entry.pending;
      }
      // An unusable model card has its own finding; the element is left out without a second one.
      if (!entry.model) return undefined;
      if (!kinds.includes(entry.model.kind)) {
        this.sink.add(
          'model-wrong-kind',
          `\`${card.name.text}\` is ${describeLetter(card.letter)} but model \`${entry.model.name}\` is ${describeKind(entry.model.kind)}; it needs a ${kinds.map((k) => k.toUpperCase()).join(' or ')} model.${keep}`,
          uri,
          tok.span,
          [{ uri: entry.uri, span: entry.card.span, message: `\`${entry.model.name}\` is defined here.` }],
          { modelName: tok.text, expectedKinds: kinds, actualKind: entry.model.kind },
        );
        return undefined;
      }
      return entry.model;
    }
    // A defined model of a fitting kind one slip of the keyboard away is most likely what was meant.
    const fitting: string[] = [];
    for (const scope of inst.modelScopes) for (const entry of scope.values()) if (entry.model && kinds.includes(entry.model.kind)) fitting.push(entry.card.name.text);
    const suggestion = nearestName(tok.text, fitting);
    this.sink.add(
      'model-not-found',
      `No .model card defines \`${tok.text}\` for \`${card.name.text}\` (${describeLetter(card.letter)}, which needs a ${kinds.map((k) => k.toUpperCase()).join(' or ')} model)${suggestion ? `; did you mean \`${suggestion}\`?` : '.'}${keep}`,
      uri,
      tok.span,
      undefined,
      suggestion ? { modelName: tok.text, expectedKinds: kinds, suggestion } : { modelName: tok.text, expectedKinds: kinds },
    );
    return undefined;
  }

  private reportNoBin(card: ElementCard, uri: string, bins: ModelEntry[], size: { w: number; l: number }): void {
    const ranges = bins.slice(0, 12).map((b) => {
      const r = binRange(b);
      const m = (v: number): string => (Number.isFinite(v) ? formatEngineering(v, { unit: 'm' }) : '∞');
      return `${b.card.name.text}: L ${m(r.lmin)}–${m(r.lmax)}, W ${m(r.wmin)}–${m(r.wmax)}`;
    });
    this.sink.add(
      'model-bin-not-found',
      `\`${card.name.text}\` (L = ${formatEngineering(size.l, { unit: 'm' })}, W = ${formatEngineering(size.w, { unit: 'm' })}) names the binned model \`${card.model!.text}\`, but none of its bins covers that size (${ranges.join('; ')}). The element is left out.`,
      uri,
      card.model!.span,
      bins.slice(0, 8).map((b) => ({ uri: b.uri, span: b.card.span, message: `Bin \`${b.card.name.text}\` is defined here.` })),
      { modelName: card.model!.text, l: size.l, w: size.w, bins: bins.map((b) => b.card.name.text) },
    );
  }

  private reportTooLarge(uri: string, span: Span): void {
    if (this.tooLarge) return;
    this.tooLarge = true;
    this.sink.add('circuit-too-large', `Flattening would make more than ${this.maxElements} elements; the elements from here on are left out.`, uri, span, undefined, { limit: this.maxElements });
  }

  // -------------------------------------------------------------------------
  // Subcircuit instances

  private findDef(body: Body, name: string): SubcktDef | undefined {
    const key = name.toLowerCase();
    for (let b: Body | undefined = body; b; b = b.parent) {
      const d = b.defs.get(key);
      if (d) return d;
    }
    return undefined;
  }

  private visibleDefs(body: Body): string[] {
    const out: string[] = [];
    for (let b: Body | undefined = body; b; b = b.parent) for (const d of b.defs.values()) out.push(d.card.name.text);
    return out;
  }

  private instantiate(item: Located<ElementCard>, inst: Instance): void {
    const { card, uri } = item;
    const subTok = card.subckt;
    if (!subTok) return;
    const key = elementNameKey(inst.prefix + card.name.text, inst.lowerPrefix, card.name.text);
    const seen = this.names.get(key);
    if (seen !== undefined) {
      const first = this.namedItems[seen]!;
      this.sink.add('element-duplicate-name', `An instance named \`${card.name.text}\` already exists in this scope (names are not case-sensitive); this one is left out.`, uri, card.name.span, [
        { uri: first.uri, span: first.card.name.span, message: `\`${first.card.name.text}\` is defined here.` },
      ]);
      return;
    }
    this.named(key, item);
    const def = this.findDef(inst.body, subTok.text);
    if (!def) {
      const known = this.visibleDefs(inst.body);
      this.sink.add(
        'subckt-not-found',
        `No subcircuit \`${subTok.text}\` is defined for instance \`${card.name.text}\`${known.length > 0 ? `; the subcircuits in scope are ${known.slice(0, 10).map((k) => `\`${k}\``).join(', ')}` : ''}.`,
        uri,
        subTok.span,
        undefined,
        { subcktName: subTok.text, known },
      );
      return;
    }
    if (inst.chain.includes(def)) {
      const names = [...inst.chain.slice(inst.chain.indexOf(def)), def].map((d) => d.card.name.text);
      this.sink.add('subckt-recursive', `Instance \`${card.name.text}\` re-enters subcircuit \`${def.card.name.text}\` from inside itself (${names.join(' → ')}); a subcircuit cannot contain itself.`, uri, subTok.span, [
        { uri: def.uri, span: def.card.name.span, message: `\`${def.card.name.text}\` is defined here.` },
      ]);
      return;
    }
    if (inst.chain.length >= MAX_INSTANCE_DEPTH) {
      this.sink.add(
        'subckt-nesting-too-deep',
        `Instance \`${card.name.text}\` would nest subcircuits more than ${MAX_INSTANCE_DEPTH} levels deep (${inst.chain.slice(0, 3).map((d) => d.card.name.text).join(' → ')} → …); it is left out.`,
        uri,
        subTok.span,
        undefined,
        { limit: MAX_INSTANCE_DEPTH },
      );
      return;
    }
    const ports = def.card.ports;
    if (card.nodes.length !== ports.length) {
      const span = card.nodes.length > 0 ? { start: card.nodes[0]!.span.start, end: card.nodes[card.nodes.length - 1]!.span.end } : card.name.span;
      this.sink.add(
        'subckt-port-count',
        `Instance \`${card.name.text}\` connects ${card.nodes.length} node${card.nodes.length === 1 ? '' : 's'} but subcircuit \`${def.card.name.text}\` has ${ports.length} port${ports.length === 1 ? '' : 's'} (${ports.map((p) => p.text).join(' ') || 'none'}); the instance is left out.`,
        uri,
        span,
        [{ uri: def.uri, span: def.card.span, message: `\`${def.card.name.text}\` is defined here.` }],
        { given: card.nodes.length, expected: ports.length },
      );
      return;
    }
    if (this.elements.length >= this.maxElements) {
      this.reportTooLarge(uri, card.span);
      return;
    }
    const portMap = new Map<string, number>();
    for (let k = 0; k < ports.length; k++) {
      const n = this.node(card.nodes[k]!, inst, uri);
      if (n === undefined) return;
      const portName = ports[k]!.text.toLowerCase();
      if (portName !== '0' && portName !== 'gnd') portMap.set(portName, n);
    }
    const path = inst.prefix + card.name.text;
    const scope = new ParamScope(this.context, { parent: inst.scope, label: `subcircuit ${def.card.name.text}, instance ${path}` });
    const declared = new Map<string, Assignment>();
    for (const a of def.card.params) {
      declared.set(a.name.text.toLowerCase(), a);
      this.defineParam(scope, paramDefinition(a, def.uri));
    }
    const overrides = new Set<string>();
    for (const a of card.params) {
      const key = a.name.text.toLowerCase();
      if (!declared.has(key)) {
        // A `.param` in the body can be set per instance too, as process kits expect: the instance's
        // value replaces the body's definition in this instance only.
        if (bodyParam(def, key)) overrides.add(key);
        else {
          const names = [...declared.values()].map((d) => d.name.text);
          const declaredText = names.length > 0 ? ` (it declares ${names.join(', ')})` : ' (it declares none)';
          this.sink.add(
            'subckt-unknown-parameter',
            `Subcircuit \`${def.card.name.text}\` has no parameter \`${a.name.text}\`${declaredText}, neither on its .subckt line nor in a .param inside it; the override is ignored.`,
            uri,
            a.name.span,
            [{ uri: def.uri, span: def.card.span, message: `\`${def.card.name.text}\` is defined here.` }],
            { parameter: a.name.text, declared: names },
          );
          continue;
        }
      }
      const v = tokenValue(a.value, inst.scope, uri);
      if (!v.ok) this.reportValue(v, a.value, uri, `the value of \`${a.name.text}\` for instance \`${card.name.text}\``, 'Whatever depends on it inside the instance has no value either.');
      const result: EvalResult = v.ok
        ? v
        : { ok: false, error: { message: v.message, span: v.span, inherited: true, related: [{ uri, span: a.span, message: `\`${a.name.text}\` is set here.` }] } };
      scope.setValue(a.name.text, result, paramDefinition(a, uri));
    }
    const child: Instance = {
      prefix: `${path}.`,
      lowerPrefix: `${path.toLowerCase()}.`,
      body: def.body,
      scope,
      ports: portMap,
      chain: [...inst.chain, def],
      instances: [...inst.instances, { name: card.name.text, uri, span: card.span }],
      modelScopes: [new Map(), ...inst.modelScopes],
    };
    if (overrides.size > 0) child.overrides = overrides;
    this.flattenBody(child);
  }

  /**
   * With an include unread, the models, subcircuits and parameters that are not found may well be
   * defined in it: instead of one error per device, one finding per unread file says how many
   * devices and which names may come from it (and no default-model fix is offered for them).
   */
  private summariseMissing(missing: { uri: string; token: Token; ref: string }[]): void {
    const kept: Finding[] = [];
    const devices = new Set<string>();
    const names = new Set<string>();
    const related: RelatedLocation[] = [];
    for (const f of this.sink.findings) {
      const name = missingName(f);
      if (name === undefined) {
        kept.push(f);
        continue;
      }
      names.add(name);
      const device = this.deviceAt(f);
      devices.add(device);
      if (related.length < 20) related.push({ uri: f.uri, span: f.span, message: `\`${name}\` is not defined (${f.code}).` });
    }
    if (names.size === 0) return;
    this.sink.findings.length = 0;
    pushAll(this.sink.findings, kept);
    const files = missing.map((m) => `\`${m.ref}\``);
    const list = [...names];
    const shown = list.slice(0, 10).map((n) => `\`${n}\``).join(', ') + (list.length > 10 ? `, and ${list.length - 10} more` : '');
    for (const m of missing) {
      const elsewhere = missing.length > 1 ? ` (or from ${files.filter((f) => f !== `\`${m.ref}\``).join(', ')}, which cannot be read either)` : '';
      this.sink.add(
        'include-missing-consequences',
        `${devices.size} device${devices.size === 1 ? '' : 's'} use${devices.size === 1 ? 's' : ''} names that may come from the unread file \`${m.ref}\`${elsewhere}: ${shown}. They are left out until the file can be read.`,
        m.uri,
        m.token.span,
        related,
        { path: m.ref, devices: devices.size, names: list.slice(0, 100) },
      );
    }
  }

  /** The element or instance card a finding is on (its document and start), found by bisection among the cards read. */
  private deviceAt(f: Finding): string {
    if (!this.cardStarts) {
      this.cardStarts = new Map();
      for (const item of this.namedItems) {
        let list = this.cardStarts.get(item.uri);
        if (!list) this.cardStarts.set(item.uri, (list = []));
        list.push(item.card.span.start);
      }
      for (const list of this.cardStarts.values()) list.sort((a, b) => a - b);
    }
    const list = this.cardStarts.get(f.uri) ?? [];
    let lo = 0;
    let hi = list.length - 1;
    let at = -1;
    while (lo <= hi) {
      const mid = (lo + hi) >> 1;
      if (list[mid]! <= f.span.start) {
        at = mid;
        lo = mid + 1;
      } else hi = mid - 1;
    }
    return `${f.uri}#${at >= 0 ? list[at] : f.span.start}`;
  }

  private cardStarts: Map<string, number[]> | undefined;
  private topBodies: Body[] = [];
  private topScope: ParamScope | undefined;
  private scaleFactor: number | undefined;

  /** The `.option scale=` factor for element sizes (1 without one), read once from the top level. */
  private scale(): number {
    if (this.scaleFactor !== undefined) return this.scaleFactor;
    this.scaleFactor = 1;
    for (const body of this.topBodies) {
      for (const { card, uri } of body.items) {
        if (card.kind !== 'option' || !this.topScope) continue;
        for (const a of card.params) {
          if (a.name.text.toLowerCase() !== 'scale') continue;
          const v = tokenValue(a.value, this.topScope, uri);
          if (v.ok && v.value > 0) this.scaleFactor = v.value;
          else this.sink.add('element-value-invalid', `The size scale of \`.option scale\` cannot be used (${v.ok ? `${v.value} is not above 0` : lowerFirst(v.message)}); sizes are used as written.`, uri, a.value.span);
          return this.scaleFactor;
        }
      }
    }
    return this.scaleFactor;
  }

  /** One finding per kind of element the solver does not read yet, naming how many and which are left out. */
  private reportLeftOut(): void {
    for (const [kind, items] of this.leftOut) {
      const info = LEFT_OUT[kind]!;
      const first = items[0]!;
      const names = items.map((i) => i.card.name.text);
      const shown = names.slice(0, 8).map((n) => `\`${n}\``).join(', ') + (names.length > 8 ? `, and ${names.length - 8} more` : '');
      const count = items.length === 1 ? `1 ${info.one}` : `${items.length} ${info.many}`;
      this.sink.add(
        info.dc ? 'element-not-analysed' : 'element-not-analysed-no-dc-effect',
        `${count} (${shown}) ${items.length === 1 ? 'is' : 'are'} not analysed yet and ${items.length === 1 ? 'is' : 'are'} left out of the circuit; ${info.dc ? 'the bias point is computed without them, so it may not hold where they connect.' : 'at DC they have no effect, so the bias point stands.'}`,
        first.uri,
        first.card.name.span,
        items.slice(1, 20).map((i) => ({ uri: i.uri, span: i.card.name.span, message: `\`${i.card.name.text}\` is left out too.` })),
        { kind, count: items.length, elements: names.slice(0, 100) },
      );
    }
  }

  /** Resolves F, H and W controls and the I(…) inputs of behavioural sources against the flattened voltage sources; drops those whose control does not exist. */
  /** Resolves the controlling sources of F, H and W elements; whether an element was dropped (the indices after it moved). */
  private resolveControls(): boolean {
    if (this.controls.length === 0) return false;
    const byName = new Map<string, Element>();
    for (const e of this.elements) byName.set(e.name.toLowerCase(), e);
    const dropped = new Set<Element>();
    for (const c of this.controls) {
      const target = byName.get(c.full.toLowerCase());
      if (target && target.kind === 'V') {
        c.set(target.name);
        continue;
      }
      const message = target
        ? `\`${c.element.name}\` is controlled by the current of \`${target.name}\`, which is not a voltage source; the controlling element must be a V source. It is left out.`
        : `\`${c.element.name}\` is controlled by the current of \`${c.full}\`, but no voltage source has that name in its scope; it is left out.`;
      this.sink.add('controlled-source-control-missing', message, c.uri, c.token.span, undefined, { control: c.full });
      dropped.add(c.element);
    }
    if (dropped.size === 0) return false;
    const kept = this.elements.filter((e) => !dropped.has(e));
    this.elements.length = 0;
    pushAll(this.elements, kept);
    return true;
  }

  /**
   * Removes nodes no kept element touches (their element was left out because of a finding) and
   * renumbers the rest in order, so the solver never sees a node with nothing attached. A node a
   * behavioural source reads (`V(a)`) counts as touched, and its input is renumbered with it. Whether a node was dropped.
   */
  private dropUnusedNodes(): boolean {
    const used = new Uint8Array(this.nodes.length);
    used[0] = 1;
    for (let i = 0; i < this.elements.length; i++) {
      const e = this.elements[i]!;
      for (let s = 0; s < e.nodes.length; s++) used[e.nodes[s]!] = 1;
      if (e.kind === 'B') for (const input of e.inputs) if (input.kind === 'v') used[input.a] = used[input.b] = 1;
    }
    if (used.indexOf(0) < 0) return false;
    const remap = new Int32Array(this.nodes.length);
    const kept: string[] = [];
    for (let k = 0; k < this.nodes.length; k++) {
      if (used[k]) {
        remap[k] = kept.length;
        kept.push(this.nodes[k]!);
      }
    }
    for (const e of this.elements) {
      e.nodes = e.nodes.map((k) => remap[k]!);
      if (e.kind !== 'B') continue;
      for (const input of e.inputs) {
        if (input.kind !== 'v') continue;
        input.a = remap[input.a]!;
        input.b = remap[input.b]!;
      }
    }
    // A loop rather than push(...kept): spreading 100k+ arguments overflows the call stack.
    this.nodes.length = 0;
    for (const n of kept) this.nodes.push(n);
    return true;
  }

  // -------------------------------------------------------------------------
  // Global cards and symbols

  private temperatures(bodies: Body[], top: ParamScope): { temperatureC: number; tnomC: number } {
    let temperatureC: number | undefined;
    let tnomC: number | undefined;
    const noted = new Set<string>();
    for (const body of bodies) {
      const items = body.items;
      for (let i = 0; i < items.length; i++) {
        const { card, uri } = items[i]!;
        if (card.kind === 'temp' && card.values[0]) {
          if (temperatureC !== undefined) continue;
          temperatureC = this.temperature(card.values[0], top, uri, '.temp');
        } else if (card.kind === 'option') {
          for (const a of card.params) {
            if (a.name.text.toLowerCase() !== 'tnom' || tnomC !== undefined) continue;
            tnomC = this.temperature(a.value, top, uri, 'tnom');
          }
        } else if (card.kind === 'skipped' && (card.group === 'sweep' || card.group === 'alternative')) {
          // One note per kind of card: the others of the kind say nothing new.
          const kind = card.command.text.toLowerCase();
          if (noted.has(kind)) continue;
          noted.add(kind);
          if (card.group === 'alternative') {
            this.sink.add('alternatives-not-analysed', `The netlist analysed ends at this ${card.command.text}; the alternative versions after it are not analysed.`, uri, card.command.span);
          } else {
            this.sink.add('card-ignored', `\`${card.command.text}\` reruns the analysis at other values, which a single bias point does not do; the netlist is analysed at its nominal values.`, uri, card.command.span);
          }
        }
      }
    }
    const override = this.options.temperatureC;
    if (override !== undefined) {
      if (Number.isFinite(override) && override > ABSOLUTE_ZERO_C) temperatureC = override;
      else {
        this.sink.add('temperature-invalid', `The analysis temperature setting (${override} °C) is not above absolute zero; the netlist's temperature is used.`, this.root.uri, { start: 0, end: 0 });
      }
    }
    return { temperatureC: temperatureC ?? DEFAULT_TEMPERATURE_C, tnomC: tnomC ?? DEFAULT_TEMPERATURE_C };
  }

  private temperature(tok: Token, scope: ParamScope, uri: string, what: string): number | undefined {
    const v = tokenValue(tok, scope, uri);
    if (!v.ok) {
      this.sink.add('temperature-invalid', `The ${what} temperature cannot be read. ${capitalise(v.message)}`, uri, v.inherited ? tok.span : v.span, v.related);
      return undefined;
    }
    if (v.value <= ABSOLUTE_ZERO_C) {
      this.sink.add('temperature-invalid', `The ${what} temperature ${v.value} °C is not above absolute zero (−273.15 °C); ${DEFAULT_TEMPERATURE_C} °C is used.`, uri, tok.span, undefined, { value: v.value });
      return undefined;
    }
    return v.value;
  }

  private paramSymbols(top: Body, topScope: ParamScope, defs: SubcktDef[]): ParamSymbol[] {
    const out: ParamSymbol[] = [];
    const lastByName = new Map<string, Assignment>();
    const items = top.items;
    for (let i = 0; i < items.length; i++) {
      const card = items[i]!.card;
      if (card.kind === 'param') for (const a of card.params) lastByName.set(a.name.text.toLowerCase(), a);
    }
    for (let i = 0; i < items.length; i++) {
      const { card, uri } = items[i]!;
      if (card.kind !== 'param') continue;
      for (const a of card.params) {
        const current = lastByName.get(a.name.text.toLowerCase()) === a;
        const r = current ? topScope.lookup(a.name.text, a.name.span) : undefined;
        out.push(paramSymbol(a, uri, '', r?.ok ? r.value : undefined));
      }
    }
    // Subcircuit parameters: defaults and body .params, evaluated as written in the definition (no overrides), silently.
    for (const def of defs) {
      const scope = this.definitionScope(def, topScope);
      const assignments: { a: Assignment; uri: string }[] = [
        ...def.card.params.map((a) => ({ a, uri: def.uri })),
        ...def.body.items.flatMap(({ card, uri }) => (card.kind === 'param' ? card.params.map((a) => ({ a, uri })) : [])),
      ];
      for (const { a, uri } of assignments) {
        const r = scope.lookup(a.name.text, a.name.span);
        out.push(paramSymbol(a, uri, def.key, r.ok ? r.value : undefined));
      }
    }
    return out;
  }

  /** A scope holding a definition's defaults and body parameters over the top level, whose problems are not reported. */
  private definitionScope(def: SubcktDef, topScope: ParamScope): ParamScope {
    const silent = new EvaluationContext(() => undefined);
    const scope = new ParamScope(silent, { parent: topScope, label: `subcircuit ${def.card.name.text}` });
    for (const a of def.card.params) scope.define(paramDefinition(a, def.uri));
    for (const { card, uri } of def.body.items) if (card.kind === 'param') for (const a of card.params) scope.define(paramDefinition(a, uri));
    return scope;
  }

  private subcktSymbols(defs: SubcktDef[], topScope: ParamScope): SubcktSymbol[] {
    return defs.map((def) => {
      const scope = this.definitionScope(def, topScope);
      const params: Record<string, number | undefined> = nameTable();
      for (const a of def.card.params) {
        const r = scope.lookup(a.name.text, a.name.span);
        params[a.name.text] = r.ok ? r.value : undefined;
      }
      return { name: def.card.name.text, uri: def.uri, span: def.card.span, nameSpan: def.card.name.span, ports: def.card.ports.map((p) => p.text), params };
    });
  }
}

/**
 * The name a finding says is undefined, when it is a model, subcircuit or parameter that an
 * unread include may define; undefined for every other finding.
 */
function missingName(f: Finding): string | undefined {
  if (f.code === 'model-not-found') return String(f.data?.['modelName'] ?? '');
  if (f.code === 'subckt-not-found') return String(f.data?.['subcktName'] ?? '');
  if (f.code === 'element-value-invalid' || f.code === 'param-invalid' || f.code === 'model-parameter-invalid' || f.code === 'temperature-invalid') {
    // The expression layer words an unknown name this way (expressions.ts lookup, values.ts tokenValue).
    const m = /`([^`]+)` (?:is not a parameter in scope|is neither a number nor a parameter in scope)/.exec(f.message);
    if (m) return m[1];
  }
  return undefined;
}

/** One model of a scope: its elaborated model (null when the card is unusable), its card and document, and the findings of a library model not reported yet. */
type ModelEntry = { model: Model | null; card: ModelCard; uri: string; pending?: Finding[] };

/** The bins of binned model `key` in one scope (`key.1`, `key.2`, …), in bin-number order. */
function binsOf(scope: Map<string, ModelEntry>, key: string): ModelEntry[] {
  const out: { n: number; e: ModelEntry }[] = [];
  const prefix = `${key}.`;
  for (const [name, e] of scope) {
    if (!name.startsWith(prefix)) continue;
    const n = Number(name.slice(prefix.length));
    if (Number.isInteger(n) && n >= 0) out.push({ n, e });
  }
  return out.sort((a, b) => a.n - b.n).map((x) => x.e);
}

/** LMIN…LMAX and WMIN…WMAX of a bin (0 and ∞ where the card gives none). */
function binRange(e: ModelEntry): { lmin: number; lmax: number; wmin: number; wmax: number } {
  const p = e.model?.params ?? {};
  const get = (k: string, d: number): number => (Number.isFinite(p[k]) ? p[k]! : d);
  return { lmin: get('LMIN', 0), lmax: get('LMAX', Infinity), wmin: get('WMIN', 0), wmax: get('WMAX', Infinity) };
}

/**
 * The bin whose ranges cover L and W: LMIN ≤ L ≤ LMAX and WMIN ≤ W ≤ WMAX, a size exactly on a
 * shared edge going to the bin that starts there (upper limits exclusive first), then the lowest bin number.
 */
function chooseBin(bins: ModelEntry[], size: { w: number; l: number }): ModelEntry | undefined {
  const covers = (e: ModelEntry, strict: boolean): boolean => {
    const r = binRange(e);
    const below = (v: number, max: number): boolean => (strict ? v < max : v <= max);
    return r.lmin <= size.l && below(size.l, r.lmax) && r.wmin <= size.w && below(size.w, r.wmax);
  };
  return bins.find((b) => covers(b, true)) ?? bins.find((b) => covers(b, false));
}

/** How the elements the solver does not read yet are named in the one finding per kind, and whether they matter at DC. */
const LEFT_OUT: Record<string, { one: string; many: string; dc: boolean }> = nameTable({
  Z: { one: 'MESFET', many: 'MESFETs', dc: true },
  K: { one: 'inductor coupling', many: 'inductor couplings', dc: false },
  O: { one: 'lossy transmission line', many: 'lossy transmission lines', dc: true },
  P: { one: 'coupled multiconductor line', many: 'coupled multiconductor lines', dc: true },
  Y: { one: 'transmission-line element', many: 'transmission-line elements', dc: true },
  U: { one: 'digital or distributed element', many: 'digital or distributed elements', dc: true },
  A: { one: 'mixed-signal (code model) element', many: 'mixed-signal (code model) elements', dc: true },
  N: { one: 'model-defined device', many: 'model-defined devices', dc: true },
  behaviour: { one: 'controlled source in a frequency-domain form (LAPLACE, FREQ, CHEBYSHEV)', many: 'controlled sources in a frequency-domain form (LAPLACE, FREQ, CHEBYSHEV)', dc: true },
});

/** Behavioural forms of E, F, G, H the solver reads (LAPLACE and the frequency forms have no DC meaning it can take). */
const SOLVED_FORMS = new Set(['VALUE', 'TABLE', 'POLY']);

/** The left-out kind of an element the solver does not read yet, or undefined for one it solves. */
function leftOutKind(card: ElementCard): string | undefined {
  if (card.behaviour) return SOLVED_FORMS.has(card.behaviour.form) ? undefined : 'behaviour';
  return LEFT_OUT[card.letter] ? card.letter : undefined;
}

function paramDefinition(a: Assignment, uri: string): ParamDefinition {
  const { source, offset } = expressionOf(a.value);
  return { name: a.name.text, source, offset, uri, span: a.span, nameSpan: a.name.span };
}

function paramSymbol(a: Assignment, uri: string, scope: string, value: number | undefined): ParamSymbol {
  const sym: ParamSymbol = { name: a.name.text, uri, span: a.span, nameSpan: a.name.span, expression: a.value.text, scope };
  if (value !== undefined) sym.value = value;
  return sym;
}

/** The `.title` card's text when the netlist has one, else its first line. */
function titleOf(root: ParsedDocument, top: Body | undefined): string {
  const items = top?.items ?? [];
  for (let i = 0; i < items.length; i++) {
    const card = items[i]!.card;
    if (card.kind === 'skipped' && card.group === 'title' && card.text) return card.text;
  }
  const first = root.cards[0];
  return first && first.kind === 'title' ? first.text : '';
}

function describeLetter(letter: string): string {
  const names: Record<string, string> = {
    R: 'a resistor',
    C: 'a capacitor',
    L: 'an inductor',
    V: 'a voltage source',
    I: 'a current source',
    E: 'a voltage-controlled voltage source',
    G: 'a voltage-controlled current source',
    F: 'a current-controlled current source',
    H: 'a current-controlled voltage source',
    D: 'a diode',
    Q: 'a bipolar transistor',
    M: 'a MOSFET',
    J: 'a junction FET',
    S: 'a voltage-controlled switch',
    W: 'a current-controlled switch',
    B: 'a behavioural source',
    T: 'a transmission line',
    X: 'a subcircuit instance',
  };
  return names[letter] ?? 'an element';
}

function describeKind(kind: string): string {
  const names: Record<string, string> = { npn: 'an NPN model', pnp: 'a PNP model', d: 'a diode model', nmos: 'an NMOS model', pmos: 'a PMOS model', njf: 'an N-channel JFET model', pjf: 'a P-channel JFET model', sw: 'a voltage-controlled switch model', csw: 'a current-controlled switch model', r: 'a resistor model' };
  return names[kind] ?? `a ${kind} model`;
}

function formatRatio(x: number): string {
  return String(Number(x.toPrecision(4)));
}

function capitalise(s: string): string {
  return s.length > 0 ? s[0]!.toUpperCase() + s.slice(1) : s;
}

function lowerFirst(s: string): string {
  return s.length > 0 ? s[0]!.toLowerCase() + s.slice(1) : s;
}

