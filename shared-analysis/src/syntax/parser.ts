// Hand-written, linear-time scanner and parser for the netlist dialect: text in, lossless cards with spans and located errors out.

/*
 * The codes this parser reports, with their severities and summaries, are listed once in ./codes.ts
 * (SYNTAX_CODES); every finding takes its severity from there. The codes that turn a card into an
 * ErrorCard are those passed to errorCard(); its message is also in `errors`, with the ErrorCard's errorSpan.
 */

import type {
  Assignment,
  Card,
  CommentCard,
  ConditionCard,
  ElementCard,
  ElementLetter,
  ErrorCard,
  LibCard,
  ParsedDocument,
  ParseOptions,
  SkippedCard,
  SkippedGroup,
  SourceValue,
  SubcktCard,
  SyntaxError,
  Token,
} from './ast';
import type { Span } from '../types';
import { SYNTAX_CODES, syntaxSeverity, type SyntaxCode } from './codes';
import { nearestName } from './nearest';
import { nameTable } from '../names';
import { ParsedElementCard, keptAssignments } from './element-card';
import { SpanToken } from './span-token';


/** The element letters the solver reads, in the order messages list them. Every other letter is read into a card too. */
const ELEMENT_LETTER_LIST = 'R, C, L, V, I, E, F, G, H, D, Q, M or X';

/**
 * Transient source functions whose t=0 value is read; the value is this argument of the function
 * (PULSE, SIN and EXP start at their first argument, SFFM at its offset, PWL at its first value).
 */
const TRANSIENT_VALUE_ARGUMENT = new Map<string, number>([
  ['PULSE', 0],
  ['SIN', 0],
  ['EXP', 0],
  ['SFFM', 0],
  ['PWL', 1],
]);

/** Behavioural forms of controlled sources, read into `behaviour` (VALUE, TABLE and POLY are solved; the others are left out). */
const BEHAVIOUR_WORDS = new Set(['POLY', 'VALUE', 'TABLE', 'LAPLACE', 'FREQ', 'CHEBYSHEV']);
/** Source forms of V and I that are recognised but not supported. */
const UNSUPPORTED_SOURCE_WORDS = new Set(['POLY', 'VALUE', 'TABLE', 'LAPLACE', 'FREQ']);

const DOT_COMMANDS = new Set([
  '.model', '.param', '.subckt', '.ends', '.include', '.inc', '.lib', '.endl', '.temp', '.option', '.options', '.opt', '.op', '.end',
  '.global', '.func', '.if', '.elseif', '.else', '.endif', '.alter',
]);

/**
 * Dot cards a DC bias analysis does not use, by what they are for. They are recognised by their
 * command and skipped without reading their fields (an `=` inside `.meas ... when v(out)=2` is
 * never an assignment).
 */
const SKIPPED_CARDS = new Map<string, SkippedGroup>([
  ...['.tran', '.ac', '.dc', '.noise', '.tf', '.pz', '.four', '.fourier', '.disto', '.sens', '.sp', '.pss', '.mc', '.wc', '.stb', '.sample']
    .map((c) => [c, 'analysis'] as const),
  ...['.meas', '.measure', '.print', '.plot', '.probe', '.probe64', '.save', '.width', '.graph', '.wave', '.net', '.lin', '.csparam', '.plotwinsize', '.options-print']
    .map((c) => [c, 'output'] as const),
  ...['.ic', '.nodeset', '.guess', '.prot', '.protect', '.unprot', '.unprotect', '.del', '.backanno', '.savebias', '.loadbias', '.load', '.ferret', '.dellib', '.hdl', '.distribution', '.malias', '.alias']
    .map((c) => [c, 'setup'] as const),
  ['.step', 'sweep'],
  ['.title', 'title'],
]);

/** Multi-line blocks skipped whole, by opening command: the command that closes each. */
const SKIPPED_BLOCKS = new Map<string, string>([
  ['.control', '.endc'],
  ['.data', '.enddata'],
  ['.machine', '.endmachine'],
]);

/** One lexical unit of a card: a word, an expression, or the punctuation `=`, `(`, `)`. */
interface Lexeme {
  type: 'word' | 'expr' | 'eq' | 'lp' | 'rp';
  start: number;
  end: number;
  /** Made on first use; always present as a key so every lexeme has one object shape. */
  token: Token | undefined;
}

/**
 * The lexemes of the card being read, `at(0)` to `at(length - 1)`: one list per document whose lexeme objects are
 * written again for each card (a card's lexemes live only while it is read; its tokens are made from them and kept).
 */
class LexemeList {
  private readonly items: Lexeme[] = [];
  length = 0;
  /** After `.include` or `.lib`: split only at blanks, so paths keep commas and `=`. */
  path = false;
  /** How many of the lexemes are `=`, `(` or `)`. */
  punctuation = 0;

  /** Empties the list for the next card. */
  reset(): void {
    this.length = 0;
    this.path = false;
    this.punctuation = 0;
  }

  add(type: Lexeme['type'], start: number, end: number): void {
    if (type === 'eq' || type === 'lp' || type === 'rp') this.punctuation++;
    const i = this.length++;
    const l = this.items[i];
    if (l === undefined) {
      this.items.push({ type, start, end, token: undefined });
      return;
    }
    l.type = type;
    l.start = start;
    l.end = end;
    l.token = undefined;
  }

  at(i: number): Lexeme | undefined {
    return i < this.length ? this.items[i] : undefined;
  }
}

/** A field of a card after `name=value` pairs are joined. */
type Item =
  | { k: 'pos'; tok: Token }
  | { k: 'asg'; asg: Assignment }
  | { k: 'lp'; span: Span }
  | { k: 'rp'; span: Span };

/** No items: what `parseElement` reads as the items of a card it is given none for. */
const NO_ITEMS: readonly Item[] = Object.freeze([]);

/** A piece of one physical line that belongs to a card: `[start, end)` holds fields, `lineEnd` is where the line's text stops. */
interface Segment {
  start: number;
  lineEnd: number;
  /** For a continuation line, the offset of its `+`. */
  plus?: number;
}

/** Mutable state shared by the cards of one document. */
interface Context {
  text: string;
  errors: SyntaxError[];
  /** Open `.subckt` cards, innermost last. */
  subckts: SubcktCard[];
  /** Open library sections (`.lib NAME` inside a library file), innermost last. */
  sections: LibCard[];
  /** True for a top-level netlist, where a lone `.lib` field is a file path rather than a section start. */
  topLevel: boolean;
  /** Problems reported for the card being read, so one pathological line cannot flood the list. */
  cardProblems: number;
  /** Open `.if` cards, innermost last. */
  conditions: ConditionCard[];
  /** The text of each field after a card's first one met so far, so a node or model name written on many cards is kept once (`makeToken`). */
  words: Map<string, string>;
  /** Scratch list of the fields of the card being read (`parseGroup`); past the card's count it holds stale tokens. */
  fields: Token[];
  /** The lexemes of the card being read (`lexCard`). */
  lexemes: LexemeList;
}

/** At most this many problems are listed per card; the rest are summed up in one more. */
const MAX_PROBLEMS_PER_CARD = 25;

/**
 * Reads a netlist into lossless cards with UTF-16 spans. Never throws: unreadable cards
 * become ErrorCards, other problems are collected in `errors`, and reading resumes at the next card.
 * Cards are in text order and never overlap; a comment line between a card and its continuation
 * is kept in that card's `comments`.
 */
