// Target currents written as netlist comments: reading them, and checking the bias point against them.

/*
 * TARGET NOTATION
 *
 * A target says which DC current an element should carry. It lives inside a netlist comment,
 * so any other netlist reader skips it. The comment's first word is `expect` (any case).
 *
 * Two places:
 *
 *   1. At the end of an element card, for that element:
 *
 *        Q2 out bias 0 qn   ; expect 1mA ±5%
 *        R1 vcc bias 8.2k   $ expect 1.1mA +-2%
 *
 *   2. On a comment line of its own, naming the element:
 *
 *        * expect Q2 = 1mA ±5%
 *        * expect X1.Q3 = 250uA
 *
 *      Inside a .subckt definition the name is the local one (Q3), and the target applies to
 *      every instance of that subcircuit.
 *
 * Grammar (spaces are optional between the parts, except after `expect`):
 *
 *   annotation  := "expect" SPACE [ element "=" ] current [ tolerance ] [ corner-clause ]
 *   element     := an element name as written; hierarchical names with "." are allowed
 *   current     := a netlist number, optionally followed by the unit letter A:
 *                  1mA, 250u, 1.2e-3, 0.5 mA
 *   tolerance   := ( "±" | "+-" | "+/-" ) number "%"
 *   corner-clause := "corners" tolerance
 *
 * A comment whose first word is `expect` but which holds neither a digit nor `=` is prose and is
 * ignored. Near misses are read as meant when nothing else can be meant: `Expect:`, `expected` or
 * `expects` for the keyword, up to two words before it (`* Q2 expect 1mA` names Q2; `; bias: expect
 * 1mA` is the card's), a name and a current without `=` (`* expect Q2 1mA`), a tolerance without
 * its `%` (`±5` is ±5 %). A near miss whose current does not read is prose ("expected 0.7V at the
 * base") and is left alone; one that fails after its current gets `target-unreadable` with the
 * notation to write. The element is required on a comment line of its own and must be left out at the end of a
 * card. The current is a magnitude (the direction is the device's own): a BJT's collector
 * current, a MOSFET's drain current, a diode's forward current, a resistor's or source's current.
 * The tolerance defaults to the chosen resistor series' tolerance (E24: ±5 %). The corner clause
 * sets how far the current may move across supply, temperature and beta corners; without it the
 * corners are checked against the nominal tolerance and reported as information only.
 *
 * What is reported:
 *   target-unreadable       the annotation cannot be read (located on the part that is wrong)
 *   target-not-applicable   no such element, or one without a DC current (capacitor, X instance)
 *   target-missed           nominal current outside the tolerance: a warning, an error beyond
 *                           three times the tolerance; the fix offers standard values for the
 *                           resistor that sets the current (reference or Widlar emitter resistor)
 *   target-missed-at-corner nominal on target, some corner outside (only for elements of a
 *                           recognised mirror: its outputs, reference device and resistors)
 *
 * Examples:
 *   * expect QOUT = 2mA ±10% corners ±25%
 *   R2 e2 0 1.2k ; expect 100uA
 */

import type { Circuit, Element, Resistor } from '../circuit';
import { railsByIndex } from '../structures/rails';
import { topologyOf, type Attachment, type Topology, type Transistor } from '../structures/topology';
import type { ResolvedOptions } from '../analysis';
import { parseNumber, splitSuffix } from '../elaborate/units';
import { seriesTolerance } from '../fixes/e-series';
import { NOISE_FLOOR, formatEngineering, formatPercent } from '../fixes/format';
import type { OperatingPoint } from '../solve/types';
import type { Structure } from '../structures/types';
import type { Card, ElementCard, ParsedDocument } from '../syntax/ast';
import type { Finding, Severity, Span } from '../types';

/** Finding codes this module owns, with their default severity and a one-line summary for the README. */
export const TARGET_CODES: Record<string, { severity: Severity; summary: string }> = {
  'target-unreadable': {
    severity: 'warning',
    summary: 'An `expect` comment could not be read as a target current; the message says which part is wrong.',
  },
  'target-not-applicable': {
    severity: 'warning',
    summary: 'A target names no element of the circuit, or an element that carries no DC current of its own.',
  },
  'target-missed': {
    severity: 'warning',
    summary: 'At the nominal bias point an element’s current misses its target by more than the tolerance (an error beyond three times the tolerance).',
  },
  'target-missed-at-corner': {
    severity: 'info',
    summary: 'An element meets its target at nominal but leaves the tolerance at a supply/temperature/beta corner (a warning when the target gives its own corner tolerance).',
  },
};

/** What an annotation applies to: an element by (possibly hierarchical) name, or the element card it sits on. */
export type TargetSubject =
  | { kind: 'name'; name: string; nameSpan: Span }
  | { kind: 'card'; name: string; cardSpan: Span };

/** One target read from the netlist text. */
export interface Target {
  /** Document of the annotation. */
  uri: string;
  /** The annotation text from `expect` to the end of the comment. */
  span: Span;
  /** The current's text. */
  currentSpan: Span;
  subject: TargetSubject;
  /** Target current magnitude, amperes (> 0). */
  current: number;
  /** Relative tolerance (0.05 for ±5 %) when the annotation gives one. */
  tolerance?: number;
  /** Relative tolerance over the corners when the annotation gives one. */
  cornerTolerance?: number;
}

