// Sparse LU for MNA matrices: left-looking Gilbert–Peierls with threshold pivoting, then numeric-only refactorisation.

import { float64Column, int32Column, uint8Column } from '../columns';
import type { FactorResult, LinearSolver, SparseEntries, SparsePattern } from './linear';
import { approximateMinimumDegree, symmetricPattern } from './ordering';

/** Tuning of {@link SparseLU}; every field has a default that suits MNA matrices. */
export interface SparseLUOptions {
  /**
   * Threshold partial pivoting: the diagonal entry is kept as pivot while its magnitude
   * is at least this fraction of the largest candidate in its column (default 1e-3).
   */
  pivotThreshold?: number;
  /**
   * A refactorisation keeps the recorded pivot order while each pivot is at least this
   * fraction of the largest entry below it; otherwise it falls back to a fresh pivoting
   * factorisation (default 1e-6).
   */
  refactorThreshold?: number;
  /**
   * A column whose best pivot is at most this fraction of the magnitudes that went into
   * it is taken as numerically singular (default 1e-14, about 45 units of rounding).
   */
  singularTolerance?: number;
  /** Column ordering: `minimum-degree` (default) or `natural` (the pattern's own order, for tests). */
  ordering?: 'minimum-degree' | 'natural';
  /**
   * A column order to use instead of computing one: the `columnOrder` of a solver built on the very
   * same pattern (a re-analysis after a value edit). Ignored unless it is a permutation of 0..n−1.
   */
  columnOrder?: Int32Array;
}

/** Why a factorisation failed, beyond the index of the unknown. */
export type FactorFailure =
  | 'structurally-singular'
  | 'numerically-singular'
  | 'non-finite-value'
  /** Fewer values than pattern entries; the index is the row of the first entry without a value. */
  | 'missing-values'
  | 'invalid-pattern';

/** Counters a caller or benchmark can read after factorising. */
export interface SparseLUStats {
  /** Factorisations that chose pivots and built the L/U patterns. */
  pivotingFactorizations: number;
  /** Factorisations that reused the recorded pivots and patterns. */
  refactorizations: number;
  /** Refactorisations abandoned because a pivot became too small, each followed by a pivoting one. */
  pivotFallbacks: number;
  /** Entries of L (below the diagonal) and U (above it), plus n diagonal entries. */
  factorNonzeros: number;
  /** Entries of the matrix pattern. */
  matrixNonzeros: number;
}

// What `SparseLU.refactorScaled` did: finished, met a pivot the refactorisation refuses, met an entry that is not finite (or was not tried).
const REFACTOR_DONE = 1;
const REFACTOR_SMALL_PIVOT = 0;
const REFACTOR_NOT_FINITE = -1;
const REFACTOR_NOT_TRIED = -2;
/** Reach sizes up to which the transposed solve sorts its positions by insertion (an adjoint's reach is usually a handful). */
const INSERTION_SORT_MAX = 32;

/** Growable typed-array pair used while the L/U patterns are discovered. */
class Growable {
  idx: Int32Array;
  val: Float64Array;
  length = 0;
  constructor(capacity: number) {
    this.idx = int32Column(Math.max(16, capacity));
    this.val = float64Column(Math.max(16, capacity));
  }
  /** Makes room for `extra` more entries (the caller then writes idx/val directly). */
  reserve(extra: number): void {
    if (this.length + extra > this.idx.length) {
      const cap = Math.max(this.idx.length * 2, this.length + extra);
      const idx = int32Column(cap);
      idx.set(this.idx);
      const val = float64Column(cap);
      val.set(this.val);
      this.idx = idx;
      this.val = val;
    }
  }
}

/**
 * A sparse LU bound to one pattern (T. A. Davis, "Direct Methods for Sparse Linear
 * Systems", SIAM 2006, ch. 6: left-looking LU with a sparse triangular solve per column;
 * J. R. Gilbert and T. Peierls, SIAM J. Sci. Stat. Comput. 9(5), 1988).
 *
 * Construction orders the columns by approximate minimum degree on A + Aᵀ. The first
 * `factor` chooses row pivots by threshold partial pivoting, preferring the diagonal, and
 * records the pivot order and the patterns of L and U. Later calls recompute only the
 * numbers on those patterns, without allocating, and fall back to a fresh pivoting
 * factorisation when a pivot has become too small against its column.
 *
 * P·A·Q = L·U with Q the column order and P the row pivots; L has a unit diagonal.
 * A failed factorisation never throws: it names the original unknown index.
 */
export class SparseLU implements LinearSolver {
  readonly n: number;
  private readonly pivotThreshold: number;
  private readonly refactorThreshold: number;
  private readonly singularTolerance: number;
  private readonly invalidIndex: number;

