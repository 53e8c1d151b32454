// Newton keeps a run's column scales after its first factorisation: the claim it rests on (power-of-two column
// scales change neither a pivot decision nor a bit of the solution, row scales can change decisions), and the
// engine's results with kept column scales against the plain path that equilibrates every iteration in full.

import { describe, expect, it } from 'vitest';
import type { Circuit } from '../../../shared-analysis/src/circuit';
import { DcSolver, type DcSolveResult } from '../../../shared-analysis/src/solve/dc';
import type { SolveOptions } from '../../../shared-analysis/src/solve/types';
import { SparseLU } from '../../../shared-analysis/src/solve/sparse-lu';
import { rng } from '../../seeded-random';
import { circuit, model, type Spec } from './build';

/** A random sparse n×n matrix with a strong diagonal and entries spread over `decades` decades, as a pattern and values. */
function randomSystem(n: number, seed: number, decades: number): { pattern: { n: number; rows: Int32Array; cols: Int32Array }; values: Float64Array } {
  const r = rng(seed);
  const rows: number[] = [];
  const cols: number[] = [];
  const values: number[] = [];
  const magnitude = (): number => 10 ** ((r() - 0.5) * decades);
  for (let i = 0; i < n; i++) {
    rows.push(i);
    cols.push(i);
    values.push(magnitude() * (r() < 0.5 ? -1 : 1));
    for (let k = 0; k < 3; k++) {
      rows.push(i);
      cols.push(Math.floor(r() * n));
      values.push(magnitude() * (r() - 0.5));
    }
  }
  return { pattern: { n, rows: Int32Array.from(rows), cols: Int32Array.from(cols) }, values: Float64Array.from(values) };
}

/** Powers of two 2^k with k drawn from [−span, span]. */
function powersOfTwo(n: number, seed: number, span: number): Float64Array {
  const r = rng(seed);
  return Float64Array.from({ length: n }, () => 2 ** Math.round((r() - 0.5) * 2 * span));
}

/** x = C·(R·A·C)⁻¹·R·b after factoring R·A·C twice (a refactorisation included), with the LU's counters. */
function scaledSolve(sys: ReturnType<typeof randomSystem>, second: Float64Array, rowScale: Float64Array, colScale: Float64Array, b: Float64Array): { x: Float64Array; ok: boolean; stats: object } {
  const lu = new SparseLU(sys.pattern);
  lu.factorScaled(sys.values, rowScale, colScale);
  const f = lu.factorScaled(second, rowScale, colScale);
  const y = lu.solve(b.map((v, i) => v * rowScale[i]));
  return { x: y.map((v, i) => v * colScale[i]), ok: f.ok, stats: lu.stats };
}

describe('power-of-two equilibration scales', () => {
  it('column scales change no pivot decision and no bit of the solution; row scales can change a decision', () => {
    // Exactness of scaling by powers of two in binary floating point (IEEE 754: a product by 2^k is exact
    // short of overflow and subnormals), so Gaussian elimination on A·C is elimination on A with each column
    // carried times its scale (Higham, "Accuracy and Stability of Numerical Algorithms", 2nd ed., §9.8).
    let decided = 0;
    for (let seed = 1; seed <= 40; seed++) {
      const n = 60;
      const sys = randomSystem(n, seed, 12);
      // The second matrix moves every entry by up to a decade, as a Newton iteration moves the device stamps.
      const r = rng(1000 + seed);
      const second = sys.values.map((v) => v * 10 ** (r() * 2 - 1));
      const b = Float64Array.from({ length: n }, () => r() - 0.5);
      const rows = powersOfTwo(n, 2000 + seed, 0);
      const plain = scaledSolve(sys, second, rows, powersOfTwo(n, 3000 + seed, 0), b);
      const moved = scaledSolve(sys, second, rows, powersOfTwo(n, 4000 + seed, 60), b);
      expect(moved.ok).toBe(plain.ok);
      expect(moved.stats).toEqual(plain.stats);
      for (let i = 0; i < n; i++) expect(Object.is(moved.x[i], plain.x[i])).toBe(true);
      // The same matrices under other row scales: the pivot tests compare entries of different rows.
      const rowMoved = scaledSolve(sys, second, powersOfTwo(n, 5000 + seed, 60), powersOfTwo(n, 3000 + seed, 0), b);
      if (JSON.stringify(rowMoved.stats) !== JSON.stringify(plain.stats)) decided++;
    }
    // Row scales did change a pivot decision in some of the 40 systems: the reason they are worked out every iteration.
    expect(decided).toBeGreaterThan(0);
  });
});