const MINUS_LIKE = /^(±|\+\/-|\+-)/;

/** Element letters whose current a target can name. */
const CURRENT_CARRIERS = new Set(['R', 'L', 'V', 'I', 'E', 'F', 'G', 'H', 'B', 'D', 'Q', 'M', 'J', 'S', 'W']);

interface Parsed {
  target?: Omit<Target, 'uri' | 'span' | 'subject'> & { name?: string; nameSpan?: Span };
  problem?: { message: string; span: Span };
  /** The problem lies after a readable current (a tolerance or trailing text): the comment was meant as a target. */
  late?: boolean;
}

/**
 * Reads one annotation body. `text` starts right after `expect` and its whitespace; `base`
 * is its offset in the document. `named` says whether an element name is required.
 */
function parseAnnotation(text: string, base: number, named: boolean, whole: Span): Parsed {
  let i = 0;
  const skip = (): void => {
    while (i < text.length && /\s/.test(text[i])) i++;
  };
  // At least one character where the text has one, never past its end (typing `; expect 1mA ±` at the end of a file).
  const at = (start: number, end: number): Span => {
    const hi = text.length;
    const e = Math.min(Math.max(end, start + 1), hi);
    const s = Math.max(0, Math.min(start, e > 0 ? e - 1 : 0));
    return { start: base + s, end: base + e };
  };
  const example = named ? '`* expect Q2 = 1mA ±5%`' : '`; expect 1mA ±5%`';

  let name: string | undefined;
  let nameSpan: Span | undefined;
  const eq = text.indexOf('=');
  if (named && eq < 0) {
    // `expect Q2 1mA`: an element name and then a number cannot mean anything else.
    const bare = /^\s*([A-Za-z][^\s=()]*)\s+(?=[+-]?(?:\d|\.\d))/.exec(text);
    if (!bare) {
      return { problem: { message: `A target on a comment line of its own names the element and its current, as in ${example}; this one has no \`=\`.`, span: whole } };
    }
    name = bare[1];
    const s0 = bare[0].indexOf(bare[1]!);
    nameSpan = at(s0, s0 + bare[1]!.length);
    i = bare[0].length;
  } else if (named) {
    const rawName = text.slice(0, eq);
    const trimmedName = rawName.trim();
    if (!/^[A-Za-z][^\s=()]*$/.test(trimmedName)) {
      const s = rawName.length - rawName.trimStart().length;
      return {
        problem: {
          message: trimmedName === ''
            ? `The target names no element before \`=\`; write it as ${example}.`
            : `\`${trimmedName}\` is not an element name; an element name starts with its letter (R, Q, M, D, V, I …), as in ${example}.`,
          span: at(s, s + Math.max(trimmedName.length, 1)),
        },
      };
    }
    const s = rawName.length - rawName.trimStart().length;
    name = trimmedName;
    nameSpan = at(s, s + trimmedName.length);
    i = eq + 1;
  } else if (eq >= 0 && /^[A-Za-z][^\s=]*\s*=/.test(text)) {
    return {
      problem: {
        message: 'A target at the end of an element card applies to that element, so it names no element; write it as `; expect 1mA ±5%`.',
        span: at(0, eq + 1),
      },
    };
  }

  skip();
  // The current: a number, then (after optional space) its suffix and unit letters.
  const m = /^([+-]?(?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?)(\s*)([A-Za-zµμ]*(?:\d[\w.]*)?)/.exec(text.slice(i));
  if (!m || m[1] === '') {
    const word = /^\S*/.exec(text.slice(i))![0];
    return {
      problem: {
        message: word === ''
          ? `The target gives no current; write it as ${example}.`
          : `\`${word}\` is not a current; a target current is a number with an optional suffix and the unit A, such as 1mA or 250u.`,
        span: at(i, i + Math.max(word.length, 1)),
      },
    };
  }
  const currentStart = i;
  const numberText = m[1] + m[3];
  const currentEnd = i + m[0].length;
  const read = parseNumber(numberText);
  if (!read.ok) return { problem: { message: read.message, span: at(currentStart, currentEnd) } };
  // A letter run that is a unit of another quantity (1mV, 2kOhm) means the annotation is not a current.
  const unit = splitSuffix(m[3]).unit;
  if (unit !== '' && unit.toLowerCase() !== 'a') {
    return {
      problem: {
        message: `A target is a current in amperes, but \`${numberText}\` ends in the unit \`${unit}\`; write it as, for example, 1mA.`,
        span: at(currentStart, currentEnd),
      },
    };
  }
  if (!(read.value > 0)) {
    return {
      problem: {
        message: `A target current must be a positive magnitude (the direction is the element’s own), but \`${numberText}\` is ${read.value === 0 ? 'zero' : 'negative'}.`,
        span: at(currentStart, currentEnd),
      },
    };
  }
  if (read.value < NOISE_FLOOR.A) {
    // Currents below the floor read ≈ 0 A, and the relative error of a subnormal target overflows to ∞.
    return {
      problem: {
        message: `A target current of \`${numberText}\` is below the ${formatEngineering(NOISE_FLOOR.A, { unit: 'A', style: 'display' })} floor that solved currents are resolved to, so it cannot be checked.`,
        span: at(currentStart, currentEnd),
      },
    };
  }
  i = currentEnd;

  const readTolerance = (what: string): { value?: number; problem?: Parsed['problem'] } => {
    skip();
    const rest = text.slice(i);
    const sign = MINUS_LIKE.exec(rest);
    if (!sign) {
      const word = /^\S*/.exec(rest)![0];
      return { problem: { message: `${what} starts with ± (or +- or +/-), as in ±5%; \`${word}\` does not.`, span: at(i, i + Math.max(word.length, 1)) } };
    }
    const start = i;
    i += sign[0].length;
    skip();
    const num = /^(\d+\.?\d*|\.\d+)(\s*)(%?)/.exec(text.slice(i));
    if (!num) {
      const word = /^\S*/.exec(text.slice(i))![0];
      return { problem: { message: `${what} needs a number of percent after ±, as in ±5%; \`${word}\` is not one.`, span: at(start, i + Math.max(word.length, 1)) } };
    }
    // A tolerance is always in percent, so `±5` without its sign reads as ±5 % (the notation's near miss, read as meant).
    i += num[0].length;
    const pct = Number(num[1]);
    if (!(pct > 0 && pct < 100)) {
      return { problem: { message: `${what} must lie between 0 % and 100 % (exclusive); ±${num[1]}% does not.`, span: at(start, i) } };
    }
    return { value: pct / 100 };
  };

  let tolerance: number | undefined;
  let cornerTolerance: number | undefined;
  skip();
  if (MINUS_LIKE.test(text.slice(i))) {
    const t = readTolerance('A target tolerance');
    if (t.problem) return { problem: t.problem, late: true };
    tolerance = t.value;
  }
  skip();
  const cornerWord = /^corners\b/i.exec(text.slice(i));
  if (cornerWord) {
    i += cornerWord[0].length;
    const t = readTolerance('The corner tolerance');
    if (t.problem) return { problem: t.problem, late: true };
    cornerTolerance = t.value;
  }
  skip();
  if (i < text.length) {
    const word = text.slice(i).trimEnd();
    return {
      late: true,
      problem: {
        message: `The target ends with \`${word.length > 30 ? word.slice(0, 27) + '…' : word}\`, which it cannot read; after the current come only an optional tolerance (±5%) and an optional corner tolerance (corners ±20%).`,
        span: at(i, i + word.length),
      },
    };
  }
  return {
    target: {
      name,
      nameSpan,
      current: read.value,
      currentSpan: at(currentStart, currentEnd),
      tolerance,
      cornerTolerance,
    },
  };
}

/** Where an annotation sits in a comment body, and how closely it follows the notation. */
interface AnnotationSite {
  /** Offset just after the keyword (and its colon and spaces). */
  after: number;
  /** From the keyword to the end of the comment. */
  span: Span;
  /** `expect` as the comment's first word: the notation as documented. */
  exact: boolean;
  /** The keyword as written (`Expect:`, `expected`). */
  keyword: string;
  /** A single word before the keyword (`Q2 expect 1mA`), when there is one. */
  leading?: { text: string; span: Span };
}

/** The comment words that start a target: `expect` as documented, and the near misses `Expect:`, `expected`, `expects`. */
const KEYWORD = /^expect(?:ed|s)?:?$/i;

/**
 * The annotation inside a comment body, if the comment holds one: `expect` as its first word
 * (the notation), or a near miss — the keyword with a colon or as `expected`, or after one or two
 * words of text (`Q2 expect 1mA`, `bias: expect 1mA`). A prose comment, with neither a digit
 * nor `=` after the keyword, holds none.
 */
function annotationIn(text: string, bodyStart: number, bodyEnd: number): AnnotationSite | undefined {
  const body = text.slice(bodyStart, bodyEnd);
  const words = /(\S+)/g;
  let m: RegExpExecArray | null;
  const before: { text: string; start: number }[] = [];
  while ((m = words.exec(body)) && before.length <= 2) {
    if (KEYWORD.test(m[1]!)) {
      const keyword = m[1]!;
      const after = m.index + keyword.length + (/^\s*/.exec(body.slice(m.index + keyword.length))![0].length);
      if (!/[\d=]/.test(body.slice(after))) return undefined;
      const exact = before.length === 0 && keyword.toLowerCase() === 'expect';
      let end = bodyEnd;
      while (end > bodyStart + m.index && /\s/.test(text[end - 1]!)) end--;
      const lead = before.length === 1 ? before[0]! : undefined;
      return {
        after: bodyStart + after,
        span: { start: bodyStart + m.index, end },
        exact,
        keyword,
        ...(lead ? { leading: { text: lead.text, span: { start: bodyStart + lead.start, end: bodyStart + lead.start + lead.text.length } } } : {}),
      };
    }
    before.push({ text: m[1]!, start: m.index });
  }
  return undefined;
}

/** End-of-line comments of an element card: each `;` or `$ ` outside the card's tokens, to the end of its line. */
export function endOfLineComments(text: string, card: ElementCard): { start: number; end: number }[] {
  const out: { start: number; end: number }[] = [];
  // Most cards hold neither mark: one pass over the card's text before the tokens are sorted.
  if (!hasCommentMark(text, card.span.start, card.span.end)) return out;
  const tokens = [...card.tokens].sort((a, b) => a.span.start - b.span.start);
  let t = 0;
  for (let p = card.span.start; p < card.span.end; p++) {
    while (t < tokens.length && tokens[t].span.end <= p) t++;
    if (t < tokens.length && tokens[t].span.start <= p && p < tokens[t].span.end) {
      p = tokens[t].span.end - 1;
      continue;
    }
    const c = text[p];
    const isComment = c === ';' || (c === '$' && (p + 1 >= text.length || /\s/.test(text[p + 1])));
    if (!isComment) continue;
    let end = p + 1;
    while (end < text.length && text[end] !== '\n' && text[end] !== '\r') end++;
    out.push({ start: p + 1, end });
    p = end;
  }
  return out;
}

/**
 * The `;` and `$` of a text, found with the native search as cards are read in text order: each stretch of text
 * between marks is searched once, where a card-by-card scan read every character of 20,000 cards for every edit.
 */
class CommentMarks {
  /** The first `;` and `$` at or after the last `from` asked (the text's length when there is none). */
  private semicolon = -1;
  private dollar = -1;

  constructor(private readonly text: string) {}

  /** Whether `[from, to)` holds a mark; `from` must not decrease from one call to the next. */
  within(from: number, to: number): boolean {
    if (this.semicolon < from) this.semicolon = this.next(';', from);
    if (this.dollar < from) this.dollar = this.next('$', from);
    return this.semicolon < to || this.dollar < to;
  }

  private next(mark: string, from: number): number {
    const at = this.text.indexOf(mark, from);
    return at < 0 ? this.text.length : at;
  }
}

/** Whether `text` holds a `;` or a `$` in `[from, to)`. */
function hasCommentMark(text: string, from: number, to: number): boolean {
  for (let p = from; p < to; p++) {
    const c = text.charCodeAt(p);
    if (c === 59 || c === 36) return true;
  }
  return false;
}

/**
 * Reads every target annotation of every document. Malformed annotations give a located
 * `target-unreadable` finding; a standalone annotation inside a `.subckt` whose element is not
 * defined there gives `target-not-applicable`. Never throws.
 */
export function readTargets(documents: Record<string, ParsedDocument>): { targets: Target[]; findings: Finding[] } {
  const targets: Target[] = [];
  const findings: Finding[] = [];
  for (const uri of Object.keys(documents).sort()) {
    const doc = documents[uri];
    const text = doc.text;
    // Element cards per .subckt definition, for standalone annotations inside one.
    const stack: { name: string; cards: ElementCard[]; pending: { target: Target; local: string }[] }[] = [];
    const close = (frame: (typeof stack)[number]): void => {
      for (const { target, local } of frame.pending) {
        const card = frame.cards.find((c) => c.name.text.toLowerCase() === local.toLowerCase());
        if (card) {
          targets.push({ ...target, subject: { kind: 'card', name: card.name.text, cardSpan: card.span } });
        } else {
          findings.push({
            code: 'target-not-applicable',
            severity: TARGET_CODES['target-not-applicable'].severity,
            message: `The target names ${local}, but subcircuit ${frame.name} defines no element of that name.`,
            uri,
            span: target.subject.kind === 'name' ? target.subject.nameSpan : target.span,
            data: { element: local, subcircuit: frame.name },
          });
        }
      }
    };

    const handle = (bodyStart: number, bodyEnd: number, card: ElementCard | undefined): void => {
      const found = annotationIn(text, bodyStart, bodyEnd);
      if (!found) return;
      const rest = text.slice(found.after, found.span.end);
      // `* Q2 expect 1mA`: a lone element name before the keyword names the element.
      const leadName = !card && found.leading && !rest.includes('=') && /^[A-Za-z][^\s=():]*$/.test(found.leading.text) ? found.leading : undefined;
      const result = parseAnnotation(rest, found.after, card === undefined && !leadName, found.span);
      if (leadName && result.target) {
        result.target.name = leadName.text;
        result.target.nameSpan = leadName.span;
      }
      if (result.problem || !result.target) {
        // A near miss of the notation whose current does not read is prose ("expected 0.7V at the base"), not a target.
        if (!found.exact && !result.late) return;
        const hint = found.exact
          ? ''
          : ` It reads as a target because of \`${found.keyword}\`; the notation is ${card ? '`; expect 1mA ±5%`' : '`* expect Q2 = 1mA ±5%`'}.`;
        findings.push({
          code: 'target-unreadable',
          severity: TARGET_CODES['target-unreadable'].severity,
          message: (result.problem?.message ?? 'The target could not be read.') + hint,
          uri,
          span: result.problem?.span ?? found.span,
          data: { annotation: text.slice(found.span.start, found.span.end) },
        });
        return;
      }
      const t = result.target;
      const base = { uri, span: found.span, currentSpan: t.currentSpan, current: t.current, tolerance: t.tolerance, cornerTolerance: t.cornerTolerance };
      if (card) {
        if (card.letter === 'X' || card.letter === 'C' || !CURRENT_CARRIERS.has(card.letter)) {
          findings.push({
            code: 'target-not-applicable',
            severity: TARGET_CODES['target-not-applicable'].severity,
            message: card.letter === 'X'
              ? `A target on the subcircuit instance ${card.name.text} does not say which device it means; put a comment line such as \`* expect ${card.name.text}.Q1 = 1mA\` instead.`
              : card.letter === 'C'
                ? `${card.name.text} is a capacitor, which carries no DC current, so it cannot have a target current.`
                : `${card.name.text} is not an element whose one DC current qpoint reports (targets name a resistor, source, diode, transistor, behavioural source or switch), so it cannot have a target current.`,
            uri,
            span: found.span,
            data: { element: card.name.text },
          });
          return;
        }
        targets.push({ ...base, subject: { kind: 'card', name: card.name.text, cardSpan: card.span } });
        return;
      }
      const pending: Target = { ...base, subject: { kind: 'name', name: t.name!, nameSpan: t.nameSpan! } };
      const frame = stack[stack.length - 1];
      if (frame) frame.pending.push({ target: pending, local: t.name! });
      else targets.push(pending);
    };

    const cards: Card[] = doc.cards;
    const marks = new CommentMarks(text);
    for (const card of cards) {
      if (card.kind === 'subckt') {
        stack.push({ name: card.name.text, cards: [], pending: [] });
      } else if (card.kind === 'ends') {
        const frame = stack.pop();
        if (frame) close(frame);
      } else if (card.kind === 'comment') {
        const star = text.indexOf('*', card.span.start);
        const bodyStart = star >= 0 && star < card.span.end ? star + 1 : card.span.start;
        handle(bodyStart, card.span.end, undefined);
      } else if (card.kind === 'element') {
        stack[stack.length - 1]?.cards.push(card);
        if (marks.within(card.span.start, card.span.end)) for (const c of endOfLineComments(text, card)) handle(c.start, c.end, card);
      }
    }
    // An unterminated .subckt still gets its annotations resolved.
    while (stack.length > 0) close(stack.pop()!);
  }
  targets.sort((a, b) => (a.uri < b.uri ? -1 : a.uri > b.uri ? 1 : a.span.start - b.span.start));
  return { targets, findings };
}

/** The elements a target applies to: by hierarchical name, or every flattened copy of its card. */
export function targetElements(circuit: Circuit, target: Target, index: TargetIndex = new TargetIndex(circuit, [])): Element[] {
  if (target.subject.kind === 'name') return index.byName.get(target.subject.name.toLowerCase()) ?? [];
  return index.byCard.get(target.uri)?.get(target.subject.cardSpan.start) ?? [];
}

const targetIndexes = new WeakMap<Structure[], { circuit: Circuit; count: number; index: TargetIndex }>();

/**
 * The target index of a circuit and its list of structures, built once per list: the target check,
 * the spread analysis's target outputs and the yield check all read it (each pass costs a walk over
 * every element and structure). A list of another length or another circuit gets a fresh index.
 */
export function targetIndexOf(circuit: Circuit, structures: Structure[]): TargetIndex {
  const kept = targetIndexes.get(structures);
  if (kept && kept.circuit === circuit && kept.count === structures.length) return kept.index;
  const index = new TargetIndex(circuit, structures);
  targetIndexes.set(structures, { circuit, count: structures.length, index });
  return index;
}

/**
 * Look-up tables for the target checks, built once per check so that each target costs a few map
 * look-ups instead of scans over every element and structure (thousands of targets on large arrays).
 */
export class TargetIndex {
  /** Lower-case element name -> elements (one, unless names clash). */
  readonly byName = new Map<string, Element[]>();
  /** Document id -> card start offset -> the elements elaborated from that card (one per subcircuit instance). */
  readonly byCard = new Map<string, Map<number, Element[]>>();
  /** Lower-case element name -> its structure role (first structure wins, as in a scan in order). */
  readonly roles = new Map<string, TargetRole>();
  /** Lower-case resistor name -> its Widlar emitter role. */
  readonly degenerations = new Map<string, TargetRole>();
  /** Lower-case resistor name -> the structure output it is the only load of. */
  readonly loads = new Map<string, Element>();

  constructor(circuit: Circuit, structures: Structure[]) {
    const push = <K>(m: Map<K, Element[]>, k: K, e: Element): void => {
      const list = m.get(k);
      if (list) list.push(e);
      else m.set(k, [e]);
    };
    for (const e of circuit.elements) {
      push(this.byName, e.name.toLowerCase(), e);
      let cards = this.byCard.get(e.origin.uri);
      if (!cards) this.byCard.set(e.origin.uri, (cards = new Map()));
      push(cards, e.origin.span.start, e);
    }
    // Within one structure: outputs, then the reference device, then the reference resistors.
    for (const st of structures) {
      const add = (name: string, role: TargetRole): void => {
        const k = name.toLowerCase();
        if (!this.roles.has(k)) this.roles.set(k, role);
      };
      const local = new Map<string, TargetRole>();
      for (const o of st.outputs) if (!local.has(o.device.toLowerCase())) local.set(o.device.toLowerCase(), { structure: st, role: 'output', output: o.device });
      if (!local.has(st.reference.device.toLowerCase())) local.set(st.reference.device.toLowerCase(), { structure: st, role: 'reference-device' });
      if (st.reference.feed === 'resistor') {
        for (const r of st.reference.elements) if (!local.has(r.toLowerCase())) local.set(r.toLowerCase(), { structure: st, role: 'reference-resistor' });
      }
      for (const [k, role] of local) add(k, role);
      for (const o of st.outputs) {
        const r = o.degeneration?.resistor.toLowerCase();
        if (r && !this.degenerations.has(r)) this.degenerations.set(r, { structure: st, role: 'degeneration-resistor', output: o.device });
        const t = topologyOf(circuit).byName.get(o.device);
        const load = t ? loadResistorOf(circuit, topologyOf(circuit), t) : undefined;
        if (load && t && !this.loads.has(load.resistor.name.toLowerCase())) this.loads.set(load.resistor.name.toLowerCase(), t.element);
      }
    }
  }
}

/** The DC current magnitude an element carries at an operating point, when the point has it. */
export function solvedCurrent(op: OperatingPoint, element: string): number | undefined {
  const rec = op.devices[element];
  if (!rec) return undefined;
  const value = rec.type === 'bjt' ? rec.ic : rec.type === 'mosfet' || rec.type === 'jfet' ? rec.id : rec.type === 'diode' ? rec.id : rec.current;
  return Number.isFinite(value) ? Math.abs(value) : undefined;
}

/** How an element takes part in a structure, for estimates, corners and sizing. */
export interface TargetRole {
  structure: Structure;
  role: 'output' | 'reference-device' | 'reference-resistor' | 'degeneration-resistor';
  /** For `output` and `degeneration-resistor`: the output device concerned. */
  output?: string;
}

/** The structure role of an element: an output device, the reference device, a resistor of the reference chain, or a Widlar emitter resistor. */
export function structureRole(circuit: Circuit, structures: Structure[], element: Element, index?: TargetIndex): TargetRole | undefined {
  const name = element.name.toLowerCase();
  if (index) return index.roles.get(name) ?? (element.kind === 'R' ? index.degenerations.get(name) : undefined);
  for (const s of structures) {
    const out = s.outputs.find((o) => o.device.toLowerCase() === name);
    if (out) return { structure: s, role: 'output', output: out.device };
    if (s.reference.device.toLowerCase() === name) return { structure: s, role: 'reference-device' };
    if (s.reference.feed === 'resistor' && s.reference.elements.some((e) => e.toLowerCase() === name)) {
      return { structure: s, role: 'reference-resistor' };
    }
  }
  if (element.kind === 'R') {
    for (const s of structures) {
      const out = s.outputs.find((o) => o.degeneration?.resistor.toLowerCase() === name);
      if (out) return { structure: s, role: 'degeneration-resistor', output: out.device };
    }
  }
  return undefined;
}

/** The emitter (source) resistor of one output of a Widlar source, as the recogniser recorded it. */
export function degenerationResistor(s: Structure, output: string | undefined): string | undefined {
  const want = output?.toLowerCase();
  return s.outputs.find((o) => o.device.toLowerCase() === want)?.degeneration?.resistor;
}

/**
 * The resistor a sizing fix would change to move an element's current, and the structure it acts
 * through: the resistor that really sets that current, never an output's load.
 * - A Widlar output (its own emitter or source resistor, none on the reference): that resistor.
 * - Any other output, the reference device or a reference resistor: the reference resistor (the
 *   largest of the chain) — for a degenerated mirror too, whose shared reference resistor keeps the
 *   resistor ratio (changing one output's resistor would break a 1:1 match). A reference fed
 *   through diodes or other junctions in series is walked to its rail for the resistor.
 * - The load resistor of a structure output: its current is the output's, so the output's knob.
 * - Any other resistor: itself (Ohm's law).
 */
export function sizingKnob(circuit: Circuit, structures: Structure[], element: Element, index?: TargetIndex): { resistor: string; structureId?: string } | undefined {
  const role = structureRole(circuit, structures, element, index);
  if (role) {
    const s = role.structure;
    const widlar = !s.reference.degeneration;
    if (role.role === 'degeneration-resistor' && widlar) return { resistor: element.name, structureId: s.id };
    if (role.role === 'output' && widlar) {
      const r2 = degenerationResistor(s, role.output);
      if (r2) return { resistor: r2, structureId: s.id };
    }
    const reference = referenceKnob(circuit, s, index);
    if (reference) return { resistor: reference, structureId: s.id };
    if (role.role === 'degeneration-resistor') return { resistor: element.name, structureId: s.id };
  }
  if (element.kind === 'R') {
    const loaded = loadedOutput(circuit, structures, element, index);
    if (loaded) {
      const knob = sizingKnob(circuit, structures, loaded, index);
      if (knob && knob.resistor.toLowerCase() !== element.name.toLowerCase()) return knob;
    }
    return { resistor: element.name };
  }
  return undefined;
}

/** The resistor that sets a structure's reference current: the largest of its resistor chain, or of the series chain from its reference node to a rail. */
function referenceKnob(circuit: Circuit, s: Structure, index?: TargetIndex): string | undefined {
  const byName = (n: string) => (index ? index.byName.get(n.toLowerCase())?.[0] : circuit.elements.find((e) => e.name.toLowerCase() === n.toLowerCase()));
  let chain: Resistor[] = [];
  if (s.reference.feed === 'resistor' && s.reference.elements.length > 0) {
    chain = s.reference.elements.map(byName).filter((e): e is Resistor => !!e && e.kind === 'R');
  } else if (s.reference.feed === 'other') {
    chain = seriesResistorsToRail(circuit, s);
  }
  // The largest resistor of the chain sets the current; changing it moves the current most.
  return chain.sort((a, b) => b.resistance - a.resistance)[0]?.name;
}

/**
 * The resistors met walking from a structure's reference node away from the structure through
 * elements in series (resistors, diodes, inductors), when the walk reaches a rail: the reference
 * branch of `R — D — diode-connected device`, whose feed the recogniser calls `other`.
 */
function seriesResistorsToRail(circuit: Circuit, s: Structure): Resistor[] {
  const topo = topologyOf(circuit);
  const rails = railsByIndex(circuit);
  const members = new Set(s.devices.map((d) => d.toLowerCase()));
  const start = topo.nodeIndex.get(s.reference.node);
  if (start === undefined) return [];
  let node: number = start;
  const found: Resistor[] = [];
  let prev: Element | undefined;
  for (let step = 0; step < 32; step++) {
    if (rails.has(node)) return found;
    const next: Attachment[] = topo.conducting(node).filter((a) => a.element !== prev && !members.has(a.element.name.toLowerCase()) && !((a.element.kind === 'Q' || a.element.kind === 'M') && a.slot === 1));
    if (next.length !== 1) return [];
    const e: Element = next[0]!.element;
    if (e.kind !== 'R' && e.kind !== 'D' && e.kind !== 'L') return [];
    if (e.kind === 'R') found.push(e);
    node = e.nodes[next[0]!.slot === 0 ? 1 : 0]!;
    prev = e;
  }
  return [];
}

/** The single resistor from an output node to a rail, when the node's load is just that (and the rail it goes to). */
export function loadResistorOf(circuit: Circuit, topo: Topology, t: Transistor): { resistor: Resistor; railV: number } | undefined {
  const rails = railsByIndex(circuit);
  const atts = topo.conducting(t.out).filter((a) => a.element !== t.element && a.element.kind === 'R');
  if (atts.length !== 1) return undefined;
  const r = atts[0]!.element as Resistor;
  const other = r.nodes[0] === t.out ? r.nodes[1]! : r.nodes[0]!;
  const rail = rails.get(other);
  return rail ? { resistor: r, railV: rail.volts } : undefined;
}

/** The structure output a resistor is the only load of (its current is then the output's), if any. */
function loadedOutput(circuit: Circuit, structures: Structure[], r: Element, index?: TargetIndex): Element | undefined {
  if (index) return index.loads.get(r.name.toLowerCase());
  const topo = topologyOf(circuit);
  for (const s of structures) {
    for (const o of s.outputs) {
      const t = topo.byName.get(o.device);
      if (t && loadResistorOf(circuit, topo, t)?.resistor === r) return t.element;
    }
  }
  return undefined;
}

/** The estimate of an element's current from its structure's hand analysis, when there is one. */
function estimatedCurrent(role: TargetRole | undefined, element: Element): number | undefined {
  const est = role?.structure.estimate;
  if (!est || !role) return undefined;
  let v: number | undefined;
  if (role.role === 'output') v = est.iout[element.name] ?? findCaseless(est.iout, element.name);
  else if (role.role === 'degeneration-resistor') v = role.output !== undefined ? est.iout[role.output] : undefined;
  else if (role.role === 'reference-device') {
    // The reference device's own collector (drain) current is a matched output's current divided by its ratio;
    // IREF also carries the base currents.
    const o = role.structure.outputs[0];
    const iout = o ? est.iout[o.device] : undefined;
    v = o && iout !== undefined && o.ratio > 0 && role.structure.kind === 'simple-mirror' ? iout / o.ratio : est.iref;
  } else v = est.iref;
  return v !== undefined && Number.isFinite(v) ? Math.abs(v) : undefined;
}

function findCaseless(map: Record<string, number>, key: string): number | undefined {
  const k = Object.keys(map).find((x) => x.toLowerCase() === key.toLowerCase());
  return k === undefined ? undefined : map[k];
}

/** Context for `checkTargets`: the circuit, its nominal point (if solved), structures (with corners filled when they ran). */
export interface TargetCheckContext {
  circuit: Circuit;
  op?: OperatingPoint;
  structures: Structure[];
  targets: Target[];
  options: ResolvedOptions;
  /**
   * Which findings to return: `nominal` only the nominal ones (target-unreadable excepted, which
   * `readTargets` gives), `corners` only `target-missed-at-corner` (for a host that solves the
   * corners in a second pass), `all` both (the default).
   */
  findings?: 'all' | 'nominal' | 'corners';
}

const fmtA = (v: number): string => formatEngineering(v, { unit: 'A' });
const fmtTol = (t: number): string => `±${formatPercentPlain(t)}`;
function formatPercentPlain(t: number): string {
  return `${Number((t * 100).toPrecision(3))} %`;
}

/**
 * Checks every target at the nominal point (`target-missed`) and at the corners recorded on the
 * structures (`target-missed-at-corner`). The current compared is the solved one when the
 * operating point converged, else the hand estimate; the message gives both when both exist.
 * The finding's data carries what a resistor-sizing fix needs: `{ element, target, tolerance,
 * measured, resistor?, structureId?, series }`.
 */
export function checkTargets(ctx: TargetCheckContext): Finding[] {
  const { circuit, op, structures, targets, options } = ctx;
  const want = ctx.findings ?? 'all';
  const nominalWanted = want !== 'corners';
  const findings: Finding[] = [];
  // The index costs a pass over every element and structure: a netlist without targets skips it.
  if (targets.length === 0) return findings;
  const defaultTolerance = seriesTolerance(options.resistorSeries);
  const index = targetIndexOf(circuit, structures);
  for (const target of targets) {
    const elements = targetElements(circuit, target, index);
    if (elements.length === 0) {
      if (target.subject.kind === 'name' && nominalWanted) {
        findings.push({
          code: 'target-not-applicable',
          severity: TARGET_CODES['target-not-applicable'].severity,
          message: `The target names ${target.subject.name}, but the circuit has no element of that name (subcircuit devices are named through their instance, as in X1.Q2).`,
          uri: target.uri,
          span: target.subject.nameSpan,
          data: { element: target.subject.name },
        });
      }
      // A card-attached target inside a subcircuit that is never instantiated applies to nothing, which is not a mistake.
      continue;
    }
    const tolerance = target.tolerance ?? defaultTolerance;
    for (const element of elements) {
      if (element.kind === 'C') {
        if (nominalWanted) findings.push({
          code: 'target-not-applicable',
          severity: TARGET_CODES['target-not-applicable'].severity,
          message: `${element.name} is a capacitor, which carries no DC current, so it cannot have a target current.`,
          uri: target.uri,
          span: target.span,
          data: { element: element.name },
        });
        continue;
      }
      const role = structureRole(circuit, structures, element, index);
      const estimate = estimatedCurrent(role, element);
      const solved = op && op.converged ? solvedCurrent(op, element.name) : undefined;
      const measured = solved ?? estimate;
      if (measured === undefined) continue;
      const error = measured / target.current - 1;
      const knob = sizingKnob(circuit, structures, element, index);
      const data: Record<string, unknown> = {
        element: element.name,
        target: target.current,
        tolerance,
        measured,
        source: solved !== undefined ? 'operating-point' : 'hand-estimate',
        error,
        series: options.resistorSeries,
      };
      if (estimate !== undefined) data['estimate'] = estimate;
      if (solved !== undefined) data['solved'] = solved;
      if (knob) {
        data['resistor'] = knob.resistor;
        if (knob.structureId) data['structureId'] = knob.structureId;
      }

      if (Math.abs(error) > tolerance) {
        const both =
          solved !== undefined && estimate !== undefined
            ? `${fmtA(solved)} at the operating point (hand estimate ${fmtA(estimate)})`
            : solved !== undefined
              ? `${fmtA(solved)} at the operating point`
              : `${fmtA(estimate!)} by hand estimate (the operating point did not converge)`;
        const fixHint = knob ? ` ${knob.resistor} sets it.` : '';
        if (nominalWanted) findings.push({
          code: 'target-missed',
          severity: Math.abs(error) > 3 * tolerance ? 'error' : TARGET_CODES['target-missed'].severity,
          message: `${element.name} carries ${both}, ${formatPercent(error)} from its target of ${fmtA(target.current)} ${fmtTol(tolerance)}.${fixHint}`,
          uri: target.uri,
          span: target.span,
          data,
        });
        continue;
      }

      // Corners: only for elements a structure measures, and only when nominal is on target.
      if (!role || want === 'nominal') continue;
      const cornerTol = target.cornerTolerance ?? tolerance;
      let worst: { label: string; current: number; error: number } | undefined;
      let misses = 0;
      let counted = 0;
      for (const c of role.structure.corners) {
        if (!c.converged) continue;
        const i = cornerCurrent(c.iout, c.iref, role, element.name);
        if (i === undefined) continue;
        counted++;
        const e = i / target.current - 1;
        if (Math.abs(e) > cornerTol) {
          misses++;
          if (!worst || Math.abs(e) > Math.abs(worst.error)) worst = { label: c.label, current: i, error: e };
        }
      }
      if (worst) {
        findings.push({
          code: 'target-missed-at-corner',
          severity: target.cornerTolerance !== undefined ? 'warning' : TARGET_CODES['target-missed-at-corner'].severity,
          message: `${element.name} meets its target of ${fmtA(target.current)} ${fmtTol(tolerance)} at nominal but leaves ${fmtTol(cornerTol)} at ${misses} of ${counted} corners; the worst is ${worst.label}, with ${fmtA(worst.current)} (${formatPercent(worst.error)}).`,
          uri: target.uri,
          span: target.span,
          data: { ...data, cornerTolerance: cornerTol, corner: worst.label, cornerCurrent: worst.current, cornerError: worst.error, cornersMissed: misses, cornersChecked: counted },
        });
      }
    }
  }
  return findings;
}

function cornerCurrent(iout: Record<string, number>, iref: number, role: TargetRole, name: string): number | undefined {
  const v =
    role.role === 'output'
      ? iout[name] ?? findCaseless(iout, name)
      : role.role === 'degeneration-resistor'
        ? role.output !== undefined ? iout[role.output] : undefined
        : iref;
  return v !== undefined && Number.isFinite(v) ? Math.abs(v) : undefined;
}
