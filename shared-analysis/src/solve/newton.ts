// Newton–Raphson on the MNA system with junction limiting, a two-sided convergence test, and gmin / source stepping continuations.

import type { DeviceConditions, LoadTally, StartHint } from '../devices/device';
import type { FactorResult, LinearSolver } from './linear';
import type { MnaLayout } from './mna';

/**
 * Convergence tolerances. An unknown has settled when its update is within
 * RELTOL·max(|old|, |new|) plus an absolute floor (VNTOL for voltages, ABSTOL for
 * branch currents); a row's KCL (or branch) residual is small when within RELTOL of the
 * largest term in that row plus the same absolute floor. With quadratic convergence the
 * last accepted update is far below these, so currents match an exact solution to well
 * under 1e-6 relative.
 */
export const TOLERANCES = { reltol: 1e-9, vntol: 1e-9, abstol: 1e-15 } as const;

/** The conductance every junction carries for robustness (siemens). */
export const JUNCTION_GMIN = 1e-12;

/** One Newton run's settings: source scale (source stepping) and node shunt (gmin stepping). */
export interface NewtonRun {
  sourceScale: number;
  nodeShunt: number;
  maxIterations: number;
  /** How devices choose their first linearisation (default: at the starting vector). */
  start?: StartHint;
}

/**
 * Thrown out of `NewtonEngine.run` (and so out of `DcSolver.solve`) when the solve's `shouldStop`
 * answers true before an iteration: the host no longer needs the answer (its text was superseded).
 */
export class SolveStopped extends Error {
  constructor() {
    super('The solve was stopped before its next Newton iteration.');
  }
}

/** How a Newton run ended. */
export type NewtonOutcome =
  | { status: 'converged'; iterations: number }
  | { status: 'iteration-limit'; iterations: number; unsettled: number[] }
  | { status: 'singular'; iterations: number; singularIndex: number }
  /** `culprits`: element indices of the devices whose stamps overflowed, ascending. */
  | { status: 'non-finite'; iterations: number; culprits: number[] };

/** Runs Newton iterations on one prepared layout; owns the work buffers so repeated solves allocate nothing. */
export class NewtonEngine {
  readonly values: Float64Array;
  readonly rhs: Float64Array;
  /**
   * The linear stamps of the current solve: the layout's values plus what the solve adds
   * (ties of floating nodes, resistance overrides). The solver rewrites it before each solve.
   */
  readonly linearValues: Float64Array;
  private readonly xNew: Float64Array;
  /** Equilibrated copy of `values` handed to the factorisation, and the power-of-two row/column scales used. */
  private readonly scaled: Float64Array;
  private readonly rowScale: Float64Array;
  private readonly colScale: Float64Array;
  private readonly scaledRhs: Float64Array;
  /** Each row's largest |entry| at the last `measureRows`, what the equilibration's row scales come from. */
  private readonly rowMax: Float64Array;
  private readonly residual: Float64Array;
  private readonly residualScale: Float64Array;
  private readonly isVoltage: Uint8Array;
  /** Source values for the current solve (overrides applied), aligned with layout.sources. */
  readonly sourceValues: Float64Array;
  factorizations = 0;
  /** Asked before every Newton iteration of the solve in progress; true throws `SolveStopped` (set by `DcSolver.solve`). */
  shouldStop: (() => boolean) | undefined;
  /** Reused by every assembly. */
  private readonly tally: LoadTally = { limited: false, nonFinite: [] };
  /** The last iterate that was entirely finite (reported when nothing converges). */
  readonly lastFinite: Float64Array;

  constructor(
    private readonly layout: MnaLayout,
    private readonly solver: LinearSolver,
  ) {
    const n = layout.size;
    this.values = new Float64Array(layout.linearValues.length);
    this.linearValues = Float64Array.from(layout.linearValues);
    this.rhs = new Float64Array(n);
    this.xNew = new Float64Array(n);
    this.scaled = new Float64Array(layout.linearValues.length);
    this.rowScale = new Float64Array(n);
    this.colScale = new Float64Array(n);
    this.scaledRhs = new Float64Array(n);
    this.rowMax = new Float64Array(n);
    this.residual = new Float64Array(n);
    this.residualScale = new Float64Array(n);
    this.lastFinite = new Float64Array(n);
    this.isVoltage = new Uint8Array(n);
    layout.unknowns.forEach((u, k) => {
      this.isVoltage[k] = u.kind === 'branch' ? 0 : 1;
    });
    this.sourceValues = new Float64Array(layout.sources.length);
  }

