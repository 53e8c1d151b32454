// Sparse LU and minimum-degree ordering: agreement with the dense reference, refactorisation, pivot fallback, singular systems, edge cases.

import { describe, expect, it } from 'vitest';
import { DenseLU, type SparsePattern } from '../../../shared-analysis/src/solve/linear';
import { approximateMinimumDegree, isPermutation, symmetricPattern } from '../../../shared-analysis/src/solve/ordering';
import { SparseLU, type SparseLUOptions } from '../../../shared-analysis/src/solve/sparse-lu';
import { rng } from '../../seeded-random';

/** A matrix as a pattern plus aligned values. */
interface System {
  pattern: SparsePattern;
  values: Float64Array;
}

/** Builds a system from (row, col, value) triples; repeated positions are summed into one pattern entry. */
function system(n: number, triples: [number, number, number][]): System {
  const at = new Map<number, number>();
  const rows: number[] = [];
  const cols: number[] = [];
  const vals: number[] = [];
  for (const [r, c, v] of triples) {
    const key = r * n + c;
    const k = at.get(key);
    if (k === undefined) {
      at.set(key, rows.length);
      rows.push(r);
      cols.push(c);
      vals.push(v);
    } else vals[k] += v;
  }
  return { pattern: { n, rows: Int32Array.from(rows), cols: Int32Array.from(cols) }, values: Float64Array.from(vals) };
}

function multiply(s: System, x: Float64Array): Float64Array {
  const y = new Float64Array(s.pattern.n);
  for (let k = 0; k < s.values.length; k++) y[s.pattern.rows[k]] += s.values[k] * x[s.pattern.cols[k]];
  return y;
}

function maxAbs(v: ArrayLike<number>): number {
  let m = 0;
  for (let i = 0; i < v.length; i++) m = Math.max(m, Math.abs(v[i]));
  return m;
}

/**
 * The one helper for solutions: factors with the sparse LU, solves, and compares with
 * DenseLU (partial pivoting, the textbook algorithm) and with the residual b − A·x.
 * Source: Golub & Van Loan, "Matrix Computations", 4th ed., §3.4 — LU with partial pivoting
 * is backward stable in practice, so both solvers must agree to a small multiple of
 * cond(A)·eps on well-conditioned systems; `tol` is that bound, relative to max |x|.
 */
function check(s: System, b: Float64Array, expected: { tol: number; x?: number[]; options?: SparseLUOptions }): SparseLU {
  const lu = new SparseLU(s.pattern, expected.options);
  const r = lu.factor(s.values);
  expect(r).toEqual({ ok: true });
  const x = lu.solve(b);
  const dense = new DenseLU(s.pattern);
  expect(dense.factor(s.values).ok).toBe(true);
  const xd = dense.solve(b);
  const scale = Math.max(1, maxAbs(xd));
  for (let i = 0; i < x.length; i++) {
    expect(Number.isFinite(x[i])).toBe(true);
    expect(Math.abs(x[i] - xd[i])).toBeLessThanOrEqual(expected.tol * scale);
  }
  const res = multiply(s, x);
  for (let i = 0; i < res.length; i++) expect(Math.abs(res[i] - b[i])).toBeLessThanOrEqual(expected.tol * Math.max(1, maxAbs(b)) * 10);
  if (expected.x) for (let i = 0; i < expected.x.length; i++) expect(x[i]).toBeCloseTo(expected.x[i], 9);
  return lu;
}

/** The one helper for failures: the factorisation must fail, name an expected unknown and say why. */
function checkFails(s: System, expected: { indexIn: number[]; reason: string }): SparseLU {
  const lu = new SparseLU(s.pattern);
  const r = lu.factor(s.values);
  expect(r.ok).toBe(false);
  if (!r.ok) expect(expected.indexIn).toContain(r.singularIndex);
  expect(lu.failure).toBe(expected.reason);
  // A solve after a failure never shows NaN.
  const x = lu.solve(new Float64Array(s.pattern.n).fill(1));
  for (const v of x) expect(v).toBe(0);
  return lu;
}

