// The lossless card tree the parser produces: every card and every field keeps its span.

import type { Span } from '../types';

/**
 * One lexical field of a card, exactly as written. `text` is the source text of the
 * field (for a braced or quoted expression, including the braces or quotes).
 */
export interface Token {
  text: string;
  span: Span;
  /** `word`: a bare word or number; `expr`: `{...}` or `'...'` expression. */
  kind: 'word' | 'expr';
}

/** `name=value` inside a card. `span` covers the whole assignment. */
export interface Assignment {
  name: Token;
  value: Token;
  span: Span;
}

/** Fields common to every card. `span` covers the card including its `+` continuation lines and end-of-line comment. */
interface CardBase {
  span: Span;
  /** Every token of the card in order, continuation markers and comments excluded. */
  tokens: Token[];
  /**
   * Comment lines that sit between the card's first line and its last `+` continuation line. They lie
   * inside the card's span, so they are kept here rather than as cards of their own (cards never overlap).
   */
  comments?: CommentCard[];
}

/** The first line of a top-level netlist. */
export interface TitleCard extends CardBase {
  kind: 'title';
  text: string;
}

/** A `*` comment line, kept so the tree is lossless and for the target notation in later issues. */
export interface CommentCard extends CardBase {
  kind: 'comment';
  text: string;
}

/** How an independent source's DC value was written. */
export interface SourceValue {
  /**
   * `dc`: `DC 5`; `bare`: `5`; `transient`: the t=0 value of `PULSE(...)`, `SIN(...)`, `PWL(...)`,
   * `EXP(...)`, `SFFM(...)`; `none`: only an AC or other analysis specification, so the DC value is 0.
   */
  form: 'dc' | 'bare' | 'transient' | 'none';
  /** The token holding the DC (or t=0) value, when one was given. */
  value?: Token;
  /** For `transient`, the function name token (`PULSE`). */
  function?: Token;
}

/**
 * An element card. Which optional fields are set depends on the letter:
 * - R C L: nodes[2], value (R may also carry `model`); params (e.g. `M=`)
 * - V I: nodes[2], source
 * - E G: nodes[4] (out+, out-, ctrl+, ctrl-), value (gain)
 * - F H: nodes[2], control (the controlling V source's name), value (gain)
 * - D: nodes[2] (anode, cathode), model, area?
 * - Q: nodes[3] or [4] (collector, base, emitter, substrate?), model, area?
 * - M: nodes[4] (drain, gate, source, bulk), model, params W= L= M= ...
 * - X: nodes[n], subckt, params (instance parameter overrides)
 */
export interface ElementCard extends CardBase {
  kind: 'element';
  /** Upper-case first letter of the name. */
  letter: ElementLetter;
  name: Token;
  nodes: readonly Token[];
  value?: Token;
  model?: Token;
  area?: Token;
  control?: Token;
  subckt?: Token;
  source?: SourceValue;
  params: readonly Assignment[];
  /**
   * A behavioural form of a controlled source (`POLY(n) ...`, `VALUE={...}`, `TABLE {...} = ...`,
   * `LAPLACE ...`): the form's keyword and every field from it to the end of the card. Set only on
   * E, F, G and H cards; VALUE, TABLE and POLY are solved as behavioural sources, the frequency-domain forms are left out.
   */
  behaviour?: { form: string; keyword: Token; fields: Token[]; span: Span };
  /** K: the inductors it couples (`value` holds the coupling coefficient). */
  coupled?: Token[];
}

/** The element letters the solver reads today. */
export type SolvedLetter = 'R' | 'C' | 'L' | 'V' | 'I' | 'E' | 'F' | 'G' | 'H' | 'D' | 'Q' | 'M' | 'J' | 'S' | 'W' | 'B' | 'T' | 'X';

/**
 * Letters of the family that are read into cards but not solved yet:
 * - Z: nodes[3] (drain, gate, source), model, area? (MESFET)
 * - S: nodes[4] (out+, out-, ctrl+, ctrl-), model (voltage-controlled switch)
 * - W: nodes[2], control (controlling V source), model (current-controlled switch)
 * - B: nodes[2], value = the V= or I= expression, params (behavioural source)
 * - K: coupled (inductor names), value (coupling coefficient)
 * - T, O, P, Y: nodes (every positional field), params (transmission lines and the like)
 * - U, A, N: nodes (every positional field but the last), model (digital, mixed-signal and model-only devices)
 */
export type UnsolvedLetter = 'Z' | 'K' | 'O' | 'P' | 'Y' | 'U' | 'A' | 'N';

export type ElementLetter = SolvedLetter | UnsolvedLetter;

/** `.model NAME TYPE (P=V ...)`, with or without parentheses, across continuation lines. */
export interface ModelCard extends CardBase {
  kind: 'model';
  name: Token;
  type: Token;
  params: Assignment[];
}

/** `.param a=1 b={a*2}`. */
export interface ParamCard extends CardBase {
  kind: 'param';
  params: Assignment[];
}

