// The elaborated circuit: parameters evaluated, includes read, subcircuits flattened. Solver and recognisers work on this.

import type { BehaviourProgram } from './devices/behaviour-program';
import type { ModelKind } from './devices/parameters';
import type { Span } from './types';
import { upperCase } from './names';

export type { ModelKind } from './devices/parameters';
export { MODEL_DEFAULTS } from './devices/parameters';

/** Where an elaborated object came from, so findings can point at the text. */
export interface Origin {
  /** The document holding the card (for a flattened device: the subcircuit definition's card). */
  uri: string;
  /** The whole card. */
  span: Span;
  /** The span of the card's main value field (a resistor's value, a source's DC value), when it has one. */
  valueSpan?: Span;
  /** The span of the model-name field, when the card names a model. */
  modelSpan?: Span;
  /**
   * Spans of the node fields, in node order. Read-only: an element the parser's cards gave is the card's own list of
   * node tokens, each its own span (`SpanToken`), shared by every element flattened from that card.
   */
  nodeSpans?: readonly Span[];
  /** The X instance cards this object was flattened through, outermost first (empty at top level). */
  instances: { name: string; uri: string; span: Span }[];
}

/** A `.model` after elaboration: every parameter the device equations read is present (defaults filled in). */
export interface Model {
  /** As written in the .model card. */
  name: string;
  kind: ModelKind;
  /** Upper-case parameter name -> value; includes defaults. */
  params: Record<string, number>;
  /** Upper-case names of the parameters the card actually gave. */
  given: string[];
  /**
   * Limits of the part that the DC equations do not use but the checks compare the operating
   * point against, when the card gives them: `RATEDPOWER` (the part's dissipation limit, W; a
   * parameter of this project's naming).
   */
  ratings?: Record<string, number>;
  origin: Origin;
}

interface ElementBase {
  /** Hierarchical, as written: `Q1`, `X1.Q2`, `X1.X3.R4`. Unique case-insensitively. */
  name: string;
  /** The card's `RATEDPOWER=` (W): the part's dissipation limit, which overrides its model's and the default. */
  ratedPowerW?: number;
  /** Indices into `Circuit.nodes`; 0 is ground. Order is given per kind below. */
  nodes: number[];
  origin: Origin;
}

/** nodes: [a, b]. */
export interface Resistor extends ElementBase {
  kind: 'R';
  /** Ohms, after dividing by the M= multiplier. */
  resistance: number;
  /** Parallel count (M=), when the card gives one other than 1. */
  m?: number;
  /** `RATEDPOWER` of the resistor's model, when it names one that gives it (W, per part). */
  modelRatedPowerW?: number;
  /**
   * Temperature coefficients (instance `TC1=`/`TC2=`/`TC=a,b`, else the model's), when either is
   * non-zero: at temperature T the solver uses R·(1 + TC1·ΔT + TC2·ΔT²), ΔT = T − Tnom.
   * `resistance` is the value at Tnom.
   */
  tc1?: number;
  tc2?: number;
}

/** nodes: [a, b]. Open at DC. */
export interface Capacitor extends ElementBase {
  kind: 'C';
  capacitance: number;
}

/** nodes: [a, b]. A short at DC (solved as a 0 V source, so its current is known). */
export interface Inductor extends ElementBase {
  kind: 'L';
  inductance: number;
}

/** nodes: [plus, minus]. V(plus) − V(minus) = dc. */
export interface VoltageSource extends ElementBase {
  kind: 'V';
  dc: number;
}

/** nodes: [plus, minus]. `dc` amperes flow from `plus` through the source to `minus`. */
export interface CurrentSource extends ElementBase {
  kind: 'I';
  dc: number;
}

/** E: nodes [out+, out−, ctrl+, ctrl−]; V(out) = gain · V(ctrl). */
export interface Vcvs extends ElementBase {
  kind: 'E';
  gain: number;
}

/** G: nodes [out+, out−, ctrl+, ctrl−]; current gain · V(ctrl) flows from out+ through the element to out−. */
export interface Vccs extends ElementBase {
  kind: 'G';
  gain: number;
}

/** F: nodes [out+, out−]; current gain · I(control) flows from out+ through the element to out−. */
export interface Cccs extends ElementBase {
  kind: 'F';
  /** Name of the controlling voltage source (hierarchical, as in `elements`). */
  control: string;
  gain: number;
}

/** H: nodes [out+, out−]; V(out) = gain · I(control). */
export interface Ccvs extends ElementBase {
  kind: 'H';
  control: string;
  gain: number;
}

/** nodes: [anode, cathode]. */
export interface Diode extends ElementBase {
  kind: 'D';
  model: Model;
  area: number;
  /** Parallel count (M=). */
  m: number;
}

/** nodes: [collector, base, emitter] (a 4th substrate node, if written, is kept but unused at DC). */
export interface Bjt extends ElementBase {
  kind: 'Q';
  model: Model;
  /** Area factor: multiplies IS. */
  area: number;
  /** Parallel count (M=): multiplies every current. */
  m: number;
}

/** nodes: [drain, gate, source, bulk]. */
export interface Mosfet extends ElementBase {
  kind: 'M';
  model: Model;
  /** Metres. */
  w: number;
  l: number;
  m: number;
}