/** A random sparse matrix that is nonsingular by construction: a strictly diagonally dominant matrix with its rows shuffled, so many diagonals are zero. */
function shuffledDominant(n: number, density: number, seed: number): System {
  const rand = rng(seed);
  const triples: [number, number, number][] = [];
  const rowPerm = Array.from({ length: n }, (_, i) => i);
  for (let i = n - 1; i > 0; i--) {
    const j = Math.floor(rand() * (i + 1));
    [rowPerm[i], rowPerm[j]] = [rowPerm[j], rowPerm[i]];
  }
  for (let i = 0; i < n; i++) {
    let off = 0;
    const used = new Set<number>([i]);
    const count = Math.max(1, Math.round(density * n * rand()));
    for (let t = 0; t < count; t++) {
      const j = Math.floor(rand() * n);
      if (used.has(j)) continue;
      used.add(j);
      const v = rand() * 2 - 1;
      off += Math.abs(v);
      triples.push([rowPerm[i], j, v]);
    }
    triples.push([rowPerm[i], i, (off + 0.5 + rand()) * (rand() < 0.5 ? -1 : 1)]);
  }
  return system(n, triples);
}

/**
 * An MNA system (C.-W. Ho, A. E. Ruehli, P. A. Brennan, IEEE Trans. Circuits and Systems, 1975):
 * `nodes` non-ground nodes joined by random resistors, a spanning chain to ground so it is
 * connected, and `sources` voltage sources with branch-current unknowns (zero diagonals).
 * Unknowns are then renumbered by a random permutation.
 */
function mnaSystem(nodes: number, sources: number, seed: number): { s: System; b: Float64Array; perm: number[] } {
  const rand = rng(seed);
  const n = nodes + sources;
  const perm = Array.from({ length: n }, (_, i) => i);
  for (let i = n - 1; i > 0; i--) {
    const j = Math.floor(rand() * (i + 1));
    [perm[i], perm[j]] = [perm[j], perm[i]];
  }
  const triples: [number, number, number][] = [];
  const g = (a: number, c: number, cond: number): void => {
    // a, c are node numbers 1..nodes or 0 for ground.
    if (a > 0) triples.push([perm[a - 1], perm[a - 1], cond]);
    if (c > 0) triples.push([perm[c - 1], perm[c - 1], cond]);
    if (a > 0 && c > 0) {
      triples.push([perm[a - 1], perm[c - 1], -cond]);
      triples.push([perm[c - 1], perm[a - 1], -cond]);
    }
  };
  for (let k = 1; k <= nodes; k++) g(k, k - 1, 1 / (100 + rand() * 1e4));
  for (let t = 0; t < 2 * nodes; t++) g(1 + Math.floor(rand() * nodes), Math.floor(rand() * (nodes + 1)), 1 / (10 + rand() * 1e5));
  const b = new Float64Array(n);
  const usedPlus = new Set<number>();
  for (let k = 0; k < sources; k++) {
    let plus = 1 + Math.floor(rand() * nodes);
    while (usedPlus.has(plus)) plus = (plus % nodes) + 1;
    usedPlus.add(plus);
    const br = perm[nodes + k];
    triples.push([perm[plus - 1], br, 1], [br, perm[plus - 1], 1]);
    b[br] = 1 + 10 * rand();
  }
  for (let k = 0; k < nodes; k++) if (rand() < 0.2) b[perm[k]] += (rand() - 0.5) * 1e-3;
  return { s: system(n, triples), b, perm };
}

