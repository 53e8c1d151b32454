// Behavioural source programs: an expression of the controlling quantities (node voltages, branch currents) compiled once into a tree that evaluates its value and its exact gradient (forward-mode automatic differentiation), plus the POLY and TABLE forms built as such trees.

import type { Span } from '../types';

/** A node of a compiled program. `v` and `g` hold the value and gradient of the last evaluation (preallocated, so evaluation allocates nothing). */
export type ProgramNode = (
  | { op: 'const'; value: number }
  | { op: 'input'; index: number }
  | { op: 'neg'; a: ProgramNode }
  | { op: 'add' | 'sub' | 'mul' | 'div' | 'pow'; a: ProgramNode; b: ProgramNode }
  | { op: 'call'; name: string; args: ProgramNode[] }
  | { op: 'cond'; c: ProgramNode; t: ProgramNode; f: ProgramNode }
  | { op: 'logic'; fn: string; args: ProgramNode[] }
  | { op: 'table'; x: ProgramNode; xs: Float64Array; ys: Float64Array }
) & { span: Span; text: string; v: number; g: Float64Array };

/** A behavioural function of `inputs` controlling quantities. */
export interface BehaviourProgram {
  root: ProgramNode;
  inputs: number;
}

/** Where and why a program could not be evaluated at a point. */
export interface ProgramFailure {
  span: Span;
  /** `sqrt(V(a))` is … — a sentence without the element's name. */
  message: string;
}

/** Builds a node with its gradient buffer. */
export function node<N extends Omit<ProgramNode, 'v' | 'g'>>(n: N, inputs: number): ProgramNode {
  return { ...n, v: 0, g: new Float64Array(inputs) } as unknown as ProgramNode;
}

class Stop {
  constructor(readonly failure: ProgramFailure) {}
}

/** The functions a behavioural expression may call: value and partial derivatives (exact). */
const DERIVATIVES: Record<string, (a: number[]) => { v: number; d: number[] }> = Object.assign(Object.create(null) as Record<string, (a: number[]) => { v: number; d: number[] }>, {
  abs: ([x]: number[]) => ({ v: Math.abs(x), d: [x > 0 ? 1 : x < 0 ? -1 : 0] }),
  sqrt: ([x]: number[]) => ({ v: Math.sqrt(x), d: [0.5 / Math.sqrt(x)] }),
  exp: ([x]: number[]) => ({ v: Math.exp(x), d: [Math.exp(x)] }),
  ln: ([x]: number[]) => ({ v: Math.log(x), d: [1 / x] }),
  log: (a: number[]) =>
    a.length === 1 ? { v: Math.log(a[0]), d: [1 / a[0]] } : { v: Math.log(a[0]) / Math.log(a[1]), d: [1 / (a[0] * Math.log(a[1])), -Math.log(a[0]) / (a[1] * Math.log(a[1]) ** 2)] },
  log10: ([x]: number[]) => ({ v: Math.log10(x), d: [1 / (x * Math.LN10)] }),
  pow: ([x, y]: number[]) => powDerivative(x, y),
  floor: ([x]: number[]) => ({ v: Math.floor(x), d: [0] }),
  ceil: ([x]: number[]) => ({ v: Math.ceil(x), d: [0] }),
  round: (a: number[]) => {
    const k = Math.pow(10, a[1] ?? 0);
    const r = (Math.sign(a[0]) * Math.round(Math.abs(a[0]) * k)) / k;
    return { v: r, d: a.map(() => 0) };
  },
  sign: ([x]: number[]) => ({ v: Math.sign(x), d: [0] }),
  sin: ([x]: number[]) => ({ v: Math.sin(x), d: [Math.cos(x)] }),
  cos: ([x]: number[]) => ({ v: Math.cos(x), d: [-Math.sin(x)] }),
  tan: ([x]: number[]) => ({ v: Math.tan(x), d: [1 / Math.cos(x) ** 2] }),
  asin: ([x]: number[]) => ({ v: Math.asin(x), d: [1 / Math.sqrt(1 - x * x)] }),
  acos: ([x]: number[]) => ({ v: Math.acos(x), d: [-1 / Math.sqrt(1 - x * x)] }),
  atan: ([x]: number[]) => ({ v: Math.atan(x), d: [1 / (1 + x * x)] }),
  atan2: ([y, x]: number[]) => ({ v: Math.atan2(y, x), d: [x / (x * x + y * y), -y / (x * x + y * y)] }),
  sinh: ([x]: number[]) => ({ v: Math.sinh(x), d: [Math.cosh(x)] }),
  cosh: ([x]: number[]) => ({ v: Math.cosh(x), d: [Math.sinh(x)] }),
  tanh: ([x]: number[]) => ({ v: Math.tanh(x), d: [1 - Math.tanh(x) ** 2] }),
  min: (a: number[]) => {
    let k = 0;
    for (let j = 1; j < a.length; j++) if (a[j] < a[k]) k = j;
    return { v: a[k], d: a.map((_, j) => (j === k ? 1 : 0)) };
  },
  max: (a: number[]) => {
    let k = 0;
    for (let j = 1; j < a.length; j++) if (a[j] > a[k]) k = j;
    return { v: a[k], d: a.map((_, j) => (j === k ? 1 : 0)) };
  },
  hypot: (a: number[]) => {
    let s = 0;
    for (const x of a) s += x * x;
    const h = Math.sqrt(s);
    return { v: h, d: a.map((x) => (h > 0 ? x / h : 0)) };
  },
});