  // A in compressed columns (original indices) and the slot of each pattern entry.
  private readonly aStart: Int32Array;
  private readonly aRow: Int32Array;
  private readonly aVal: Float64Array;
  private readonly slot: Int32Array;
  /**
   * When every pattern entry has a compressed slot of its own (no (row, col) twice, as in every MNA layout's
   * pattern), the entry at each slot: the scatter then walks the slots in order and stores each value, instead
   * of clearing them and adding into slots scattered over the array (a read-modify-write at a random place per
   * entry, about three times the cost). Undefined when entries share a slot.
   */
  private readonly entryAt: Int32Array | undefined;
  private readonly patternRow: Int32Array;
  private readonly patternCol: Int32Array;
  /** Column order: q[k] is the original column factorised k-th. */
  private readonly q: Int32Array;
  /** A row or column with no entries at all (-1 when there is none). */
  private readonly emptyIndex: number;

  // Factors: L below the diagonal (rows in pivot positions), U above it, U's diagonal apart.
  private readonly lStart: Int32Array;
  private lBuffer: Growable | undefined;
  private uBuffer: Growable | undefined;
  private lRow: Int32Array = new Int32Array(0);
  private lVal: Float64Array = new Float64Array(0);
  private readonly uStart: Int32Array;
  private uRow: Int32Array = new Int32Array(0);
  private uVal: Float64Array = new Float64Array(0);
  private readonly uDiag: Float64Array;
  /** pinv[originalRow] = pivot position; rowOf[position] = original row. */
  private readonly pinv: Int32Array;
  private readonly rowOf: Int32Array;
  /** pinv[aRow[p]] for every compressed entry p, set with the pivots (the row position a refactorisation loads entry p at). */
  private readonly aPos: Int32Array;

  // Work space, allocated once.
  private readonly work: Float64Array;
  private readonly stack: Int32Array;
  private readonly resume: Int32Array;
  private readonly reach: Int32Array;
  private readonly visited: Int32Array;
  private visitStamp = 0;
  /** The positions one sparse transposed solve touches (its own buffer: the factorisation's `reach` is separate). */
  private readonly transposeReach: Int32Array;

  private haveSymbolic = false;
  /** Row-wise copies of L and U for sparse transposed solves, rebuilt after each factorisation (see `transposeRows`). */
  private rowsOf: { factorCount: number; uStart: Int32Array; uCol: Int32Array; uVal: Float64Array; lStart: Int32Array; lCol: Int32Array; lVal: Float64Array; qinv: Int32Array } | undefined;
  private factorCount = 0;
  private valid = false;
  private lastFailure: FactorFailure | undefined;
  private readonly counters = { pivoting: 0, refactor: 0, fallbacks: 0 };

  constructor(pattern: SparsePattern, options: SparseLUOptions = {}) {
    const n = Number.isInteger(pattern.n) && pattern.n > 0 ? pattern.n : 0;
    this.n = n;
    this.pivotThreshold = clampFraction(options.pivotThreshold, 1e-3);
    this.refactorThreshold = clampFraction(options.refactorThreshold, 1e-6);
    this.singularTolerance = clampFraction(options.singularTolerance, 1e-14);
    const m = Math.min(pattern.rows.length, pattern.cols.length);
    let invalid = -1;
    if (!(Number.isInteger(pattern.n) && pattern.n >= 0) || pattern.rows.length !== pattern.cols.length) invalid = 0;
    for (let k = 0; k < m && invalid < 0; k++) {
      const i = pattern.rows[k];
      const j = pattern.cols[k];
      if (!(i >= 0 && i < n && j >= 0 && j < n)) invalid = i >= 0 && i < n ? i : j >= 0 && j < n ? j : 0;
    }
    this.invalidIndex = invalid;
    this.patternRow = pattern.rows;
    this.patternCol = pattern.cols;

    // Compressed columns; duplicate (row, col) entries share one slot and are summed.
    const count = int32Column(n + 1);
    if (invalid < 0) for (let k = 0; k < m; k++) count[pattern.cols[k] + 1]++;
    for (let j = 0; j < n; j++) count[j + 1] += count[j];
    const fill = count.slice(0, n);
    const rowTmp = int32Column(invalid < 0 ? m : 0);
    const slotTmp = int32Column(invalid < 0 ? m : 0);
    if (invalid < 0) {
      for (let k = 0; k < m; k++) {
        const p = fill[pattern.cols[k]]++;
        rowTmp[p] = pattern.rows[k];
        slotTmp[k] = p;
      }
    }
    const firstAt = int32Column(n).fill(-1);
    const remap = int32Column(rowTmp.length);
    const aStart = int32Column(n + 1);
    let out = 0;
    for (let j = 0; j < n; j++) {
      aStart[j] = out;
      for (let p = count[j]; p < count[j + 1]; p++) {
        const i = rowTmp[p];
        if (firstAt[i] >= aStart[j]) {
          remap[p] = firstAt[i];
          continue;
        }
        firstAt[i] = out;
        remap[p] = out;
        rowTmp[out++] = i;
      }
    }
    aStart[n] = out;
    for (let k = 0; k < slotTmp.length; k++) slotTmp[k] = remap[slotTmp[k]];
    this.aStart = aStart;
    this.aRow = rowTmp.slice(0, out);
    this.aVal = float64Column(out);
    this.slot = slotTmp;
    if (invalid < 0 && out === m && m > 0) {
      const entryAt = int32Column(m);
      for (let k = 0; k < m; k++) entryAt[slotTmp[k]] = k;
      this.entryAt = entryAt;
    } else {
      this.entryAt = undefined;
    }

    let empty = -1;
    const rowUsed = uint8Column(n);
    for (let p = 0; p < out; p++) rowUsed[this.aRow[p]] = 1;
    for (let j = 0; j < n && empty < 0; j++) if (aStart[j + 1] === aStart[j] || !rowUsed[j]) empty = j;
    this.emptyIndex = empty;

    if (options.columnOrder && isPermutation(options.columnOrder, n)) {
      this.q = options.columnOrder.slice();
    } else if (options.ordering === 'natural' || n === 0) {
      this.q = int32Column(n);
      for (let j = 0; j < n; j++) this.q[j] = j;
    } else {
      this.q = approximateMinimumDegree(symmetricPattern(n, this.aRowsOfEntries(), this.aColsOfEntries()));
    }

    this.lStart = int32Column(n + 1);
    this.uStart = int32Column(n + 1);
    this.uDiag = float64Column(n);
    this.pinv = int32Column(n).fill(-1);
    this.rowOf = int32Column(n);
    this.aPos = int32Column(this.aRow.length);
    this.work = float64Column(n);
    this.stack = int32Column(n);
    this.resume = int32Column(n);
    this.reach = int32Column(n);
    this.visited = int32Column(n);
    this.transposeReach = int32Column(n);
  }