describe('SparseLU solutions agree with the dense LU', () => {
  it('solves a 1×1 system', () => {
    // Source: arithmetic — 4·x = 2 gives x = 0.5.
    check(system(1, [[0, 0, 4]]), Float64Array.of(2), { tol: 1e-15, x: [0.5] });
  });

  it('solves a voltage divider in MNA form with its zero-diagonal branch row', () => {
    // Unknowns: v1, v2, i(V1). 10 V across 1 kΩ + 3 kΩ. Source: Ohm's law — v2 = 10·3/(1+3) = 7.5 V,
    // the source delivers 10 V / 4 kΩ = 2.5 mA (its branch current, into the plus node, is −2.5 mA).
    const g1 = 1e-3;
    const g2 = 1 / 3e3;
    const s = system(3, [
      [0, 0, g1], [0, 1, -g1], [1, 0, -g1], [1, 1, g1 + g2],
      [0, 2, 1], [2, 0, 1],
    ]);
    check(s, Float64Array.of(0, 0, 10), { tol: 1e-12, x: [10, 7.5, -2.5e-3] });
  });

  it('agrees on 60 seeded random sparse systems with many zero diagonals', () => {
    for (let seed = 1; seed <= 60; seed++) {
      const n = 2 + (seed * 7) % 70;
      const s = shuffledDominant(n, 0.08, seed);
      const rand = rng(1000 + seed);
      const b = Float64Array.from({ length: n }, () => rand() * 2 - 1);
      check(s, b, { tol: 1e-10 });
      check(s, b, { tol: 1e-10, options: { ordering: 'natural' } });
    }
  });

  it('agrees on permuted MNA saddle-point systems with voltage-source branches', () => {
    for (let seed = 1; seed <= 30; seed++) {
      const { s, b } = mnaSystem(20 + seed * 3, 1 + (seed % 6), seed);
      check(s, b, { tol: 1e-9 });
    }
  });

  it('solves in place without allocating when x is given, and x may be b itself', () => {
    const { s, b } = mnaSystem(40, 3, 99);
    const lu = check(s, b, { tol: 1e-9 });
    const x = new Float64Array(s.pattern.n);
    expect(lu.solve(b, x)).toBe(x);
    const bb = Float64Array.from(b);
    const same = lu.solve(bb, bb);
    expect(same).toBe(bb);
    for (let i = 0; i < x.length; i++) expect(bb[i]).toBe(x[i]);
  });

  it('sums duplicate pattern entries', () => {
    // The (0,0) entry appears twice: 1 + 3 = 4. Source: arithmetic.
    const pattern = { n: 2, rows: Int32Array.of(0, 0, 1), cols: Int32Array.of(0, 0, 1) };
    const lu = new SparseLU(pattern);
    expect(lu.factor(Float64Array.of(1, 3, 2)).ok).toBe(true);
    const x = lu.solve(Float64Array.of(8, 4));
    expect(Array.from(x)).toEqual([2, 2]);
  });

  it('solves the equilibrated system with the scales applied in its permutations: the bits of scaling b and the result apart', () => {
    // x = C·S⁻¹·(R·b) for S = R·A·C: the scaled copy of b, the solve, and the scaled result as three steps (what the Newton
    // loop did before `solveScaled`) against the one call, on fresh factors and on a refactorisation, scales of any power of
    // two, a −0 and a 0 in b, on MNA systems and on shuffled ones whose factors fill in. Two twin factorisations go through
    // the same steps, one each way, and then refactor other values: the same bits again, whichever way the solve before it
    // went. Source: the identity itself; each product is the same IEEE 754 multiplication.
    const systems = [1, 2, 3, 4, 5, 6].flatMap((seed) => {
      const m = mnaSystem(30 + seed, 1 + (seed % 4), seed);
      return [{ s: m.s, b: m.b, seed }, { s: shuffledDominant(25 + seed, 0.15, seed), b: Float64Array.from({ length: 25 + seed }, (_, i) => Math.sin(i + seed)), seed }];
    });
    // An arrow matrix in its natural order (first row and column full): every position below and right of the corner fills in.
    const arrow: [number, number, number][] = [];
    for (let i = 0; i < 9; i++) {
      arrow.push([i, i, 10 + i]);
      if (i > 0) arrow.push([0, i, 1 / (i + 1)], [i, 0, -1 / (i + 2)]);
    }
    systems.push({ s: system(9, arrow), b: Float64Array.from({ length: 9 }, (_, i) => i - 4), seed: 7 });
    for (const { s, b, seed } of systems) {
      const options: SparseLUOptions = s.pattern.n === 9 ? { ordering: 'natural' } : {};
      const rand = rng(100 + seed);
      const n = s.pattern.n;
      const rowScale = Float64Array.from({ length: n }, () => 2 ** Math.floor(rand() * 40 - 20));
      const colScale = Float64Array.from({ length: n }, () => 2 ** Math.floor(rand() * 40 - 20));
      const other = Float64Array.from(s.values, (v) => v * (0.75 + 0.5 * rand()));
      const rhs = Float64Array.from(b);
      rhs[seed % n] = -0;
      rhs[(seed + 3) % n] = 0;
      const together = new SparseLU(s.pattern, options);
      const apart = new SparseLU(s.pattern, options);
      for (let round = 0; round < 2; round++) {
        expect(together.factorScaled(s.values, rowScale, colScale).ok).toBe(true);
        expect(apart.factorScaled(s.values, rowScale, colScale).ok).toBe(true);
        const x = new Float64Array(n).fill(NaN);
        together.solveScaled(rhs, rowScale, colScale, x);
        const y = apart.solve(Float64Array.from(rhs, (v, i) => v * rowScale[i]));
        for (let j = 0; j < n; j++) y[j] *= colScale[j];
        for (let j = 0; j < n; j++) expect(Object.is(x[j], y[j])).toBe(true);
        expect(together.factorScaled(other, rowScale, colScale).ok).toBe(true);
        expect(apart.factorScaled(other, rowScale, colScale).ok).toBe(true);
        const xs = together.solve(b);
        const ys = apart.solve(b);
        for (let j = 0; j < n; j++) expect(Object.is(xs[j], ys[j])).toBe(true);
      }
    }
  });

  it('gives the same bits whether every entry has a slot of its own or some share one', () => {
    // A pattern without a repeated (row, col) is scattered slot by slot (each slot 0 + its entry); one with a repeat is
    // cleared and added into. The same matrix both ways, the repeat adding +0 to an entry (x + 0 = x, and 0 + −0 = +0,
    // IEEE 754 §6.3): the factors, hence the solutions, must be the same bits, scaled or not, with a −0 entry among them.
    const { s, b } = mnaSystem(40, 3, 11);
    const values = Float64Array.from(s.values);
    values[5] = -0;
    const repeated: System = {
      pattern: { n: s.pattern.n, rows: Int32Array.of(...s.pattern.rows, s.pattern.rows[7]), cols: Int32Array.of(...s.pattern.cols, s.pattern.cols[7]) },
      values: Float64Array.of(...values, 0),
    };
    const rand = rng(3);
    const rowScale = Float64Array.from({ length: s.pattern.n }, () => 2 ** Math.floor(rand() * 20 - 10));
    const colScale = Float64Array.from({ length: s.pattern.n }, () => 2 ** Math.floor(rand() * 20 - 10));
    for (const scaled of [false, true]) {
      const solve = (sys: System): Float64Array => {
        const lu = new SparseLU(sys.pattern);
        expect((scaled ? lu.factorScaled(sys.values, rowScale, colScale) : lu.factor(sys.values)).ok).toBe(true);
        // A refactorisation too (the second factor reuses the pivots).
        expect((scaled ? lu.factorScaled(sys.values, rowScale, colScale) : lu.factor(sys.values)).ok).toBe(true);
        return lu.solve(b);
      };
      const own = solve({ pattern: s.pattern, values });
      const shared = solve(repeated);
      for (let i = 0; i < own.length; i++) expect(Object.is(own[i], shared[i])).toBe(true);
    }
  });

  it('takes a −0 entry as 0 + (−0) = +0, as adding it into a cleared slot does', () => {
    // A = [[1, 0], [−0, 1]], b = (1, −0): forward substitution gives y1 = −0 − L10·1, which is −0 − (+0) = −0 with
    // the entry taken as +0 and −0 − (−0) = +0 with it kept as −0 (IEEE 754 §6.3). Source: arithmetic.
    for (const rows of [Int32Array.of(0, 1, 1), Int32Array.of(1, 0, 1)]) {
      const cols = rows[0] === 0 ? Int32Array.of(0, 1, 0) : Int32Array.of(0, 0, 1);
      const values = rows[0] === 0 ? Float64Array.of(1, 1, -0) : Float64Array.of(-0, 1, 1);
      const lu = new SparseLU({ n: 2, rows, cols }, { ordering: 'natural' });
      expect(lu.factor(values).ok).toBe(true);
      const x = lu.solve(Float64Array.of(1, -0));
      expect(x[0]).toBe(1);
      expect(Object.is(x[1], -0)).toBe(true);
    }
  });

  it('names the first entry that is not finite in the pattern order, whichever column it is in', () => {
    // Entries listed column 1 first: the NaN at (1, 1) comes before the one at (0, 0), so row 1 is named.
    const pattern = { n: 2, rows: Int32Array.of(1, 0, 1), cols: Int32Array.of(1, 0, 0) };
    const lu = new SparseLU(pattern);
    expect(lu.factor(Float64Array.of(Number.NaN, Number.NaN, 1))).toEqual({ ok: false, singularIndex: 1 });
    expect(lu.failure).toBe('non-finite-value');
    expect(lu.factor(Float64Array.of(2, Infinity, 1))).toEqual({ ok: false, singularIndex: 0 });
    expect(lu.factor(Float64Array.of(2, 1, 1)).ok).toBe(true);
  });

  it('handles an empty system', () => {
    const lu = new SparseLU({ n: 0, rows: new Int32Array(0), cols: new Int32Array(0) });
    expect(lu.factor(new Float64Array(0))).toEqual({ ok: true });
    expect(lu.solve(new Float64Array(0)).length).toBe(0);
  });
});