export function parse(uri: string, text: string, options: ParseOptions): ParsedDocument {
  const ctx: Context = { text, errors: [], subckts: [], sections: [], topLevel: options?.hasTitle === true, cardProblems: 0, conditions: [], words: new Map(), fields: [], lexemes: new LexemeList() };
  const cards: Card[] = [];
  let group: Segment[] | null = null;
  let pendingComments: CommentCard[] = [];
  let ended = false;

  // Comment lines inside the open card, waiting to learn whether a continuation line follows them.
  let innerComments: CommentCard[] = [];
  const flush = (): void => {
    if (group) {
      const card = parseGroup(ctx, group);
      if (innerComments.length > 0) card.comments = innerComments;
      cards.push(card);
      group = null;
    }
    innerComments = [];
    if (pendingComments.length > 0) {
      for (const c of pendingComments) cards.push(c);
      pendingComments = [];
    }
  };

  let pos = 0;
  let lineNo = 0;
  const n = text.length;
  while (pos <= n && !ended) {
    // Find the end of this physical line (\n, \r\n or lone \r).
    let end = pos;
    while (end < n) {
      const c = text.charCodeAt(end);
      if (c === 10 || c === 13) break;
      end++;
    }
    let next = end;
    if (end < n) next = text.charCodeAt(end) === 13 && text.charCodeAt(end + 1) === 10 ? end + 2 : end + 1;
    else next = n + 1;

    if (lineNo === 0 && options?.hasTitle === true) {
      cards.push(titleCard(ctx, pos, end));
    } else {
      const first = skipSpace(text, pos, end);
      if (first < end) {
        const c = text.charCodeAt(first);
        // `*`, `;` and (at the start of a line) `$` and `//` start a comment line.
        if (c === 42 /* * */ || c === 59 /* ; */ || c === 36 /* $ */ || (c === 47 /* / */ && text.charCodeAt(first + 1) === 47)) {
          const comment = commentCard(text, first, end, c === 47 ? 2 : 1);
          if (group) pendingComments.push(comment);
          else cards.push(comment);
        } else if (c === 43 /* + */) {
          const seg: Segment = { start: first + 1, lineEnd: end, plus: first };
          if (group) {
            group.push(seg);
            // Comments before this continuation line are now inside the card.
            if (pendingComments.length > 0) {
              for (const c of pendingComments) innerComments.push(c);
              pendingComments = [];
            }
          } else {
            flush();
            group = [seg];
          }
        } else {
          flush();
          const word = c === 46 /* . */ ? firstWord(text, first, end).toLowerCase() : '';
          const closer = SKIPPED_BLOCKS.get(word);
          if (isEndCommand(text, first, end)) {
            cards.push(parseGroup(ctx, [{ start: first, lineEnd: end }]));
            ended = true;
            reportTextAfterEnd(ctx, next);
          } else if (closer !== undefined) {
            const block = skipBlock(ctx, first, end, next, closer);
            cards.push(block.card);
            next = block.next;
          } else if (word === '.alter') {
            // The netlist analysed ends here; what follows are alternatives to it, kept whole in one card.
            let last = n;
            while (last > first && isBlankOrBreak(text.charCodeAt(last - 1))) last--;
            const command = wordToken(text, first, first + word.length);
            cards.push({ kind: 'skipped', span: { start: first, end: last }, tokens: [command], command, group: 'alternative' });
            ended = true;
          } else {
            group = [{ start: first, lineEnd: end }];
          }
        }
      }
    }
    pos = next;
    lineNo++;
  }
  flush();

  for (const open of ctx.subckts) {
    ctx.cardProblems = 0;
    const name = open.name.text;
    addError(
      ctx,
      'subckt-missing-ends',
      `Subcircuit '${name}' is never closed: add '.ends ${name}' after its last card.`,
      open.span,
    );
  }
  for (const open of ctx.conditions) {
    ctx.cardProblems = 0;
    addError(ctx, 'condition-missing-endif', 'This .if is never closed: add .endif after the last card of its branches (until then every later card belongs to it).', open.tokens[0]!.span);
  }
  for (const open of ctx.sections) {
    ctx.cardProblems = 0;
    const name = open.section?.text ?? '';
    addError(
      ctx,
      'lib-section-missing-endl',
      `Library section '${name}' is never closed: add '.endl ${name}' after its last card (until then every later card belongs to it).`,
      open.span,
    );
  }
  return { uri, text, cards, errors: ctx.errors };
}

/**
 * The card `parse` makes of a line `[start, lineEnd)` of `text` that starts an element card (`start` its first
 * non-blank character) and has no continuation, with the problems found in it. An element card reads nothing of
 * the cards around it (only dot cards open and close blocks), so this is the card `parse` makes there.
 */
export function parseElementLine(text: string, start: number, lineEnd: number): { card: Card; errors: SyntaxError[] } {
  const ctx: Context = { text, errors: [], subckts: [], sections: [], topLevel: false, cardProblems: 0, conditions: [], words: new Map(), fields: [], lexemes: new LexemeList() };
  return { card: parseGroup(ctx, [{ start, lineEnd }]), errors: ctx.errors };
}

/** True when `c` is a blank character other than a line break (a BOM counts as blank). */
function isSpace(c: number): boolean {
  return c === 32 || c === 9 || c === 11 || c === 12 || c === 0xa0 || c === 0xfeff;
}

function skipSpace(text: string, i: number, end: number): number {
  while (i < end && isSpace(text.charCodeAt(i))) i++;
  return i;
}

/** `$` starts a comment only when followed by a space, a tab or the end of the line. */
function isCommentDollar(text: string, i: number, end: number): boolean {
  if (i + 1 >= end) return true;
  const c = text.charCodeAt(i + 1);
  return c === 32 || c === 9;
}

function isEndCommand(text: string, first: number, end: number): boolean {
  // Asked of every line: no string is made for a line that does not start with a dot.
  if (first + 4 > end || text.charCodeAt(first) !== 46 /* . */) return false;
  if (text.slice(first, first + 4).toLowerCase() !== '.end') return false;
  if (first + 4 === end) return true;
  // Whatever ends a word in the lexer ends the command, so `.end` reads the same here and in parseDotCard.
  const c = text.charCodeAt(first + 4);
  return isSpace(c) || isWordBreak(c) || (c === 36 && isCommentDollar(text, first + 4, end));
}

/** The first word of a line from `first`: up to a blank or a character that ends a word. */
function firstWord(text: string, first: number, end: number): string {
  let i = first;
  while (i < end) {
    const c = text.charCodeAt(i);
    if (isSpace(c) || isWordBreak(c)) break;
    i++;
  }
  return text.slice(first, i);
}

function wordToken(text: string, start: number, end: number): Token {
  return new SpanToken(text.slice(start, end), start, end, 'word');
}

/** The offset just past the line break that ends the line ending at `end` (or past the text). */
function nextLine(text: string, end: number): number {
  if (end >= text.length) return text.length + 1;
  return text.charCodeAt(end) === 13 && text.charCodeAt(end + 1) === 10 ? end + 2 : end + 1;
}

/**
 * Skips a block opened on the line `[first, end)` up to and including the line whose first word is
 * `closer`. Nothing inside is read. A block the file never closes runs to the end of the file and is reported.
 */
function skipBlock(ctx: Context, first: number, end: number, next: number, closer: string): { card: SkippedCard; next: number } {
  const { text } = ctx;
  const opener = firstWord(text, first, end);
  const command = wordToken(text, first, first + opener.length);
  let pos = next;
  while (pos <= text.length) {
    let lineEnd = pos;
    while (lineEnd < text.length) {
      const c = text.charCodeAt(lineEnd);
      if (c === 10 || c === 13) break;
      lineEnd++;
    }
    const start = skipSpace(text, Math.min(pos, text.length), lineEnd);
    if (start < lineEnd && firstWord(text, start, lineEnd).toLowerCase() === closer) {
      const close = wordToken(text, start, start + closer.length);
      let last = lineEnd;
      while (last > start && isSpace(text.charCodeAt(last - 1))) last--;
      return { card: { kind: 'skipped', span: { start: first, end: last }, tokens: [command], command, group: 'block', closer: close }, next: nextLine(text, lineEnd) };
    }
    if (lineEnd >= text.length) break;
    pos = nextLine(text, lineEnd);
  }
  let last = text.length;
  while (last > first && isBlankOrBreak(text.charCodeAt(last - 1))) last--;
  ctx.cardProblems = 0;
  addError(ctx, 'block-not-closed', `This ${opener} block is never closed with ${closer}; every line after it is skipped as part of the block.`, command.span);
  return { card: { kind: 'skipped', span: { start: first, end: last }, tokens: [command], command, group: 'block' }, next: text.length + 1 };
}

/** Characters that end a bare word: `,` `=` `(` `)` `{` `}` `;`. */
function isWordBreak(c: number): boolean {
  return c === 44 || c === 61 || c === 40 || c === 41 || c === 123 || c === 125 || c === 59;
}

/** Records a finding with the severity SYNTAX_CODES gives `code`; past the per-card cap, one too-many-problems note instead. */
function addError(ctx: Context, code: SyntaxCode, message: string, span: Span, data?: Record<string, unknown>): void {
  const n = ++ctx.cardProblems;
  if (n > MAX_PROBLEMS_PER_CARD + 1) return;
  if (n === MAX_PROBLEMS_PER_CARD + 1) {
    ctx.errors.push({
      code: 'too-many-problems',
      message: `This card has more than ${MAX_PROBLEMS_PER_CARD} problems; only the first ${MAX_PROBLEMS_PER_CARD} are listed.`,
      span: { start: span.start, end: span.end },
      severity: syntaxSeverity('too-many-problems'),
    });
    return;
  }
  const e: SyntaxError = { code, message, span: { start: span.start, end: span.end }, severity: syntaxSeverity(code) };
  if (data) e.data = data;
  ctx.errors.push(e);
}

function reportTextAfterEnd(ctx: Context, from: number): void {
  const { text } = ctx;
  ctx.cardProblems = 0;
  const start = skipBlank(text, Math.min(from, text.length));
  if (start >= text.length) return;
  let end = text.length;
  while (end > start && isBlankOrBreak(text.charCodeAt(end - 1))) end--;
  addError(ctx, 'text-after-end', 'Text after .end is not read; move it above .end or delete it.', { start, end });
}

function isBlankOrBreak(c: number): boolean {
  return isSpace(c) || c === 10 || c === 13;
}

function skipBlank(text: string, i: number): number {
  while (i < text.length && isBlankOrBreak(text.charCodeAt(i))) i++;
  return i;
}

function commentCard(text: string, first: number, end: number, markerLength = 1): CommentCard {
  // The comment text drops its marker (`*`, `;`, `$` or `//`) and surrounding blanks.
  const bodyStart = skipSpace(text, first + markerLength, end);
  let bodyEnd = end;
  while (bodyEnd > bodyStart && isSpace(text.charCodeAt(bodyEnd - 1))) bodyEnd--;
  return { kind: 'comment', span: { start: first, end }, tokens: [], text: text.slice(bodyStart, bodyEnd) };
}