/** Solves `c` under `options` with column scales kept across iterations and with the plain path, on fresh solvers. */
function bothPaths(c: Circuit, options: SolveOptions[]): [DcSolveResult[], DcSolveResult[]] {
  const run = (keep: boolean): DcSolveResult[] => {
    const solver = new DcSolver(c);
    (solver as unknown as { engine: { keepColumnScales: boolean } }).engine.keepColumnScales = keep;
    let last: DcSolveResult | undefined;
    return options.map((o) => (last = solver.solve({ ...o, initialGuess: o.initialGuess ?? last?.x })));
  };
  return [run(true), run(false)];
}

/** The same bits in every unknown, the same findings and the same effort. */
function expectSame(kept: DcSolveResult[], plain: DcSolveResult[]): void {
  expect(kept.length).toBe(plain.length);
  kept.forEach((k, s) => {
    const p = plain[s];
    expect(k.op.converged).toBe(p.op.converged);
    expect(k.stats.iterations).toBe(p.stats.iterations);
    expect(k.stats.factorizations).toBe(p.stats.factorizations);
    expect(k.findings.map((f) => `${f.code}: ${f.message}`)).toEqual(p.findings.map((f) => `${f.code}: ${f.message}`));
    expect(k.x.length).toBe(p.x.length);
    for (let i = 0; i < k.x.length; i++) expect(Object.is(k.x[i], p.x[i])).toBe(true);
  });
}

const npn = model('QN', 'npn', { IS: 1e-16, BF: 100, VAF: 60 });

/** A two-transistor NPN mirror fed from 5 V through 4.3 kΩ, with a 2 kΩ load (a fresh circuit per call). */
function mirror(): ReturnType<typeof circuit> {
  return circuit([
    ['V', 'VCC', 'vcc', '0', 5],
    ['R', 'RR', 'vcc', 'r', 4.3e3],
    ['Q', 'QR', 'r', 'r', '0', npn],
    ['Q', 'QO', 'o', 'r', '0', npn],
    ['R', 'RL', 'vcc', 'o', 2e3],
  ]);
}