describe('SparseLU refactorisation', () => {
  it('reuses the pivot order when values change and still agrees with the dense LU', () => {
    const { s, b } = mnaSystem(80, 4, 7);
    const lu = check(s, b, { tol: 1e-9 });
    const rand = rng(70);
    for (let round = 0; round < 5; round++) {
      const changed: System = { pattern: s.pattern, values: s.values.map((v) => v * (0.7 + 0.6 * rand())) };
      expect(lu.factor(changed.values)).toEqual({ ok: true });
      const x = lu.solve(b);
      const dense = new DenseLU(s.pattern);
      dense.factor(changed.values);
      const xd = dense.solve(b);
      // Source: Golub & Van Loan §3.4 (see check) — agreement to a small multiple of cond·eps.
      for (let i = 0; i < x.length; i++) expect(Math.abs(x[i] - xd[i])).toBeLessThanOrEqual(1e-9 * Math.max(1, maxAbs(xd)));
    }
    expect(lu.stats.pivotingFactorizations).toBe(1);
    expect(lu.stats.refactorizations).toBe(5);
    expect(lu.stats.pivotFallbacks).toBe(0);
  });

  it('factors R·A·C from A and the diagonal scales exactly as from a scaled copy of A', () => {
    const { s, b } = mnaSystem(60, 3, 11);
    const n = s.pattern.n;
    const rand = rng(110);
    // Powers of two, as the Newton loop's equilibration uses, and arbitrary factors: both must match the copy bit for bit.
    for (const power of [true, false]) {
      const scale = (): number => (power ? 2 ** Math.round(40 * rand() - 20) : 0.1 + 10 * rand());
      const r = Float64Array.from({ length: n }, scale);
      const c = Float64Array.from({ length: n }, scale);
      const copy = s.values.map((v, k) => v * r[s.pattern.rows[k]] * c[s.pattern.cols[k]]);
      const byCopy = new SparseLU(s.pattern);
      const byScales = new SparseLU(s.pattern);
      for (let round = 0; round < 2; round++) {
        expect(byScales.factorScaled(s.values, r, c)).toEqual(byCopy.factor(copy));
        expect(byScales.solve(b)).toEqual(byCopy.solve(b));
      }
    }
    const bad = s.values.slice();
    bad[3] = Number.NaN;
    const one = new Float64Array(n).fill(1);
    expect(new SparseLU(s.pattern).factorScaled(bad, one, one)).toEqual({ ok: false, singularIndex: s.pattern.rows[3] });
  });

  it('refactors scaled values read in place as through a scaled copy, also when an entry is not finite or a pivot vanishes', () => {
    // A refactorisation of R·A·C reads each entry from A as it loads a column, and stops at an entry that is not finite or
    // a pivot it refuses; the outcome, the unknown named, the counters and every later factorisation must be those of the
    // same matrices handed over as scaled copies.
    const { s, b } = mnaSystem(60, 3, 31);
    const { n, rows, cols } = s.pattern;
    const rand = rng(310);
    const r = Float64Array.from({ length: n }, () => 2 ** Math.round(20 * rand() - 10));
    const c = Float64Array.from({ length: n }, () => 2 ** Math.round(20 * rand() - 10));
    const byCopy = new SparseLU(s.pattern);
    const byScales = new SparseLU(s.pattern);
    const step = (values: Float64Array): void => {
      const copy = values.map((v, k) => v * r[rows[k]] * c[cols[k]]);
      const result = byScales.factorScaled(values, r, c);
      expect(result).toEqual(byCopy.factor(copy));
      expect(byScales.failure).toBe(byCopy.failure);
      expect(byScales.stats).toEqual(byCopy.stats);
      if (!result.ok) return;
      const x = byScales.solve(b);
      const y = byCopy.solve(b);
      for (let i = 0; i < n; i++) expect(Object.is(x[i], y[i])).toBe(true);
    };
    step(s.values);
    step(s.values.map((v) => v * (0.5 + rand())));
    // Not finite: the last entry of each column in turn (so the column's other entries are loaded first, in a column
    // factored early or late), then two entries anywhere.
    for (let j = 0; j < n; j++) {
      const bad = s.values.slice();
      bad[cols.lastIndexOf(j)] = j % 2 === 0 ? Number.NaN : -Infinity;
      step(bad);
      step(s.values.map((v) => v * (0.5 + rand())));
    }
    for (let t = 0; t < 4; t++) {
      const bad = s.values.slice();
      bad[Math.floor(rand() * bad.length)] = Infinity;
      bad[Math.floor(rand() * bad.length)] = Number.NaN;
      step(bad);
      step(s.values.map((v) => v * (0.5 + rand())));
    }
    // A pivot the refactorisation refuses: every diagonal shrunk by 1e9 (as in the test below), then back.
    step(s.values.map((v, k) => (rows[k] === cols[k] ? v * 1e-9 : v)));
    step(s.values);
    expect(byScales.stats.pivotFallbacks).toBeGreaterThanOrEqual(1);
    expect(byScales.stats.refactorizations).toBeGreaterThanOrEqual(7);
  });

  it('falls back to a fresh pivot order when a recorded pivot vanishes', () => {
    // First values choose the diagonal of column 0; then a00 becomes 0 and row 1 must take over.
    // [[0, 1], [1, 1]]·x = [1, 3] has x = [2, 1]. Source: arithmetic.
    const pattern = { n: 2, rows: Int32Array.of(0, 0, 1, 1), cols: Int32Array.of(0, 1, 0, 1) };
    const lu = new SparseLU(pattern, { ordering: 'natural' });
    expect(lu.factor(Float64Array.of(2, 1, 1, 1)).ok).toBe(true);
    expect(lu.factor(Float64Array.of(0, 1, 1, 1))).toEqual({ ok: true });
    expect(Array.from(lu.solve(Float64Array.of(1, 3)))).toEqual([2, 1]);
    expect(lu.stats.pivotFallbacks).toBe(1);
    expect(lu.stats.pivotingFactorizations).toBe(2);
  });

  it('falls back when a pivot becomes tiny against its column in a larger system', () => {
    const { s, b } = mnaSystem(60, 3, 21);
    const lu = new SparseLU(s.pattern);
    expect(lu.factor(s.values).ok).toBe(true);
    // Shrink every diagonal entry by 1e9: the recorded diagonal pivots become tiny against the off-diagonals.
    const shrunk = Float64Array.from(s.values);
    for (let k = 0; k < shrunk.length; k++) if (s.pattern.rows[k] === s.pattern.cols[k]) shrunk[k] *= 1e-9;
    // Keep it nonsingular: add a dominant term to a random permutation's entries is not possible on a fixed
    // pattern, so compare with the dense LU only where it is well defined.
    const dense = new DenseLU(s.pattern);
    const okDense = dense.factor(shrunk).ok;
    const r = lu.factor(shrunk);
    expect(lu.stats.pivotFallbacks).toBeGreaterThanOrEqual(1);
    if (r.ok && okDense) {
      const x = lu.solve(b);
      const res = multiply({ pattern: s.pattern, values: shrunk }, x);
      // The fresh pivoting keeps the residual small (backward stability; Golub & Van Loan §3.4).
      for (let i = 0; i < res.length; i++) expect(Math.abs(res[i] - b[i])).toBeLessThanOrEqual(1e-8 * maxAbs(b));
    }
  });
});