  /** Prepares every device for a solve's temperature and beta. */
  prepare(conditions: DeviceConditions): void {
    for (const t of this.layout.tables) t.prepare(conditions);
  }

  /** Assembles the linearised system at x. Returns the limiting state and the devices whose stamps were not finite (element indices, ascending). */
  private assemble(x: Float64Array, run: NewtonRun): LoadTally {
    const { layout, values, rhs } = this;
    values.set(this.linearValues);
    rhs.fill(0);
    const sv = this.sourceValues;
    for (let s = 0; s < layout.sources.length; s++) {
      const hook = layout.sources[s];
      const v = sv[s] * run.sourceScale;
      if (hook.kind === 'V') rhs[hook.rows[0]] += v;
      else {
        if (hook.rows[0] >= 0) rhs[hook.rows[0]] -= v;
        if (hook.rows[1] >= 0) rhs[hook.rows[1]] += v;
      }
    }
    if (run.nodeShunt > 0) for (const p of layout.nodeDiagonals) values[p] += run.nodeShunt;
    const tally = this.tally;
    tally.limited = false;
    tally.nonFinite.length = 0;
    for (const t of layout.tables) t.load(x, values, rhs, true, tally);
    if (tally.nonFinite.length > 1) tally.nonFinite.sort((a, b) => a - b);
    return tally;
  }

  /**
   * Row-then-column max-norm equilibration with power-of-two factors (exact in binary
   * floating point): the factorisation sees R·A·C with every row and column largest
   * entry in [0.5, 2), so a 1e20 S junction next to a unit source incidence entry is not
   * mistaken for a singular pivot.
   */
  private equilibrate(): void {
    const { values, rowMax, rowScale, colScale } = this;
    const { rows, cols } = this.layout.pattern;
    for (let k = 0; k < rowScale.length; k++) rowScale[k] = powerOfTwoInverse(rowMax[k]);
    colScale.fill(0);
    for (let e = 0; e < rows.length; e++) {
      const a = Math.abs(values[e] * rowScale[rows[e]]);
      if (a > colScale[cols[e]]) colScale[cols[e]] = a;
    }
    for (let k = 0; k < colScale.length; k++) colScale[k] = powerOfTwoInverse(colScale[k]);
    this.scaledCurrent = false;
  }

  /**
   * Factors R·A·C with the scales of the last `equilibrate`: a solver that scales while it loads its
   * values is handed them (no pass writing a scaled copy, and none reading it back), any other gets the copy.
   */
  private factorEquilibrated(): FactorResult {
    if (this.solver.factorScaled) return this.solver.factorScaled(this.values, this.rowScale, this.colScale);
    return this.solver.factor(this.lastScaledValues);
  }

  /** The entries of R·A·C, (a·r)·c in that order as the factorisation takes them, into `scaled`. */
  private writeScaled(): void {
    const { values, scaled, rowScale, colScale } = this;
    const { rows, cols } = this.layout.pattern;
    for (let e = 0; e < rows.length; e++) scaled[e] = values[e] * rowScale[rows[e]] * colScale[cols[e]];
    this.scaledCurrent = true;
  }
  /** Whether `scaled` holds the matrix of the last equilibration. */
  private scaledCurrent = false;

  /**
   * One pass over the assembled matrix: each row's largest |entry| (for `equilibrate`) and, at x, the
   * product A·x and each row's largest |term| (for the convergence test). The two used to be separate
   * passes over every entry; both only read the matrix and x.
   */
  private measureRows(x: Float64Array): void {
    const { values, rowMax, residual, residualScale } = this;
    const { rows, cols } = this.layout.pattern;
    rowMax.fill(0);
    residual.fill(0);
    residualScale.fill(0);
    for (let e = 0; e < rows.length; e++) {
      const v = values[e];
      const r = rows[e];
      const a = Math.abs(v);
      if (a > rowMax[r]) rowMax[r] = a;
      const term = v * x[cols[e]];
      residual[r] += term;
      const t = Math.abs(term);
      if (t > residualScale[r]) residualScale[r] = t;
    }
  }

