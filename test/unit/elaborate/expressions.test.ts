// Checks the closed-scope expression evaluator: arithmetic, functions, scopes, rejected constructs, cycles.
import { evaluate as mathjsEvaluate } from 'mathjs';
import { describe, expect, it } from 'vitest';
import {
  EvaluationContext,
  ParamScope,
  compileExpression,
  evaluateCompiled,
  type ScopeReport,
} from '../../../shared-analysis/src/elaborate/expressions';

const OFFSET = 100; // the expression sits at document offset 100, so spans must be shifted by it

interface Expected {
  value?: number;
  /** Relative tolerance for `value`. */
  tol?: number;
  error?: RegExp;
  /** The text the error span must cover, inside the expression. */
  at?: string;
}

/** Evaluates `source` with the given plain parameter values and compares with the expectation. */
function check(source: string, expected: Expected, params: Record<string, string> = {}): void {
  const reports: ScopeReport[] = [];
  const scope = new ParamScope(new EvaluationContext((r) => reports.push(r)), { label: 'top level' });
  let pos = 10000;
  for (const [name, rhs] of Object.entries(params)) {
    scope.define({ name, source: rhs, offset: pos, uri: 'p', span: { start: pos, end: pos + rhs.length }, nameSpan: { start: pos, end: pos + 1 } });
    pos += 1000;
  }
  const r = scope.evaluate('doc', source, OFFSET);
  if (expected.value !== undefined) {
    expect(r, source).toMatchObject({ ok: true });
    if (r.ok) expect(Math.abs(r.value - expected.value), source).toBeLessThanOrEqual(Math.abs(expected.value) * (expected.tol ?? 1e-12) + 1e-300);
  }
  if (expected.error) {
    expect(r.ok, source).toBe(false);
    if (!r.ok) {
      expect(r.error.message).toMatch(expected.error);
      expect(r.error.span.start).toBeGreaterThanOrEqual(OFFSET);
      expect(r.error.span.end).toBeLessThanOrEqual(OFFSET + source.length);
      if (expected.at !== undefined) {
        expect(source.slice(r.error.span.start - OFFSET, r.error.span.end - OFFSET)).toBe(expected.at);
      }
    }
  }
}

/** Evaluates a plain expression (no suffixes, no parameters) both ways and demands agreement. */
function crossCheck(source: string): void {
  // Source: mathjs 15 `evaluate`, a general-purpose reference implementation of the same operators.
  const reference = mathjsEvaluate(source) as number | boolean;
  const want = typeof reference === 'boolean' ? (reference ? 1 : 0) : reference;
  check(source, { value: want, tol: 1e-14 });
}

describe('arithmetic and functions agree with mathjs', () => {
  it.each([
    '1 + 2 * 3',
    '(1 + 2) * 3',
    '2 ^ 10',
    '2 ^ -1',
    '-3 ^ 2',
    '10 / 4',
    '1.5e3 / 7',
    'sqrt(2) * sqrt(8)',
    'exp(1) - e',
    'log(100)',
    'log(8, 2)',
    'log10(1000)',
    'pow(3, 4)',
    'min(3, 1, 2) + max(4, 9, 5)',
    'floor(2.7) + ceil(2.2) + round(2.5) + round(-2.5)',
    'round(3.14159, 2)',
    'sin(pi / 6) + cos(pi / 3) + tan(pi / 4)',
    'asin(0.5) + acos(0.5) + atan(1)',
    'atan2(1, 2)',
    'sinh(1) + cosh(1) + tanh(0.5)',
    'sign(-4) + abs(-7)',
    'hypot(3, 4)',
    '2 < 3',
    '3 <= 3',
    '2 > 3',
    '4 >= 5',
    '2 == 2',
    '2 != 2',
    '0.1 + 0.2 == 0.3',
    '1 < 2 < 3',
    '3 > 2 > 1 ? 10 : 20',
    '1 and 0',
    '1 or 0',
    'not 0',
    '1 xor 1',
    '2 > 1 ? 5 : 6',
    '0 ? 1 : 0 ? 2 : 3',
  ])('%s', (s) => crossCheck(s));

  it('maps ln to the natural logarithm', () => check('ln(e^2)', { value: 2, tol: 1e-15 }));
  it('accepts the C-style logical operators and ** for power', () => {
    check('1 && 0', { value: 0 });
    check('0 || 1', { value: 1 });
    check('!0', { value: 1 });
    check('2 ** 3', { value: 8 });
  });
  it('is case-insensitive for functions, constants and parameters', () => {
    check('SQRT(4) + PI - pi', { value: 2 });
    check('RLOAD * 2', { value: 2000 }, { rload: '1k' });
  });
});

