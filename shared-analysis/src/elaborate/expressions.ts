// Evaluates parameter expressions in a closed scope: mathjs only parses, our own walker decides what is allowed.

import { create, parseDependencies } from 'mathjs';
import type { MathNode } from 'mathjs';
import type { RelatedLocation, Span } from '../types';
import { splitSuffix } from './units';
import { nameTable } from '../names';

const math = create({ parseDependencies });

/** Longest expression text accepted, in characters (guards the recursive-descent parser and walker). */
export const MAX_EXPRESSION_LENGTH = 4096;
/** Deepest bracket nesting accepted. */
export const MAX_NESTING = 64;
/** Deepest operator tree accepted (a chain of 400 additions is already unusual in a netlist). */
export const MAX_TREE_DEPTH = 400;
/** Longest chain of parameters referring to parameters that is followed before giving up. */
export const MAX_PARAMETER_CHAIN = 200;

/** A problem inside an expression, located in its document. */
export interface ExpressionError {
  message: string;
  /** Offsets into the document the expression is written in. */
  span: Span;
  /** True when the failure comes from a referenced parameter that already has its own finding. */
  inherited?: boolean;
  /** For inherited failures: where the failed parameter is defined. */
  related?: RelatedLocation[];
}

/** An evaluated number or the first problem found. */
export type EvalResult = { ok: true; value: number } | { ok: false; error: ExpressionError };

/** The math functions an expression may call, with their allowed argument counts and implementations. */
const FUNCTIONS: Record<string, { min: number; max: number; fn: (...a: number[]) => number }> = nameTable({
  abs: { min: 1, max: 1, fn: Math.abs },
  sqrt: { min: 1, max: 1, fn: Math.sqrt },
  exp: { min: 1, max: 1, fn: Math.exp },
  // log(x) is the natural logarithm, log(x, b) the logarithm to base b (as in mathjs).
  log: { min: 1, max: 2, fn: (x, b) => (b === undefined ? Math.log(x) : Math.log(x) / Math.log(b)) },
  ln: { min: 1, max: 1, fn: Math.log },
  log10: { min: 1, max: 1, fn: Math.log10 },
  pow: { min: 2, max: 2, fn: Math.pow },
  min: { min: 1, max: Infinity, fn: Math.min },
  max: { min: 1, max: Infinity, fn: Math.max },
  floor: { min: 1, max: 1, fn: Math.floor },
  ceil: { min: 1, max: 1, fn: Math.ceil },
  // round(x) rounds half away from zero; round(x, n) to n decimals (as in mathjs).
  round: { min: 1, max: 2, fn: (x, n) => roundHalfAway(x, n ?? 0) },
  sin: { min: 1, max: 1, fn: Math.sin },
  cos: { min: 1, max: 1, fn: Math.cos },
  tan: { min: 1, max: 1, fn: Math.tan },
  asin: { min: 1, max: 1, fn: Math.asin },
  acos: { min: 1, max: 1, fn: Math.acos },
  atan: { min: 1, max: 1, fn: Math.atan },
  atan2: { min: 2, max: 2, fn: Math.atan2 },
  sinh: { min: 1, max: 1, fn: Math.sinh },
  cosh: { min: 1, max: 1, fn: Math.cosh },
  tanh: { min: 1, max: 1, fn: Math.tanh },
  sign: { min: 1, max: 1, fn: Math.sign },
  hypot: { min: 1, max: Infinity, fn: Math.hypot },
});

/** The function names an expression may call, for messages and completions. */
export const ALLOWED_FUNCTIONS: readonly string[] = Object.keys(FUNCTIONS);

/** Named constants every scope sees (parameters of the same name take precedence). */
const CONSTANTS: Record<string, number> = nameTable({ pi: Math.PI, e: Math.E });

/** Unit words a number inside an expression may carry after its scale suffix (`{10kOhm}`, `{5V}`). */
const UNIT_WORDS = new Set(['v', 'volt', 'volts', 'a', 'amp', 'amps', 'ohm', 'ohms', 'hz', 's', 'sec', 'w', 'h', 'henry', 'f', 'farad', 'm', 'meter', 'metre']);

const ALLOWED_OPERATORS = new Set([
  'add', 'subtract', 'multiply', 'divide', 'pow', 'unaryMinus', 'unaryPlus',
  'equal', 'unequal', 'smaller', 'larger', 'smallerEq', 'largerEq', 'and', 'or', 'xor', 'not',
]);

const RELATIONAL: Record<string, (a: number, b: number) => boolean> = nameTable({
  equal: (a, b) => nearlyEqual(a, b),
  unequal: (a, b) => !nearlyEqual(a, b),
  smaller: (a, b) => a < b && !nearlyEqual(a, b),
  larger: (a, b) => a > b && !nearlyEqual(a, b),
  smallerEq: (a, b) => a <= b || nearlyEqual(a, b),
  largerEq: (a, b) => a >= b || nearlyEqual(a, b),
});

/** A leaf of the expression (number, name or boolean) with its place in the source text. */
interface Leaf {
  kind: 'number' | 'name' | 'bool';
  /** Offsets relative to the expression source. */
  start: number;
  end: number;
  text: string;
}

/** An expression checked and parsed once, ready to evaluate in any scope. */
export interface CompiledExpression {
  /** The expression text without its braces or quotes. */
  source: string;
  /** Document offset of `source[0]`. */
  offset: number;
  root: MathNode;
  /** Span of every node of the tree, relative to `offset` (shared between compilations of the same text). */
  spans: Map<MathNode, Span>;
  /** The parameter names the expression reads, in order, lower-case, with their document spans. */
  references: { name: string; span: Span }[];
  /** A problem reported only after the names are resolved, so an unknown name is named first (`5 cm`). */
  deferred?: ExpressionError;
  /** Calls of functions that are not built in: `.func` functions, checked when the expression is evaluated in a scope. */
  calls?: { name: string; text: string; span: Span; argc: number }[];
}