  /** Solves A·x = rhs with the equilibrated factors: x = C·(RAC)⁻¹·R·rhs. */
  private solveScaled(x: Float64Array): void {
    const { rhs, scaledRhs, rowScale, colScale } = this;
    for (let k = 0; k < rhs.length; k++) scaledRhs[k] = rhs[k] * rowScale[k];
    this.solver.solve(scaledRhs, x);
    for (let k = 0; k < x.length; k++) x[k] *= colScale[k];
  }

  /**
   * Assembles and factors the exact Jacobian of the circuit equations at `x` (no limiting,
   * full sources, no shunts), for adjoint sensitivities: afterwards `solveTransposed` solves
   * Jᵀ·λ = c on these factors, as often as there are outputs. False when J is singular.
   */
  factorAt(x: Float64Array): boolean {
    for (const t of this.layout.tables) t.resetState(x);
    const { values, rhs, layout } = this;
    values.set(this.linearValues);
    rhs.fill(0);
    const tally = this.tally;
    tally.limited = false;
    tally.nonFinite.length = 0;
    for (const t of layout.tables) t.load(x, values, rhs, false, tally);
    if (tally.nonFinite.length > 0) return false;
    this.measureRows(x);
    this.equilibrate();
    const f = this.factorEquilibrated();
    this.factorizations++;
    return f.ok;
  }

  /**
   * Solves Jᵀ·λ = c with the equilibrated factors of the last `factorAt`: the factored matrix is
   * S = R·J·C, so Jᵀ = C⁻¹·Sᵀ·R⁻¹ and λ = R·S⁻ᵀ·(C·c). `out` may not be `c`.
   */
  solveTransposed(c: Float64Array, out: Float64Array): Float64Array {
    const { rowScale, colScale, scaledRhs } = this;
    for (let k = 0; k < c.length; k++) scaledRhs[k] = c[k] * colScale[k];
    this.solver.solveTranspose(scaledRhs, out);
    for (let k = 0; k < out.length; k++) out[k] *= rowScale[k];
    return out;
  }

  /**
   * `solveTransposed` for a sparse right-hand side (indices `cIndex`, values `cValue`), with the
   * non-zero entries of λ in `out`; uses the linear solver's sparse transposed solve when it has
   * one, else the dense one.
   */
  solveTransposedSparse(cIndex: ArrayLike<number>, cValue: ArrayLike<number>, out: { index: number[]; value: number[] }): void {
    const { rowScale, colScale } = this;
    const n = colScale.length;
    const work = (this.sparseWork ??= new Float64Array(n));
    const scaled = this.sparseScaled;
    scaled.length = cIndex.length;
    for (let k = 0; k < cIndex.length; k++) scaled[k] = cValue[k] * colScale[cIndex[k]];
    if (this.solver.solveTransposeSparse) {
      this.solver.solveTransposeSparse(cIndex, scaled, work, out);
      for (let k = 0; k < out.index.length; k++) out.value[k] *= rowScale[out.index[k]];
      return;
    }
    const dense = new Float64Array(n);
    for (let k = 0; k < cIndex.length; k++) dense[cIndex[k]] += scaled[k];
    const x = this.solver.solveTranspose(dense, new Float64Array(n));
    out.index.length = 0;
    out.value.length = 0;
    for (let k = 0; k < n; k++) if (x[k] !== 0) {
      out.index.push(k);
      out.value.push(x[k] * rowScale[k]);
    }
  }
  private sparseWork: Float64Array | undefined;
  private readonly sparseScaled: number[] = [];

  /** The equilibrated matrix of the last factorisation attempt (for singularity diagnosis), written when first asked. */
  get lastScaledValues(): Float64Array {
    if (!this.scaledCurrent) this.writeScaled();
    return this.scaled;
  }

  /** The column scales of the last equilibration: unknown k of the scaled system is x[k]/colScale[k]. */
  get lastColumnScales(): Float64Array {
    return this.colScale;
  }