/** `.subckt NAME port... [PARAMS:] [p=default ...]`. */
export interface SubcktCard extends CardBase {
  kind: 'subckt';
  name: Token;
  ports: Token[];
  params: Assignment[];
}

/** `.ends [NAME]`. */
export interface EndsCard extends CardBase {
  kind: 'ends';
  name?: Token;
}

/** `.include "path"` (quotes optional). */
export interface IncludeCard extends CardBase {
  kind: 'include';
  path?: Token;
}

/** `.lib "path" SECTION` (use a section of a library file) or `.lib SECTION` (start of a section inside a library). */
export interface LibCard extends CardBase {
  kind: 'lib';
  path?: Token;
  section?: Token;
}

/** `.endl [SECTION]`. */
export interface EndlCard extends CardBase {
  kind: 'endl';
  section?: Token;
}

/** `.temp 27 [85 ...]`: the first value is the analysis temperature in °C. */
export interface TempCard extends CardBase {
  kind: 'temp';
  values: Token[];
}

/** `.option[s] tnom=27 ...`; bare flags appear in `flags`. */
export interface OptionCard extends CardBase {
  kind: 'option';
  params: Assignment[];
  flags: Token[];
}

/** `.op`. */
export interface OpCard extends CardBase {
  kind: 'op';
}

/** `.end`: nothing after it is read. */
export interface EndCard extends CardBase {
  kind: 'end';
}

/** A dot card this parser does not know (`.foo`): kept with its command, reported, its insides not read. */
export interface OtherDotCard extends CardBase {
  kind: 'other-dot';
  command: Token;
}

/**
 * What a skipped card or block is for:
 * - `analysis`, `output`: analysis and output cards (`.tran`, `.meas`, `.print`, `.ic`, ...)
 * - `block`: a multi-line script, control or data block (`.control` ... `.endc`), skipped whole
 * - `alternative`: `.alter` and everything after it (the netlist analysed ends there)
 * - `title`: `.title TEXT`
 * - `sweep`: `.step` and other cards that rerun the analysis at other values
 * - `setup`: cards that only set up another tool (`.prot`, `.unprot`, `.del lib`, `.backanno`, ...)
 */
export type SkippedGroup = 'analysis' | 'output' | 'block' | 'alternative' | 'title' | 'sweep' | 'setup';

/**
 * A dot card or block that a DC bias analysis does not use: recognised by its command and kept
 * whole (its span covers a block's inner lines and closing card), but nothing inside it is read.
 * `tokens` holds the command only.
 */
export interface SkippedCard extends CardBase {
  kind: 'skipped';
  command: Token;
  group: SkippedGroup;
  /** For a block: its closing card's command (absent when the file ends first). */
  closer?: Token;
  /** For `.title`: the title text. */
  text?: string;
}

/** `.global n1 n2 ...`: nodes that mean the same node in every subcircuit. */
export interface GlobalCard extends CardBase {
  kind: 'global';
  nodes: Token[];
}

/**
 * `.func name(a, b) = expr` (the `=` and braces optional): a user function for expressions.
 * `body` is the expression as one `expr` token (its text as written, braces included if written).
 */
export interface FuncCard extends CardBase {
  kind: 'func';
  name: Token;
  args: Token[];
  body?: Token;
}

/** One card of a conditional: `.if (cond)`, `.elseif (cond)`, `.else`, `.endif`. */
export interface ConditionCard extends CardBase {
  kind: 'condition';
  branch: 'if' | 'elseif' | 'else' | 'endif';
  /** The condition as one `expr` token (for `if` and `elseif`). */
  condition?: Token;
}

/** A card the parser could not read. `message` says what was expected. */
export interface ErrorCard extends CardBase {
  kind: 'error';
  message: string;
  /** The part of the card the message is about. */
  errorSpan: Span;
}

export type Card =
  | TitleCard
  | CommentCard
  | ElementCard
  | ModelCard
  | ParamCard
  | SubcktCard
  | EndsCard
  | IncludeCard
  | LibCard
  | EndlCard
  | TempCard
  | OptionCard
  | OpCard
  | EndCard
  | OtherDotCard
  | SkippedCard
  | GlobalCard
  | FuncCard
  | ConditionCard
  | ErrorCard;

/** A syntax problem found while reading a card that could still be read (e.g. a stray `=`). */
export interface SyntaxError {
  message: string;
  span: Span;
  code: string;
  /** How serious the problem is; absent means `error`. Hints mark readings that may surprise (a title that looks like a card). */
  severity?: 'error' | 'warning' | 'info' | 'hint';
  /** Structured facts behind the message (for example the unknown dot command), carried into the finding. */
  data?: Record<string, unknown>;
}

/** The parse of one document. */
export interface ParsedDocument {
  uri: string;
  text: string;
  cards: Card[];
  /** Error cards' messages plus problems inside otherwise readable cards. */
  errors: SyntaxError[];
}

/** Options for parsing one document. */
export interface ParseOptions {
  /** True for a top-level netlist: its first line is the title. False for included files. */
  hasTitle: boolean;
}