  /** Row indices of the compressed entries, for the ordering. */
  private aRowsOfEntries(): Int32Array {
    return this.aRow;
  }

  /** Column indices of the compressed entries, for the ordering. */
  private aColsOfEntries(): Int32Array {
    const cols = int32Column(this.aRow.length);
    for (let j = 0; j < this.n; j++) for (let p = this.aStart[j]; p < this.aStart[j + 1]; p++) cols[p] = j;
    return cols;
  }

  /** The column order chosen at construction (q[k] = original column factorised k-th). */
  get columnOrder(): Int32Array {
    return this.q.slice();
  }

  /** Why the last factorisation failed, or undefined after a success. */
  get failure(): FactorFailure | undefined {
    return this.lastFailure;
  }

  /** Counters since construction. */
  get stats(): SparseLUStats {
    return {
      pivotingFactorizations: this.counters.pivoting,
      refactorizations: this.counters.refactor,
      pivotFallbacks: this.counters.fallbacks,
      factorNonzeros: this.haveSymbolic ? this.lStart[this.n] + this.uStart[this.n] + this.n : 0,
      matrixNonzeros: this.aRow.length,
    };
  }

  /**
   * Factorises A given its values aligned with the pattern's entries. Reuses the recorded
   * pivots and patterns when they are still numerically sound.
   */
  factor(values: Float64Array): FactorResult {
    return this.factorScaled(values, undefined, undefined);
  }

  /**
   * `factor` of R·A·C, with R and C the diagonal matrices `rowScale` and `colScale` (both or
   * neither): entry k is taken as (values[k]·R[row])·C[col] as it is scattered into the compressed
   * columns, the very numbers a scaled copy of `values` would hold, without writing that copy.
   */
  factorScaled(values: Float64Array, rowScale: Float64Array | undefined, colScale: Float64Array | undefined): FactorResult {
    this.valid = false;
    this.factorCount++;
    if (this.invalidIndex >= 0) return this.fail('invalid-pattern', this.invalidIndex);
    const n = this.n;
    if (values.length < this.slot.length) return this.fail('missing-values', this.patternRow[values.length]);
    // A refactorisation of scaled values reads them straight from `values` (see `refactorScaled`); only when it cannot
    // finish are they stored into the compressed columns, for the pivoting factorisation or to name an entry that is not finite.
    const entryAt = this.entryAt;
    const direct = entryAt !== undefined && rowScale !== undefined && colScale !== undefined && this.haveSymbolic && n > 0 && this.emptyIndex < 0;
    const refactored = direct ? this.refactorScaled(values, rowScale, colScale, entryAt) : REFACTOR_NOT_TRIED;
    if (refactored === REFACTOR_DONE) {
      this.counters.refactor++;
      this.valid = true;
      this.lastFailure = undefined;
      return { ok: true };
    }
    const nonFinite = entryAt ? this.scatterInOrder(values, rowScale, colScale, entryAt) : this.scatter(values, rowScale, colScale);
    if (nonFinite >= 0) return this.fail('non-finite-value', nonFinite);
    if (n === 0) {
      this.valid = true;
      this.lastFailure = undefined;
      return { ok: true };
    }
    if (this.emptyIndex >= 0) return this.fail('structurally-singular', this.emptyIndex);
    if (this.haveSymbolic) {
      // A direct refactorisation that met a small pivot met it on these very numbers: the plain one would too.
      if (refactored !== REFACTOR_SMALL_PIVOT && this.refactor()) {
        this.counters.refactor++;
        this.valid = true;
        this.lastFailure = undefined;
        return { ok: true };
      }
      this.counters.fallbacks++;
    }
    const r = this.pivotingFactor();
    if (r.ok) {
      this.counters.pivoting++;
      this.valid = true;
      this.lastFailure = undefined;
    }
    return r;
  }