describe('SparseLU singular systems name the unknown', () => {
  it('reports a structurally empty row (a node fed only by a current source)', () => {
    // Unknowns 0 and 1 form a divider; unknown 2 appears in no equation at all.
    const s = system(3, [[0, 0, 2], [0, 1, -1], [1, 0, -1], [1, 1, 2], [2, 0, 0]]);
    // Row 2 has an entry (a zero), column 2 has none: the unknown v2 is undetermined.
    checkFails(s, { indexIn: [2], reason: 'structurally-singular' });
  });

  it('reports an empty row', () => {
    const s = system(3, [[0, 0, 1], [1, 1, 1], [0, 2, 1]]);
    checkFails(s, { indexIn: [2], reason: 'structurally-singular' });
  });

  it('reports a structurally rank-deficient matrix (two equations in one unknown)', () => {
    // Rows 1 and 2 only involve unknown 0; no assignment of pivots covers unknowns 1 and 2.
    const s = system(3, [[0, 0, 1], [0, 1, 1], [0, 2, 1], [1, 0, 1], [2, 0, 2]]);
    const lu = new SparseLU(s.pattern);
    const r = lu.factor(s.values);
    expect(r.ok).toBe(false);
    if (!r.ok) expect([1, 2]).toContain(r.singularIndex);
  });

  it('reports two voltage sources in parallel (a loop of sources)', () => {
    // v1 with two sources to ground: branch rows 1 and 2 both read only v1, so two equations
    // share one unknown and the two branch currents are not separable (structurally singular).
    const s = system(3, [[0, 0, 1e-3], [0, 1, 1], [1, 0, 1], [0, 2, 1], [2, 0, 1]]);
    checkFails(s, { indexIn: [1, 2], reason: 'structurally-singular' });
  });

  it('reports a loop of sources with a resistor across it as numerically singular', () => {
    // V1: v1 − v2 = 1, V2: v1 − v2 = 2 (through different incidences), plus 1 kΩ from v1 to v2 and v2 to ground.
    // The two branch rows are parallel, so the matrix is singular with a full structural rank.
    const g = 1e-3;
    const s = system(4, [
      [0, 0, g], [0, 1, -g], [1, 0, -g], [1, 1, 2 * g],
      [0, 2, 1], [1, 2, -1], [2, 0, 1], [2, 1, -1],
      [0, 3, 1], [1, 3, -1], [3, 0, 1], [3, 1, -1],
    ]);
    checkFails(s, { indexIn: [0, 1, 2, 3], reason: 'numerically-singular' });
  });

  it('names an unknown of a floating resistor pair inside a larger grounded network', () => {
    const { s } = mnaSystem(30, 2, 5);
    const n = s.pattern.n;
    const triples: [number, number, number][] = [];
    for (let k = 0; k < s.values.length; k++) triples.push([s.pattern.rows[k], s.pattern.cols[k], s.values[k]]);
    // Two extra nodes joined only to each other by 1 kΩ: no DC path to ground.
    const a = n;
    const c = n + 1;
    triples.push([a, a, 1e-3], [c, c, 1e-3], [a, c, -1e-3], [c, a, -1e-3]);
    checkFails(system(n + 2, triples), { indexIn: [a, c], reason: 'numerically-singular' });
  });

  it('reports a non-finite value at its row and an out-of-range pattern entry', () => {
    const s = system(2, [[0, 0, 1], [1, 1, 1], [1, 0, 1]]);
    const bad = Float64Array.from(s.values);
    bad[2] = Number.NaN;
    const lu = new SparseLU(s.pattern);
    expect(lu.factor(bad)).toEqual({ ok: false, singularIndex: 1 });
    expect(lu.failure).toBe('non-finite-value');
    bad[2] = Infinity;
    expect(lu.factor(bad).ok).toBe(false);
    expect(lu.factor(s.values).ok).toBe(true);
    const broken = new SparseLU({ n: 2, rows: Int32Array.of(0, 5), cols: Int32Array.of(0, 1) });
    expect(broken.factor(Float64Array.of(1, 1))).toEqual({ ok: false, singularIndex: 1 });
    expect(broken.failure).toBe('invalid-pattern');
    expect(Array.from(broken.solve(Float64Array.of(1, 1)))).toEqual([0, 0]);
  });

  it('reports too few values as a failure, not a crash', () => {
    const s = system(2, [[0, 0, 1], [1, 1, 1]]);
    const lu = new SparseLU(s.pattern);
    expect(lu.factor(Float64Array.of(1))).toEqual({ ok: false, singularIndex: 1 });
    expect(lu.failure).toBe('missing-values');
  });
});