function titleCard(ctx: Context, start: number, end: number): Card {
  const { text } = ctx;
  let bodyStart = skipSpace(text, start, end);
  let bodyEnd = end;
  while (bodyEnd > bodyStart && isSpace(text.charCodeAt(bodyEnd - 1))) bodyEnd--;
  const title = text.slice(bodyStart, bodyEnd);
  if (bodyStart < bodyEnd && titleLooksLikeCard(text, bodyStart, end)) {
    addError(
      ctx,
      'title-looks-like-card',
      `The first line is read as the netlist's title, so '${shorten(title)}' is not read as a card; put a title line above it if it is meant as a card.`,
      { start: bodyStart, end: bodyEnd },
    );
  }
  return { kind: 'title', span: { start, end }, tokens: [], text: title };
}

/**
 * A title reads like a card when it is a known dot card, or an element card with a card-like name that parses cleanly
 * and has a numeric field; not when it is punctuated as prose (a word followed by a comma outside parentheses:
 * "NPN mirror, 5 V rail"), nor when it would be a resistor, capacitor or inductor whose value is a word
 * ("LDO bias 3.3 V", an acronym-led title whose number falls among the nodes).
 */
function titleLooksLikeCard(text: string, first: number, end: number): boolean {
  if (PROSE_COMMA.test(text.slice(first, end).replace(PARENTHESISED, ''))) return false;
  const probe: Context = { text, errors: [], subckts: [], sections: [], topLevel: true, cardProblems: 0, conditions: [], words: new Map(), fields: [], lexemes: new LexemeList() };
  const card = parseGroup(probe, [{ start: first, lineEnd: end }]);
  if (card.kind === 'error' || probe.errors.length > 0) return false;
  if (card.kind === 'other-dot') return false;
  if (card.kind !== 'element') return true;
  // Prose starts with a capitalised word ("Generated ...", "Quick ..."); element names carry a digit
  // (R1, Q12) or are written in capitals (VCC, RLOAD).
  const name = card.name.text;
  if (!/[0-9]/.test(name) && !(name.length >= 2 && name === name.toUpperCase())) return false;
  const letter = name.charCodeAt(0) | 0x20;
  // r, c, l: a value is the card's own field, and a word there is no value.
  if ((letter === 114 || letter === 99 || letter === 108) && !(card.value !== undefined && isNumberLike(card.value))) return false;
  const fields: (Token | undefined)[] = [...card.nodes, card.value, card.area, card.source?.value];
  return fields.some((t) => t !== undefined && isNumberLike(t));
}

/** A word and a comma, then a blank: the punctuation of prose (a card separates its fields by blanks). */
const PROSE_COMMA = /[A-Za-z0-9],\s/;
/** A parenthesised group (a source's PWL points, a model's parameters), where commas separate numbers. */
const PARENTHESISED = /\([^()]*\)/g;

/** Cuts long field text for a message, never between the halves of a surrogate pair. */
function shorten(s: string): string {
  if (s.length <= 60) return s;
  const c = s.charCodeAt(56);
  return s.slice(0, c >= 0xd800 && c <= 0xdbff ? 56 : 57) + '...';
}

// ---------------------------------------------------------------------------
// Lexing

/** Lexes the segments of one card; `path` mode (after `.include`/`.lib`) splits only at blanks so paths keep commas and `=`. */
function lexCard(ctx: Context, segments: Segment[]): LexemeList {
  const out = ctx.lexemes;
  out.reset();
  // A `{...}` expression may continue over `+` lines: it is one lexeme from its `{` to its `}`.
  let open: { start: number; depth: number } | undefined;
  for (let k = 0; k < segments.length; k++) {
    const seg = segments[k]!;
    const more = k < segments.length - 1;
    let from = seg.start;
    if (open) {
      const r = scanBrace(ctx.text, from, seg.lineEnd, open.depth);
      if (r.depth > 0) {
        open.depth = r.depth;
        if (!more) {
          lexBraced(ctx, open.start, seg.lineEnd, out, open.depth);
          open = undefined;
        }
        continue;
      }
      out.add('expr', open.start, r.pos);
      open = undefined;
      from = r.pos;
    }
    open = lexSegment(ctx, from, seg.lineEnd, out, more);
  }
  return out;
}

/** Scans braces from `i` to `to` at nesting `depth`; returns the position after the brace that closes the expression, or the depth left open at `to`. */
function scanBrace(text: string, i: number, to: number, depth: number): { pos: number; depth: number } {
  while (i < to) {
    const d = text.charCodeAt(i);
    if (d === 123) depth++;
    else if (d === 125) {
      depth--;
      if (depth === 0) return { pos: i + 1, depth: 0 };
    }
    i++;
  }
  return { pos: to, depth };
}

/** Lexes one line of a card; returns the start and depth of a `{` left open at its end when a `+` line follows to continue it. */
function lexSegment(ctx: Context, from: number, to: number, out: LexemeList, more: boolean): { start: number; depth: number } | undefined {
  const { text } = ctx;
  let i = from;
  while (i < to) {
    const c = text.charCodeAt(i);
    if (isSpace(c)) {
      i++;
      continue;
    }
    if (c === 59 /* ; */) return undefined;
    if (c === 36 /* $ */ && isCommentDollar(text, i, to)) return undefined;
    if (out.path) {
      if (c === 34 || c === 39) {
        i = lexQuoted(ctx, i, to, c, 'word', out);
        continue;
      }
      const s = i;
      while (i < to) {
        const d = text.charCodeAt(i);
        if (isSpace(d) || d === 59 || (d === 36 && isCommentDollar(text, i, to))) break;
        i++;
      }
      out.add('word', s, i);
      continue;
    }
    if (c === 44 /* , */) {
      i++;
      continue;
    }
    if (c === 61 /* = */) {
      out.add('eq', i, i + 1);
      i++;
      continue;
    }
    if (c === 40 /* ( */) {
      out.add('lp', i, i + 1);
      i++;
      continue;
    }
    if (c === 41 /* ) */) {
      out.add('rp', i, i + 1);
      i++;
      continue;
    }
    if (c === 123 /* { */) {
      if (more) {
        const r = scanBrace(text, i, to, 0);
        if (r.depth > 0) return { start: i, depth: r.depth };
      }
      i = lexBraced(ctx, i, to, out);
      continue;
    }
    if (c === 125 /* } */) {
      addError(ctx, 'unbalanced-brace', "This '}' closes no '{'; delete it or add the matching '{'.", { start: i, end: i + 1 });
      i++;
      continue;
    }
    if (c === 39 /* ' */) {
      i = lexQuoted(ctx, i, to, c, 'expr', out);
      continue;
    }
    if (c === 34 /* " */) {
      i = lexQuoted(ctx, i, to, c, 'word', out);
      continue;
    }
    const s = i;
    while (i < to) {
      const d = text.charCodeAt(i);
      if (isSpace(d) || isWordBreak(d)) break;
      if (d === 36 && isCommentDollar(text, i, to)) break;
      i++;
    }
    // `PARAMS:name=...` glued together: split the keyword off so it is recognised.
    if (i - s > 7 && text.charCodeAt(s + 6) === 58 /* : */ && text.slice(s, s + 7).toUpperCase() === 'PARAMS:') {
      out.add('word', s, s + 7);
      out.add('word', s + 7, i);
    } else {
      out.add('word', s, i);
    }
    if (out.length === 1 && c === 46 /* . */) {
      const cmd = text.slice(s, i).toLowerCase();
      if (cmd === '.include' || cmd === '.inc' || cmd === '.lib') out.path = true;
    }
  }
  return undefined;
}

/** Reads `{...}` with nested braces; an unclosed brace runs to the end of the line and is reported. */
function lexBraced(ctx: Context, i: number, to: number, out: LexemeList, startDepth = 0): number {
  const { text } = ctx;
  const s = i;
  let depth = startDepth;
  if (startDepth > 0) i = to;
  while (i < to) {
    const d = text.charCodeAt(i);
    if (d === 123) depth++;
    else if (d === 125) {
      depth--;
      if (depth === 0) {
        out.add('expr', s, i + 1);
        return i + 1;
      }
    }
    i++;
  }
  let e = to;
  while (e > s + 1 && isSpace(text.charCodeAt(e - 1))) e--;
  addError(
    ctx,
    'unbalanced-brace',
    `This expression opens ${depth === 1 ? "a '{'" : `${depth} '{'`} that ${depth === 1 ? 'is' : 'are'} not closed on this line; add the missing '}'.`,
    { start: s, end: e },
  );
  out.add('expr', s, e);
  return to;
}

function lexQuoted(ctx: Context, i: number, to: number, quote: number, type: 'word' | 'expr', out: LexemeList): number {
  const { text } = ctx;
  const s = i;
  i++;
  while (i < to && text.charCodeAt(i) !== quote) i++;
  if (i < to) {
    out.add(type, s, i + 1);
    return i + 1;
  }
  let e = to;
  while (e > s + 1 && isSpace(text.charCodeAt(e - 1))) e--;
  const q = String.fromCharCode(quote);
  addError(ctx, 'unterminated-quote', `This ${q} is not closed on its line; add the closing ${q}.`, { start: s, end: e });
  out.add(type, s, e);
  return to;
}

// ---------------------------------------------------------------------------
// Cards

/** The token of a word or expression lexeme, made once so a card's fields and its `tokens` share objects. */
function makeToken(text: string, lx: Lexeme): Token {
  if (!lx.token) {
    lx.token = new SpanToken(text.slice(lx.start, lx.end), lx.start, lx.end, lx.type === 'expr' ? 'expr' : 'word');
  }
  return lx.token;
}

/**
 * `makeToken` for a field after a card's first, whose text is taken from `ctx.words` when an earlier field had the
 * same text: node, model and value fields repeat from card to card (a node is written on every card that connects
 * to it), and every card is kept for the whole analysis, so each repeat would otherwise keep a string of its own.
 * A card's first field (its name or dot command) is mostly its own, and is not looked up.
 */