  /**
   * Adds every entry of `values` (scaled as `factorScaled` says) into the compressed columns; the row of
   * the first entry that is not finite, or −1. A function of its own: compiled while its loop ran, code
   * after the loop in the same function had never run and gave up the compiled code at every call.
   */
  private scatter(values: Float64Array, rowScale: Float64Array | undefined, colScale: Float64Array | undefined): number {
    const aVal = this.aVal;
    aVal.fill(0);
    const slot = this.slot;
    const m = slot.length;
    const rows = this.patternRow;
    const cols = this.patternCol;
    const scaled = rowScale !== undefined && colScale !== undefined;
    for (let k = 0; k < m; k++) {
      const v = scaled ? values[k] * rowScale[rows[k]] * colScale[cols[k]] : values[k];
      if (v - v !== 0) return rows[k];
      aVal[slot[k]] += v;
    }
    return -1;
  }

  /**
   * `scatter` when every entry has a slot of its own (`entryAt`): each slot gets 0 + its entry (scaled), the very number
   * clearing it and adding the entry gives (−0 included), walking the slots in order. When an entry is not finite, the
   * plain scatter runs again to name the first such entry in the pattern's order.
   */
  private scatterInOrder(values: Float64Array, rowScale: Float64Array | undefined, colScale: Float64Array | undefined, entryAt: Int32Array): number {
    const finite = rowScale !== undefined && colScale !== undefined ? storeScaled(this.aVal, values, rowScale, colScale, this.patternRow, this.patternCol, entryAt) : storePlain(this.aVal, values, entryAt);
    return finite ? -1 : this.scatter(values, rowScale, colScale);
  }

  /**
   * Solves A·x = b with the last successful factorisation. Allocates nothing when `x`
   * is given (it may be `b` itself). After a failed `factor`, returns zeros.
   */
  solve(b: Float64Array, x: Float64Array = float64Column(this.n)): Float64Array {
    const n = this.n;
    if (!this.valid) {
      x.fill(0);
      return x;
    }
    // Each pass is a function of its own: compiled while one pass ran (a large circuit's), the code of the
    // passes after it had never run, and a small circuit's solve then gave up that code at every call.
    const y = this.work;
    gatherRows(y, b, this.rowOf, n);
    forwardSubstitute(y, this.lStart, this.lRow, this.lVal, n);
    backSubstitute(y, this.uStart, this.uRow, this.uVal, this.uDiag, n);
    scatterColumns(x, y, this.q, n);
    y.fill(0);
    return x;
  }

  /**
   * `solve` of the equilibrated system: x = C·S⁻¹·(R·b) for S = R·A·C, the matrix of the last `factorScaled` with these
   * scales. The scales are applied in the row and column permutations themselves, y[k] = b[i]·R[i] for i = P(k) and
   * x[j] = y[k]·C[j] for j = Q(k), the very products a scaled copy of b and a scaled result would hold; the work vector is
   * cleared in the same pass. Two passes over the unknowns instead of five in every Newton iteration. `x` may not be `b`.
   */
  solveScaled(b: Float64Array, rowScale: Float64Array, colScale: Float64Array, x: Float64Array): void {
    const n = this.n;
    if (!this.valid) {
      x.fill(0);
      return;
    }
    const y = this.work;
    gatherScaledRows(y, b, rowScale, this.rowOf, n);
    forwardSubstitute(y, this.lStart, this.lRow, this.lVal, n);
    backSubstitute(y, this.uStart, this.uRow, this.uVal, this.uDiag, n);
    scatterScaledColumns(x, y, colScale, this.q, n);
  }

  /**
   * Solves Aᵀ·x = b with the last successful factorisation (P·A·Q = L·U, so
   * Aᵀ = Q·Uᵀ·Lᵀ·P): the adjoint solve of sensitivity analysis, on the same factors and
   * without allocating when `x` is given (it may be `b`). After a failed `factor`, returns zeros.
   */
  solveTranspose(b: Float64Array, x: Float64Array = float64Column(this.n)): Float64Array {
    const n = this.n;
    if (!this.valid) {
      x.fill(0);
      return x;
    }
    const y = this.work;
    const q = this.q;
    for (let k = 0; k < n; k++) y[k] = b[q[k]] ?? 0;
    // Uᵀ is lower triangular; row k of Uᵀ is column k of U (entries above the diagonal, in pivot positions).
    const uStart = this.uStart;
    const uRow = this.uRow;
    const uVal = this.uVal;
    const uDiag = this.uDiag;
    for (let k = 0; k < n; k++) {
      let s = y[k];
      for (let p = uStart[k], end = uStart[k + 1]; p < end; p++) s -= uVal[p] * y[uRow[p]];
      y[k] = s / uDiag[k];
    }
    // Lᵀ is unit upper triangular; row k of Lᵀ is column k of L (entries below the diagonal).
    const lStart = this.lStart;
    const lRow = this.lRow;
    const lVal = this.lVal;
    for (let k = n - 1; k >= 0; k--) {
      let s = y[k];
      for (let p = lStart[k], end = lStart[k + 1]; p < end; p++) s -= lVal[p] * y[lRow[p]];
      y[k] = s;
    }
    const rowOf = this.rowOf;
    for (let k = 0; k < n; k++) x[rowOf[k]] = y[k];
    y.fill(0);
    return x;
  }