/** The functions a behavioural expression may call. */
export const PROGRAM_FUNCTIONS: readonly string[] = Object.keys(DERIVATIVES);

function powDerivative(x: number, y: number): { v: number; d: number[] } {
  const v = Math.pow(x, y);
  // d/dx x^y = y·x^(y−1); d/dy x^y = x^y·ln x (only defined for x > 0; 0 where the exponent is a constant anyway).
  return { v, d: [y === 0 ? 0 : y * Math.pow(x, y - 1), x > 0 ? v * Math.log(x) : 0] };
}

const RELATIONS: Record<string, (a: number, b: number) => boolean> = Object.assign(Object.create(null) as Record<string, (a: number, b: number) => boolean>, {
  equal: (a: number, b: number) => a === b,
  unequal: (a: number, b: number) => a !== b,
  smaller: (a: number, b: number) => a < b,
  larger: (a: number, b: number) => a > b,
  smallerEq: (a: number, b: number) => a <= b,
  largerEq: (a: number, b: number) => a >= b,
});

/**
 * Evaluates `program` at `inputs`: the value, with its gradient written into `grad` (length
 * `program.inputs`). Returns a failure, located at the sub-expression, when some part of it is not
 * a finite number there (the log of a negative number, a division by zero, …).
 */
export function evaluateProgram(program: BehaviourProgram, inputs: ArrayLike<number>, grad: Float64Array): { ok: true; value: number } | { ok: false; failure: ProgramFailure } {
  try {
    ev(program.root, inputs);
    grad.set(program.root.g);
    return { ok: true, value: program.root.v };
  } catch (e) {
    if (e instanceof Stop) return { ok: false, failure: e.failure };
    throw e;
  }
}

function check(n: ProgramNode, why: () => string): void {
  if (!Number.isFinite(n.v)) throw new Stop({ span: n.span, message: `\`${n.text}\` ${why()}` });
  const g = n.g;
  for (let k = 0; k < g.length; k++) if (!Number.isFinite(g[k])) throw new Stop({ span: n.span, message: `\`${n.text}\` has no finite slope there` });
}