function makeSharedToken(ctx: Context, lx: Lexeme): Token {
  if (!lx.token) {
    const text = sharedText(ctx.words, ctx.text.slice(lx.start, lx.end));
    lx.token = new SpanToken(text, lx.start, lx.end, lx.type === 'expr' ? 'expr' : 'word');
  }
  return lx.token;
}

/**
 * Most texts one parse shares: a netlist of millions of distinct fields keeps its own string for each text past
 * this many, and the table stays far below the most a Map can hold (2^24 entries, past which it throws).
 */
export const MAX_SHARED_TEXTS = 1 << 20;

/** The string `words` holds for `own`'s text, which becomes `own` when it holds none and has room for it. */
export function sharedText(words: Map<string, string>, own: string, limit = MAX_SHARED_TEXTS): string {
  const shared = words.get(own);
  if (shared !== undefined) return shared;
  if (words.size < limit) words.set(own, own);
  return own;
}

function isField(l: Lexeme | undefined): l is Lexeme {
  return l !== undefined && (l.type === 'word' || l.type === 'expr');
}

/** Joins `name = value` into assignments, from lexeme `from` on, and reports `=` without a name or value. */
function buildItems(ctx: Context, lx: LexemeList, from: number): Item[] {
  const { text } = ctx;
  const items: Item[] = [];
  let i = from;
  while (i < lx.length) {
    const l = lx.at(i)!;
    // `TABLE {expr} = (x, y) …`: an expression before `=` and a bracket is a table's input, not a name.
    if (l.type === 'expr' && lx.at(i + 1)?.type === 'eq' && lx.at(i + 2)?.type === 'lp') {
      items.push({ k: 'pos', tok: makeToken(text, l) });
      i += 2;
      continue;
    }
    if (isField(l) && lx.at(i + 1)?.type === 'eq') {
      const name = makeToken(text, l);
      const v = lx.at(i + 2);
      // `W= L=1u`: the word after the `=` is itself a name, so W has no value.
      if (isField(v) && lx.at(i + 3)?.type !== 'eq') {
        const value = makeToken(text, v);
        items.push({ k: 'asg', asg: { name, value, span: { start: l.start, end: v.end } } });
        i += 3;
      } else {
        addError(
          ctx,
          'assignment-missing-value',
          `'${name.text}=' has no value after the '='; write ${name.text}=<value>.`,
          { start: l.start, end: lx.at(i + 1)!.end },
        );
        i += 2;
      }
      continue;
    }
    if (l.type === 'eq') {
      addError(ctx, 'assignment-missing-name', "This '=' has no parameter name before it; write <name>=<value>.", { start: l.start, end: l.end });
      // The field after a nameless `=` is its value, not a field of its own.
      i += isField(lx.at(i + 1)) && lx.at(i + 2)?.type !== 'eq' ? 2 : 1;
      continue;
    }
    if (l.type === 'lp') items.push({ k: 'lp', span: { start: l.start, end: l.end } });
    else if (l.type === 'rp') items.push({ k: 'rp', span: { start: l.start, end: l.end } });
    else items.push({ k: 'pos', tok: makeToken(text, l) });
    i++;
  }
  return items;
}

function checkParentheses(ctx: Context, lx: LexemeList): void {
  const open: Lexeme[] = [];
  for (let i = 0; i < lx.length; i++) {
    const l = lx.at(i)!;
    if (l.type === 'lp') open.push(l);
    else if (l.type === 'rp') {
      if (open.length > 0) open.pop();
      else addError(ctx, 'unbalanced-parenthesis', "This ')' closes no '('; it is ignored.", { start: l.start, end: l.end });
    }
  }
  for (const l of open) {
    addError(ctx, 'unbalanced-parenthesis', "This '(' is never closed in its card; add the matching ')'.", { start: l.start, end: l.end });
  }
}

/** Reads one card from its segments (first line plus continuation lines). */
function parseGroup(ctx: Context, segments: Segment[]): Card {
  const { text } = ctx;
  ctx.cardProblems = 0;
  const first = segments[0];
  const span: Span = { start: first.plus ?? first.start, end: segments[segments.length - 1].lineEnd };
  // Skipped, unknown and expression-bodied dot cards are read before lexing, so their insides raise nothing.
  const special = first.plus === undefined ? readDotHead(ctx, segments, span) : undefined;
  if (special) return special;
  const lx = lexCard(ctx, segments);
  // Gathered in the document's scratch list, then copied: the card keeps its tokens as long as its document, in a
  // list of its own length, and no list grown for one card is left behind.
  const fields = ctx.fields;
  let count = 0;
  for (let k = 0; k < lx.length; k++) {
    const l = lx.at(k)!;
    if (l.type === 'word' || l.type === 'expr') fields[count++] = k === 0 ? makeToken(text, l) : makeSharedToken(ctx, l);
  }
  const tokens = fields.slice(0, count);

  if (first.plus !== undefined) {
    return errorCard(
      ctx,
      'continuation-without-card',
      "Continuation line with no card to continue: a '+' line must follow an element or dot card.",
      span,
      tokens,
      { start: first.plus, end: first.plus + 1 },
    );
  }
  checkParentheses(ctx, lx);
  // The card's first word (its name or dot command) never starts an assignment.
  const head0 = lx.at(0);
  const headIsWord = head0 !== undefined && head0.type === 'word';
  // An element card of fields alone (no `=`, no brackets) of a letter that reads only its positional fields: every field
  // after the name is one, so no items are made for it (most cards of a large netlist: `Q1 c b e model`, `R1 a b 1k`).
  if (headIsWord && lx.punctuation === 0 && readsFieldsOnly(text.charCodeAt(head0.start))) return parseElement(ctx, makeToken(text, head0), undefined, span, tokens);
  const items = buildItems(ctx, lx, headIsWord ? 1 : 0);
  if (!headIsWord) {
    const at = head0 ? { start: head0.start, end: head0.end } : { start: first.start, end: first.lineEnd };
    return errorCard(
      ctx,
      'unrecognised-card',
      `A card starts with an element name (${ELEMENT_LETTER_LIST}), a dot command, '*' for a comment or '+' for a continuation; found '${shorten(text.slice(at.start, at.end))}'.`,
      span,
      tokens,
      at,
    );
  }
  const head = makeToken(text, head0);
  if (head.text.charCodeAt(0) === 46 /* . */) return parseDotCard(ctx, head, items, span, tokens);
  return parseElement(ctx, head, items, span, tokens);
}

/** Every dot command the parser knows, read or skipped, for "did you mean" on a misspelt one. */
const KNOWN_DOT_COMMANDS = [...DOT_COMMANDS, ...SKIPPED_CARDS.keys(), ...SKIPPED_BLOCKS.keys(), ...SKIPPED_BLOCKS.values()];

/** The known dot command a misspelt one most likely means (`.modle` → `.model`), when one is unambiguously close. */
export function nearestDotCard(command: string): string | undefined {
  return nearestName(command, KNOWN_DOT_COMMANDS);
}

/**
 * Reads the dot cards whose fields are not lexed: skipped cards (only their command is kept),
 * unknown dot cards (reported with their command), `.func`, and the `.if` family, whose
 * expressions are taken as written. Returns undefined for every other card.
 */
function readDotHead(ctx: Context, segments: Segment[], span: Span): Card | undefined {
  const { text } = ctx;
  const first = segments[0]!;
  // Asked of every card: no string is made for one that does not start with a dot (most are element cards).
  if (text.charCodeAt(first.start) !== 46 /* . */) return undefined;
  const head = firstWord(text, first.start, first.lineEnd);
  if (head.length < 2) return undefined;
  const cmd = head.toLowerCase();
  const command = wordToken(text, first.start, first.start + head.length);
  const group = SKIPPED_CARDS.get(cmd);
  if (group !== undefined) {
    const card: SkippedCard = { kind: 'skipped', span, tokens: [command], command, group };
    if (group === 'title') {
      const rest = restOfCard(ctx, segments, command.span.end);
      card.text = text.slice(rest.start, rest.end);
    }
    return card;
  }
  if (cmd === '.func') return readFunc(ctx, segments, span, command);
  if (cmd === '.if' || cmd === '.elseif' || cmd === '.else' || cmd === '.endif') return readCondition(ctx, segments, span, command, cmd.slice(1) as ConditionCard['branch']);
  if (DOT_COMMANDS.has(cmd)) return undefined;
  const suggestion = nearestDotCard(cmd);
  addError(
    ctx,
    'dot-card-unknown',
    `${shorten(head)} is not a dot card qpoint reads or knows to skip${suggestion ? ` (did you mean ${suggestion}?)` : ''}; it is skipped, and nothing in it takes part in the analysis.`,
    command.span,
    suggestion ? { command: head, suggestion } : { command: head },
  );
  return { kind: 'other-dot', span, tokens: [command], command };
}

/**
 * The text of a card after `from` up to its end, blanks and a trailing end-of-line comment excluded.
 * Continuation markers inside stay in the text (expression readers blank them).
 */
