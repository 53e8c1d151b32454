// The sparse LU against mathjs (a general-purpose reference library) on seeded random resistor-network MNA matrices.

import { create, all, type Matrix } from 'mathjs';
import { describe, expect, it } from 'vitest';
import { SparseLU } from '../../shared-analysis/src/solve/sparse-lu';
import { rng } from '../seeded-random';

const math = create(all);

interface Network {
  n: number;
  rows: Int32Array;
  cols: Int32Array;
  values: Float64Array;
  rhs: Float64Array;
}

/**
 * A random resistor network in modified nodal form (C.-W. Ho, A. E. Ruehli, P. A. Brennan,
 * IEEE Trans. Circuits and Systems, 1975): resistors from 10 Ω to 1 MΩ, a chain to ground
 * so every node has a DC path, voltage sources with branch-current unknowns (zero
 * diagonals), current sources into the right-hand side. Unknowns are shuffled.
 */
function network(nodes: number, vsources: number, seed: number): Network {
  const rand = rng(seed);
  const n = nodes + vsources;
  const perm = Array.from({ length: n }, (_, i) => i);
  for (let i = n - 1; i > 0; i--) {
    const j = Math.floor(rand() * (i + 1));
    [perm[i], perm[j]] = [perm[j], perm[i]];
  }
  const at = new Map<number, number>();
  const rows: number[] = [];
  const cols: number[] = [];
  const vals: number[] = [];
  const add = (r: number, c: number, v: number): void => {
    const key = r * n + c;
    const k = at.get(key);
    if (k === undefined) {
      at.set(key, rows.length);
      rows.push(r);
      cols.push(c);
      vals.push(v);
    } else vals[k] += v;
  };
  const resistor = (a: number, b: number): void => {
    const g = 1 / 10 ** (1 + 5 * rand());
    if (a > 0) add(perm[a - 1], perm[a - 1], g);
    if (b > 0) add(perm[b - 1], perm[b - 1], g);
    if (a > 0 && b > 0 && a !== b) {
      add(perm[a - 1], perm[b - 1], -g);
      add(perm[b - 1], perm[a - 1], -g);
    }
  };
  for (let k = 1; k <= nodes; k++) resistor(k, Math.floor(rand() * k));
  for (let t = 0; t < nodes; t++) {
    const a = 1 + Math.floor(rand() * nodes);
    const b = Math.floor(rand() * (nodes + 1));
    if (a !== b) resistor(a, b);
  }
  const rhs = new Float64Array(n);
  const plusUsed = new Set<number>();
  for (let k = 0; k < vsources; k++) {
    let plus = 1 + Math.floor(rand() * nodes);
    while (plusUsed.has(plus)) plus = (plus % nodes) + 1;
    plusUsed.add(plus);
    const br = perm[nodes + k];
    add(perm[plus - 1], br, 1);
    add(br, perm[plus - 1], 1);
    rhs[br] = 0.5 + 10 * rand();
  }
  for (let k = 0; k < nodes; k++) if (rand() < 0.3) rhs[perm[k]] += (rand() - 0.5) * 2e-3;
  return { n, rows: Int32Array.from(rows), cols: Int32Array.from(cols), values: Float64Array.from(vals), rhs };
}

function denseOf(net: Network): number[][] {
  const a = Array.from({ length: net.n }, () => new Array<number>(net.n).fill(0));
  for (let k = 0; k < net.values.length; k++) a[net.rows[k]][net.cols[k]] += net.values[k];
  return a;
}

function column(m: Matrix | number[][]): number[] {
  const arr = (Array.isArray(m) ? m : (m.toArray() as number[][])) as number[][];
  return arr.map((row) => (Array.isArray(row) ? row[0] : (row as number)));
}

/** The one helper: our solution of the network against mathjs's, to `tol` relative to max |x|. */
function check(net: Network, expected: { reference: number[]; tol: number }): void {
  const lu = new SparseLU({ n: net.n, rows: net.rows, cols: net.cols });
  expect(lu.factor(net.values)).toEqual({ ok: true });
  const x = lu.solve(net.rhs);
  const scale = Math.max(...expected.reference.map(Math.abs));
  for (let i = 0; i < net.n; i++) {
    expect(Number.isFinite(x[i])).toBe(true);
    expect(Math.abs(x[i] - expected.reference[i])).toBeLessThanOrEqual(expected.tol * scale);
  }
}

describe('sparse LU agrees with mathjs on random resistor networks', () => {
  it('matches mathjs lusolve (dense LU with partial pivoting) to 1e-10 relative', () => {
    // Source: mathjs documentation, lusolve(A, b) — solves A·x = b by LU decomposition with partial pivoting.
    for (let seed = 1; seed <= 12; seed++) {
      const net = network(15 + 5 * seed, 1 + (seed % 4), seed);
      const reference = column(math.lusolve(denseOf(net), Array.from(net.rhs)) as number[][]);
      check(net, { reference, tol: 1e-10 });
    }
  });

  it('matches mathjs slu + lusolve (sparse LU with its own ordering) to 1e-10 relative', () => {
    // Source: mathjs documentation, slu(A, order, threshold) — sparse LU of a SparseMatrix with
    // symbolic ordering (order 1: minimum degree on A + Aᵀ) and threshold partial pivoting;
    // lusolve(decomposition, b) solves with it.
    for (let seed = 101; seed <= 108; seed++) {
      const net = network(150 + 40 * (seed - 100), 2 + (seed % 5), seed);
      const A = math.sparse(denseOf(net));
      const dec = math.slu(A, 1, 1);
      const reference = column(math.lusolve(dec, Array.from(net.rhs)) as Matrix);
      check(net, { reference, tol: 1e-10 });
    }
  });

  it('matches mathjs after refactorising the same pattern with new values', () => {
    // Source: mathjs documentation, lusolve — a fresh dense solve of each changed matrix.
    const net = network(60, 3, 77);
    const lu = new SparseLU({ n: net.n, rows: net.rows, cols: net.cols });
    expect(lu.factor(net.values).ok).toBe(true);
    const rand = rng(7);
    for (let round = 0; round < 4; round++) {
      const values = net.values.map((v) => v * (0.5 + rand()));
      const changed = { ...net, values };
      expect(lu.factor(values).ok).toBe(true);
      const x = lu.solve(net.rhs);
      const reference = column(math.lusolve(denseOf(changed), Array.from(net.rhs)) as number[][]);
      const scale = Math.max(...reference.map(Math.abs));
      for (let i = 0; i < net.n; i++) expect(Math.abs(x[i] - reference[i])).toBeLessThanOrEqual(1e-10 * scale);
    }
    expect(lu.stats.refactorizations).toBe(4);
  });
});