  /**
   * Aᵀ·x = b for a sparse b (`bIndex`/`bValue`, original indices), touching only the entries
   * the factors can reach from b's (J. R. Gilbert and T. Peierls' reach, applied to Uᵀ and then
   * Lᵀ): the adjoint solve of one output costs what its part of the circuit costs. Returns the
   * non-zero entries of x (original indices, any order) in `out`'s first `count`; `x` must be all zeros on entry
   * (length n) and is left all zeros. After a failed `factor`, returns no entries.
   */
  solveTransposeSparse(bIndex: ArrayLike<number>, bValue: ArrayLike<number>, x: Float64Array, out: SparseEntries): void {
    out.count = 0;
    if (!this.valid) return;
    const r = this.transposeRows();
    const y = x; // pivot-position workspace, all zeros on entry
    const mark = this.visited;
    const stamp = ++this.visitStamp;
    const stack = this.stack;
    const buffer = this.transposeReach;
    let count = 0;
    // Step 1: y = Qᵀ·b.
    for (let k = 0; k < bIndex.length; k++) {
      const pos = r.qinv[bIndex[k]];
      y[pos] += bValue[k];
      if (mark[pos] !== stamp) {
        mark[pos] = stamp;
        stack[0] = pos;
        let top = 1;
        // Depth-first over the graph k → j of the rows of U (j > k) and of L (j < k): every position either solve can touch.
        while (top > 0) {
          const v = stack[--top];
          buffer[count++] = v;
          for (let p = r.uStart[v]; p < r.uStart[v + 1]; p++) {
            const w = r.uCol[p];
            if (mark[w] !== stamp) {
              mark[w] = stamp;
              stack[top++] = w;
            }
          }
          for (let p = r.lStart[v]; p < r.lStart[v + 1]; p++) {
            const w = r.lCol[p];
            if (mark[w] !== stamp) {
              mark[w] = stamp;
              stack[top++] = w;
            }
          }
        }
      }
    }
    // In increasing order, in place: by insertion for the usual few positions (no view of the buffer made), else a
    // typed array's numeric sort of a view.
    if (count <= INSERTION_SORT_MAX) {
      for (let i = 1; i < count; i++) {
        const v = buffer[i];
        let j = i - 1;
        for (; j >= 0 && buffer[j] > v; j--) buffer[j + 1] = buffer[j];
        buffer[j + 1] = v;
      }
    } else buffer.subarray(0, count).sort();
    const reach = buffer;
    // Step 2: Uᵀ·z = y, in increasing pivot order; row k of U holds column k of Uᵀ.
    const uDiag = this.uDiag;
    for (let i = 0; i < count; i++) {
      const k = reach[i];
      const zk = (y[k] /= uDiag[k]);
      if (zk === 0) continue;
      for (let p = r.uStart[k]; p < r.uStart[k + 1]; p++) y[r.uCol[p]] -= r.uVal[p] * zk;
    }
    // Step 3: Lᵀ·w = z, in decreasing pivot order; row k of L holds column k of Lᵀ.
    for (let i = count - 1; i >= 0; i--) {
      const k = reach[i];
      const wk = y[k];
      if (wk === 0) continue;
      for (let p = r.lStart[k]; p < r.lStart[k + 1]; p++) y[r.lCol[p]] -= r.lVal[p] * wk;
    }
    // Step 4: x = Pᵀ·w, written over the lists' old entries (see SparseEntries).
    const rowOf = this.rowOf;
    const index = out.index;
    const value = out.value;
    let written = 0;
    for (let i = 0; i < count; i++) {
      const k = reach[i];
      if (y[k] !== 0) {
        index[written] = rowOf[k];
        value[written] = y[k];
        written++;
      }
      y[k] = 0;
    }
    out.count = written;
  }