function restOfCard(ctx: Context, segments: Segment[], from: number): Span {
  const { text } = ctx;
  const last = segments[segments.length - 1]!;
  let end = last.lineEnd;
  // An end-of-line comment on the last line, outside braces and quotes, is not part of the card.
  let depth = 0;
  let quote = 0;
  for (let i = Math.max(last.start, from); i < last.lineEnd; i++) {
    const c = text.charCodeAt(i);
    if (quote !== 0) {
      if (c === quote) quote = 0;
    } else if (c === 39 || c === 34) quote = c;
    else if (c === 123) depth++;
    else if (c === 125) depth = Math.max(0, depth - 1);
    else if (depth === 0 && (c === 59 || (c === 36 && isCommentDollar(text, i, last.lineEnd)))) {
      end = i;
      break;
    }
  }
  let start = from;
  while (start < end && isBlankOrBreak(text.charCodeAt(start))) start++;
  while (end > start && isBlankOrBreak(text.charCodeAt(end - 1))) end--;
  return { start, end };
}

function exprToken(text: string, span: Span): Token {
  return new SpanToken(text.slice(span.start, span.end), span.start, span.end, 'expr');
}

/** `.func name(a, b) = expr`, the `=` optional, the body braced or not. */
function readFunc(ctx: Context, segments: Segment[], span: Span, command: Token): Card {
  const { text } = ctx;
  const rest = restOfCard(ctx, segments, command.span.end);
  const src = text.slice(rest.start, rest.end);
  const m = /^([A-Za-z_][A-Za-z0-9_]*)\s*\(([^()]*)\)\s*=?\s*/.exec(src);
  if (!m) {
    const tokens = [command];
    return errorCard(ctx, 'func-malformed', '.func needs a name, its arguments in parentheses and an expression: .func half(x) = {x/2}.', span, tokens, rest.end > rest.start ? rest : command.span);
  }
  const name = wordToken(text, rest.start, rest.start + m[1]!.length);
  const args: Token[] = [];
  const argsStart = rest.start + src.indexOf('(', m[1]!.length) + 1;
  const re = /[A-Za-z_][A-Za-z0-9_]*/g;
  for (let a = re.exec(m[2]!); a; a = re.exec(m[2]!)) args.push(wordToken(text, argsStart + a.index, argsStart + a.index + a[0].length));
  const bodyStart = rest.start + m[0].length;
  const tokens: Token[] = [command, name, ...args];
  if (bodyStart >= rest.end) {
    addError(ctx, 'func-malformed', `.func ${name.text} has no expression after its arguments; write .func ${name.text}(${args.map((a) => a.text).join(', ')}) = {...}.`, { start: rest.start, end: rest.end });
    return { kind: 'func', span, tokens, name, args };
  }
  const body = exprToken(text, { start: bodyStart, end: rest.end });
  tokens.push(body);
  return { kind: 'func', span, tokens, name, args, body };
}

/** `.if (cond)`, `.elseif (cond)`, `.else`, `.endif`, checked for nesting. */
function readCondition(ctx: Context, segments: Segment[], span: Span, command: Token, branch: ConditionCard['branch']): Card {
  const rest = restOfCard(ctx, segments, command.span.end);
  const card: ConditionCard = { kind: 'condition', span, tokens: [command], branch };
  if (branch === 'if' || branch === 'elseif') {
    if (rest.end > rest.start) {
      card.condition = exprToken(ctx.text, rest);
      card.tokens.push(card.condition);
    } else {
      addError(ctx, 'condition-missing-expression', `${command.text} needs a condition: ${command.text} (name == 1).`, command.span);
    }
  }
  if (branch === 'if') ctx.conditions.push(card);
  else if (ctx.conditions.length === 0) {
    addError(ctx, 'condition-without-if', `${command.text} belongs to no open .if; it is ignored.`, command.span);
  } else if (branch === 'endif') ctx.conditions.pop();
  return card;
}

/** The codes that make a card unreadable; each has severity 'error' in SYNTAX_CODES. */
type ErrorCardCode = {
  [C in SyntaxCode]: (typeof SYNTAX_CODES)[C]['severity'] extends 'error' ? C : never;
}[SyntaxCode];

function errorCard(ctx: Context, code: ErrorCardCode, message: string, span: Span, tokens: Token[], errorSpan: Span): ErrorCard {
  // An error card's own message is always listed, however many problems its line had.
  ctx.errors.push({ code, message, span: { start: errorSpan.start, end: errorSpan.end }, severity: syntaxSeverity(code) });
  return { kind: 'error', span, tokens, message, errorSpan };
}

function unexpected(ctx: Context, owner: string, tok: Token, what: string): void {
  addError(ctx, 'unexpected-field', `${owner}: '${shorten(tok.text)}' is one field more than ${what}; it is ignored.`, tok.span);
}

/** True for a token that reads as a value rather than a name: a number or a braced/quoted expression. */
export function isNumberLike(t: Token): boolean {
  if (t.kind === 'expr') return true;
  const s = t.text;
  let i = 0;
  let c = s.charCodeAt(0);
  if (c === 43 || c === 45) c = s.charCodeAt(++i);
  if (c >= 48 && c <= 57) return true;
  if (c === 46) {
    const d = s.charCodeAt(i + 1);
    return d >= 48 && d <= 57;
  }
  return false;
}

/**
 * True for a token that is a value by its form: an expression, or a number whose scale suffix and
 * unit letters are followed by nothing (`10k`, `2.2uF`, `1e-3`). Part numbers that start with a
 * digit (`2N3904`, `1N4148`, `74HC04`) carry digits after their letters and are names.
 */
function isValueLike(t: Token): boolean {
  if (t.kind === 'expr') return true;
  return /^[+-]?(\d+\.?\d*|\.\d+)([eE][+-]?\d+)?[A-Za-z\u00b5\u03bc\u03a9\u2126]*$/.test(t.text);
}

/** The text of a token without its surrounding quotes (`"a.lib"` → `a.lib`); other tokens are returned as written. */
export function unquote(t: Token): string {
  const s = t.text;
  if (s.length >= 2) {
    const q = s.charCodeAt(0);
    if ((q === 34 || q === 39) && s.charCodeAt(s.length - 1) === q) return s.slice(1, -1);
  }
  return s;
}

function fieldsSpan(name: Token, tokens: Token[]): Span {
  const last = tokens[tokens.length - 1];
  return { start: name.span.start, end: last && last.span.end > name.span.end ? last.span.end : name.span.end };
}

/** What each element letter is called in messages and which fields it needs. */
const ELEMENT_NEEDS: Record<string, { noun: string; needs: string }> = nameTable({
  R: { noun: 'a resistor', needs: 'two nodes and a value' },
  C: { noun: 'a capacitor', needs: 'two nodes and a value' },
  L: { noun: 'an inductor', needs: 'two nodes and a value' },
  V: { noun: 'a voltage source', needs: 'a positive and a negative node' },
  I: { noun: 'a current source', needs: 'two nodes (current flows from the first through the source to the second)' },
  E: { noun: 'a voltage-controlled voltage source', needs: 'two output nodes, two controlling nodes and a gain' },
  G: { noun: 'a voltage-controlled current source', needs: 'two output nodes, two controlling nodes and a transconductance' },
  F: { noun: 'a current-controlled current source', needs: 'two output nodes, the name of the controlling voltage source and a gain' },
  H: { noun: 'a current-controlled voltage source', needs: 'two output nodes, the name of the controlling voltage source and a transresistance' },
  D: { noun: 'a diode', needs: 'anode and cathode nodes and a model name' },
  Q: { noun: 'a bipolar transistor', needs: 'collector, base and emitter nodes and a model name' },
  M: { noun: 'a MOSFET', needs: 'drain, gate, source and bulk nodes and a model name' },
  X: { noun: 'a subcircuit instance', needs: 'its nodes and the subcircuit name' },
  J: { noun: 'a junction FET', needs: 'drain, gate and source nodes and a model name' },
  Z: { noun: 'a MESFET', needs: 'drain, gate and source nodes and a model name' },
  S: { noun: 'a voltage-controlled switch', needs: 'two switch nodes, two controlling nodes and a model name' },
  W: { noun: 'a current-controlled switch', needs: 'two switch nodes, the controlling voltage source and a model name' },
  B: { noun: 'a behavioural source', needs: 'two nodes and V={...} or I={...}' },
  K: { noun: 'an inductor coupling', needs: 'at least two inductor names and a coupling coefficient' },
  T: { noun: 'a transmission line', needs: 'four nodes' },
  O: { noun: 'a lossy transmission line', needs: 'four nodes and a model name' },
  P: { noun: 'a coupled multiconductor line', needs: 'its nodes and a model name' },
  Y: { noun: 'a transmission-line element', needs: 'its nodes' },
  U: { noun: 'a digital or distributed element', needs: 'its nodes and a model name' },
  A: { noun: 'a mixed-signal (code model) element', needs: 'its connections and a model name' },
  N: { noun: 'a model-defined device', needs: 'its nodes and a model name' },
});


/**
 * Whether an element card starting with the character `c` reads only its positional fields and assignments (not the
 * items in their order: the sources, the controlled sources and subcircuit instances do), and is not a dot card.
 */
function readsFieldsOnly(c: number): boolean {
  const L = c | 0x20;
  return L >= 97 && L <= 122 && L !== 101 /* e */ && L !== 103 /* g */ && L !== 102 /* f */ && L !== 104 /* h */ && L !== 118 /* v */ && L !== 105 /* i */ && L !== 120 /* x */;
}

/**
 * An element card from its name and the items after it; `items` undefined for a card `readsFieldsOnly` takes whose
 * fields are all positional (its tokens after the name).
 */
