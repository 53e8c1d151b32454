// Newton–Raphson on the MNA system with junction limiting, a two-sided convergence test, and gmin / source stepping continuations.

import { float64Column, uint8Column } from '../columns';
import type { DeviceConditions, LoadTally, StartHint } from '../devices/device';
import type { FactorResult, LinearSolver, SparseEntries } from './linear';
import { BRANCH_UNKNOWN, type MnaLayout } from './mna';

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
  private scaled: Float64Array | undefined;
  private readonly rowScale: Float64Array;
  private readonly colScale: Float64Array;
  private readonly scaledRhs: Float64Array;
  /** Each row's largest |entry| at the last `measureRowMax`, what the equilibration's row scales come from. */
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
    this.values = float64Column(layout.linearValues.length);
    // A copy of the layout's linear entries (the same time as `Float64Array.from`, measured: docs/PERFORMANCE.md).
    this.linearValues = layout.linearValues.slice();
    this.rhs = float64Column(n);
    this.xNew = float64Column(n);
    this.rowScale = float64Column(n);
    this.colScale = float64Column(n);
    this.scaledRhs = float64Column(n);
    this.rowMax = float64Column(n);
    this.residual = float64Column(n);
    this.residualScale = float64Column(n);
    this.lastFinite = float64Column(n);
    this.isVoltage = uint8Column(n);
    for (let k = 0; k < n; k++) this.isVoltage[k] = layout.unknownKind[k] === BRANCH_UNKNOWN ? 0 : 1;
    this.sourceValues = float64Column(layout.sources.length);
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
   * mistaken for a singular pivot. `columns` false keeps the column scales of the last
   * equilibration and works out the row scales alone (see `factorIteration`).
   */
  private equilibrate(columns = true): void {
    const { values, rowMax, rowScale, colScale } = this;
    const { rows, cols } = this.layout.pattern;
    powerOfTwoInverses(rowMax, rowScale);
    this.scaledCurrent = false;
    if (!columns) return;
    // A function of its own, as the other passes: see `solveScaled`.
    columnMaxima(values, rows, cols, rowScale, colScale);
    powerOfTwoInverses(colScale, colScale);
  }

  /**
   * Equilibrates and factors the matrix of iteration `it` of a run. The row scales are worked out at every
   * iteration, since they decide the factorisation: each pivot test compares entries of one column, which
   * the row scales weigh against each other. The column scales decide nothing (a column's scale multiplies
   * every entry a test compares) and, being powers of two, change no rounding either: L·U, and so the
   * update, are the same bits under any of them (short of overflow or subnormal numbers). So they are
   * worked out at the run's first factorisation and kept for its later ones, which saves a pass over the
   * matrix and one over the unknowns each iteration. A factorisation that fails under kept column scales
   * is made again under fresh ones, so a singular or overflowing matrix is handled, and diagnosed from
   * its scaled values, exactly as when every iteration is equilibrated in full.
   */
  private factorIteration(it: number): FactorResult {
    const fresh = it === 1 || !this.keepColumnScales;
    this.measureRowMax();
    this.equilibrate(fresh);
    const f = this.factorEquilibrated();
    this.factorizations++;
    if (f.ok || fresh) return f;
    this.equilibrate(true);
    return this.factorEquilibrated();
  }
  /** False equilibrates every iteration in full (the plain path `factorIteration` is compared with in the tests). */
  keepColumnScales = true;

  /**
   * Factors R·A·C with the scales of the last `equilibrate`: a solver that scales while it loads its
   * values is handed them (no pass writing a scaled copy, and none reading it back), any other gets the copy.
   */
  private factorEquilibrated(): FactorResult {
    if (this.solver.factorScaled) return this.solver.factorScaled(this.values, this.rowScale, this.colScale);
    return this.solver.factor(this.lastScaledValues);
  }

  /**
   * The entries of R·A·C, (a·r)·c in that order as the factorisation takes them, into `scaled`: made at the first ask (a
   * diagnosis of a singular matrix, or a linear solver that takes no scales), not with every solver (1.6 MB at 100,000 elements).
   */
  private writeScaled(): Float64Array {
    const { values, rowScale, colScale } = this;
    const scaled = (this.scaled ??= float64Column(values.length));
    const { rows, cols } = this.layout.pattern;
    for (let e = 0; e < rows.length; e++) scaled[e] = values[e] * rowScale[rows[e]] * colScale[cols[e]];
    this.scaledCurrent = true;
    return scaled;
  }
  /** Whether `scaled` holds the matrix of the last equilibration. */
  private scaledCurrent = false;

  /** Each row's largest |entry| of the assembled matrix, for `equilibrate`. */
  private measureRowMax(): void {
    const { values, rowMax } = this;
    const rows = this.layout.pattern.rows;
    rowMax.fill(0);
    for (let e = 0; e < rows.length; e++) {
      const a = Math.abs(values[e]);
      if (a > rowMax[rows[e]]) rowMax[rows[e]] = a;
    }
  }

  /**
   * The product A·x of the assembled matrix and each row's largest |term|, for the convergence test's
   * residual. Only an iteration that may converge (or the last allowed one, which names what did not
   * settle) needs it, so it is a pass of its own rather than part of every iteration's `measureRowMax`.
   */
  private measureResidual(x: Float64Array): void {
    const { values, residual, residualScale } = this;
    const { rows, cols } = this.layout.pattern;
    residual.fill(0);
    residualScale.fill(0);
    for (let e = 0; e < rows.length; e++) {
      const r = rows[e];
      const term = values[e] * x[cols[e]];
      residual[r] += term;
      const t = Math.abs(term);
      if (t > residualScale[r]) residualScale[r] = t;
    }
  }

  /** Whether unknown k's update from x to the new iterate is within TOLERANCES. */
  private updateSettled(x: Float64Array, k: number): boolean {
    const { reltol, vntol, abstol } = TOLERANCES;
    const next = this.xNew[k];
    const floor = this.isVoltage[k] ? vntol : abstol;
    return Math.abs(next - x[k]) <= reltol * Math.max(Math.abs(next), Math.abs(x[k])) + floor;
  }

  /** Whether row k's residual (of the last `measureResidual`) is within TOLERANCES: branch rows are voltage equations, node rows KCL (amperes). */
  private residualSettled(k: number): boolean {
    const { reltol, vntol, abstol } = TOLERANCES;
    const b = this.rhs[k];
    const floor = this.isVoltage[k] ? abstol : vntol;
    return Math.abs(this.residual[k] - b) <= reltol * Math.max(this.residualScale[k], Math.abs(b)) + floor;
  }

  /** Whether every update settled and then, with the residual measured at x, every row: the convergence test of an unlimited iteration. */
  private settled(x: Float64Array): boolean {
    // Each loop is a method of its own, as the other passes: see `solveScaled`.
    if (!this.updatesSettled(x)) return false;
    this.measureResidual(x);
    return this.residualsSettled(x.length);
  }

  /** Whether every unknown's update from x settled. */
  private updatesSettled(x: Float64Array): boolean {
    for (let k = 0; k < x.length; k++) if (!this.updateSettled(x, k)) return false;
    return true;
  }

  /** Whether every one of the n rows' residual (of the last `measureResidual`) settled. */
  private residualsSettled(n: number): boolean {
    for (let k = 0; k < n; k++) if (!this.residualSettled(k)) return false;
    return true;
  }

  /** The unknowns whose update or row residual at x is not within TOLERANCES, ascending, into `into`. */
  private collectUnsettled(x: Float64Array, into: number[]): void {
    this.measureResidual(x);
    for (let k = 0; k < x.length; k++) if (!this.updateSettled(x, k) || !this.residualSettled(k)) into.push(k);
  }

  /** Solves A·x = rhs with the equilibrated factors: x = C·(RAC)⁻¹·R·rhs. */
  private solveScaled(x: Float64Array): void {
    // A solver that applies the scales in its own permutation passes is handed them (SparseLU: the same products).
    if (this.solver.solveScaled) {
      this.solver.solveScaled(this.rhs, this.rowScale, this.colScale, x);
      return;
    }
    // The loops are functions of their own: a loop long enough to be compiled while it runs left code
    // after it that had never run, which gave up its compiled code at every call (two a Newton iteration).
    multiplyInto(this.scaledRhs, this.rhs, this.rowScale);
    this.solver.solve(this.scaledRhs, x);
    multiplyInPlace(x, this.colScale);
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
    this.measureRowMax();
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
  solveTransposedSparse(cIndex: ArrayLike<number>, cValue: ArrayLike<number>, out: SparseEntries): void {
    const { rowScale, colScale } = this;
    const n = colScale.length;
    const work = (this.sparseWork ??= float64Column(n));
    const scaled = this.sparseScaled;
    scaled.length = cIndex.length;
    for (let k = 0; k < cIndex.length; k++) scaled[k] = cValue[k] * colScale[cIndex[k]];
    if (this.solver.solveTransposeSparse) {
      this.solver.solveTransposeSparse(cIndex, scaled, work, out);
      for (let k = 0; k < out.count; k++) out.value[k] *= rowScale[out.index[k]];
      return;
    }
    const dense = float64Column(n);
    for (let k = 0; k < cIndex.length; k++) dense[cIndex[k]] += scaled[k];
    const x = this.solver.solveTranspose(dense, float64Column(n));
    let count = 0;
    for (let k = 0; k < n; k++) if (x[k] !== 0) {
      out.index[count] = k;
      out.value[count] = x[k] * rowScale[k];
      count++;
    }
    out.count = count;
  }
  private sparseWork: Float64Array | undefined;
  private readonly sparseScaled: number[] = [];

  /** The equilibrated matrix of the last factorisation attempt (for singularity diagnosis), written when first asked. */
  get lastScaledValues(): Float64Array {
    return this.scaledCurrent && this.scaled ? this.scaled : this.writeScaled();
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
    const { layout, xNew } = this;
    for (const t of layout.tables) t.resetState(x, run.start);
    const linear = layout.tables.length === 0;
    let factored = false;
    const unsettled: number[] = [];
    for (let it = 1; it <= run.maxIterations; it++) {
      if (this.shouldStop?.()) throw new SolveStopped();
      const { limited, nonFinite } = this.assemble(x, run);
      if (nonFinite.length > 0) return { status: 'non-finite', iterations: it, culprits: [...nonFinite] };
      // A linear system's matrix is the same every iteration: factor it once.
      if (!(linear && factored)) {
        const f = this.factorIteration(it);
        if (!f.ok) return { status: 'singular', iterations: it, singularIndex: f.singularIndex };
        factored = true;
      }
      this.solveScaled(xNew);
      if (!allFinite(xNew)) return { status: 'non-finite', iterations: it, culprits: [] };

      // Convergence needs an unlimited iteration whose every update is settled and whose residual
      // F(x) = A(x)·x − b(x) (the exact KCL/branch residual at x when nothing was limited) is small in
      // every row. The unsettled unknowns are listed only on the last allowed iteration (for the finding).
      let converged: boolean;
      if (it === run.maxIterations) {
        this.collectUnsettled(x, unsettled);
        converged = !limited && unsettled.length === 0;
      } else converged = !limited && this.settled(x);
      x.set(xNew);
      this.lastFinite.set(xNew);
      if (converged) return { status: 'converged', iterations: it };
    }
    return { status: 'iteration-limit', iterations: run.maxIterations, unsettled };
  }
}