/** A `.func` function as an expression sees it: its argument names and how to call it. */
export interface UserFunction {
  args: readonly string[];
  call(values: number[], span: Span): EvalResult;
}

type Tok =
  | { t: 'num' | 'name' | 'bool' | 'op' | '(' | ')' | ',' | '?' | ':'; start: number; end: number; text: string };

/**
 * Checks and parses an expression. `source` is the text between the braces or quotes,
 * `offset` its document offset. Numbers with engineering suffixes are rewritten to plain
 * numbers before mathjs parses the text; a position map keeps error spans in the original.
 *
 * Inside an expression a number may carry a scale suffix (as in `parseNumber`) followed only
 * by a unit word (V, A, Ohm, Hz, s, W, H, F, m and their spelt-out forms): `{2*10k}`,
 * `{10pF}`. Other letters glued to a number are an error (`2pi` would otherwise read as
 * 2 pico), so a product needs its `*`. Allowed: numbers, parameters in scope, `pi`, `e`,
 * `true`/`false`, + - * / ^ (and `**`), comparisons, `and` `or` `not` `xor` (and `&&` `||` `!`),
 * `?:`, brackets and the functions of ALLOWED_FUNCTIONS. Everything else is a located error.
 */
export function compileExpression(source: string, offset: number): { ok: true; expr: CompiledExpression } | { ok: false; error: ExpressionError } {
  let core = COMPILED.get(source);
  if (core) {
    // Most recently used last, so eviction takes the longest unused first.
    COMPILED.delete(source);
    COMPILED.set(source, core);
  } else {
    core = compileAt(source, 0);
    COMPILED.set(source, core);
    compiledBytes += compiledCost(source);
    for (const key of COMPILED.keys()) {
      if (compiledBytes <= COMPILED_BUDGET_BYTES && COMPILED.size <= COMPILED_CAPACITY) break;
      COMPILED.delete(key);
      compiledBytes -= compiledCost(key);
    }
  }
  if (offset === 0) return core;
  const shift = (span: Span): Span => ({ start: span.start + offset, end: span.end + offset });
  if (!core.ok) return { ok: false, error: { ...core.error, span: shift(core.error.span) } };
  const e = core.expr;
  return {
    ok: true,
    expr: {
      source,
      offset,
      root: e.root,
      spans: e.spans,
      references: e.references.map((r) => ({ name: r.name, span: shift(r.span) })),
      deferred: e.deferred ? { ...e.deferred, span: shift(e.deferred.span) } : undefined,
      calls: e.calls?.map((c) => ({ ...c, span: shift(c.span) })),
    },
  };
}

/** Compiled expressions by source text (positions relative to the text), shared by every elaboration. */
const COMPILED = new Map<string, ReturnType<typeof compileAt>>();
const COMPILED_CAPACITY = 20000;
/**
 * What the cache may hold, in estimated bytes. A compiled expression keeps its source and its
 * parse tree; measured at about 56 bytes of heap per source character for long expressions
 * (a 4 KB expression kept about 231 KB), plus a fixed cost per entry.
 */
export const COMPILED_BUDGET_BYTES = 32 * 1024 * 1024;
const BYTES_PER_SOURCE_CHAR = 64;
const BYTES_PER_ENTRY = 1024;
let compiledBytes = 0;

function compiledCost(source: string): number {
  return BYTES_PER_ENTRY + BYTES_PER_SOURCE_CHAR * source.length;
}

/** How full the compiled-expression cache is: entries and estimated bytes (for tests and diagnostics). */
export function expressionCacheUsage(): { entries: number; bytes: number } {
  return { entries: COMPILED.size, bytes: compiledBytes };
}