function parseElement(ctx: Context, name: Token, given: Item[] | undefined, span: Span, tokens: Token[]): Card {
  // Without items only for the letters `readsFieldsOnly` takes, which read `pos` and `asgs` below and never `items`.
  const items = given ?? NO_ITEMS;
  const c0 = name.text.charCodeAt(0) | 0x20;
  if (!(c0 >= 97 && c0 <= 122)) {
    return errorCard(
      ctx,
      'unrecognised-card',
      `A card starts with an element name (${ELEMENT_LETTER_LIST}), a dot command, '*' for a comment or '+' for a continuation; found '${shorten(name.text)}'.`,
      span,
      tokens,
      name.span,
    );
  }
  const L = name.text.charAt(0).toUpperCase() as ElementLetter;
  const owner = name.text;
  const need = ELEMENT_NEEDS[L];
  const card: ElementCard = new ParsedElementCard(L, name, span, tokens);

  // Unsupported forms are recognised first so the message names them instead of counting fields.
  // Only fields after the two output nodes count, and a keyword counts only when written as a form
  // (`POLY(2)`, `VALUE={...}`, `TABLE {...}`), so nodes may still be called `freq` or `am`.
  const controlled = L === 'E' || L === 'G' || L === 'F' || L === 'H';
  if (controlled || L === 'V' || L === 'I') {
    let nodesSeen = 0;
    for (let j = 0; j < items.length; j++) {
      const it = items[j];
      if (it.k === 'pos' && nodesSeen < 2) {
        nodesSeen++;
        continue;
      }
      if (nodesSeen < 2) continue;
      const nx = items[j + 1];
      const word =
        it.k === 'pos' && it.tok.kind === 'word' && (nx?.k === 'lp' || (nx?.k === 'pos' && nx.tok.kind === 'expr'))
          ? it.tok.text.toUpperCase()
          : it.k === 'asg'
            ? it.asg.name.text.toUpperCase()
            : '';
      if (controlled && BEHAVIOUR_WORDS.has(word)) return behaviouralSource(card, items, j, word, span, tokens);
      if (!UNSUPPORTED_SOURCE_WORDS.has(word)) continue;
      const at = it.k === 'pos' ? it.tok.span : it.k === 'asg' ? it.asg.span : span;
      const shown = it.k === 'asg' ? `${word}=` : items[j + 1]?.k === 'lp' ? `${word}(...)` : word;
      return errorCard(
        ctx,
        'unsupported-source-form',
        `${owner}: the ${shown} form is not supported; ${need.noun} is read as ${sourceExpectation(L)}.`,
        span,
        tokens,
        at,
      );
    }
  }

  const pos: Token[] = given ? [] : tokens.slice(1);
  const asgs: Assignment[] = [];
  if (given) {
    for (const it of given) {
      if (it.k === 'pos') pos.push(it.tok);
      else if (it.k === 'asg') asgs.push(it.asg);
    }
  }

  switch (L) {
    case 'R':
    case 'C':
    case 'L': {
      // `R1 a b R=1k`: the value may be given as an assignment named after the letter.
      const valueAsg = asgs.find((a) => a.name.text.toUpperCase() === L);
      if (pos.length < 2 || (pos.length < 3 && !valueAsg)) return missingFields(ctx, name, need, asgs.length, span, tokens, pos.length);
      card.nodes = pos.slice(0, 2);
      const rest = pos.slice(2);
      let used = 0;
      if (L === 'R' && rest.length >= 2) {
        const a = rest[0];
        const b = rest[1];
        if (isValueLike(a) !== isValueLike(b)) {
          card.value = isValueLike(a) ? a : b;
          card.model = isValueLike(a) ? b : a;
          used = 2;
        } else {
          card.value = a;
          used = 1;
        }
      } else if (rest.length >= 1) {
        if (L === 'R' && !isValueLike(rest[0]) && (asgs.length > 0 || valueAsg)) card.model = rest[0];
        else card.value = rest[0];
        used = 1;
      }
      if (!card.value && valueAsg) card.value = valueAsg.value;
      // `TC=a,b` gives both temperature coefficients; the second is read as TC2.
      const tc = L === 'R' ? asgs.find((a) => a.name.text.toUpperCase() === 'TC') : undefined;
      let leftover = rest.slice(used);
      if (tc) {
        const second = leftover.find((t) => t.span.start > tc.value.span.end && isNumberLike(t) && /^[\s,]*$/.test(ctx.text.slice(tc.value.span.end, t.span.start)));
        if (second) {
          asgs.push({ name: { text: 'TC2', span: second.span, kind: 'word' }, value: second, span: { start: tc.span.start, end: second.span.end } });
          leftover = leftover.filter((t) => t !== second);
        }
      }
      for (const t of leftover) unexpected(ctx, owner, t, `${need.noun} uses`);
      card.params = keptAssignments(asgs.filter((a) => a !== valueAsg || card.value !== a.value));
      return card;
    }
    case 'V':
    case 'I': {
      if (pos.length < 2) return missingFields(ctx, name, need, asgs.length, span, tokens, pos.length);
      card.nodes = pos.slice(0, 2);
      // Source fields follow the second node.
      let start = 0;
      let seen = 0;
      while (start < items.length) {
        const it = items[start++];
        if (it.k === 'pos' && ++seen === 2) break;
      }
      const result = parseSource(ctx, owner, L, items.slice(start), span, tokens);
      if ('kind' in result) return result;
      card.source = result.source;
      card.params = keptAssignments(result.params);
      return card;
    }
    case 'E':
    case 'G': {
      if (pos.length < 5) return missingFields(ctx, name, need, asgs.length, span, tokens, pos.length);
      card.nodes = pos.slice(0, 4);
      card.value = pos[4];
      for (const t of pos.slice(5)) unexpected(ctx, owner, t, `${need.noun} uses`);
      card.params = keptAssignments(asgs);
      return card;
    }
    case 'F':
    case 'H': {
      if (pos.length < 4) return missingFields(ctx, name, need, asgs.length, span, tokens, pos.length);
      card.nodes = pos.slice(0, 2);
      card.control = pos[2];
      card.value = pos[3];
      for (const t of pos.slice(4)) unexpected(ctx, owner, t, `${need.noun} uses`);
      card.params = keptAssignments(asgs);
      return card;
    }
    case 'D': {
      const kept = dropOff(ctx, owner, pos, 2);
      if (kept.length < 3) return missingFields(ctx, name, need, asgs.length, span, tokens, kept.length);
      card.nodes = kept.slice(0, 2);
      card.model = kept[2];
      if (isValueLike(card.model)) {
        return errorCard(
          ctx,
          'missing-model-name',
          `${owner}: ${need.noun} needs ${need.needs}; the third field '${shorten(card.model.text)}' is a number, not a model name.`,
          span,
          tokens,
          card.model.span,
        );
      }
      const rest = kept.slice(3);
      if (rest.length > 0 && isNumberLike(rest[0])) card.area = rest.shift();
      for (const t of rest) unexpected(ctx, owner, t, `${need.noun} uses`);
      card.params = keptAssignments(asgs);
      return card;
    }
    case 'Q': {
      const kept = dropOff(ctx, owner, pos, 3);
      if (kept.length < 4) return missingFields(ctx, name, need, asgs.length, span, tokens, kept.length);
      // The fields after the emitter are kept[3..]: read in place, no lists made for them.
      let m = -1;
      for (let j = kept.length - 1; j >= 3; j--) {
        if (!isValueLike(kept[j])) {
          m = j;
          break;
        }
      }
      if (m < 0) {
        return errorCard(
          ctx,
          'missing-model-name',
          `${owner}: ${need.noun} needs ${need.needs}; none of the fields after the emitter node '${shorten(kept[2].text)}' is a model name (a model name starts with a letter).`,
          span,
          tokens,
          { start: kept[3].span.start, end: kept[kept.length - 1].span.end },
        );
      }
      // A substrate node is the first field after the emitter when the model name comes later.
      card.nodes = kept.slice(0, m >= 4 ? 4 : 3);
      for (let j = 4; j < m; j++) unexpected(ctx, owner, kept[j], `${need.noun} uses (collector, base, emitter, substrate)`);
      card.model = kept[m];
      if (m + 1 < kept.length) card.area = kept[m + 1];
      for (let j = m + 2; j < kept.length; j++) unexpected(ctx, owner, kept[j], `${need.noun} uses`);
      card.params = keptAssignments(asgs);
      return card;
    }
    case 'M': {
      const kept = dropOff(ctx, owner, pos, 4);
      if (kept.length < 5) return missingFields(ctx, name, need, asgs.length, span, tokens, kept.length);
      card.nodes = kept.slice(0, 4);
      card.model = kept[4];
      if (isValueLike(card.model)) {
        return errorCard(
          ctx,
          'missing-model-name',
          `${owner}: ${need.noun} needs ${need.needs}; the fifth field '${shorten(card.model.text)}' is a number, not a model name.`,
          span,
          tokens,
          card.model.span,
        );
      }
      for (const t of kept.slice(5)) unexpected(ctx, owner, t, `${need.noun} uses (write sizes as W= and L=)`);
      card.params = keptAssignments(asgs);
      return card;
    }
    case 'X': {
      const before: Token[] = [];
      let boundary = false;
      for (const it of items) {
        if (it.k === 'asg') boundary = true;
        else if (it.k === 'pos') {
          if (it.tok.text.toUpperCase() === 'PARAMS:') boundary = true;
          else if (!boundary) before.push(it.tok);
          else unexpected(ctx, owner, it.tok, 'an instance takes after its parameters');
        }
      }
      if (before.length < 1) return missingFields(ctx, name, need, asgs.length, span, tokens, 0);
      card.subckt = before[before.length - 1];
      card.nodes = before.slice(0, -1);
      card.params = keptAssignments(asgs);
      return card;
    }
    // J is solved; Z and the letters below are read into cards for a later solver, and the elaborator leaves them out of the circuit.
    case 'J':
    case 'Z': {
      const kept = dropOff(ctx, owner, pos, 3);
      if (kept.length < 4) return missingFields(ctx, name, need, asgs.length, span, tokens, kept.length);
      card.nodes = kept.slice(0, 3);
      card.model = kept[3];
      const rest = kept.slice(4);
      if (rest.length > 0 && isNumberLike(rest[0]!)) card.area = rest.shift();
      for (const t of rest) unexpected(ctx, owner, t, `${need.noun} uses`);
      card.params = keptAssignments(asgs);
      return card;
    }
    case 'S':
    case 'W': {
      const nodeCount = L === 'S' ? 4 : 2;
      const kept = pos.filter((t, j) => !(j > nodeCount && t.kind === 'word' && /^(on|off)$/i.test(t.text)));
      const need2 = L === 'S' ? 5 : 4;
      if (kept.length < need2) return missingFields(ctx, name, need, asgs.length, span, tokens, kept.length);
      card.nodes = kept.slice(0, nodeCount);
      if (L === 'W') card.control = kept[2];
      card.model = kept[need2 - 1];
      for (const t of kept.slice(need2)) unexpected(ctx, owner, t, `${need.noun} uses`);
      card.params = keptAssignments(asgs);
      return card;
    }
    case 'B': {
      const expr = asgs.find((a) => /^[vi]$/i.test(a.name.text));
      if (pos.length < 2 || !expr) return missingFields(ctx, name, need, asgs.length, span, tokens, pos.length);
      card.nodes = pos.slice(0, 2);
      card.value = expr.value;
      card.params = keptAssignments(asgs);
      return card;
    }
    case 'K': {
      if (pos.length < 3) return missingFields(ctx, name, need, asgs.length, span, tokens, pos.length);
      card.coupled = pos.slice(0, -1);
      card.value = pos[pos.length - 1];
      card.params = keptAssignments(asgs);
      return card;
    }
    case 'T':
    case 'Y': {
      if (pos.length < 2) return missingFields(ctx, name, need, asgs.length, span, tokens, pos.length);
      card.nodes = pos;
      card.params = keptAssignments(asgs);
      return card;
    }
    case 'O':
    case 'P':
    case 'U':
    case 'A':
    case 'N': {
      if (pos.length < 2) return missingFields(ctx, name, need, asgs.length, span, tokens, pos.length);
      card.nodes = pos.slice(0, -1);
      card.model = pos[pos.length - 1];
      card.params = keptAssignments(asgs);
      return card;
    }
  }
  return card;
}