describe('Newton with kept column scales against the plain path', () => {
  it('a cold-started mirror and its corners, whose junction conductances move by ten decades', () => {
    const c = mirror();
    const [kept, plain] = bothPaths(c, [{}, { temperatureC: 125, betaScale: 2 }, { temperatureC: -40, betaScale: 0.5, sourceValues: { VCC: 4.75 } }]);
    expect(kept[0].stats.iterations).toBeGreaterThan(3);
    expectSame(kept, plain);
  });

  it('values spread over 30 decades: a 1 TΩ leak, a 1 µΩ shunt, a 1e-30 A saturation current and a 1e9 gain', () => {
    const tiny = model('QT', 'npn', { IS: 1e-30, BF: 50 });
    const c = circuit([
      ['V', 'V1', 'in', '0', 1.2],
      ['R', 'RLEAK', 'in', 'a', 1e12],
      ['R', 'RSH', 'a', 'b', 1e-6],
      ['R', 'RB', 'b', '0', 1e3],
      ['E', 'EAMP', 'g', '0', 'b', 'f', 1e9],
      ['R', 'RG', 'g', 'base', 1e5],
      ['Q', 'QT1', 'c', 'base', 'f', tiny],
      ['R', 'RE', 'f', '0', 1e4],
      ['R', 'RC', 'in', 'c', 1e3],
    ]);
    const [kept, plain] = bothPaths(c, [{}, { temperatureC: 125 }]);
    expectSame(kept, plain);
  });

  it('a nearly singular node (a transconductance cancelling its resistor to 1 part in 10^12) and an exactly singular one', () => {
    const near = circuit([
      ['I', 'I1', '0', 'a', 1e-6],
      ['R', 'R1', 'a', '0', 1e3],
      ['G', 'G1', 'a', '0', 'a', '0', -1e-3 * (1 - 1e-12)],
      ['R', 'R2', 'a', 'b', 1e3],
      ['D', 'D1', 'b', '0', model('DN', 'd', { IS: 1e-14 })],
    ]);
    const [keptNear, plainNear] = bothPaths(near, [{}]);
    expectSame(keptNear, plainNear);
    // A controlled source that defines its own input: singular at every iteration, diagnosed from the scaled matrix.
    const singular = circuit([
      ['V', 'V1', 'in', '0', 1],
      ['R', 'R1', 'in', 'a', 1e3],
      ['Q', 'Q1', 'a', 'a', '0', npn],
      ['E', 'E1', 'x', '0', 'x', '0', 1],
      ['R', 'R2', 'x', 'a', 1e3],
    ]);
    const [keptSingular, plainSingular] = bothPaths(singular, [{}]);
    expect(keptSingular[0].findings.some((f) => f.code === 'dc-singular-matrix')).toBe(true);
    expectSame(keptSingular, plainSingular);
  });

  it('a high-gain loop that needs the stepping fallbacks', () => {
    const c = circuit([
      ['V', 'VCC', 'vcc', '0', 10],
      ['R', 'R1', 'vcc', 'b1', 1e6],
      ['Q', 'Q1', 'c1', 'b1', '0', npn],
      ['R', 'RC1', 'vcc', 'c1', 1e5],
      ['Q', 'Q2', 'c2', 'c1', '0', npn],
      ['R', 'RC2', 'vcc', 'c2', 1e5],
      ['R', 'RF', 'c2', 'b1', 1e4],
      ['E', 'EGAIN', 'drive', '0', 'c2', 'c1', 1e6],
      ['R', 'RD', 'drive', 'b1', 1e3],
    ]);
    const [kept, plain] = bothPaths(c, [{}, { temperatureC: 85, maxIterations: 20 }]);
    expectSame(kept, plain);
  });
});

describe('a factorisation that fails under kept column scales', () => {
  /** A mirror solved cold with Newton alone, its factorisations failing from the `from`-th on; the engine's scales afterwards. */
  function failingFrom(from: number, keep: boolean): { columnScales: Float64Array; scaled: Float64Array; result: DcSolveResult } {
    const c = mirror();
    const solver = new DcSolver(c);
    const engine = (solver as unknown as { engine: { keepColumnScales: boolean; solver: SparseLU; lastColumnScales: Float64Array; lastScaledValues: Float64Array } }).engine;
    engine.keepColumnScales = keep;
    const lu = engine.solver;
    let calls = 0;
    // The matrix taken as singular from the `from`-th factorisation on, as a device state reached by Newton can make it.
    engine.solver = Object.assign(Object.create(lu) as SparseLU, {
      factorScaled(values: Float64Array, rows: Float64Array | undefined, cols: Float64Array | undefined) {
        const f = lu.factorScaled(values, rows, cols);
        return ++calls >= from ? { ok: false as const, singularIndex: 0 } : f;
      },
    });
    const result = solver.solve({ fallbacks: false });
    return { columnScales: Float64Array.from(engine.lastColumnScales), scaled: Float64Array.from(engine.lastScaledValues), result };
  }

  it('is made again under fresh column scales, so the singular finding is diagnosed from the same scaled matrix as the plain path', () => {
    const kept = failingFrom(3, true);
    const plain = failingFrom(3, false);
    expect(plain.result.findings.some((f) => f.code === 'dc-singular-matrix')).toBe(true);
    expectSame([kept.result], [plain.result]);
    expect(Array.from(kept.columnScales)).toEqual(Array.from(plain.columnScales));
    expect(Array.from(kept.scaled)).toEqual(Array.from(plain.scaled));
    // The scales of the run's first iteration, which a failure left in place, are not those: the refresh is needed.
    const first = failingFrom(1, false);
    expect(Array.from(first.columnScales)).not.toEqual(Array.from(plain.columnScales));
  });
});
