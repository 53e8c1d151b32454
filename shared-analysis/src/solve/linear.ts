// The seam between the Newton loop and the linear algebra: a fixed sparsity pattern, refactored many times.

import { SparseLU } from './sparse-lu';

/** The structurally non-zero entries of an n×n matrix, each (row, col) pair listed once. */
export interface SparsePattern {
  n: number;
  rows: Int32Array;
  cols: Int32Array;
}

export type FactorResult = { ok: true } | { ok: false; /** Row/column (unknown) index where no usable pivot was found. */ singularIndex: number };

/**
 * A factorisation bound to one pattern. `factor(values)` takes values aligned with the
 * pattern's entries; `solve(b)` returns x with A·x = b for the last successful factor.
 * Symbolic work (ordering, structure) is done once and reused by every `factor`.
 */
/**
 * The non-zero entries of a sparse result: the first `count` of `index` (original indices, any order) and `value`.
 * Entries past `count` are left from earlier results: the lists are reused from solve to solve and never emptied,
 * since emptying an array (\`length = 0\`) gives it new storage at the next push.
 */
export interface SparseEntries {
  index: number[];
  value: number[];
  count: number;
}

export interface LinearSolver {
  factor(values: Float64Array): FactorResult;
  /** `factor` of R·A·C for the diagonal scales R = `rowScale`, C = `colScale`, with no scaled copy of `values` made (see SparseLU). */
  factorScaled?(values: Float64Array, rowScale: Float64Array, colScale: Float64Array): FactorResult;
  solve(b: Float64Array, x?: Float64Array): Float64Array;
  /**
   * x = C·(R·A·C)⁻¹·R·b on the factors of the last `factorScaled` (see SparseLU), each product the one a scaled copy of
   * b and a scaling of the result would make; `x` may not be `b`.
   */
  solveScaled?(b: Float64Array, rowScale: Float64Array, colScale: Float64Array, x: Float64Array): void;
  /** Returns x with Aᵀ·x = b for the last successful factor (the adjoint solve of sensitivity analysis); zeros after a failed one. */
  solveTranspose(b: Float64Array, x?: Float64Array): Float64Array;
  /** Aᵀ·x = b for a sparse b; the non-zero entries of x go to `out` (see SparseLU). `x` is an all-zero work vector of length n, left all zeros. */
  solveTransposeSparse?(bIndex: ArrayLike<number>, bValue: ArrayLike<number>, x: Float64Array, out: SparseEntries): void;
}

/** Dense LU with partial pivoting over the same interface: a reference for tests and the fallback for tiny systems. */
export class DenseLU implements LinearSolver {
  private readonly a: Float64Array;
  private readonly perm: Int32Array;

  constructor(private readonly pattern: SparsePattern) {
    this.a = new Float64Array(pattern.n * pattern.n);
    this.perm = new Int32Array(pattern.n);
  }

  factor(values: Float64Array): FactorResult {
    const { n, rows, cols } = this.pattern;
    const a = this.a;
    a.fill(0);
    for (let k = 0; k < rows.length; k++) a[rows[k] * n + cols[k]] += values[k];
    for (let i = 0; i < n; i++) this.perm[i] = i;
    let scale = 0;
    for (let k = 0; k < a.length; k++) scale = Math.max(scale, Math.abs(a[k]));
    const tiny = (scale || 1) * 1e-300;
    for (let k = 0; k < n; k++) {
      let p = k;
      let best = Math.abs(a[k * n + k]);
      for (let i = k + 1; i < n; i++) {
        const v = Math.abs(a[i * n + k]);
        if (v > best) { best = v; p = i; }
      }
      if (!(best > tiny)) return { ok: false, singularIndex: k };
      if (p !== k) {
        for (let j = 0; j < n; j++) { const t = a[k * n + j]; a[k * n + j] = a[p * n + j]; a[p * n + j] = t; }
        const t = this.perm[k]; this.perm[k] = this.perm[p]; this.perm[p] = t;
      }
      const piv = a[k * n + k];
      for (let i = k + 1; i < n; i++) {
        const f = (a[i * n + k] /= piv);
        if (f !== 0) for (let j = k + 1; j < n; j++) a[i * n + j] -= f * a[k * n + j];
      }
    }
    return { ok: true };
  }

  solve(b: Float64Array, x: Float64Array = new Float64Array(this.pattern.n)): Float64Array {
    const n = this.pattern.n;
    const a = this.a;
    const y = new Float64Array(n);
    for (let i = 0; i < n; i++) {
      let s = b[this.perm[i]];
      for (let j = 0; j < i; j++) s -= a[i * n + j] * y[j];
      y[i] = s;
    }
    for (let i = n - 1; i >= 0; i--) {
      let s = y[i];
      for (let j = i + 1; j < n; j++) s -= a[i * n + j] * x[j];
      x[i] = s / a[i * n + i];
    }
    return x;
  }

  solveTranspose(b: Float64Array, x: Float64Array = new Float64Array(this.pattern.n)): Float64Array {
    // P·A = L·U, so Aᵀ = Uᵀ·Lᵀ·P: solve Uᵀ·z = b, then Lᵀ·w = z, then x = Pᵀ·w.
    const n = this.pattern.n;
    const a = this.a;
    const z = new Float64Array(n);
    for (let i = 0; i < n; i++) {
      let s = b[i];
      for (let j = 0; j < i; j++) s -= a[j * n + i] * z[j];
      z[i] = s / a[i * n + i];
    }
    for (let i = n - 1; i >= 0; i--) {
      let s = z[i];
      for (let j = i + 1; j < n; j++) s -= a[j * n + i] * z[j];
      z[i] = s;
    }
    for (let i = 0; i < n; i++) x[this.perm[i]] = z[i];
    return x;
  }
}

/**
 * The solver the engine uses for a pattern: the sparse LU (sparse-lu.ts) with its default
 * tuning, at every size. Measured against DenseLU (docs/PERFORMANCE.md): dense is at most
 * a few hundredths of a microsecond faster below 8 unknowns and slower from 16 on, so one
 * code path, with the sparse LU's singularity checks and original-index reporting, serves all.
 */
export function createLinearSolver(pattern: SparsePattern): LinearSolver {
  if (pattern.n < ORDER_REUSE_FROM) return new SparseLU(pattern);
  // A re-analysis after a value edit builds the same pattern again: take the column order of the
  // last large pattern when it is exactly this one, instead of ordering it again.
  const same = lastOrder !== undefined && samePattern(lastOrder.pattern, pattern);
  const lu = new SparseLU(pattern, same ? { columnOrder: lastOrder!.order } : {});
  if (!same) lastOrder = { pattern: { n: pattern.n, rows: pattern.rows.slice(), cols: pattern.cols.slice() }, order: lu.columnOrder };
  return lu;
}

/** Patterns with at least this many unknowns keep their column order for the next identical pattern (ordering costs milliseconds from here). */
const ORDER_REUSE_FROM = 2000;
/** The last large pattern ordered, with its order. */
let lastOrder: { pattern: SparsePattern; order: Int32Array } | undefined;

function samePattern(a: SparsePattern, b: SparsePattern): boolean {
  if (a.n !== b.n || a.rows.length !== b.rows.length || a.cols.length !== b.cols.length) return false;
  for (let k = 0; k < a.rows.length; k++) if (a.rows[k] !== b.rows[k] || a.cols[k] !== b.cols[k]) return false;
  return true;
}