describe('engineering numbers inside expressions', () => {
  // Source: the engineering-suffix convention of the README ("The netlist dialect") (common practice).
  it('rewrites suffixed numbers before parsing', () => {
    check('2*10k', { value: 20000 });
    check('1meg/3', { value: 1e6 / 3 });
    check('4.7u + 300n', { value: 5e-6, tol: 1e-12 });
    check('10kOhm', { value: 1e4 });
    check('5V * 2', { value: 10 });
    check('1mil', { value: 25.4e-6 });
    check('10pF + 1nF', { value: 1.01e-9, tol: 1e-12 });
    check('2uH', { value: 2e-6 });
    check('20um', { value: 20e-6 });
  });
  it('rejects letters that are neither suffix nor unit, with the position', () => {
    check('3 + 2pi', { error: /neither a scale suffix nor a unit/, at: '2pi' });
    check('1 + 4k7', { error: /digit after its letters/, at: '4k7' });
  });
});

describe('scope', () => {
  it('reads parameters in scope and sees outer scopes', () => {
    const ctx = new EvaluationContext(() => undefined);
    const outer = new ParamScope(ctx, { label: 'top level' });
    outer.define({ name: 'vdd', source: '5', offset: 0, uri: 'a', span: { start: 0, end: 1 }, nameSpan: { start: 0, end: 1 } });
    const inner = new ParamScope(ctx, { parent: outer, label: 'subcircuit x' });
    inner.define({ name: 'half', source: 'vdd/2', offset: 10, uri: 'a', span: { start: 10, end: 15 }, nameSpan: { start: 10, end: 11 } });
    expect(inner.evaluate('a', 'half + vdd', 50)).toEqual({ ok: true, value: 7.5 });
    // The outer scope does not see the inner one.
    const r = outer.evaluate('a', 'half', 60);
    expect(r.ok).toBe(false);
  });
  it('allows forward references within a scope', () => {
    check('a', { value: 6 }, { a: 'b * 2', b: 'c + 1', c: '2' });
  });
  it('lets parameters shadow the constants', () => check('e', { value: 3 }, { e: '3' }));
  it('reports unknown names at their position, with a near-miss hint', () => {
    check('2 * rlaod', { error: /`rlaod` is not a parameter in scope.*did you mean `rload`/, at: 'rlaod' }, { rload: '1k' });
    check('x > 0 ? 1 : missing', { error: /`missing` is not a parameter/, at: 'missing' }, { x: '1' });
  });
  it('evaluates only the taken branch, so a guarded division is fine', () => {
    check('x == 0 ? 0 : 1/x', { value: 0 }, { x: '0' });
  });
});

describe('rejected constructs are located errors', () => {
  it.each<[string, RegExp, string]>([
    ['import(x)', /`import` is not a known function/, 'import'],
    ['createUnit("furlong")', /strings are not allowed/, '"'],
    ['createUnit(3)', /`createUnit` is not a known function/, 'createUnit'],
    ['evaluate(2)', /`evaluate` is not a known function/, 'evaluate'],
    ['parse(1)', /`parse` is not a known function/, 'parse'],
    ['simplify(1)', /`simplify` is not a known function/, 'simplify'],
    ['1 + import', /`import` is not a parameter in scope/, 'import'],
    ['a.b', /Property access/, '.'],
    ['a["b"]', /Matrices, arrays and indexing/, '['],
    ['[1, 2]', /Matrices, arrays and indexing/, '['],
    ['{a: 1}', /Braces cannot appear/, '{'],
    ['1:3', /ranges are not allowed/, ':'],
    ['5 cm', /`cm` is not a parameter in scope/, 'cm'],
    ['5 inch + 1', /`inch` is not a parameter in scope/, 'inch'],
    ['5 to cm', /`to` is not an allowed operator/, 'to'],
    ['x = 3', /A single `=` would assign/, '='],
    ['f(x) = x^2', /A single `=` would assign/, '='],
    ['2 & 3', /bitwise and/, '&'],
    ['50%', /`%` is not an allowed operator/, '%'],
    ['1; 2', /one formula only/, ';'],
    ['2 mod 3', /`mod` is not an allowed operator/, 'mod'],
    ['1 << 2', /bit shift/, '<<'],
    ['sqrt(1, 2)', /`sqrt` takes 1 argument but is given 2/, 'sqrt(1, 2)'],
    ['(1 + 2', /never closed/, '('],
    ['1 + 2)', /no matching `\(`/, ')'],
    ['1 +', /cannot be read/, '+'],
  ])('%s', (source, error, at) => check(source, { error, at }));

  it('reports implicit multiplication after names resolve', () => {
    check('2 x', { error: /operator is missing between `2` and `x`/, at: 'x' }, { x: '1' });
  });
});