  /**
   * Row-wise copies of U and L, built once per factorisation. (The search in
   * `solveTransposeSparse` follows both, so its set holds every position either triangular
   * solve can touch; positions that stay zero are skipped.)
   */
  private transposeRows(): NonNullable<SparseLU['rowsOf']> {
    if (this.rowsOf && this.rowsOf.factorCount === this.factorCount) return this.rowsOf;
    const n = this.n;
    const build = (start: Int32Array, idx: Int32Array, val: Float64Array): { s: Int32Array; c: Int32Array; v: Float64Array } => {
      const count = int32Column(n + 1);
      const m = start[n];
      for (let p = 0; p < m; p++) count[idx[p] + 1]++;
      for (let i = 0; i < n; i++) count[i + 1] += count[i];
      const fill = count.slice(0, n);
      const c = int32Column(m);
      const v = float64Column(m);
      for (let j = 0; j < n; j++) {
        for (let p = start[j]; p < start[j + 1]; p++) {
          const at = fill[idx[p]]++;
          c[at] = j;
          v[at] = val[p];
        }
      }
      return { s: count, c, v };
    };
    const u = build(this.uStart, this.uRow, this.uVal);
    const l = build(this.lStart, this.lRow, this.lVal);
    const qinv = int32Column(n);
    for (let k = 0; k < n; k++) qinv[this.q[k]] = k;
    this.rowsOf = { factorCount: this.factorCount, uStart: u.s, uCol: u.c, uVal: u.v, lStart: l.s, lCol: l.c, lVal: l.v, qinv };
    return this.rowsOf;
  }

  private fail(reason: FactorFailure, index: number): FactorResult {
    this.valid = false;
    this.lastFailure = reason;
    return { ok: false, singularIndex: index };
  }

  /** Numeric refactorisation on the recorded pivots and patterns; false asks for a pivoting one. */
  private refactor(): boolean {
    const n = this.n;
    const { aStart, aVal, q, aPos } = this;
    const x = this.work;
    for (let k = 0; k < n; k++) {
      const j = q[k];
      let scale = 0;
      for (let p = aStart[j]; p < aStart[j + 1]; p++) {
        const v = aVal[p];
        x[aPos[p]] = v;
        const a = v < 0 ? -v : v;
        if (a > scale) scale = a;
      }
      if (!this.eliminateColumn(k, scale)) return false;
    }
    return true;
  }

  /**
   * The rest of column k of a refactorisation, once its entries of A are loaded into the work vector (`scale` the
   * largest of their magnitudes): the U entries on the recorded pattern, the pivot check, and the L entries. False,
   * with the work vector cleared, when the pivot is refused (under the singularity tolerance of the column's
   * magnitudes, or under the refactorisation threshold of the largest entry below it).
   */
  private eliminateColumn(k: number, scale: number): boolean {
    const { lStart, lRow, lVal, uStart, uRow, uVal, uDiag } = this;
    const x = this.work;
    // U entries are stored in an order where each row's value is final before it is used.
    for (let p = uStart[k]; p < uStart[k + 1]; p++) {
      const r = uRow[p];
      const xr = x[r];
      x[r] = 0;
      uVal[p] = xr;
      if (xr === 0) continue;
      const a = xr < 0 ? -xr : xr;
      if (a > scale) scale = a;
      for (let t = lStart[r]; t < lStart[r + 1]; t++) x[lRow[t]] -= lVal[t] * xr;
    }
    const piv = x[k];
    x[k] = 0;
    let amax = 0;
    for (let t = lStart[k]; t < lStart[k + 1]; t++) {
      const v = x[lRow[t]];
      const a = v < 0 ? -v : v;
      if (a > amax) amax = a;
    }
    const ap = piv < 0 ? -piv : piv;
    if (ap > scale) scale = ap;
    if (!(ap > this.singularTolerance * scale) || ap < this.refactorThreshold * amax) {
      for (let t = lStart[k]; t < lStart[k + 1]; t++) x[lRow[t]] = 0;
      return false;
    }
    uDiag[k] = piv;
    const inv = 1 / piv;
    for (let t = lStart[k]; t < lStart[k + 1]; t++) {
      const r = lRow[t];
      lVal[t] = x[r] * inv;
      x[r] = 0;
    }
    return true;
  }

  /**
   * `refactor` of R·A·C when every entry has a slot of its own (`entryAt`), reading each entry from `values` as the
   * column is loaded: (values[k]·R[row])·C[col], plus 0, the very number `storeScaled` would have stored in the slot
   * and `refactor` read back (a pass writing every entry and one reading it, at every Newton iteration, saved). The
   * column's scale C[col] is the same for all its entries. Stops at the first entry that is not finite (left for
   * `scatterInOrder` to name) or at a pivot `refactor` would refuse, with the work vector cleared either way.
   */
  private refactorScaled(values: Float64Array, rowScale: Float64Array, colScale: Float64Array, entryAt: Int32Array): number {
    const n = this.n;
    const { aStart, aRow, q, aPos } = this;
    const x = this.work;
    for (let k = 0; k < n; k++) {
      const j = q[k];
      const cj = colScale[j];
      let scale = 0;
      const end = aStart[j + 1];
      for (let p = aStart[j]; p < end; p++) {
        const v = 0 + values[entryAt[p]] * rowScale[aRow[p]] * cj;
        if (v - v !== 0) {
          for (let s = aStart[j]; s < p; s++) x[aPos[s]] = 0;
          return REFACTOR_NOT_FINITE;
        }
        x[aPos[p]] = v;
        const a = v < 0 ? -v : v;
        if (a > scale) scale = a;
      }
      if (!this.eliminateColumn(k, scale)) return REFACTOR_SMALL_PIVOT;
    }
    return REFACTOR_DONE;
  }

