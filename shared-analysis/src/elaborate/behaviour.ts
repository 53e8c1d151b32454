// Reads behavioural sources (B with V= or I=, and the VALUE, TABLE and POLY forms of E, F, G, H) into programs of their controlling quantities, with the parameters of their scope folded in.

import type { MathNode } from 'mathjs';
import { PROGRAM_FUNCTIONS, node, polyProgram, type BehaviourProgram, type ProgramNode } from '../devices/behaviour-program';
import type { Span } from '../types';
import type { Token } from '../syntax/ast';
import { compileExpression, type ExpressionError, type ParamScope } from './expressions';
import { expressionOf } from './values';

/** Most distinct controlling quantities one behavioural source may read. */
export const MAX_BEHAVIOUR_INPUTS = 8;

/** One controlling quantity as written: a node voltage (against ground when `b` is absent) or the current through a named element. */
export type BehaviourInputRef = { kind: 'v'; a: Token; b?: Token } | { kind: 'i'; source: Token };

export type BehaviourCompile = { ok: true; program: BehaviourProgram; inputs: BehaviourInputRef[] } | { ok: false; error: ExpressionError };

const FUNCTIONS = new Set(PROGRAM_FUNCTIONS);
/** V(…) and I(…) references: a letter not preceded by a name character, then a bracket holding no bracket. */
const REFERENCE = /(^|[^A-Za-z0-9_.$])([VvIi])\s*\(([^()]*)\)/g;

/**
 * Compiles the expression of `tok` (braces or quotes around it, or a bare word): every V(a),
 * V(a,b) and I(name) becomes an input, every parameter is read from `scope` now, and the tree is
 * built for value-and-gradient evaluation.
 */
