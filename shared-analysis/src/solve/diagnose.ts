// Names what makes an MNA matrix singular: a null vector by dense elimination with complete pivoting shows which unknowns are undetermined.

import type { SparsePattern } from './linear';

/** Largest system the dense diagnosis runs on (its cost is n³; beyond this the factorisation's own pivot index is used). */
export const DIAGNOSE_MAX_UNKNOWNS = 400;

/**
 * Unknowns that a null vector of the matrix moves (|component| ≥ 1e-6 of the largest),
 * largest first; empty when the matrix has full numerical rank at relative tolerance
 * `tol` or is too large to analyse densely.
 */
export function undeterminedUnknowns(pattern: SparsePattern, values: Float64Array, colScale?: Float64Array, tol = 1e-12): number[] {
  const n = pattern.n;
  if (n === 0 || n > DIAGNOSE_MAX_UNKNOWNS) return [];
  const a = new Float64Array(n * n);
  for (let e = 0; e < pattern.rows.length; e++) a[pattern.rows[e] * n + pattern.cols[e]] += values[e];
  const colPerm = Int32Array.from({ length: n }, (_, i) => i);
  let scale = 0;
  for (let k = 0; k < a.length; k++) if (Number.isFinite(a[k])) scale = Math.max(scale, Math.abs(a[k]));
  if (!(scale > 0)) return Array.from({ length: n }, (_, i) => i);
  let rank = n;
  for (let k = 0; k < n; k++) {
    let pi = k;
    let pj = k;
    let best = -1;
    for (let i = k; i < n; i++)
      for (let j = k; j < n; j++) {
        const v = Math.abs(a[i * n + j]);
        if (v > best) {
          best = v;
          pi = i;
          pj = j;
        }
      }
    if (!(best > tol * scale)) {
      rank = k;
      break;
    }
    if (pi !== k) for (let j = 0; j < n; j++) [a[k * n + j], a[pi * n + j]] = [a[pi * n + j], a[k * n + j]];
    if (pj !== k) {
      for (let i = 0; i < n; i++) [a[i * n + k], a[i * n + pj]] = [a[i * n + pj], a[i * n + k]];
      [colPerm[k], colPerm[pj]] = [colPerm[pj], colPerm[k]];
    }
    const piv = a[k * n + k];
    for (let i = k + 1; i < n; i++) {
      const f = a[i * n + k] / piv;
      if (f === 0) continue;
      a[i * n + k] = 0;
      for (let j = k + 1; j < n; j++) a[i * n + j] -= f * a[k * n + j];
    }
  }
  if (rank === n) return [];
  // Null vector: first free variable = 1, the other free ones 0, back-substitute the pivoted ones.
  const z = new Float64Array(n);
  z[rank] = 1;
  for (let i = rank - 1; i >= 0; i--) {
    let s = 0;
    for (let j = i + 1; j < n; j++) s += a[i * n + j] * z[j];
    z[i] = -s / a[i * n + i];
  }
  const x = new Float64Array(n);
  // Back to unscaled unknowns when the matrix was column-equilibrated (x = C·y).
  for (let k = 0; k < n; k++) x[colPerm[k]] = z[k] * (colScale ? colScale[colPerm[k]] : 1);
  let max = 0;
  for (const v of x) max = Math.max(max, Math.abs(v));
  const picked: number[] = [];
  for (let k = 0; k < n; k++) if (Math.abs(x[k]) >= 1e-6 * max) picked.push(k);
  return picked.sort((p, q) => Math.abs(x[q]) - Math.abs(x[p]));
}

/**
 * The same question for systems too large for dense elimination: shifted inverse iteration.
 * Every diagonal of the (equilibrated) matrix gets a small shift δ, the shifted system is
 * solved once for a fixed right-hand side, and the unknowns whose solution components are
 * within 1 % of the largest are the ones the null space moves: they grow like 1/δ while
 * the determined ones stay of order one. Returns [] when the shifted system cannot be
 * factored or shows no such growth.
 */
export function undeterminedByShift(
  pattern: SparsePattern,
  values: Float64Array,
  makeSolver: (p: SparsePattern) => { factor(v: Float64Array): { ok: boolean }; solve(b: Float64Array, x?: Float64Array): Float64Array },
  colScale?: Float64Array,
  shift = 1e-9,
): number[] {
  const n = pattern.n;
  if (n === 0) return [];
  const hasDiag = new Uint8Array(n);
  for (let e = 0; e < pattern.rows.length; e++) if (pattern.rows[e] === pattern.cols[e]) hasDiag[pattern.rows[e]] = 1;
  const extra: number[] = [];
  for (let k = 0; k < n; k++) if (!hasDiag[k]) extra.push(k);
  const rows = new Int32Array(pattern.rows.length + extra.length);
  const cols = new Int32Array(rows.length);
  rows.set(pattern.rows);
  cols.set(pattern.cols);
  extra.forEach((k, i) => {
    rows[pattern.rows.length + i] = k;
    cols[pattern.rows.length + i] = k;
  });
  const shifted = new Float64Array(rows.length);
  shifted.set(values);
  for (let e = 0; e < rows.length; e++) if (rows[e] === cols[e]) shifted[e] += shift;
  const solver = makeSolver({ n, rows, cols });
  if (!solver.factor(shifted).ok) return [];
  // A fixed, irregular right-hand side so no null direction is missed by symmetry.
  const b = new Float64Array(n);
  for (let k = 0; k < n; k++) b[k] = 1 + ((k * 7919) % 13) / 13;
  const z = solver.solve(b);
  let maxScaled = 0;
  for (const v of z) if (Number.isFinite(v)) maxScaled = Math.max(maxScaled, Math.abs(v));
  // Determined unknowns are O(1) after equilibration; require clear 1/δ growth.
  if (!(maxScaled > 1e3)) return [];
  if (colScale) for (let k = 0; k < n; k++) z[k] *= colScale[k];
  let max = 0;
  for (const v of z) if (Number.isFinite(v)) max = Math.max(max, Math.abs(v));
  const picked: number[] = [];
  for (let k = 0; k < n; k++) if (Math.abs(z[k]) >= 0.01 * max) picked.push(k);
  return picked.sort((p, q) => Math.abs(z[q]) - Math.abs(z[p]));
}