/**
 * Whether every entry of v is finite. A function of its own: the Newton loop then has no long loop of its
 * own, so V8 compiles it (with what it inlines) once rather than again at each entry of such a loop.
 */
function allFinite(v: Float64Array): boolean {
  for (let k = 0; k < v.length; k++) if (!Number.isFinite(v[k])) return false;
  return true;
}

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

const one = new Float64Array(1);

/** 2^−round(log2 a) for a finite positive a, else 1: a scale that maps a to [0.71, 1.41) without rounding error. */
export function powerOfTwoInverse(a: number): number {
  one[0] = a;
  powerOfTwoInverses(one, one);
  return one[0];
}

/** The high and low 32-bit words of a double (high: sign, exponent and the mantissa's top 20 bits). */
function wordsOfDouble(a: number): [number, number] {
  bits[0] = a;
  return [words[HIGH], words[1 - HIGH]];
}
/** The mantissa words of the band's limits, to compare a mantissa with them as integers. */
const [BAND_LOW_HIGH, BAND_LOW_LOW] = wordsOfDouble(SQRT2_LOW);
const [BAND_HIGH_HIGH, BAND_HIGH_LOW] = wordsOfDouble(SQRT2_HIGH);

/**
 * `powerOfTwoInverse` of every entry of `from`, into `to` (of the same length; it may be `from`), read
 * and written as 32-bit words through views of the two arrays: one loop with no call and no store of a
 * double to read back as words, once per row and column of every Newton iteration. A positive normal
 * number's round(log2 a) is its exponent, one up when its mantissa is at least √2, and 2^−e is written
 * as bits: exactly Math.round(Math.log2(a)) away from the √2 boundary. At it, for subnormals and for
 * what is not a positive finite number, `libraryScale` decides.
 */