export function compileBehaviour(tok: Token, scope: ParamScope): BehaviourCompile {
  const { source, offset } = expressionOf(tok);
  const inputs: BehaviourInputRef[] = [];
  const keys = new Map<string, number>();
  let replaced = '';
  let last = 0;
  let error: ExpressionError | undefined;
  for (const m of source.matchAll(REFERENCE)) {
    const start = m.index! + m[1].length;
    const end = m.index! + m[0].length;
    const letter = m[2].toUpperCase();
    const inner = m[3];
    const innerStart = end - 1 - inner.length;
    const args: Token[] = [];
    let at = 0;
    for (const part of inner.split(',')) {
      const lead = part.length - part.trimStart().length;
      const text = part.trim();
      const s = offset + innerStart + at + lead;
      args.push({ text, span: { start: s, end: s + text.length }, kind: 'word' });
      at += part.length + 1;
    }
    const here: Span = { start: offset + start, end: offset + end };
    if (args.some((a) => a.text === '') || (letter === 'V' && args.length > 2) || (letter === 'I' && args.length !== 1)) {
      error ??= { message: `\`${source.slice(start, end)}\` is not a controlling quantity; write V(node), V(node, node) or I(voltage source).`, span: here };
      continue;
    }
    const key = letter + args.map((a) => a.text.toLowerCase()).join(',');
    let index = keys.get(key);
    if (index === undefined) {
      index = inputs.length;
      keys.set(key, index);
      inputs.push(letter === 'V' ? { kind: 'v', a: args[0], b: args[1] } : { kind: 'i', source: args[0] });
    }
    const placeholder = `_q${index}`;
    if (placeholder.length > end - start || inputs.length > MAX_BEHAVIOUR_INPUTS) {
      error ??= { message: `The expression reads more than ${MAX_BEHAVIOUR_INPUTS} different voltages and currents; at most ${MAX_BEHAVIOUR_INPUTS} are read.`, span: here };
      continue;
    }
    replaced += source.slice(last, start) + placeholder.padEnd(end - start, '_');
    last = end;
  }
  if (error) return { ok: false, error };
  replaced += source.slice(last);
  const compiled = compileExpression(replaced, offset);
  if (!compiled.ok) return compiled;
  const expr = compiled.expr;
  const n = inputs.length;
  const whole: Span = { start: offset, end: offset + Math.max(1, source.length) };
  const spanOf = (m: MathNode): Span => {
    const s = expr.spans.get(m);
    return s ? { start: s.start + offset, end: s.end + offset } : whole;
  };
  const textOf = (s: Span): string => source.slice(s.start - offset, s.end - offset);
  const build = (m: MathNode): ProgramNode => {
    const r = m as MathNode & Record<string, unknown>;
    const span = spanOf(m);
    const text = textOf(span);
    const mk = (x: Record<string, unknown>): ProgramNode => node({ ...x, span, text } as never, n);
    switch (m.type) {
      case 'ConstantNode':
        return mk({ op: 'const', value: typeof r.value === 'boolean' ? (r.value ? 1 : 0) : Number(r.value) });
      case 'SymbolNode': {
        const name = String(r.name);
        const q = /^_q(\d+)_*$/.exec(name);
        if (q) return mk({ op: 'input', index: Number(q[1]) });
        const v = scope.lookup(name, span);
        if (!v.ok) throw new Unusable(v.error);
        return mk({ op: 'const', value: v.value });
      }
      case 'ParenthesisNode':
        return build(r.content as MathNode);
      case 'ConditionalNode':
        return mk({ op: 'cond', c: build(r.condition as MathNode), t: build(r.trueExpr as MathNode), f: build(r.falseExpr as MathNode) });
      case 'RelationalNode': {
        const params = (r.params as MathNode[]).map(build);
        const conds = r.conditionals as string[];
        let out = mk({ op: 'logic', fn: conds[0], args: [params[0], params[1]] });
        for (let k = 1; k < conds.length; k++) out = mk({ op: 'logic', fn: 'and', args: [out, mk({ op: 'logic', fn: conds[k], args: [params[k], params[k + 1]] })] });
        return out;
      }
      case 'OperatorNode': {
        const args = (r.args as MathNode[]).map(build);
        const fn = String(r.fn);
        const binary: Record<string, string> = { add: 'add', subtract: 'sub', multiply: 'mul', divide: 'div', pow: 'pow' };
        if (fn === 'unaryMinus') return mk({ op: 'neg', a: args[0] });
        if (fn === 'unaryPlus') return args[0];
        if (binary[fn]) return mk({ op: binary[fn], a: args[0], b: args[1] });
        return mk({ op: 'logic', fn, args });
      }
      case 'FunctionNode': {
        const name = String((r.fn as { name: string }).name).toLowerCase();
        if (!FUNCTIONS.has(name)) {
          throw new Unusable({ message: `\`${name}\` cannot be used in a behavioural source: it reads ${PROGRAM_FUNCTIONS.join(', ')} (a .func function is not differentiated).`, span });
        }
        return mk({ op: 'call', name, args: (r.args as MathNode[]).map(build) });
      }
      default:
        throw new Unusable({ message: 'This kind of expression is not allowed in a behavioural source.', span });
    }
  };
  try {
    return { ok: true, program: { root: build(expr.root), inputs: n }, inputs };
  } catch (e) {
    if (e instanceof Unusable) return { ok: false, error: e.error };
    if (e instanceof RangeError) return { ok: false, error: { message: 'The expression is nested too deeply.', span: whole } };
    throw e;
  }
}

class Unusable {
  constructor(readonly error: ExpressionError) {}
}

/**
 * POLY(n): `POLY(n) c1 … cn P0 P1 …`, the controls being n node pairs (E, G) or n source names
 * (F, H), then the coefficients. `fields` are the card's tokens after the keyword.
 */