function compileAt(source: string, offset: number): { ok: true; expr: CompiledExpression } | { ok: false; error: ExpressionError } {
  const at = (start: number, end: number): Span => ({ start: offset + start, end: offset + Math.max(end, start + 1) });
  const fail = (message: string, start: number, end: number) => ({ ok: false as const, error: { message, span: clampSpan(at(start, end), offset, source.length) } });

  if (source.trim() === '') return fail('The expression is empty.', 0, source.length);
  if (source.length > MAX_EXPRESSION_LENGTH) {
    return fail(`The expression is ${source.length} characters long; at most ${MAX_EXPRESSION_LENGTH} are accepted.`, 0, source.length);
  }

  // Pass 1: our own tokenizer. It rejects what is not allowed with an exact position and rewrites numbers.
  const toks: Tok[] = [];
  let out = '';
  const map: number[] = []; // out index -> source index
  const emit = (text: string, srcStart: number, srcEnd: number) => {
    for (let k = 0; k < text.length; k++) map.push(k < srcEnd - srcStart ? srcStart + k : srcEnd - 1);
    out += text;
  };
  let depth = 0;
  const questionDepth: number[] = [];
  let i = 0;
  while (i < source.length) {
    const c = source[i]!;
    if (c === ' ' || c === '\t') {
      emit(' ', i, i + 1);
      i++;
      continue;
    }
    if (c === '\r' || c === '\n' || c === ';') {
      return fail('An expression holds one formula only; a line break or `;` cannot appear inside it.', i, i + 1);
    }
    if (/[0-9]/.test(c) || (c === '.' && /[0-9]/.test(source[i + 1] ?? ''))) {
      const m = /^(\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?/.exec(source.slice(i))!;
      let j = i + m[0].length;
      const lm = /^[A-Za-zµμ]*/.exec(source.slice(j))![0];
      const { scale, suffix, unit } = splitSuffix(lm);
      if (lm !== '' && unit !== '' && !UNIT_WORDS.has(unit.toLowerCase())) {
        const word = source.slice(i, j + lm.length);
        return fail(
          `\`${word}\` is a number followed by letters that are neither a scale suffix nor a unit; write an explicit operator (for example \`${m[0]}*${lm}\`).`,
          i, j + lm.length,
        );
      }
      j += lm.length;
      if (/[0-9]/.test(source[j] ?? '')) {
        return fail(`\`${source.slice(i, j + 1)}\` has a digit after its letters; write the number in decimal form with the suffix last (for example 4.7k).`, i, j + 1);
      }
      const value = Number(m[0]) * scale;
      if (!Number.isFinite(value)) return fail(`\`${source.slice(i, j)}\` is too large to represent as a number.`, i, j);
      const text = suffix === '' && unit === '' ? m[0] : String(value);
      toks.push({ t: 'num', start: i, end: j, text });
      emit(text, i, j);
      i = j;
      continue;
    }
    if (/[A-Za-z_]/.test(c)) {
      const w = /^[A-Za-z_][A-Za-z0-9_]*/.exec(source.slice(i))![0];
      const lower = w.toLowerCase();
      const j = i + w.length;
      if (lower === 'and' || lower === 'or' || lower === 'xor' || lower === 'not') {
        toks.push({ t: 'op', start: i, end: j, text: lower });
        emit(lower, i, j);
      } else if (lower === 'true' || lower === 'false') {
        toks.push({ t: 'bool', start: i, end: j, text: lower });
        emit(lower, i, j);
      } else if (lower === 'mod' || lower === 'to' || lower === 'in') {
        return fail(`\`${w}\` is not an allowed operator here; expressions use + - * / ^, comparisons, and, or, not and ?:.`, i, j);
      } else if (lower === 'null' || lower === 'undefined') {
        return fail(`\`${w}\` is not a number.`, i, j);
      } else {
        toks.push({ t: 'name', start: i, end: j, text: w });
        emit(w, i, j);
      }
      i = j;
      continue;
    }
    const two = source.slice(i, i + 2);
    if (two === '**') {
      toks.push({ t: 'op', start: i, end: i + 2, text: '^' });
      emit(' ^', i, i + 2);
      i += 2;
      continue;
    }
    if (two === '&&' || two === '||') {
      const word = two === '&&' ? 'and' : 'or';
      toks.push({ t: 'op', start: i, end: i + 2, text: word });
      emit(` ${word} `, i, i + 2);
      i += 2;
      continue;
    }
    if (two === '==' || two === '!=' || two === '<=' || two === '>=') {
      toks.push({ t: 'op', start: i, end: i + 2, text: two });
      emit(two, i, i + 2);
      i += 2;
      continue;
    }
    if (two === '<<' || two === '>>') {
      return fail(`\`${two}\` (bit shift) is not an allowed operator.`, i, i + 2);
    }
    if (c === '!') {
      toks.push({ t: 'op', start: i, end: i + 1, text: 'not' });
      emit(' not ', i, i + 1);
      i++;
      continue;
    }
    if ('+-*/^<>'.includes(c)) {
      toks.push({ t: 'op', start: i, end: i + 1, text: c });
      emit(c, i, i + 1);
      i++;
      continue;
    }
    if (c === '(') {
      depth++;
      if (depth > MAX_NESTING) return fail(`The expression nests brackets more than ${MAX_NESTING} deep.`, i, i + 1);
      toks.push({ t: '(', start: i, end: i + 1, text: c });
      emit(c, i, i + 1);
      i++;
      continue;
    }
    if (c === ')') {
      depth--;
      if (depth < 0) return fail('This `)` has no matching `(`.', i, i + 1);
      while (questionDepth.length > 0 && questionDepth[questionDepth.length - 1]! > depth) {
        questionDepth.pop();
      }
      toks.push({ t: ')', start: i, end: i + 1, text: c });
      emit(c, i, i + 1);
      i++;
      continue;
    }
    if (c === ',') {
      if (depth === 0) return fail('A `,` can only separate function arguments.', i, i + 1);
      toks.push({ t: ',', start: i, end: i + 1, text: c });
      emit(c, i, i + 1);
      i++;
      continue;
    }
    if (c === '?') {
      questionDepth.push(depth);
      toks.push({ t: '?', start: i, end: i + 1, text: c });
      emit(c, i, i + 1);
      i++;
      continue;
    }
    if (c === ':') {
      const open = questionDepth.length > 0 && questionDepth[questionDepth.length - 1] === depth;
      if (!open) return fail('A `:` without a matching `?` would make a range; ranges are not allowed.', i, i + 1);
      questionDepth.pop();
      toks.push({ t: ':', start: i, end: i + 1, text: c });
      emit(c, i, i + 1);
      i++;
      continue;
    }
    const rejected: Record<string, string> = {
      '=': 'A single `=` would assign or define something, which an expression cannot do; to compare, write `==`.',
      '.': 'Property access with `.` is not allowed in an expression.',
      '[': 'Matrices, arrays and indexing with `[ ]` are not allowed in an expression.',
      ']': 'Matrices, arrays and indexing with `[ ]` are not allowed in an expression.',
      '{': 'Braces cannot appear inside an expression (objects are not allowed).',
      '}': 'Braces cannot appear inside an expression (objects are not allowed).',
      '"': 'Text strings are not allowed in an expression.',
      "'": 'Text strings and the transpose operator are not allowed in an expression.',
      '%': '`%` is not an allowed operator; write a division (for example x/100).',
      '&': '`&` (bitwise and) is not allowed; write `and` or `&&`.',
      '|': '`|` (bitwise or) is not allowed; write `or` or `||`.',
      '~': '`~` (bitwise not) is not allowed; write `not` or `!`.',
    };
    const message = rejected[c] ?? `The character \`${c}\` cannot appear in an expression.`;
    return fail(message, i, i + 1);
  }
  map.push(source.length);
  if (depth > 0) {
    const open = [...toks].reverse().find((t) => t.t === '(')!;
    return fail('This `(` is never closed.', open.start, open.end);
  }

  // Implicit multiplication (`2 x`, `5 cm`, `(a)(b)`) is reported after names are resolved.
  let deferred: ExpressionError | undefined;
  for (let k = 1; k < toks.length && !deferred; k++) {
    const p = toks[k - 1]!;
    const q = toks[k]!;
    const ends = p.t === 'num' || p.t === 'name' || p.t === 'bool' || p.t === ')';
    const starts = q.t === 'num' || q.t === 'name' || q.t === 'bool' || q.t === '(';
    if (ends && starts && !(p.t === 'name' && q.t === '(')) {
      deferred = {
        message: `An operator is missing between \`${source.slice(p.start, p.end)}\` and \`${source.slice(q.start, q.end)}\`; write \`*\` to multiply.`,
        span: at(q.start, q.end),
      };
    }
  }

  // Pass 2: mathjs parses the rewritten text.
  let root: MathNode;
  try {
    root = math.parse(out) as MathNode;
  } catch (e) {
    const msg = e instanceof Error ? e.message : String(e);
    const charMatch = /\(char (\d+)\)/.exec(msg);
    const outIndex = charMatch ? Math.max(0, Number(charMatch[1]) - 1) : 0;
    const srcIndex = Math.min(map[Math.min(outIndex, map.length - 1)] ?? 0, source.length - 1);
    if (e instanceof RangeError) return fail('The expression is nested too deeply to read.', 0, source.length);
    const reason = msg.replace(/\s*\(char \d+\)/, '').replace(/\.$/, '');
    return charMatch
      ? fail(`The expression cannot be read here: ${lowerFirst(reason)}.`, srcIndex, srcIndex + 1)
      : fail(`The expression cannot be read: ${lowerFirst(reason)}.`, 0, source.length);
  }

  // Pass 3: our walker checks node kinds, functions and arity, and gives each node its span.
  const leaves: Leaf[] = toks.filter((t) => t.t === 'num' || t.t === 'name' || t.t === 'bool').map((t) => ({
    kind: t.t === 'num' ? 'number' : t.t === 'name' ? 'name' : 'bool',
    start: t.start,
    end: t.end,
    text: t.text,
  }));
  const closers = matchParens(toks);
  const opens = toks.filter((t) => t.t === '(').map((t) => t.start);
  const closes = toks.filter((t) => t.t === ')').map((t) => t.start);
  const spans = new Map<MathNode, Span>();
  const references: { name: string; span: Span }[] = [];
  const calls: NonNullable<CompiledExpression['calls']> = [];
  const whole = at(0, source.length);
  let leafIndex = 0;
  let problem: ExpressionError | undefined;

  const visit = (node: MathNode, level: number): { start: number; end: number } | undefined => {
    if (problem) return undefined;
    if (level > MAX_TREE_DEPTH) {
      problem = { message: `The expression is nested more than ${MAX_TREE_DEPTH} operators deep.`, span: whole };
      return undefined;
    }
    const n = node as MathNode & Record<string, unknown>;
    let range: { start: number; end: number } | undefined;
    const merge = (r: { start: number; end: number } | undefined) => {
      if (!r) return;
      range = range ? { start: Math.min(range.start, r.start), end: Math.max(range.end, r.end) } : r;
    };
    switch (node.type) {
      case 'ConstantNode': {
        const leaf = leaves[leafIndex];
        if (leaf && leaf.kind !== 'name') {
          leafIndex++;
          range = { start: leaf.start, end: leaf.end };
        }
        const v = n.value;
        if (typeof v !== 'number' && typeof v !== 'boolean') {
          problem = { message: 'Only numbers can appear in an expression.', span: range ? at(range.start, range.end) : whole };
        }
        break;
      }
      case 'SymbolNode': {
        const leaf = leaves[leafIndex];
        if (leaf && leaf.kind === 'name') {
          leafIndex++;
          range = { start: leaf.start, end: leaf.end };
        }
        const name = String(n.name);
        references.push({ name: name.toLowerCase(), span: range ? at(range.start, range.end) : whole });
        break;
      }
      case 'ParenthesisNode': {
        merge(visit(n.content as MathNode, level + 1));
        // Widen to the brackets themselves, so a message can quote `(a - b)`.
        if (range) {
          const open = lastBefore(opens, range.start);
          const close = firstAfter(closes, range.end);
          if (open !== undefined && close !== undefined) range = { start: open, end: close + 1 };
        }
        break;
      }
      case 'OperatorNode': {
        const fn = String(n.fn);
        if (!ALLOWED_OPERATORS.has(fn)) {
          problem = { message: `The operator \`${String(n.op)}\` is not allowed in an expression.`, span: whole };
          break;
        }
        for (const a of n.args as MathNode[]) merge(visit(a, level + 1));
        if (n.implicit === true && !deferred) {
          deferred = { message: 'An operator is missing; write `*` to multiply.', span: range ? at(range.start, range.end) : whole };
        }
        break;
      }
      case 'RelationalNode':
        for (const p of n.params as MathNode[]) merge(visit(p, level + 1));
        break;
      case 'ConditionalNode':
        merge(visit(n.condition as MathNode, level + 1));
        merge(visit(n.trueExpr as MathNode, level + 1));
        merge(visit(n.falseExpr as MathNode, level + 1));
        break;
      case 'FunctionNode': {
        const fnNode = n.fn as MathNode & { name?: string };
        const leaf = leaves[leafIndex];
        let nameRange: { start: number; end: number } | undefined;
        if (fnNode.type === 'SymbolNode' && leaf && leaf.kind === 'name') {
          leafIndex++;
          nameRange = { start: leaf.start, end: leaf.end };
        }
        const fname = fnNode.type === 'SymbolNode' ? String(fnNode.name) : '';
        const spec = FUNCTIONS[fname.toLowerCase()];
        const nameSpan = nameRange ? at(nameRange.start, nameRange.end) : whole;
        if (!spec && /^[A-Za-z_][A-Za-z0-9_]*$/.test(fname)) {
          // Not built in: perhaps a `.func` function, which only a scope knows; checked when evaluated.
          calls.push({ name: fname.toLowerCase(), text: fname, span: nameSpan, argc: (n.args as MathNode[]).length });
          range = nameRange;
          for (const a of n.args as MathNode[]) merge(visit(a, level + 1));
          if (nameRange) {
            const close = closers.get(nameRange.end);
            if (close !== undefined) merge({ start: nameRange.start, end: close + 1 });
          }
          break;
        }
        if (!spec) {
          problem = {
            message: fname
              ? `\`${fname}\` is not a known function; the functions allowed are ${ALLOWED_FUNCTIONS.join(', ')}.`
              : 'Only named math functions can be called in an expression.',
            span: nameSpan,
          };
          break;
        }
        const args = n.args as MathNode[];
        range = nameRange;
        for (const a of args) merge(visit(a, level + 1));
        if (nameRange) {
          const close = closers.get(nameRange.end);
          if (close !== undefined) merge({ start: nameRange.start, end: close + 1 });
        }
        if (!problem && (args.length < spec.min || args.length > spec.max)) {
          const expected = spec.min === spec.max ? `${spec.min}` : spec.max === Infinity ? `at least ${spec.min}` : `${spec.min} or ${spec.max}`;
          problem = {
            message: `\`${fname}\` takes ${expected} argument${spec.max === 1 ? '' : 's'} but is given ${args.length}.`,
            span: range ? at(range.start, range.end) : nameSpan,
          };
        }
        break;
      }
      default:
        problem = { message: `This kind of expression (${describeNode(node.type)}) is not allowed.`, span: whole };
    }
    if (range) spans.set(node, at(range.start, range.end));
    return range;
  };
  visit(root, 0);
  if (problem) return { ok: false, error: problem };
  return { ok: true, expr: { source, offset, root, spans, references, deferred, ...(calls.length > 0 ? { calls } : {}) } };
}

/**
 * Evaluates a compiled expression. `lookup` resolves a lower-case parameter name (with the
 * span of the reference) to a value or an error; it is called for every reference first, so
 * an unknown name in an untaken `?:` branch is still reported.
 */
export function evaluateCompiled(
  expr: CompiledExpression,
  lookup: (name: string, span: Span) => EvalResult,
  functions?: (name: string) => UserFunction | undefined,
): EvalResult {
  for (const c of expr.calls ?? []) {
    const f = functions?.(c.name);
    if (!f) {
      return { ok: false, error: { message: `\`${c.text}\` is not a known function; the functions allowed are ${ALLOWED_FUNCTIONS.join(', ')} and the .func functions in scope.`, span: c.span } };
    }
    if (f.args.length !== c.argc) {
      return { ok: false, error: { message: `\`${c.text}\` takes ${f.args.length} argument${f.args.length === 1 ? '' : 's'} but is given ${c.argc}.`, span: c.span } };
    }
  }
  const values = new Map<string, number>();
  for (const ref of expr.references) {
    if (values.has(ref.name)) continue;
    const r = lookup(ref.name, ref.span);
    if (!r.ok) return r;
    values.set(ref.name, r.value);
  }
  if (expr.deferred) return { ok: false, error: expr.deferred };
  const whole: Span = { start: expr.offset, end: expr.offset + Math.max(1, expr.source.length) };
  const spanOf = (node: MathNode): Span => {
    const s = expr.spans.get(node);
    return s ? { start: s.start + expr.offset, end: s.end + expr.offset } : whole;
  };
  const finite = (v: number, node: MathNode, what: string): number => {
    if (!Number.isFinite(v)) {
      throw new Failure({ message: `${what} ${nonFinite(v)}.`, span: spanOf(node) });
    }
    return v;
  };
  const text = (node: MathNode): string => {
    const s = spanOf(node);
    return expr.source.slice(s.start - expr.offset, s.end - expr.offset);
  };
  const ev = (node: MathNode): number => {
    const n = node as MathNode & Record<string, unknown>;
    switch (node.type) {
      case 'ConstantNode':
        return typeof n.value === 'boolean' ? (n.value ? 1 : 0) : (n.value as number);
      case 'SymbolNode': {
        const name = String(n.name).toLowerCase();
        return values.get(name)!;
      }
      case 'ParenthesisNode':
        return ev(n.content as MathNode);
      case 'ConditionalNode':
        return ev(n.condition as MathNode) !== 0 ? ev(n.trueExpr as MathNode) : ev(n.falseExpr as MathNode);
      case 'RelationalNode': {
        const params = n.params as MathNode[];
        const conds = n.conditionals as string[];
        let left = ev(params[0]!);
        for (let k = 0; k < conds.length; k++) {
          const right = ev(params[k + 1]!);
          if (!RELATIONAL[conds[k]!]!(left, right)) return 0;
          left = right;
        }
        return 1;
      }
      case 'OperatorNode': {
        const args = n.args as MathNode[];
        const fn = String(n.fn);
        if (fn === 'and') return ev(args[0]!) !== 0 && ev(args[1]!) !== 0 ? 1 : 0;
        if (fn === 'or') return ev(args[0]!) !== 0 || ev(args[1]!) !== 0 ? 1 : 0;
        const a = ev(args[0]!);
        if (fn === 'unaryMinus') return -a;
        if (fn === 'unaryPlus') return a;
        if (fn === 'not') return a === 0 ? 1 : 0;
        const b = ev(args[1]!);
        switch (fn) {
          case 'add':
            return finite(a + b, node, `\`${text(node)}\``);
          case 'subtract':
            return finite(a - b, node, `\`${text(node)}\``);
          case 'multiply':
            return finite(a * b, node, `\`${text(node)}\``);
          case 'divide':
            if (b === 0) throw new Failure({ message: `Division by zero: \`${text(args[1]!)}\` is 0.`, span: spanOf(args[1]!) });
            return finite(a / b, node, `\`${text(node)}\``);
          case 'pow':
            return finite(Math.pow(a, b), node, `\`${text(node)}\``);
          case 'xor':
            return (a !== 0) !== (b !== 0) ? 1 : 0;
          default: {
            const rel = RELATIONAL[fn];
            if (rel) return rel(a, b) ? 1 : 0;
            throw new Failure({ message: `The operator \`${String(n.op)}\` is not allowed in an expression.`, span: spanOf(node) });
          }
        }
      }
      case 'FunctionNode': {
        const fnNode = n.fn as { name: string };
        const spec = FUNCTIONS[fnNode.name.toLowerCase()];
        if (!spec) {
          const user = functions?.(fnNode.name.toLowerCase());
          if (!user) throw new Failure({ message: `\`${fnNode.name}\` is not a known function.`, span: spanOf(node) });
          const r = user.call((n.args as MathNode[]).map(ev), spanOf(node));
          if (!r.ok) throw new Failure(r.error);
          return finite(r.value, node, `\`${text(node)}\``);
        }
        const args = (n.args as MathNode[]).map(ev);
        const v = spec.fn(...args); // bounded: an expression holds at most MAX_EXPRESSION_LENGTH / 2 arguments
        const shown = args.map((x) => formatPlain(x)).join(', ');
        return finite(v, node, `\`${fnNode.name}(${shown})\``);
      }
      default:
        throw new Failure({ message: 'This kind of expression is not allowed.', span: spanOf(node) });
    }
  };
  try {
    const v = ev(expr.root);
    if (!Number.isFinite(v)) return { ok: false, error: { message: `The expression's result ${nonFinite(v)}.`, span: whole } };
    return { ok: true, value: v };
  } catch (e) {
    if (e instanceof Failure) return { ok: false, error: e.error };
    if (e instanceof RangeError) return { ok: false, error: { message: 'The expression is nested too deeply to evaluate.', span: whole } };
    return { ok: false, error: { message: `The expression could not be evaluated: ${e instanceof Error ? e.message : String(e)}.`, span: whole } };
  }
}

/** Thrown inside the evaluator to unwind with a located error; never escapes `evaluateCompiled`. */
class Failure {
  constructor(readonly error: ExpressionError) {}
}

/** A `.func name(args) = expr` definition: argument names lower case, the body's source and offset, located in a document. */
export interface FunctionDefinition {
  name: string;
  args: string[];
  source: string;
  offset: number;
  uri: string;
  nameSpan: Span;
}

/** A `.param`-style definition: a name and its right-hand side, located in a document. */
export interface ParamDefinition {
  /** As written. */
  name: string;
  /** The right-hand side without braces or quotes. */
  source: string;
  /** Document offset of `source[0]`. */
  offset: number;
  uri: string;
  /** The whole assignment. */
  span: Span;
  nameSpan: Span;
}

/** A problem a scope reports about one of its own definitions (not about a caller's expression). */
export interface ScopeReport {
  code: 'param-invalid' | 'param-cycle' | 'param-chain-too-long';
  message: string;
  uri: string;
  span: Span;
  related?: RelatedLocation[];
}

/** State shared by every scope of one elaboration: compile cache, evaluation stack, report sink. */
export class EvaluationContext {
  /** Definitions being evaluated, innermost last, for cycle detection. */
  readonly stack: { scope: ParamScope; key: string; def: ParamDefinition }[] = [];
  /** `.func` functions being called, innermost last: a function may not call itself. */
  readonly calling: FunctionDefinition[] = [];

  constructor(readonly report: (r: ScopeReport) => void) {}

  /** Compiles an expression (the parse is cached by text across elaborations; only positions are shifted). */
  compile(_uri: string, source: string, offset: number): ReturnType<typeof compileExpression> {
    return compileExpression(source, offset);
  }
}

type Slot =
  | { state: 'pending'; def: ParamDefinition }
  | { state: 'busy'; def: ParamDefinition }
  | { state: 'done'; def?: ParamDefinition; result: EvalResult };

/**
 * One parameter scope (top level, or one subcircuit instance). Definitions are evaluated
 * lazily on first use, so a parameter may refer to one defined later in the same scope;
 * inner scopes see the parameters of outer ones.
 */
export class ParamScope {
  private readonly slots = new Map<string, Slot>();
  private readonly functions = new Map<string, FunctionDefinition>();

  constructor(
    readonly context: EvaluationContext,
    readonly options: { parent?: ParamScope; /** For messages: `top level` or `subcircuit amp (X1)`. */ label: string },
  ) {}

  /** Adds a definition; returns the earlier definition of the same name in this scope, if any (the new one wins). */
  define(def: ParamDefinition): ParamDefinition | undefined {
    const key = def.name.toLowerCase();
    const prev = this.slots.get(key);
    this.slots.set(key, { state: 'pending', def });
    return prev?.def;
  }

  /** Sets an already evaluated value (an instance override), replacing any definition of that name. */
  setValue(name: string, result: EvalResult, def?: ParamDefinition): void {
    this.slots.set(name.toLowerCase(), { state: 'done', def, result });
  }

  /** Adds a `.func` function; returns the earlier one of the same name in this scope, if any (the new one wins). */
  defineFunction(def: FunctionDefinition): FunctionDefinition | undefined {
    const key = def.name.toLowerCase();
    const prev = this.functions.get(key);
    this.functions.set(key, def);
    return prev;
  }

  /** The `.func` function `name` (lower case) as seen from this scope, callable from an expression. */
  userFunction(name: string): UserFunction | undefined {
    for (let s: ParamScope | undefined = this; s; s = s.options.parent) {
      const def = s.functions.get(name);
      if (def) {
        const owner = s;
        return { args: def.args, call: (values, span) => owner.callFunction(def, values, span) };
      }
    }
    return undefined;
  }

  /**
   * Calls a `.func` function defined in this scope: its arguments bound to `values`, other names
   * looked up here. Recursion (direct or through other functions) is refused with a located error.
   */
  private callFunction(def: FunctionDefinition, values: number[], span: Span): EvalResult {
    const ctx = this.context;
    const related = [{ uri: def.uri, span: def.nameSpan, message: `\`${def.name}\` is defined here.` }];
    if (ctx.calling.includes(def)) {
      const chain = [...ctx.calling.slice(ctx.calling.indexOf(def)).map((d) => d.name), def.name];
      return { ok: false, error: { message: `Function \`${def.name}\` calls itself (${chain.join(' → ')}); a .func function cannot be recursive.`, span, related } };
    }
    if (ctx.calling.length >= MAX_PARAMETER_CHAIN) {
      return { ok: false, error: { message: `Functions call functions more than ${MAX_PARAMETER_CHAIN} levels deep.`, span, related } };
    }
    const c = ctx.compile(def.uri, def.source, def.offset);
    if (!c.ok) return { ok: false, error: { message: `Function \`${def.name}\` cannot be evaluated: ${lowerFirst(c.error.message)}`, span, related } };
    ctx.calling.push(def);
    let r: EvalResult;
    try {
      r = evaluateCompiled(
        c.expr,
        (name, at) => {
          const k = def.args.indexOf(name);
          return k >= 0 ? { ok: true, value: values[k]! } : this.lookup(name, at);
        },
        (name) => this.userFunction(name),
      );
    } finally {
      ctx.calling.pop();
    }
    if (r.ok) return r;
    if (r.error.message.startsWith('Function `')) return { ok: false, error: { ...r.error, span } };
    return { ok: false, error: { message: `Function \`${def.name}\` cannot be evaluated here: ${lowerFirst(r.error.message)}`, span, related } };
  }

  /** True when this scope itself (not an outer one) defines `name`. */
  definesOwn(name: string): boolean {
    return this.slots.has(name.toLowerCase());
  }

  /** True when this scope or an outer one defines parameter `name` (constants do not count). */
  definesVisible(name: string): boolean {
    const key = name.toLowerCase();
    for (let s: ParamScope | undefined = this; s; s = s.options.parent) if (s.slots.has(key)) return true;
    return false;
  }

  /** Every name visible from this scope, lower-case. */
  visibleNames(): string[] {
    const names = new Set<string>(Object.keys(CONSTANTS));
    for (let s: ParamScope | undefined = this; s; s = s.options.parent) for (const k of s.slots.keys()) names.add(k);
    return [...names];
  }

  /** Own definitions with their results, evaluating the pending ones. */
  entries(): { name: string; def?: ParamDefinition; result: EvalResult }[] {
    const out: { name: string; def?: ParamDefinition; result: EvalResult }[] = [];
    for (const key of [...this.slots.keys()]) {
      const slot = this.slots.get(key)!;
      out.push({ name: key, def: slot.def, result: this.resolveOwn(key, slot.def?.nameSpan ?? { start: 0, end: 0 }) });
    }
    return out;
  }

  /** The value of `name` (lower- or mixed-case) as seen from this scope; `span` is where it is referenced. */
  lookup(name: string, span: Span): EvalResult {
    const key = name.toLowerCase();
    for (let s: ParamScope | undefined = this; s; s = s.options.parent) {
      if (s.slots.has(key)) return s.resolveOwn(key, span);
    }
    const constant = CONSTANTS[key];
    if (constant !== undefined) return { ok: true, value: constant };
    const near = closest(key, this.visibleNames());
    return {
      ok: false,
      error: {
        message: `\`${name}\` is not a parameter in scope (${this.options.label})${near ? `; did you mean \`${near}\`?` : '.'}`,
        span,
      },
    };
  }

  /** Evaluates an expression written in document `uri` at `offset` in this scope. */
  evaluate(uri: string, source: string, offset: number): EvalResult {
    const c = this.context.compile(uri, source, offset);
    if (!c.ok) return c;
    return evaluateCompiled(c.expr, (name, span) => this.lookup(name, span), (name) => this.userFunction(name));
  }

  private resolveOwn(key: string, refSpan: Span): EvalResult {
    const slot = this.slots.get(key)!;
    if (slot.state === 'done') return slot.state === 'done' && slot.result.ok ? slot.result : this.inherit(slot, refSpan);
    const ctx = this.context;
    if (slot.state === 'busy') {
      // A cycle: report it once, at the reference that closes it, naming the whole chain.
      const from = ctx.stack.findIndex((f) => f.scope === this && f.key === key);
      const chain = ctx.stack.slice(from).map((f) => f.def.name);
      chain.push(slot.def.name);
      const innermost = ctx.stack[ctx.stack.length - 1]!;
      ctx.report({
        code: 'param-cycle',
        message: `Parameters refer to each other in a cycle (${chain.join(' → ')}), so none of them has a value.`,
        uri: innermost.def.uri,
        span: refSpan,
        related: ctx.stack.slice(from).map((f) => ({ uri: f.def.uri, span: f.def.nameSpan, message: `\`${f.def.name}\` is part of the cycle.` })),
      });
      return { ok: false, error: { message: `\`${slot.def.name}\` is part of a parameter cycle (${chain.join(' → ')}).`, span: refSpan, inherited: true } };
    }
    if (ctx.stack.length >= MAX_PARAMETER_CHAIN) {
      const innermost = ctx.stack[ctx.stack.length - 1]!;
      ctx.report({
        code: 'param-chain-too-long',
        message: `Parameters refer to parameters more than ${MAX_PARAMETER_CHAIN} levels deep; the chain is not followed further.`,
        uri: innermost.def.uri,
        span: refSpan,
      });
      return { ok: false, error: { message: `The parameter chain is longer than ${MAX_PARAMETER_CHAIN}.`, span: refSpan, inherited: true } };
    }
    const def = slot.def;
    this.slots.set(key, { state: 'busy', def });
    ctx.stack.push({ scope: this, key, def });
    let result: EvalResult;
    try {
      result = this.evaluate(def.uri, def.source, def.offset);
    } finally {
      ctx.stack.pop();
    }
    if (!result.ok && !result.error.inherited) {
      ctx.report({ code: 'param-invalid', message: `Parameter \`${def.name}\` has no value: ${lowerFirst(result.error.message)}`, uri: def.uri, span: result.error.span });
    }
    const stored: Slot = { state: 'done', def, result };
    this.slots.set(key, stored);
    return result.ok ? result : this.inherit(stored, refSpan);
  }

  private inherit(slot: Slot, refSpan: Span): EvalResult {
    const def = slot.def;
    const name = def?.name ?? 'parameter';
    return {
      ok: false,
      error: {
        message: `It depends on parameter \`${name}\`, which has no value.`,
        span: refSpan,
        inherited: true,
        related: def ? [{ uri: def.uri, span: def.nameSpan, message: `\`${name}\` is defined here.` }] : undefined,
      },
    };
  }
}