describe('SparseLU on long dependency chains', () => {
  it('factors a 300,000-unknown arrow matrix whose reach is one path through every column (no recursion)', () => {
    // Diagonal 2, sub-diagonal −1, last column all ones: with natural order the last column's
    // reach follows L from row 0 through every row, a path 300,000 deep (a recursive search
    // would overflow the JavaScript stack near 10,000 frames). x = A⁻¹·(A·1) must give back 1.
    const n = 300_000;
    const rows: number[] = [];
    const cols: number[] = [];
    const vals: number[] = [];
    for (let i = 0; i < n; i++) {
      rows.push(i); cols.push(i); vals.push(i === n - 1 ? n : 2);
      if (i + 1 < n) { rows.push(i + 1); cols.push(i); vals.push(-1); }
      if (i < n - 1) { rows.push(i); cols.push(n - 1); vals.push(1); }
    }
    const s: System = { pattern: { n, rows: Int32Array.from(rows), cols: Int32Array.from(cols) }, values: Float64Array.from(vals) };
    const lu = new SparseLU(s.pattern, { ordering: 'natural' });
    expect(lu.factor(s.values).ok).toBe(true);
    const ones = new Float64Array(n).fill(1);
    const x = lu.solve(multiply(s, ones));
    let err = 0;
    for (let i = 0; i < n; i++) err = Math.max(err, Math.abs(x[i] - 1));
    expect(err).toBeLessThan(1e-8);
  });
});