export function compilePoly(
  fields: Token[],
  byCurrent: boolean,
  value: (t: Token) => number | undefined,
): { ok: true; program: BehaviourProgram; inputs: BehaviourInputRef[] } | { ok: false; error: ExpressionError } {
  const dimTok = fields[0];
  const dim = dimTok ? Number(dimTok.text) : NaN;
  if (!dimTok || !Number.isInteger(dim) || dim < 1 || dim > MAX_BEHAVIOUR_INPUTS) {
    return { ok: false, error: { message: `POLY(n) needs a whole number of controls from 1 to ${MAX_BEHAVIOUR_INPUTS}.`, span: (dimTok ?? fields[0])?.span ?? { start: 0, end: 1 } } };
  }
  const per = byCurrent ? 1 : 2;
  const controls = fields.slice(1, 1 + per * dim);
  const coeffTokens = fields.slice(1 + per * dim);
  if (controls.length < per * dim || coeffTokens.length === 0) {
    const at = fields[fields.length - 1]!.span;
    return { ok: false, error: { message: `POLY(${dim}) needs ${dim} ${byCurrent ? 'controlling source names' : 'controlling node pairs'} and then at least one coefficient.`, span: at } };
  }
  const inputs: BehaviourInputRef[] = [];
  for (let k = 0; k < dim; k++) inputs.push(byCurrent ? { kind: 'i', source: controls[k] } : { kind: 'v', a: controls[2 * k], b: controls[2 * k + 1] });
  const coefficients: number[] = [];
  for (const t of coeffTokens) {
    const v = value(t);
    if (v === undefined) return { ok: false, error: { message: `The POLY coefficient \`${t.text}\` is not a number.`, span: t.span, inherited: true } };
    coefficients.push(v);
  }
  const span: Span = { start: fields[0].span.start, end: fields[fields.length - 1].span.end };
  return { ok: true, program: polyProgram(coefficients, dim, span, `POLY(${dim})`), inputs };
}

/**
 * TABLE: `TABLE {expr} = (x1, y1) (x2, y2) …` (the `=` and brackets optional): piecewise linear in
 * the expression's value, held at the end values outside the table. The x values must rise.
 */
export function compileTable(
  fields: Token[],
  scope: ParamScope,
  value: (t: Token) => number | undefined,
): { ok: true; program: BehaviourProgram; inputs: BehaviourInputRef[] } | { ok: false; error: ExpressionError } {
  const exprTok = fields[0];
  if (!exprTok) return { ok: false, error: { message: 'TABLE needs an expression and pairs of values.', span: { start: 0, end: 1 } } };
  const inner = compileBehaviour(exprTok, scope);
  if (!inner.ok) return inner;
  const numbers: number[] = [];
  for (const t of fields.slice(1)) {
    if (t.text === '=') continue;
    for (const piece of t.text.split(/[(),\s]+/).filter((p) => p !== '' && p !== '=')) {
      const v = value({ text: piece, span: t.span, kind: 'word' });
      if (v === undefined) return { ok: false, error: { message: `The TABLE value \`${piece}\` is not a number.`, span: t.span, inherited: true } };
      numbers.push(v);
    }
  }
  if (numbers.length < 2 || numbers.length % 2 !== 0) {
    return { ok: false, error: { message: 'TABLE needs pairs of values (x, y), at least one pair.', span: exprTok.span } };
  }
  const xs = new Float64Array(numbers.length / 2);
  const ys = new Float64Array(numbers.length / 2);
  for (let k = 0; k < xs.length; k++) {
    xs[k] = numbers[2 * k];
    ys[k] = numbers[2 * k + 1];
    if (k > 0 && !(xs[k] > xs[k - 1])) return { ok: false, error: { message: `The TABLE's x values must rise; ${xs[k]} follows ${xs[k - 1]}.`, span: exprTok.span } };
  }
  const n = inner.program.inputs;
  const span: Span = { start: exprTok.span.start, end: fields[fields.length - 1]!.span.end };
  const root = node({ op: 'table', x: inner.program.root, xs, ys, span, text: 'TABLE' } as never, n);
  return { ok: true, program: { root, inputs: n }, inputs: inner.inputs };
}