/** Says why a value is not a usable number, without showing NaN or Infinity to the user. */
function nonFinite(v: number): string {
  return Number.isNaN(v) ? 'has no real value (it is not a finite number)' : 'is not a finite number (it overflows)';
}

/** Equality with the relative and absolute tolerances mathjs uses by default (1e-12, 1e-15). */
function nearlyEqual(a: number, b: number): boolean {
  if (a === b) return true;
  const diff = Math.abs(a - b);
  return diff <= Math.max(1e-12 * Math.max(Math.abs(a), Math.abs(b)), 1e-15);
}

function roundHalfAway(x: number, digits: number): number {
  if (!Number.isInteger(digits) || digits < 0 || digits > 15) return NaN;
  const f = Math.pow(10, digits);
  return (Math.sign(x) * Math.round(Math.abs(x) * f)) / f;
}

function matchParens(toks: Tok[]): Map<number, number> {
  // Maps the source end of a function name (== start of its `(`) to the index of the matching `)`.
  const out = new Map<number, number>();
  const stack: number[] = [];
  for (const t of toks) {
    if (t.t === '(') stack.push(t.start);
    else if (t.t === ')') {
      const open = stack.pop();
      if (open !== undefined) out.set(open, t.start);
    }
  }
  // Function names end right where their `(` starts only when no space separates them; allow spaces.
  const byNameEnd = new Map<number, number>();
  for (let k = 0; k + 1 < toks.length; k++) {
    const a = toks[k]!;
    const b = toks[k + 1]!;
    if (a.t === 'name' && b.t === '(') {
      const close = out.get(b.start);
      if (close !== undefined) byNameEnd.set(a.end, close);
    }
  }
  return byNameEnd;
}