function ev(n: ProgramNode, x: ArrayLike<number>): void {
  const g = n.g;
  switch (n.op) {
    case 'const':
      n.v = n.value;
      return;
    case 'input':
      n.v = x[n.index];
      g.fill(0);
      g[n.index] = 1;
      return;
    case 'neg':
      ev(n.a, x);
      n.v = -n.a.v;
      for (let k = 0; k < g.length; k++) g[k] = -n.a.g[k];
      return;
    case 'add':
    case 'sub':
    case 'mul':
    case 'div':
    case 'pow': {
      ev(n.a, x);
      ev(n.b, x);
      const a = n.a.v;
      const b = n.b.v;
      const ga = n.a.g;
      const gb = n.b.g;
      if (n.op === 'add') {
        n.v = a + b;
        for (let k = 0; k < g.length; k++) g[k] = ga[k] + gb[k];
      } else if (n.op === 'sub') {
        n.v = a - b;
        for (let k = 0; k < g.length; k++) g[k] = ga[k] - gb[k];
      } else if (n.op === 'mul') {
        n.v = a * b;
        for (let k = 0; k < g.length; k++) g[k] = ga[k] * b + a * gb[k];
      } else if (n.op === 'div') {
        if (b === 0) throw new Stop({ span: n.b.span, message: `\`${n.b.text}\` is 0 there, and it divides` });
        n.v = a / b;
        for (let k = 0; k < g.length; k++) g[k] = (ga[k] * b - a * gb[k]) / (b * b);
      } else {
        const p = powDerivative(a, b);
        n.v = p.v;
        for (let k = 0; k < g.length; k++) g[k] = p.d[0] * ga[k] + (gb[k] !== 0 ? p.d[1] * gb[k] : 0);
      }
      check(n, () => `is not a finite number there (${formatValue(a)} ${n.op === 'pow' ? '^' : n.op === 'mul' ? '·' : n.op === 'div' ? '/' : n.op === 'add' ? '+' : '−'} ${formatValue(b)})`);
      return;
    }
    case 'call': {
      const vals: number[] = [];
      for (const a of n.args) {
        ev(a, x);
        vals.push(a.v);
      }
      const r = DERIVATIVES[n.name]!(vals);
      n.v = r.v;
      g.fill(0);
      for (let j = 0; j < n.args.length; j++) {
        const dj = r.d[j] ?? 0;
        if (dj === 0) continue;
        const ga = n.args[j].g;
        for (let k = 0; k < g.length; k++) if (ga[k] !== 0) g[k] += dj * ga[k];
      }
      check(n, () => `is not defined there (${n.name} of ${vals.map(formatValue).join(', ')})`);
      return;
    }
    case 'cond': {
      ev(n.c, x);
      const b = n.c.v !== 0 ? n.t : n.f;
      ev(b, x);
      n.v = b.v;
      g.set(b.g);
      return;
    }
    case 'logic': {
      const vals = n.args.map((a) => {
        ev(a, x);
        return a.v;
      });
      g.fill(0);
      if (n.fn === 'and') n.v = vals[0] !== 0 && vals[1] !== 0 ? 1 : 0;
      else if (n.fn === 'or') n.v = vals[0] !== 0 || vals[1] !== 0 ? 1 : 0;
      else if (n.fn === 'xor') n.v = (vals[0] !== 0) !== (vals[1] !== 0) ? 1 : 0;
      else if (n.fn === 'not') n.v = vals[0] === 0 ? 1 : 0;
      else n.v = RELATIONS[n.fn]?.(vals[0], vals[1]) ? 1 : 0;
      return;
    }
    case 'table': {
      ev(n.x, x);
      const v = n.x.v;
      const { xs, ys } = n;
      const last = xs.length - 1;
      let slope = 0;
      if (v <= xs[0]) n.v = ys[0];
      else if (v >= xs[last]) n.v = ys[last];
      else {
        let j = 0;
        while (j < last - 1 && v >= xs[j + 1]) j++;
        slope = (ys[j + 1] - ys[j]) / (xs[j + 1] - xs[j]);
        n.v = ys[j] + slope * (v - xs[j]);
      }
      for (let k = 0; k < g.length; k++) g[k] = slope * n.x.g[k];
      check(n, () => 'is not a finite number there');
      return;
    }
  }
}

function formatValue(v: number): string {
  return Number.isFinite(v) ? String(Number(v.toPrecision(4))) : String(v);
}

/**
 * POLY(n) in the trade's coefficient order: P0 + Σ Pi·xi + Σ_{i≤j} Pij·xi·xj + Σ_{i≤j≤k} Pijk·xi·xj·xk + …,
 * the terms of each degree in lexicographic order of their (non-decreasing) index tuples.
 * Built as a sum of products over the `dimension` inputs.
 */
export function polyProgram(coefficients: readonly number[], dimension: number, span: Span, text: string): BehaviourProgram {
  const inputs = dimension;
  const mk = (n: Record<string, unknown>): ProgramNode => node({ ...n, span, text } as never, inputs);
  let sum: ProgramNode | undefined;
  let c = 0;
  for (let degree = 0; c < coefficients.length; degree++) {
    for (const tuple of tuples(dimension, degree)) {
      if (c >= coefficients.length) break;
      const p = coefficients[c++];
      if (p === 0) continue;
      let term: ProgramNode = mk({ op: 'const', value: p });
      for (const idx of tuple) term = mk({ op: 'mul', a: term, b: mk({ op: 'input', index: idx }) });
      sum = sum ? mk({ op: 'add', a: sum, b: term }) : term;
    }
    if (dimension === 0) break;
  }
  return { root: sum ?? mk({ op: 'const', value: 0 }), inputs };
}

/** Non-decreasing index tuples of length `degree` over 0…n−1, in lexicographic order. */
function tuples(n: number, degree: number): number[][] {
  if (degree === 0) return [[]];
  const out: number[][] = [];
  const rec = (start: number, prefix: number[]): void => {
    if (prefix.length === degree) {
      out.push(prefix.slice());
      return;
    }
    for (let i = start; i < n; i++) {
      prefix.push(i);
      rec(i, prefix);
      prefix.pop();
      if (out.length > 10000) return;
    }
  };
  rec(0, []);
  return out;
}