export function powerOfTwoInverses(from: Float64Array, to: Float64Array): void {
  const src = wordsOf(from);
  const dst = wordsOf(to);
  const LOW = 1 - HIGH;
  for (let k = 0; k < from.length; k++) {
    const high = src[2 * k + HIGH];
    const low = src[2 * k + LOW];
    const biased = (high >>> 20) & 0x7ff;
    // Sign bit clear, exponent neither zero (subnormal) nor all ones (infinite or NaN).
    if (high >>> 31 === 0 && biased > 0 && biased < 0x7ff) {
      // The mantissa 1.f against the band [SQRT2_LOW, SQRT2_HIGH], compared as the integer f (high word first).
      const f = high & 0x000fffff;
      const below = f < (BAND_LOW_HIGH & 0x000fffff) || (f === (BAND_LOW_HIGH & 0x000fffff) && low < BAND_LOW_LOW);
      const above = f > (BAND_HIGH_HIGH & 0x000fffff) || (f === (BAND_HIGH_HIGH & 0x000fffff) && low > BAND_HIGH_LOW);
      if (below || above) {
        const e = Math.max(-1000, Math.min(1000, above ? biased - 1022 : biased - 1023));
        dst[2 * k + HIGH] = (1023 - e) << 20;
        dst[2 * k + LOW] = 0;
        continue;
      }
    }
    to[k] = libraryScale(from[k]);
  }
}

