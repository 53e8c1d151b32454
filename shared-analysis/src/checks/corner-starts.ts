// Where each corner's Newton starts: a prediction from the corners already solved, by inclusion–exclusion over the axes the corner moves.

import { float64ColumnOf } from '../columns';
import { maxOf } from '../arrays';
import type { CornerSpec } from './corners';

/**
 * A corner of the cross product moves some of four axes (supply, temperature, beta, MOS process)
 * away from nominal. Its solution is predicted from the corners that move a proper subset of those
 * axes, by inclusion–exclusion: with two axes a and b, x(a, b) ≈ x(a) + x(b) − x(nominal); with
 * three, x(a, b, c) ≈ x(a, b) + x(a, c) + x(b, c) − x(a) − x(b) − x(c) + x(nominal). The prediction
 * misses only the part of the solution that depends on all the moved axes jointly (their cross term),
 * which is small next to each axis's own effect, so Newton starts closer than from the nominal point:
 * on the 20,000-element sink array the corners' iterations fall from 99 to 70. A corner that moves one axis, and a single-source corner, start from the nominal
 * point as before.
 */
export class CornerStarts {
  private readonly keys: (string | undefined)[];
  private readonly moved: number[][];
  private readonly levels: (string | number)[][];
  private readonly solutions = new Map<string, Float64Array>();
  /** Corners that move fewer axes than this are kept as the base of a prediction. */
  private readonly keepBelow: number;
  /** The one vector every prediction is written into (a vector per predicted corner was 8 MB of typed arrays at 100,000 elements). */
  private predicted: Float64Array | undefined;

  constructor(
    specs: readonly CornerSpec[],
    private readonly nominalC: number,
    private readonly nominal: Float64Array,
  ) {
    this.levels = specs.map((s) => [s.supplyScale, s.temperatureC, s.betaScale, s.process ?? '']);
    const base: (string | number)[] = [1, nominalC, 1, ''];
    this.moved = this.levels.map((l, k) => (specs[k].singleSource === undefined ? [0, 1, 2, 3].filter((a) => l[a] !== base[a]) : []));
    this.keys = specs.map((s, k) => (s.singleSource === undefined ? keyOf(this.levels[k]) : undefined));
    this.keepBelow = maxOf(this.moved.map((m) => m.length));
  }

  /** The corners in the order to solve them: fewer moved axes first (each prediction's base is solved before it), the list's order within that. */
  order(): number[] {
    return this.moved.map((_, k) => k).sort((a, b) => this.moved[a].length - this.moved[b].length || a - b);
  }

  /**
   * The predicted start of corner k, or undefined when it moves one axis or a corner of its base did not converge.
   * The vector is this object's own, overwritten by the next call: read it before asking for another corner's.
   */
  start(k: number): Float64Array | undefined {
    const moved = this.moved[k];
    if (moved.length < 2) return undefined;
    const n = this.nominal.length;
    const out = (this.predicted ??= new Float64Array(n));
    out.fill(0);
    const levels = this.levels[k];
    // Every proper subset of the moved axes, as a bit mask over `moved`: sign + for |S| = m − 1, − for m − 2, ...
    for (let mask = 0; mask < (1 << moved.length) - 1; mask++) {
      const at: (string | number)[] = [1, this.nominalC, 1, ''];
      let size = 0;
      for (let j = 0; j < moved.length; j++) {
        if (mask & (1 << j)) {
          at[moved[j]] = levels[moved[j]];
          size++;
        }
      }
      const x = size === 0 ? this.nominal : this.solutions.get(keyOf(at));
      if (!x || x.length !== n) return undefined;
      const sign = (moved.length - size) % 2 === 1 ? 1 : -1;
      for (let i = 0; i < n; i++) out[i] += sign * x[i];
    }
    return out;
  }

  /** Told corner k's converged solution (copied when a later prediction needs it). */
  solved(k: number, x: Float64Array): void {
    const key = this.keys[k];
    if (key !== undefined && this.moved[k].length < this.keepBelow) this.solutions.set(key, float64ColumnOf(x));
  }

  /**
   * Whether a solution found from corner k's predicted start `start` stayed near it: no farther from
   * the prediction than the prediction is from the nominal point (largest unknown). A solution that
   * went farther found another state than the prediction's neighbours, which the nominal start decides.
   */
  near(start: Float64Array, x: Float64Array): boolean {
    // The loops are a function of their own: compiled while its loop first ran, `near` met a comparison after it
    // that had never run and gave up its compiled code at every predicted corner (20 times on the sink arrays).
    return largestGap(x, start, x.length) <= largestGap(start, this.nominal, x.length);
  }
}

/** The largest |a[i] − b[i]| over i < n (NaN when one is NaN, as Math.max gives it). */
function largestGap(a: Float64Array, b: Float64Array, n: number): number {
  let gap = 0;
  for (let i = 0; i < n; i++) gap = Math.max(gap, Math.abs(a[i] - b[i]));
  return gap;
}

function keyOf(levels: readonly (string | number)[]): string {
  return levels.join('|');
}