/** The card of an element with too few fields (a function, not a closure made for every element card). */
function missingFields(ctx: Context, name: Token, need: { noun: string; needs: string }, assignments: number, span: Span, tokens: Token[], found: number): Card {
  const extra = assignments > 0 ? ` and ${assignments} name=value parameter${assignments === 1 ? '' : 's'}` : '';
  return errorCard(
    ctx,
    'element-missing-fields',
    `${name.text}: ${need.noun} needs ${need.needs}; found ${found} field${found === 1 ? '' : 's'}${extra}.`,
    span,
    tokens,
    fieldsSpan(name, tokens),
  );
}

/**
 * A controlled source written in a behavioural form (`E1 out 0 VALUE={...}`, `G1 a b POLY(2) ...`):
 * its two output nodes and the form's fields from its keyword on, kept for a later solver.
 */
function behaviouralSource(card: ElementCard, items: readonly Item[], at: number, form: string, span: Span, tokens: Token[]): ElementCard {
  const nodes: Token[] = [];
  for (let j = 0; j < at && nodes.length < 2; j++) {
    const it = items[j]!;
    if (it.k === 'pos') nodes.push(it.tok);
  }
  card.nodes = nodes;
  const it = items[at]!;
  const keyword = it.k === 'pos' ? it.tok : it.k === 'asg' ? it.asg.name : undefined;
  const fields: Token[] = [];
  for (let j = at; j < items.length; j++) {
    const f = items[j]!;
    if (f.k === 'pos') fields.push(f.tok);
    else if (f.k === 'asg') fields.push(f.asg.name, f.asg.value);
  }
  const start = keyword ? keyword.span.start : span.start;
  card.behaviour = { form, keyword: keyword ?? card.name, fields, span: { start, end: Math.max(start, span.end) } };
  void tokens;
  return card;
}

function sourceExpectation(L: string): string {
  if (L === 'E' || L === 'G') return 'two output nodes, two controlling nodes and a constant gain';
  if (L === 'F' || L === 'H') return 'two output nodes, a controlling voltage source name and a constant gain';
  return 'two nodes and DC <value>, a bare <value>, or PULSE(...), SIN(...), EXP(...) or PWL(...) for its t=0 value';
}

/** Removes the initial-condition keyword OFF after the nodes and notes that a DC bias analysis ignores it. */
function dropOff(ctx: Context, owner: string, pos: Token[], nodeCount: number): Token[] {
  // Most cards have no OFF: the list itself, not a copy (callers only read it).
  let off = false;
  for (let j = nodeCount + 1; j < pos.length && !off; j++) off = pos[j].kind === 'word' && pos[j].text.toUpperCase() === 'OFF';
  if (!off) return pos;
  const kept: Token[] = [];
  for (let j = 0; j < pos.length; j++) {
    const t = pos[j];
    if (j > nodeCount && t.kind === 'word' && t.text.toUpperCase() === 'OFF') {
      addError(ctx, 'ignored-keyword', `${owner}: 'OFF' only sets a starting guess, which a DC bias analysis does not use; it is ignored.`, t.span);
      continue;
    }
    kept.push(t);
  }
  return kept;
}

/** Reads the fields after a V or I source's nodes: DC value, bare value, transient function, AC part. */
function parseSource(
  ctx: Context,
  owner: string,
  L: string,
  items: Item[],
  span: Span,
  tokens: Token[],
): { source: SourceValue; params: Assignment[] } | ErrorCard {
  let dc: Token | undefined;
  let dcKeyword = false;
  let bare: Token | undefined;
  let transient: { fn: Token; value?: Token } | undefined;
  /** An AC or other analysis specification was given: without a DC value, the DC value is 0. */
  let otherSpec = false;
  const params: Assignment[] = [];
  const isKeyword = (t: Token): boolean => {
    const u = t.text.toUpperCase();
    return t.kind === 'word' && (u === 'DC' || u === 'AC' || TRANSIENT_VALUE_ARGUMENT.has(u));
  };
  let j = 0;
  while (j < items.length) {
    const it = items[j++];
    if (it.k === 'asg') {
      if (it.asg.name.text.toUpperCase() === 'DC' && !dc) {
        dc = it.asg.value;
        dcKeyword = true;
      } else params.push(it.asg);
      continue;
    }
    if (it.k !== 'pos') continue;
    const t = it.tok;
    const u = t.kind === 'word' ? t.text.toUpperCase() : '';
    if (u === 'DC') {
      const nx = items[j];
      if (nx?.k === 'pos' && !isKeyword(nx.tok)) {
        if (dc) unexpected(ctx, owner, nx.tok, 'a source uses (its DC value is already given)');
        else dc = nx.tok;
        j++;
      } else if (!dc) {
        addError(ctx, 'source-missing-value', `${owner}: 'DC' needs a value after it (DC 5).`, t.span);
      }
      dcKeyword = true;
      continue;
    }
    if (u === 'AC') {
      otherSpec = true;
      // AC magnitude and phase do not affect the DC bias point.
      for (let k = 0; k < 2 && items[j]?.k === 'pos' && isNumberLike((items[j] as { tok: Token }).tok); k++) j++;
      continue;
    }
    const valueArgument = TRANSIENT_VALUE_ARGUMENT.get(u);
    if (valueArgument !== undefined) {
      const args: Token[] = [];
      if (items[j]?.k === 'lp') {
        // One parenthesised argument list, or several groups in a row (`PWL (0,0) (1u,5)`).
        while (items[j]?.k === 'lp') {
          let depth = 0;
          while (j < items.length) {
            const a = items[j++];
            if (a.k === 'lp') depth++;
            else if (a.k === 'rp') {
              depth--;
              if (depth === 0) break;
            } else if (a.k === 'pos') args.push(a.tok);
          }
        }
      } else {
        while (items[j]?.k === 'pos' && isNumberLike((items[j] as { tok: Token }).tok)) args.push((items[j++] as { tok: Token }).tok);
      }
      const idx = valueArgument;
      if (u === 'PWL' && args.length > 0 && !isNumberLike(args[0])) {
        return errorCard(
          ctx,
          'unsupported-source-form',
          `${owner}: PWL reads its points from the card only ('${shorten(args[0].text)}' is not a time); ${L === 'V' ? 'a voltage' : 'a current'} source is read as ${sourceExpectation(L)}.`,
          span,
          tokens,
          args[0].span,
        );
      }
      if (transient) {
        unexpected(ctx, owner, t, 'a source uses (it already has a transient function)');
        continue;
      }
      transient = { fn: t, value: args[idx] };
      if (!args[idx]) {
        const what = u === 'PWL' ? 'a first (time, value) pair' : 'a first argument';
        addError(ctx, 'source-missing-value', `${owner}: ${t.text}(...) needs ${what} to give the source's value at t=0.`, t.span);
      }
      continue;
    }
    if (t.kind === 'word' && items[j]?.k === 'lp') {
      // Another transient or noise function (`TRNOISE(...)`, `AM(...)`): it does not set the DC value.
      let depth = 0;
      while (j < items.length) {
        const a = items[j++]!;
        if (a.k === 'lp') depth++;
        else if (a.k === 'rp' && --depth === 0) break;
      }
      otherSpec = true;
      continue;
    }
    if (!bare && !dc) bare = t;
    else unexpected(ctx, owner, t, 'a source uses (its DC value is already given)');
  }
  if (dc && bare) {
    addError(
      ctx,
      'unexpected-field',
      `${owner}: '${shorten(bare.text)}' and DC ${shorten(dc.text)} both give the DC value; DC ${shorten(dc.text)} is used and '${shorten(bare.text)}' is ignored.`,
      bare.span,
    );
  }
  let source: SourceValue;
  if (dc || dcKeyword) source = { form: 'dc', value: dc };
  else if (bare) source = { form: 'bare', value: bare };
  else if (transient) source = { form: 'transient', value: transient.value, function: transient.fn };
  else source = { form: otherSpec ? 'none' : 'bare' };
  if (source.value === undefined) delete source.value;
  return { source, params };
}