describe('approximate minimum degree ordering', () => {
  /** Fill of an ordering, measured as the factor size of a diagonally dominant matrix on the pattern (no pivoting happens). */
  function factorSize(n: number, edges: [number, number][], options: SparseLUOptions = {}): number {
    const triples: [number, number, number][] = [];
    const deg = new Float64Array(n);
    for (const [a, b] of edges) {
      triples.push([a, b, -1], [b, a, -1]);
      deg[a]++;
      deg[b]++;
    }
    for (let i = 0; i < n; i++) triples.push([i, i, deg[i] + 1]);
    const s = system(n, triples);
    const lu = new SparseLU(s.pattern, options);
    expect(lu.factor(s.values).ok).toBe(true);
    return lu.stats.factorNonzeros;
  }

  it('returns a permutation on random graphs, including isolated vertices and a dense hub', () => {
    for (let seed = 1; seed <= 40; seed++) {
      const rand = rng(seed);
      const n = 1 + Math.floor(rand() * 300);
      const rows: number[] = [];
      const cols: number[] = [];
      for (let t = 0; t < n * 2; t++) {
        rows.push(Math.floor(rand() * n));
        cols.push(Math.floor(rand() * n));
      }
      for (let v = 1; v < n; v += 2) { rows.push(0); cols.push(v); }
      const perm = approximateMinimumDegree(symmetricPattern(n, rows, cols));
      expect(isPermutation(perm, n)).toBe(true);
    }
  });

  it('orders a tree without fill', () => {
    // Source: S. Parter, SIAM Review 3(2), 1961 and D. J. Rose, 1970 — eliminating leaves first
    // factors a tree-structured matrix with no fill; minimum degree always picks a leaf.
    const rand = rng(3);
    const n = 2000;
    const edges: [number, number][] = [];
    for (let v = 1; v < n; v++) edges.push([v, Math.floor(rand() * v)]);
    const size = factorSize(n, edges);
    // L and U each hold the n − 1 edges, plus n diagonal entries: exactly the matrix's own entries.
    expect(size).toBe(n + 2 * (n - 1));
  });

  it('eliminates an arrowhead hub last (no fill), where the natural order fills completely', () => {
    // Source: T. A. Davis, "Direct Methods for Sparse Linear Systems", SIAM 2006, ch. 7 — ordering the
    // dense row and column of an arrow matrix first fills the whole matrix; last gives no fill.
    const n = 400;
    const edges: [number, number][] = [];
    for (let v = 1; v < n; v++) edges.push([0, v]);
    expect(factorSize(n, edges)).toBe(n + 2 * (n - 1));
    expect(factorSize(n, edges, { ordering: 'natural' })).toBe(n * n);
  });

  it('reduces fill on a 2-D grid far below the banded natural order', () => {
    // Source: A. George and J. W. H. Liu, "Computer Solution of Large Sparse Positive Definite
    // Systems", 1981 (from memory) — a k×k grid in row order fills its band, about k³ entries
    // per factor, while minimum-degree style orderings give O(k² log k).
    const k = 40;
    const edges: [number, number][] = [];
    for (let y = 0; y < k; y++)
      for (let x = 0; x < k; x++) {
        if (x + 1 < k) edges.push([y * k + x, y * k + x + 1]);
        if (y + 1 < k) edges.push([y * k + x, (y + 1) * k + x]);
      }
    const natural = factorSize(k * k, edges, { ordering: 'natural' });
    const amd = factorSize(k * k, edges);
    expect(natural).toBeGreaterThan(1.8 * k * k * k);
    expect(amd).toBeLessThan(natural / 3);
  });
});
