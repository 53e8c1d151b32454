// Names what makes an MNA matrix singular: a null vector by dense elimination with complete pivoting shows which unknowns are undetermined.

import type { SparsePattern } from './linear';

/** Largest system the dense diagnosis runs on (its cost is n³; beyond this the factorisation's own pivot index is used). */
export const DIAGNOSE_MAX_UNKNOWNS = 400;

/**
 * Unknowns that a null vector of the matrix moves (|component| ≥ 1e-6 of the largest),
 * largest first; empty when the matrix has full numerical rank at relative tolerance
 * `tol` or is too large to analyse densely.
 */
export function undeterminedUnknowns(pattern: SparsePattern, values: Float64Array, tol = 1e-12): number[] {
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
  for (let k = 0; k < n; k++) x[colPerm[k]] = z[k];
  let max = 0;
  for (const v of x) max = Math.max(max, Math.abs(v));
  const picked: number[] = [];
  for (let k = 0; k < n; k++) if (Math.abs(x[k]) >= 1e-6 * max) picked.push(k);
  return picked.sort((p, q) => Math.abs(x[q]) - Math.abs(x[p]));
}