/** Each column's largest |a·r| of the matrix `values` (entry e at rows[e], cols[e]) with its rows scaled by rowScale, into colScale. */
function columnMaxima(values: Float64Array, rows: Int32Array, cols: Int32Array, rowScale: Float64Array, colScale: Float64Array): void {
  colScale.fill(0);
  for (let e = 0; e < rows.length; e++) {
    const a = Math.abs(values[e] * rowScale[rows[e]]);
    if (a > colScale[cols[e]]) colScale[cols[e]] = a;
  }
}

/** out[k] = a[k]·b[k] for every k of `a`. */
function multiplyInto(out: Float64Array, a: Float64Array, b: Float64Array): void {
  for (let k = 0; k < a.length; k++) out[k] = a[k] * b[k];
}

/** x[k] ·= s[k] for every k of `x`. */
function multiplyInPlace(x: Float64Array, s: Float64Array): void {
  for (let k = 0; k < x.length; k++) x[k] *= s[k];
}

/** The 32-bit word views of the vectors `powerOfTwoInverses` was given (a solver's scale vectors live as long as it). */
const wordViews = new WeakMap<Float64Array, Uint32Array>();

/**
 * The 32-bit words of `a`, a view made once per vector: making two views on every call cost about
 * a tenth of a Newton iteration on a block of a few unknowns (what sizing solves thousands of times).
 */
function wordsOf(a: Float64Array): Uint32Array {
  let words = wordViews.get(a);
  if (!words) wordViews.set(a, (words = new Uint32Array(a.buffer, a.byteOffset, 2 * a.length)));
  return words;
}

/** 2^−round(log2 a) by the library functions, clamped so the scale stays a normal double; 1 for what is not a positive finite number. */
function libraryScale(a: number): number {
  if (!(a > 0) || !Number.isFinite(a)) return 1;
  const e = Math.round(Math.log2(a));
  return Math.pow(2, -Math.max(-1000, Math.min(1000, e)));
}