  /** The first (or a fallback) factorisation: chooses pivots and discovers the L/U patterns. */
  private pivotingFactor(): FactorResult {
    const n = this.n;
    const { aStart, aRow, aVal, q, pinv, rowOf, stack, resume, reach, visited, uDiag } = this;
    const x = this.work; // indexed by ORIGINAL row while the patterns are discovered
    const thr = this.pivotThreshold;
    const sing = this.singularTolerance;
    // The growable buffers and start arrays are kept between pivoting factorisations, so a fallback reuses them.
    // Each starts with room for every entry of A: without fill-in, L and U together hold A's off-diagonal entries, so
    // either can take all of them, and fill up to about twice that before one grows. (Room for 2·nnz(A) + n each was
    // 10.8 MB of typed arrays at 100,000 elements, for 150,000 entries of L and U.)
    const L = (this.lBuffer ??= new Growable(aRow.length));
    const U = (this.uBuffer ??= new Growable(aRow.length));
    L.length = 0;
    U.length = 0;
    const lStart = this.lStart;
    const uStart = this.uStart;
    pinv.fill(-1);
    this.haveSymbolic = false;

    for (let k = 0; k < n; k++) {
      lStart[k] = L.length;
      uStart[k] = U.length;
      const j = q[k];
      // L's buffers only grow after this column's solve, so local references stay valid until then.
      const li = L.idx;
      const lv = L.val;
      // Reach of column j in the graph of L (Davis §3.2): iterative depth-first search.
      const mark = ++this.visitStamp;
      let top = n;
      for (let p = aStart[j]; p < aStart[j + 1]; p++) {
        const startRow = aRow[p];
        if (visited[startRow] === mark) continue;
        let head = 0;
        stack[0] = startRow;
        while (head >= 0) {
          const v = stack[head];
          const col = pinv[v];
          if (visited[v] !== mark) {
            visited[v] = mark;
            resume[head] = col < 0 ? 0 : lStart[col];
          }
          const end = col < 0 ? 0 : lStart[col + 1];
          let descended = false;
          for (let t = resume[head]; t < end; t++) {
            const w = li[t];
            if (visited[w] === mark) continue;
            resume[head] = t + 1;
            stack[++head] = w;
            descended = true;
            break;
          }
          if (!descended) {
            head--;
            reach[--top] = v;
          }
        }
      }
      // Numeric sparse triangular solve x = L \ A(:, j) over the reach, in topological order.
      let scale = 0;
      for (let p = aStart[j]; p < aStart[j + 1]; p++) {
        const v = aVal[p];
        x[aRow[p]] = v;
        const a = v < 0 ? -v : v;
        if (a > scale) scale = a;
      }
      let ipiv = -1;
      let amax = -1;
      for (let t = top; t < n; t++) {
        const i = reach[t];
        const col = pinv[i];
        if (col < 0) continue;
        const xi = x[i];
        if (xi === 0) continue;
        for (let s = lStart[col]; s < lStart[col + 1]; s++) x[li[s]] -= lv[s] * xi;
      }
      U.reserve(n - top);
      const ui = U.idx;
      const uv = U.val;
      let uLen = U.length;
      for (let t = top; t < n; t++) {
        const i = reach[t];
        const col = pinv[i];
        const v = x[i];
        const a = v < 0 ? -v : v;
        if (col >= 0) {
          ui[uLen] = col;
          uv[uLen++] = v;
          if (a > scale) scale = a;
        } else if (a > amax) {
          amax = a;
          ipiv = i;
        }
      }
      U.length = uLen;
      if (ipiv < 0 || !(amax > sing * scale) || amax === 0) {
        for (let t = top; t < n; t++) x[reach[t]] = 0;
        return this.fail(ipiv < 0 ? 'structurally-singular' : 'numerically-singular', j);
      }
      // Prefer the diagonal (original row j) when it is large enough.
      if (pinv[j] < 0 && visited[j] === mark) {
        const d = x[j];
        if ((d < 0 ? -d : d) >= thr * amax) ipiv = j;
      }
      const piv = x[ipiv];
      uDiag[k] = piv;
      pinv[ipiv] = k;
      rowOf[k] = ipiv;
      const inv = 1 / piv;
      L.reserve(n - top);
      const lo = L.idx;
      const lw = L.val;
      let lLen = L.length;
      for (let t = top; t < n; t++) {
        const i = reach[t];
        if (pinv[i] < 0) {
          lo[lLen] = i;
          lw[lLen++] = x[i] * inv;
        }
        x[i] = 0;
      }
      L.length = lLen;
    }
    lStart[n] = L.length;
    uStart[n] = U.length;
    // L's rows become pivot positions now that every row has one. Views, not copies, of the buffers.
    const lRow = L.idx.subarray(0, L.length);
    for (let p = 0; p < lRow.length; p++) lRow[p] = pinv[lRow[p]];
    this.lRow = lRow;
    this.lVal = L.val.subarray(0, L.length);
    this.uRow = U.idx.subarray(0, U.length);
    this.uVal = U.val.subarray(0, U.length);
    // Each compressed entry's pivot position, what a refactorisation loads the entry at.
    const aPos = this.aPos;
    for (let p = 0; p < aPos.length; p++) aPos[p] = pinv[aRow[p]];
    this.haveSymbolic = true;
    return { ok: true };
  }
}