/** The largest value in sorted `xs` that is at most `x`. */
function lastBefore(xs: number[], x: number): number | undefined {
  let lo = 0;
  let hi = xs.length - 1;
  let best: number | undefined;
  while (lo <= hi) {
    const mid = (lo + hi) >> 1;
    if (xs[mid]! <= x - 1) {
      best = xs[mid];
      lo = mid + 1;
    } else hi = mid - 1;
  }
  return best;
}

/** The smallest value in sorted `xs` that is at least `x`. */
function firstAfter(xs: number[], x: number): number | undefined {
  let lo = 0;
  let hi = xs.length - 1;
  let best: number | undefined;
  while (lo <= hi) {
    const mid = (lo + hi) >> 1;
    if (xs[mid]! >= x) {
      best = xs[mid];
      hi = mid - 1;
    } else lo = mid + 1;
  }
  return best;
}

function describeNode(type: string): string {
  const names: Record<string, string> = {
    AccessorNode: 'property access',
    ArrayNode: 'matrix',
    AssignmentNode: 'assignment',
    BlockNode: 'several formulas',
    FunctionAssignmentNode: 'function definition',
    IndexNode: 'indexing',
    ObjectNode: 'object',
    RangeNode: 'range',
  };
  return names[type] ?? type;
}

/** `span` inside the source (`offset`, `length`): at least one character, none past its end (an empty source gives an empty span). */
function clampSpan(span: Span, offset: number, length: number): Span {
  const lo = offset;
  const hi = offset + length;
  const start = Math.min(Math.max(span.start, lo), Math.max(hi - 1, lo));
  const end = Math.min(Math.max(span.end, start + 1), hi);
  return { start, end: Math.max(end, start) };
}