describe('numeric failures', () => {
  it('reports division by zero at the divisor', () => {
    check('1 / (a - b)', { error: /Division by zero: `\(a - b\)` is 0/, at: '(a - b)' }, { a: '2', b: '2' });
  });
  it('reports non-finite function results at the call', () => {
    check('2 + sqrt(-1)', { error: /`sqrt\(-1\)` has no real value/, at: 'sqrt(-1)' });
    check('log(0)', { error: /not a finite number/, at: 'log(0)' });
    check('10 ^ 400', { error: /not a finite number/, at: '10 ^ 400' });
  });
});

describe('cycles and limits', () => {
  it('names the chain of a cycle once', () => {
    const reports: ScopeReport[] = [];
    const scope = new ParamScope(new EvaluationContext((r) => reports.push(r)), { label: 'top level' });
    scope.define({ name: 'a', source: 'b + 1', offset: 0, uri: 'd', span: { start: 0, end: 5 }, nameSpan: { start: 0, end: 1 } });
    scope.define({ name: 'b', source: '2 * a', offset: 10, uri: 'd', span: { start: 10, end: 15 }, nameSpan: { start: 10, end: 11 } });
    const r = scope.evaluate('d', 'a', 50);
    expect(r.ok).toBe(false);
    expect(reports).toHaveLength(1);
    expect(reports[0]!.code).toBe('param-cycle');
    expect(reports[0]!.message).toContain('a → b → a');
    expect(reports[0]!.span).toEqual({ start: 14, end: 15 }); // the `a` inside b's expression
    // A second look does not report again.
    scope.evaluate('d', 'b', 60);
    expect(reports).toHaveLength(1);
  });
  it('reports a self-reference', () => {
    const reports: ScopeReport[] = [];
    const scope = new ParamScope(new EvaluationContext((r) => reports.push(r)), { label: 'top level' });
    scope.define({ name: 'k', source: 'k + 1', offset: 0, uri: 'd', span: { start: 0, end: 5 }, nameSpan: { start: 0, end: 1 } });
    scope.evaluate('d', 'k', 50);
    expect(reports.map((r) => r.message)).toEqual([expect.stringContaining('k → k')]);
  });
  it('stops at deep nesting, long texts and long chains without overflowing the stack', () => {
    check('('.repeat(100000) + '1' + ')'.repeat(100000), { error: /at most 4096/ });
    check('('.repeat(1000) + '1' + ')'.repeat(1000), { error: /nests brackets more than 64/ });
    check(Array.from({ length: 1000 }, () => '1').join('+'), { error: /nested more than 400/ });
    check('-'.repeat(3000) + '1', { error: /nested|deep/ });
    const reports: ScopeReport[] = [];
    const scope = new ParamScope(new EvaluationContext((r) => reports.push(r)), { label: 'top level' });
    for (let k = 0; k < 5000; k++) {
      scope.define({ name: `p${k}`, source: `p${k + 1} + 1`, offset: k * 20, uri: 'd', span: { start: k * 20, end: k * 20 + 5 }, nameSpan: { start: k * 20, end: k * 20 + 2 } });
    }
    scope.define({ name: 'p5000', source: '0', offset: 200000, uri: 'd', span: { start: 200000, end: 200001 }, nameSpan: { start: 200000, end: 200001 } });
    const r = scope.evaluate('d', 'p0', 300000);
    expect(r.ok).toBe(false);
    expect(reports.some((x) => x.code === 'param-chain-too-long')).toBe(true);
  });
});

describe('compileExpression', () => {
  it('records references in order with document spans', () => {
    const c = compileExpression('a + max(b, 2k)', 7);
    expect(c.ok).toBe(true);
    if (c.ok) {
      expect(c.expr.references).toEqual([
        { name: 'a', span: { start: 7, end: 8 } },
        { name: 'b', span: { start: 15, end: 16 } },
      ]);
      expect(evaluateCompiled(c.expr, () => ({ ok: true, value: 1 }))).toEqual({ ok: true, value: 2001 });
    }
  });
});