// ---------------------------------------------------------------------------
// Dot cards

function parseDotCard(ctx: Context, command: Token, items: Item[], span: Span, tokens: Token[]): Card {
  const cmd = command.text.toLowerCase();
  const pos: Token[] = [];
  const asgs: Assignment[] = [];
  for (const it of items) {
    if (it.k === 'pos') pos.push(it.tok);
    else if (it.k === 'asg') asgs.push(it.asg);
  }
  const noAssignments = (what: string): void => {
    for (const a of asgs) {
      addError(ctx, 'unexpected-field', `${command.text}: '${shorten(a.name.text)}=...' is one field more than ${what}; it is ignored.`, a.span);
    }
  };
  switch (cmd) {
    case '.model': {
      if (pos.length < 2) {
        return errorCard(
          ctx,
          'model-missing-fields',
          `.model needs a model name and a device type (NPN, PNP, D, NMOS, PMOS); found ${pos.length} field${pos.length === 1 ? '' : 's'}.`,
          span,
          tokens,
          fieldsSpan(command, tokens),
        );
      }
      for (const t of pos.slice(2)) {
        addError(
          ctx,
          'assignment-missing-value',
          `.model ${shorten(pos[0].text)}: parameter '${shorten(t.text)}' has no value; write ${shorten(t.text)}=<value>.`,
          t.span,
        );
      }
      return { kind: 'model', span, tokens, name: pos[0], type: pos[1], params: asgs };
    }
    case '.param': {
      for (const t of pos) {
        addError(ctx, 'param-missing-assignment', `.param: '${shorten(t.text)}' has no value; write ${shorten(t.text)}=<value>.`, t.span);
      }
      if (tokens.length === 1) {
        addError(ctx, 'param-missing-assignment', '.param has no assignments; write .param name=value.', command.span);
      }
      return { kind: 'param', span, tokens, params: asgs };
    }
    case '.subckt': {
      if (pos.length < 1) {
        return errorCard(ctx, 'subckt-missing-name', '.subckt needs a subcircuit name, then its port nodes.', span, tokens, command.span);
      }
      const ports: Token[] = [];
      let boundary = false;
      for (const it of items) {
        if (it.k === 'asg') boundary = true;
        else if (it.k === 'pos') {
          if (it.tok.text.toUpperCase() === 'PARAMS:') boundary = true;
          else if (!boundary) ports.push(it.tok);
          else unexpected(ctx, command.text, it.tok, 'a subcircuit header takes after its parameters');
        }
      }
      if (ports.length === 0) {
        return errorCard(ctx, 'subckt-missing-name', '.subckt needs a subcircuit name before its parameters.', span, tokens, command.span);
      }
      const card: SubcktCard = { kind: 'subckt', span, tokens, name: ports[0], ports: ports.slice(1), params: asgs };
      ctx.subckts.push(card);
      return card;
    }
    case '.ends': {
      noAssignments('.ends takes');
      for (const t of pos.slice(1)) unexpected(ctx, command.text, t, '.ends takes');
      const open = ctx.subckts.pop();
      const name = pos[0];
      if (!open) {
        addError(ctx, 'ends-without-subckt', '.ends closes no subcircuit: there is no open .subckt before it.', name ? { start: command.span.start, end: name.span.end } : command.span);
      } else if (name && name.text.toLowerCase() !== open.name.text.toLowerCase()) {
        addError(
          ctx,
          'ends-name-mismatch',
          `.ends names '${shorten(name.text)}' but closes subcircuit '${shorten(open.name.text)}'.`,
          name.span,
        );
      }
      return name ? { kind: 'ends', span, tokens, name } : { kind: 'ends', span, tokens };
    }
    case '.include':
    case '.inc': {
      for (const t of pos.slice(1)) unexpected(ctx, command.text, t, `${command.text} takes (quote a path that holds spaces)`);
      if (!pos[0]) {
        addError(ctx, 'include-missing-path', `${command.text} needs the path of the file to read.`, command.span);
        return { kind: 'include', span, tokens };
      }
      return { kind: 'include', span, tokens, path: pos[0] };
    }
    case '.lib': {
      for (const t of pos.slice(2)) unexpected(ctx, command.text, t, '.lib takes (a path and a section name)');
      if (pos.length === 0) {
        addError(ctx, 'lib-missing-fields', '.lib needs a library path and a section name, or (inside a library file) a section name.', command.span);
        return { kind: 'lib', span, tokens };
      }
      if (pos.length === 1) {
        const q = pos[0].text.charCodeAt(0);
        // A lone quoted field is a path (the whole library), and so is a lone field in a top-level
        // netlist; a lone bare word inside a library file starts a section.
        if (q === 34 || q === 39 || ctx.topLevel) return { kind: 'lib', span, tokens, path: pos[0] };
        const card: LibCard = { kind: 'lib', span, tokens, section: pos[0] };
        ctx.sections.push(card);
        return card;
      }
      return { kind: 'lib', span, tokens, path: pos[0], section: pos[1] };
    }
    case '.endl': {
      for (const t of pos.slice(1)) unexpected(ctx, command.text, t, '.endl takes');
      const open = ctx.sections.pop();
      if (!open) {
        addError(ctx, 'endl-without-lib-section', '.endl closes no library section: there is no open .lib section before it.', pos[0] ? { start: command.span.start, end: pos[0].span.end } : command.span);
      } else if (pos[0] && open.section && pos[0].text.toLowerCase() !== open.section.text.toLowerCase()) {
        addError(ctx, 'endl-name-mismatch', `.endl names '${shorten(pos[0].text)}' but closes library section '${shorten(open.section.text)}'.`, pos[0].span);
      }
      return pos[0] ? { kind: 'endl', span, tokens, section: pos[0] } : { kind: 'endl', span, tokens };
    }
    case '.temp': {
      noAssignments('.temp takes (write temperatures in °C: .temp 27 85)');
      if (pos.length === 0) addError(ctx, 'temp-missing-value', '.temp needs at least one temperature in °C (.temp 27).', command.span);
      return { kind: 'temp', span, tokens, values: pos };
    }
    case '.global':
      noAssignments('.global takes (node names)');
      return { kind: 'global', span, tokens, nodes: pos };
    case '.option':
    case '.options':
    case '.opt':
      return { kind: 'option', span, tokens, params: asgs, flags: pos };
    case '.op':
      for (const t of pos) unexpected(ctx, command.text, t, '.op takes');
      noAssignments('.op takes');
      return { kind: 'op', span, tokens };
    case '.end':
      for (const t of pos) unexpected(ctx, command.text, t, '.end takes');
      noAssignments('.end takes');
      return { kind: 'end', span, tokens };
    default:
      if (cmd.length < 2) {
        return errorCard(ctx, 'unrecognised-card', "A dot card needs its command right after the dot (.model, .param, .subckt, ...).", span, tokens, command.span);
      }
      return { kind: 'other-dot', span, tokens, command };
  }
}

/** Dot cards that, written on the first line, make a file a model or library file. */
const LIBRARY_FIRST_CARDS = new Set(['.subckt', '.model', '.lib', '.param', '.include', '.inc', '.func', '.global', '.option', '.options', '.if']);

/**
 * True when `text` is a model or library file rather than a netlist with a title: its first line
 * (after a byte-order mark and blanks) is a `.subckt`, `.model`, `.lib`, `.param`, include or
 * similar definition card, which no one writes as a title.
 */
export function startsWithDefinitionCard(text: string): boolean {
  let end = 0;
  while (end < text.length) {
    const c = text.charCodeAt(end);
    if (c === 10 || c === 13) break;
    end++;
  }
  const first = skipSpace(text, 0, end);
  if (text.charCodeAt(first) !== 46) return false;
  return LIBRARY_FIRST_CARDS.has(firstWord(text, first, end).toLowerCase());
}

/** True when `word` (any case) is one of the dot commands this parser interprets. */
export function isKnownDotCommand(word: string): boolean {
  return DOT_COMMANDS.has(word.toLowerCase());
}