function clampFraction(v: number | undefined, fallback: number): number {
  return v !== undefined && v >= 0 && v <= 1 ? v : fallback;
}

/** Whether `q` holds each of 0..n−1 exactly once. */
function isPermutation(q: Int32Array, n: number): boolean {
  if (q.length !== n) return false;
  const seen = uint8Column(n);
  for (let k = 0; k < n; k++) {
    const j = q[k];
    if (!(j >= 0 && j < n) || seen[j]) return false;
    seen[j] = 1;
  }
  return true;
}

/** aVal[p] = 0 + (values[k]·rowScale[row k])·colScale[col k] for k = entryAt[p], every p; false when one is not finite. A loop of its own (see `scatter`). */
function storeScaled(aVal: Float64Array, values: Float64Array, rowScale: Float64Array, colScale: Float64Array, rows: Int32Array, cols: Int32Array, entryAt: Int32Array): boolean {
  let finite = true;
  for (let p = 0; p < entryAt.length; p++) {
    const k = entryAt[p];
    const v = values[k] * rowScale[rows[k]] * colScale[cols[k]];
    if (v - v !== 0) finite = false;
    aVal[p] = 0 + v;
  }
  return finite;
}

/** aVal[p] = 0 + values[entryAt[p]], every p; false when one is not finite. */
function storePlain(aVal: Float64Array, values: Float64Array, entryAt: Int32Array): boolean {
  let finite = true;
  for (let p = 0; p < entryAt.length; p++) {
    const v = values[entryAt[p]];
    if (v - v !== 0) finite = false;
    aVal[p] = 0 + v;
  }
  return finite;
}

/** y[k] = b[rowOf[k]] (0 past the end of b), for k < n: the row permutation of `SparseLU.solve`. */
function gatherRows(y: Float64Array, b: Float64Array, rowOf: Int32Array, n: number): void {
  for (let k = 0; k < n; k++) y[k] = b[rowOf[k]] ?? 0;
}

/** y[k] = b[i]·rowScale[i] for i = rowOf[k] (0 past the end of b), for k < n: `gatherRows` of the row-scaled b. */
function gatherScaledRows(y: Float64Array, b: Float64Array, rowScale: Float64Array, rowOf: Int32Array, n: number): void {
  for (let k = 0; k < n; k++) {
    const i = rowOf[k];
    y[k] = i < b.length ? b[i] * rowScale[i] : 0;
  }
}

/** x[j] = y[k]·colScale[j] for j = q[k], and y[k] = 0, for k < n: `scatterColumns` of the column-scaled result, the work vector cleared. */
function scatterScaledColumns(x: Float64Array, y: Float64Array, colScale: Float64Array, q: Int32Array, n: number): void {
  for (let k = 0; k < n; k++) {
    const j = q[k];
    x[j] = y[k] * colScale[j];
    y[k] = 0;
  }
}

/** Solves L·z = y in place (unit lower triangle by columns). */
function forwardSubstitute(y: Float64Array, lStart: Int32Array, lRow: Int32Array, lVal: Float64Array, n: number): void {
  for (let k = 0; k < n; k++) {
    const yk = y[k];
    if (yk === 0) continue;
    for (let p = lStart[k], end = lStart[k + 1]; p < end; p++) y[lRow[p]] -= lVal[p] * yk;
  }
}

/** Solves U·z = y in place (upper triangle by columns, its diagonal apart). */
function backSubstitute(y: Float64Array, uStart: Int32Array, uRow: Int32Array, uVal: Float64Array, uDiag: Float64Array, n: number): void {
  for (let k = n - 1; k >= 0; k--) {
    const yk = (y[k] /= uDiag[k]);
    if (yk !== 0) subtractColumn(y, uRow, uVal, uStart[k], uStart[k + 1], yk);
  }
}

/**
 * y[row[p]] −= val[p]·yk for p in [from, to): one column of `backSubstitute`, a function of its own. The last column can
 * hold thousands of entries (a supply node's), and V8 gives a function its type feedback only after its first steps:
 * as an inner loop it was compiled while it ran in the first column, before the outer loop's step was recorded, and
 * that code was given up at the step (4 compilations of `backSubstitute` at 20k elements).
 */
function subtractColumn(y: Float64Array, row: Int32Array, val: Float64Array, from: number, to: number, yk: number): void {
  for (let p = from; p < to; p++) y[row[p]] -= val[p] * yk;
}

/** x[q[k]] = y[k] for k < n: the column permutation back. */
function scatterColumns(x: Float64Array, y: Float64Array, q: Int32Array, n: number): void {
  for (let k = 0; k < n; k++) x[q[k]] = y[k];
}