function lowerFirst(s: string): string {
  return s.length > 0 ? s[0]!.toLowerCase() + s.slice(1) : s;
}

function formatPlain(x: number): string {
  return Number.isInteger(x) ? String(x) : String(Number(x.toPrecision(6)));
}

/** The visible name closest to `name` by edit distance (at most 2), for "did you mean" hints. */
function closest(name: string, candidates: string[]): string | undefined {
  // Short names are too easy to confuse; allow one edit from 3 letters, two from 6.
  if (name.length < 3) return undefined;
  let best: string | undefined;
  let bestD = name.length >= 6 ? 3 : 2;
  for (const c of candidates) {
    if (Math.abs(c.length - name.length) >= bestD) continue;
    const d = editDistance(name, c, bestD);
    if (d < bestD) {
      bestD = d;
      best = c;
    }
  }
  return best;
}

function editDistance(a: string, b: string, cap: number): number {
  if (a.length > 64 || b.length > 64) return cap;
  // Optimal string alignment distance: a swap of two neighbouring letters counts as one edit.
  let before: number[] = [];
  let prev = Array.from({ length: b.length + 1 }, (_, k) => k);
  for (let i = 1; i <= a.length; i++) {
    const cur = [i];
    for (let j = 1; j <= b.length; j++) {
      let d = Math.min(prev[j]! + 1, cur[j - 1]! + 1, prev[j - 1]! + (a[i - 1] === b[j - 1] ? 0 : 1));
      if (i > 1 && j > 1 && a[i - 1] === b[j - 2] && a[i - 2] === b[j - 1]) d = Math.min(d, before[j - 2]! + 1);
      cur[j] = d;
    }
    before = prev;
    prev = cur;
  }
  return prev[b.length]!;
}
