// Reusing a column order for an identical pattern: the same order and the same solution as ordering afresh; a bad order is ignored.

import { describe, expect, it } from 'vitest';
import { createLinearSolver, type SparsePattern } from '../../../shared-analysis/src/solve/linear';
import { SparseLU } from '../../../shared-analysis/src/solve/sparse-lu';

/** A k×k grid Laplacian plus 1 on the diagonal (diagonally dominant, so every pivot is fine); its pattern and values. */
function grid(k: number): { pattern: SparsePattern; values: Float64Array } {
  const rows: number[] = [];
  const cols: number[] = [];
  const vals: number[] = [];
  const at = (i: number, j: number) => i * k + j;
  for (let i = 0; i < k; i++) {
    for (let j = 0; j < k; j++) {
      const p = at(i, j);
      let deg = 0;
      for (const [di, dj] of [[1, 0], [-1, 0], [0, 1], [0, -1]]) {
        const a = i + di;
        const b = j + dj;
        if (a < 0 || b < 0 || a >= k || b >= k) continue;
        rows.push(p);
        cols.push(at(a, b));
        vals.push(-1);
        deg++;
      }
      rows.push(p);
      cols.push(p);
      vals.push(deg + 1);
    }
  }
  return { pattern: { n: k * k, rows: Int32Array.from(rows), cols: Int32Array.from(cols) }, values: Float64Array.from(vals) };
}

describe('column order reuse', () => {
  it('gives an identical pattern the order minimum degree gives it, and the same solution', () => {
    const { pattern, values } = grid(50);
    const fresh = new SparseLU(pattern);
    createLinearSolver(pattern);
    const again = createLinearSolver({ n: pattern.n, rows: pattern.rows.slice(), cols: pattern.cols.slice() }) as SparseLU;
    expect(again.columnOrder).toEqual(fresh.columnOrder);
    const b = new Float64Array(pattern.n).map((_, i) => Math.sin(i));
    expect(fresh.factor(values).ok && again.factor(values).ok).toBe(true);
    const x1 = new Float64Array(pattern.n);
    const x2 = new Float64Array(pattern.n);
    fresh.solve(b, x1);
    again.solve(b, x2);
    expect(Array.from(x2)).toEqual(Array.from(x1));
    // Independent check: the residual A·x − b is at rounding level.
    const r = Float64Array.from(b).map((v) => -v);
    for (let e = 0; e < values.length; e++) r[pattern.rows[e]] += values[e] * x1[pattern.cols[e]];
    expect(Math.max(...Array.from(r, Math.abs))).toBeLessThan(1e-12);
  });

  it('ignores a given order that is not a permutation', () => {
    const { pattern } = grid(4);
    const bad = new SparseLU(pattern, { columnOrder: new Int32Array(16) });
    expect(bad.columnOrder).toEqual(new SparseLU(pattern).columnOrder);
  });
});