  /**
   * Newton from x (updated in place to the final iterate). Convergence needs an
   * unlimited iteration whose update and residual are both within TOLERANCES.
   */
  run(x: Float64Array, run: NewtonRun): NewtonOutcome {
    const { layout, rhs, xNew } = this;
    const n = layout.size;
    for (const t of layout.tables) t.resetState(x, run.start);
    const linear = layout.tables.length === 0;
    let factored = false;
    const unsettled: number[] = [];
    const rowScale = this.residualScale;
    const residual = this.residual;
    for (let it = 1; it <= run.maxIterations; it++) {
      if (this.shouldStop?.()) throw new SolveStopped();
      const { limited, nonFinite } = this.assemble(x, run);
      if (nonFinite.length > 0) return { status: 'non-finite', iterations: it, culprits: [...nonFinite] };
      // Residual F(x) = A(x)·x − b(x), the exact KCL/branch residual at x when nothing was limited, with the row maxima.
      this.measureRows(x);
      // A linear system's matrix is the same every iteration: factor it once.
      if (!(linear && factored)) {
        this.equilibrate();
        const f = this.factorEquilibrated();
        this.factorizations++;
        if (!f.ok) return { status: 'singular', iterations: it, singularIndex: f.singularIndex };
        factored = true;
      }
      this.solveScaled(xNew);
      let finite = true;
      for (let k = 0; k < n; k++) if (!Number.isFinite(xNew[k])) finite = false;
      if (!finite) return { status: 'non-finite', iterations: it, culprits: [] };

      const { reltol, vntol, abstol } = TOLERANCES;
      // Indices are kept only on the last allowed iteration (for the finding); earlier ones just count.
      const keep = it === run.maxIterations;
      let unsettledCount = 0;
      for (let k = 0; k < n; k++) {
        const floor = this.isVoltage[k] ? vntol : abstol;
        const d = Math.abs(xNew[k] - x[k]);
        const settledUpdate = d <= reltol * Math.max(Math.abs(xNew[k]), Math.abs(x[k])) + floor;
        // Branch rows are voltage equations; node rows are KCL (amperes).
        const resFloor = this.isVoltage[k] ? abstol : vntol;
        const r = Math.abs(residual[k] - rhs[k]);
        const settledResidual = r <= reltol * Math.max(rowScale[k], Math.abs(rhs[k])) + resFloor;
        if (!settledUpdate || !settledResidual) {
          unsettledCount++;
          if (keep) unsettled.push(k);
        }
      }
      x.set(xNew);
      this.lastFinite.set(xNew);
      if (!limited && unsettledCount === 0) return { status: 'converged', iterations: it };
    }
    return { status: 'iteration-limit', iterations: run.maxIterations, unsettled };
  }
}

/** 2^−round(log2 a) for a finite positive a, else 1: a scale that maps a to [0.71, 1.41) without rounding error. */
const bits = new Float64Array(1);
const words = new Uint32Array(bits.buffer);
/** Which 32-bit word of a double holds its sign and exponent (the high word; index 1 on little-endian machines). */
const HIGH = (() => {
  bits[0] = 1;
  return words[1] === 0x3ff00000 ? 1 : 0;
})();
/** √2 and a band around it where the exponent read from the bits might round differently from Math.round(Math.log2(a)). */
const SQRT2_LOW = Math.SQRT2 * (1 - 1e-12);
const SQRT2_HIGH = Math.SQRT2 * (1 + 1e-12);

export function powerOfTwoInverse(a: number): number {
  if (!(a > 0) || !Number.isFinite(a)) return 1;
  // Fast path for normal numbers: round(log2 a) read from the exponent bits (one up when the
  // mantissa is at least √2), and 2^−e written as bits. Exactly Math.round(Math.log2(a)) away
  // from the √2 boundary; at it and for subnormals the library functions decide.
  bits[0] = a;
  const biased = (words[HIGH] >>> 20) & 0x7ff;
  if (biased > 0) {
    let e = biased - 1023;
    words[HIGH] = (words[HIGH] & 0x000fffff) | 0x3ff00000;
    const m = bits[0];
    if (m < SQRT2_LOW || m > SQRT2_HIGH) {
      if (m > SQRT2_HIGH) e++;
      e = Math.max(-1000, Math.min(1000, e));
      words[HIGH] = (1023 - e) << 20;
      words[1 - HIGH] = 0;
      return bits[0];
    }
  }
  const e = Math.round(Math.log2(a));
  // Clamp so the scale itself stays a normal double.
  return Math.pow(2, -Math.max(-1000, Math.min(1000, e)));
}