/** nodes: [drain, gate, source]. */
export interface Jfet extends ElementBase {
  kind: 'J';
  model: Model;
  /** Area factor: multiplies BETA and IS. */
  area: number;
  /** Parallel count (M=). */
  m: number;
}

/** nodes: [out+, out−, ctrl+, ctrl−]; a resistance between the outputs set by V(ctrl+) − V(ctrl−). */
export interface VoltageSwitch extends ElementBase {
  kind: 'S';
  model: Model;
}

/** nodes: [out+, out−]; a resistance between them set by the current through voltage source `control`. */
export interface CurrentSwitch extends ElementBase {
  kind: 'W';
  model: Model;
  /** Name of the controlling voltage source (hierarchical, as in `elements`). */
  control: string;
}

/** A controlling quantity of a behavioural source: V(a) − V(b) (netlist node indices), or the current through element `source`. */
export type BehaviourInput = { kind: 'v'; a: number; b: number } | { kind: 'i'; source: string };

/**
 * nodes: [out+, out−]. A behavioural source: B with V= or I=, or E, F, G, H written as VALUE,
 * TABLE or POLY. `output` 'V' fixes V(out+) − V(out−) = f; 'I' drives f amperes from out+
 * through the element to out−. f is `program` of `inputs`.
 */
export interface BehaviouralSource extends ElementBase {
  kind: 'B';
  /** The letter the card is written with. */
  written: 'B' | 'E' | 'F' | 'G' | 'H';
  form: 'expression' | 'VALUE' | 'TABLE' | 'POLY';
  output: 'V' | 'I';
  program: BehaviourProgram;
  inputs: BehaviourInput[];
}

/** nodes: [port-1 +, port-1 −, port-2 +, port-2 −]; a lossless line, at DC a short along each conductor. */
export interface TransmissionLine extends ElementBase {
  kind: 'T';
}

export type Element =
  | Resistor
  | Capacitor
  | Inductor
  | VoltageSource
  | CurrentSource
  | Vcvs
  | Vccs
  | Cccs
  | Ccvs
  | Diode
  | Bjt
  | Mosfet
  | Jfet
  | VoltageSwitch
  | CurrentSwitch
  | BehaviouralSource
  | TransmissionLine;

export type ElementKind = Element['kind'];

/** A flattened circuit ready to solve. */
export interface Circuit {
  title: string;
  /** Node names as written (hierarchical inside subcircuits: `X1.out`); index 0 is ground, named `0`. */
  nodes: string[];
  elements: Element[];
  /** Every model in scope, keyed by lower-case name (top-level models; subcircuit-local ones keyed `x1.name`). */
  models: Record<string, Model>;
  /** Analysis temperature in °C from `.temp` (default 27). */
  temperatureC: number;
  /** Nominal temperature in °C from `.option tnom` (default 27). */
  tnomC: number;
  /** Evaluated `.param` values at top level, lower-case name -> value. */
  params: Record<string, number>;
  /**
   * Nodes that an element left out of the circuit connects to (its model was not found, its letter
   * is not solved yet, ...), as in `nodes`. The left-out element has its own finding, so the
   * topology checks say nothing more about these nodes.
   */
  detachedNodes?: string[];
}

/**
 * The elaborator's own tables of a circuit's names, kept beside the circuit so the topology answers name questions
 * through them instead of building tables of every name again (`Topology.elementIndex`, `nodeIndex`). Every element
 * of such a circuit has its own name, and so has every node.
 */
export interface ElaboratedNames {
  /** `elementNameKey` of each element and instance name -> its place in `elementAt`. */
  readonly elementKeys: ReadonlyMap<string, number>;
  /** By place, the element's index in `circuit.elements`, or -1 (an instance, or a card left out). */
  readonly elementAt: readonly number[];
  /** Lower-case node name (hierarchical) -> index in `circuit.nodes`; undefined when the indices moved after (nodes dropped). */
  readonly nodeKeys: ReadonlyMap<string, number> | undefined;
}

const elaboratedNames = new WeakMap<Circuit, ElaboratedNames>();

/** Keeps the elaborator's name tables with `circuit` (or with a circuit of the same names in the same places: a patch). */
export function keepElaboratedNames(circuit: Circuit, names: ElaboratedNames | undefined): void {
  if (names) elaboratedNames.set(circuit, names);
}

/** The elaborator's name tables of `circuit`, when it made them for it. */
export function elaboratedNamesOf(circuit: Circuit): ElaboratedNames | undefined {
  return elaboratedNames.get(circuit);
}

/** Whether every character of `s` is ASCII. */
export function isAsciiName(s: string): boolean {
  for (let i = 0; i < s.length; i++) if (s.charCodeAt(i) > 127) return false;
  return true;
}

/**
 * The key of an element name `prefix + text` (its instance prefix, as written and in lower case, and the card's name),
 * the same for two names that are the same but for case: an ASCII name in upper case (a name written in upper case,
 * as element names mostly are, is its own key: no string is made); any other the lower-case name the elaborator keyed
 * names by before, in upper case when that is ASCII, so it meets the ASCII names it equals.
 */
export function elementNameKey(name: string, lowerPrefix: string, text: string): string {
  if (isAsciiName(name)) return upperCase(name);
  const lower = lowerPrefix + text.toLowerCase();
  return isAsciiName(lower) ? lower.toUpperCase() : lower;
}