describe('transposed solves (the adjoint of sensitivity analysis) agree with mathjs', () => {
  it('solveTranspose and solveTransposeSparse match lusolve on the transposed matrix to 1e-10 relative', () => {
    // Source: mathjs documentation, transpose(A) and lusolve(A, b).
    for (let seed = 1; seed <= 6; seed++) {
      const net = network(30 + seed * 7, 3, 500 + seed);
      const lu = new SparseLU({ n: net.n, rows: net.rows, cols: net.cols });
      expect(lu.factor(net.values).ok).toBe(true);
      const reference = column(math.lusolve(math.transpose(denseOf(net)), Array.from(net.rhs)) as number[][]);
      const scale = Math.max(...reference.map(Math.abs));
      const dense = lu.solveTranspose(net.rhs);
      reference.forEach((r, k) => expect(Math.abs(dense[k] - r)).toBeLessThanOrEqual(1e-10 * scale));
      // A right-hand side with two entries, solved sparsely and densely.
      const b = new Float64Array(net.n);
      b[seed % net.n] = 1;
      b[(seed * 5) % net.n] = -2;
      const idx = [seed % net.n, (seed * 5) % net.n];
      // Stale entries past \`count\` (as a reused list holds them) must not be read as part of the result.
      const out = { index: [0, 1, 2, 3], value: [9, 9, 9, 9], count: 4 };
      const work = new Float64Array(net.n);
      lu.solveTransposeSparse(idx, [1, -2], work, out);
      const full = new Float64Array(net.n);
      for (let k = 0; k < out.count; k++) full[out.index[k]] = out.value[k];
      const ref2 = column(math.lusolve(math.transpose(denseOf(net)), Array.from(b)) as number[][]);
      const s2 = Math.max(...ref2.map(Math.abs));
      ref2.forEach((r, k) => expect(Math.abs(full[k] - r)).toBeLessThanOrEqual(1e-10 * s2));
      expect(work.every((w) => w === 0)).toBe(true);
    }
  });
});

/** `copies` of a network side by side on the diagonal (independent circuits in one matrix): a solve's reach stays within the blocks its right-hand side touches. */
function blockDiagonal(net: Network, copies: number): Network {
  const rows: number[] = [];
  const cols: number[] = [];
  const values: number[] = [];
  for (let c = 0; c < copies; c++) {
    for (let k = 0; k < net.rows.length; k++) {
      rows.push(c * net.n + net.rows[k]);
      cols.push(c * net.n + net.cols[k]);
      values.push(net.values[k]);
    }
  }
  const n = net.n * copies;
  return { n, rows: Int32Array.from(rows), cols: Int32Array.from(cols), values: Float64Array.from(values), rhs: new Float64Array(n) };
}

describe('the sparse transposed solve on a small reach and a large one, its result lists reused', () => {
  it('matches lusolve on the transposed matrix to 1e-10 relative, reading only the first count entries', () => {
    // Source: mathjs documentation, transpose(A) and lusolve(A, b); block-diagonal solves are independent (linear algebra).
    const net = blockDiagonal(network(6, 1, 77), 30);
    const lu = new SparseLU({ n: net.n, rows: net.rows, cols: net.cols });
    expect(lu.factor(net.values).ok).toBe(true);
    const dense = math.transpose(denseOf(net));
    const work = new Float64Array(net.n);
    const out = { index: [] as number[], value: [] as number[], count: 0 };
    // One block's entry (a reach of at most 7 positions), then entries in 12 blocks (up to 84), then one block again,
    // so the second result is written over a longer first one and the third over a longer second.
    const cases = [[3], Array.from({ length: 12 }, (_, b) => b * 7 * 2 + 1), [net.n - 2]];
    for (const idx of cases) {
      const vals = idx.map((_, k) => (k % 2 === 0 ? 1 : -0.5));
      lu.solveTransposeSparse(idx, vals, work, out);
      const b = new Array<number>(net.n).fill(0);
      idx.forEach((i, k) => (b[i] = vals[k]));
      const ref = column(math.lusolve(dense, b) as number[][]);
      const full = new Float64Array(net.n);
      for (let k = 0; k < out.count; k++) full[out.index[k]] = out.value[k];
      const scale = Math.max(...ref.map(Math.abs));
      expect(scale).toBeGreaterThan(0);
      ref.forEach((r, k) => expect(Math.abs(full[k] - r)).toBeLessThanOrEqual(1e-10 * scale));
      // Every non-zero of the reference is among the entries: a block reached is listed whole.
      expect(out.count).toBe(ref.filter((r) => r !== 0).length);
      expect(work.every((w) => w === 0)).toBe(true);
    }
  });
});
