// Solver benchmark: sparse LU against mathjs on generated resistor ladders, grids and BJT mirror arrays, plus Newton to the operating point.

import { create, all } from 'mathjs';
import { cpus, loadavg } from 'node:os';
import { isMainThread, parentPort, Worker, workerData } from 'node:worker_threads';
import type { Bjt, Circuit, Element, Model, Origin, Resistor, VoltageSource } from '../shared-analysis/src/circuit';
import { MODEL_DEFAULTS } from '../shared-analysis/src/circuit';
import { DcSolver } from '../shared-analysis/src/solve/dc';
import type { SparsePattern } from '../shared-analysis/src/solve/linear';
import { MnaLayout } from '../shared-analysis/src/solve/mna';
import { SparseLU } from '../shared-analysis/src/solve/sparse-lu';

/** Limits of one mathjs measurement: a single run longer than this is stopped, and repeats stop once this much time is spent. */
const MATHJS_RUN_CAP_MS = 60_000;
const MATHJS_BUDGET_MS = 8_000;
/** Repeats of our own measurements: at least MIN_REPS, more while under the budget, at most MAX_REPS. */
const MIN_REPS = 3;
const MAX_REPS = 25;
const OWN_BUDGET_MS = 3_000;
/** mathjs pivoting: ordering 1 = minimum degree on A + Aᵀ (the same graph ours orders), threshold as ours. */
const MATHJS_ORDER = 1;
const MATHJS_THRESHOLD = 1e-3;

const ORIGIN: Origin = { uri: 'bench://generated', span: { start: 0, end: 0 }, instances: [] };

/** A linear system taken from the engine's own MNA layout of a circuit. */
interface LinearCase {
  family: 'ladder' | 'grid' | 'mirrors';
  label: string;
  nodes: number;
  pattern: SparsePattern;
  values: Float64Array;
  rhs: Float64Array;
  circuit: Circuit;
}

// ---------------------------------------------------------------- circuits

class CircuitBuilder {
  readonly nodes: string[] = ['0'];
  readonly elements: Element[] = [];
  readonly models: Record<string, Model> = {};

  node(name: string): number {
    this.nodes.push(name);
    return this.nodes.length - 1;
  }
  resistor(name: string, a: number, b: number, ohms: number): void {
    const r: Resistor = { kind: 'R', name, nodes: [a, b], origin: ORIGIN, resistance: ohms };
    this.elements.push(r);
  }
  vsource(name: string, plus: number, minus: number, volts: number): void {
    const v: VoltageSource = { kind: 'V', name, nodes: [plus, minus], origin: ORIGIN, dc: volts };
    this.elements.push(v);
  }
  npn(name: string, c: number, b: number, e: number, model: Model): void {
    const q: Bjt = { kind: 'Q', name, nodes: [c, b, e], origin: ORIGIN, model, area: 1, m: 1 };
    this.elements.push(q);
  }
  build(title: string): Circuit {
    return { title, nodes: this.nodes, elements: this.elements, models: this.models, temperatureC: 27, tnomC: 27, params: {} };
  }
}

/** A chain of 1 kΩ series resistors with 10 kΩ to ground at every tap, driven by 5 V at one end. */
function ladder(nodes: number): Circuit {
  const cb = new CircuitBuilder();
  let prev = cb.node('in');
  cb.vsource('V1', prev, 0, 5);
  for (let k = 1; k < nodes; k++) {
    const t = cb.node(`t${k}`);
    cb.resistor(`RS${k}`, prev, t, 1e3);
    cb.resistor(`RP${k}`, t, 0, 1e4);
    prev = t;
  }
  return cb.build(`ladder of ${nodes} nodes`);
}

/** A side×side mesh of 100 Ω resistors, 3.3 V at one corner, 1 kΩ load to ground at the opposite one. */
function grid(side: number): Circuit {
  const cb = new CircuitBuilder();
  const id: number[] = [];
  for (let y = 0; y < side; y++) for (let x = 0; x < side; x++) id.push(cb.node(`g${x}_${y}`));
  let r = 0;
  for (let y = 0; y < side; y++)
    for (let x = 0; x < side; x++) {
      if (x + 1 < side) cb.resistor(`RH${r++}`, id[y * side + x], id[y * side + x + 1], 100);
      if (y + 1 < side) cb.resistor(`RV${r++}`, id[y * side + x], id[(y + 1) * side + x], 100);
    }
  cb.vsource('V1', id[0], 0, 3.3);
  cb.resistor('RLOAD', id[side * side - 1], 0, 1e3);
  return cb.build(`grid ${side}×${side}`);
}

/**
 * `cells` two-device NPN mirrors on one 5 V rail: 4.3 kΩ from the rail into the
 * diode-connected reference device (about 1 mA), a 2 kΩ load on each output.
 */
function mirrorArray(cells: number): Circuit {
  const cb = new CircuitBuilder();
  const model: Model = { name: 'qgen', kind: 'npn', params: { ...MODEL_DEFAULTS.npn, VAF: 80 }, given: ['VAF'], origin: ORIGIN };
  cb.models.qgen = model;
  const vcc = cb.node('vcc');
  cb.vsource('VCC', vcc, 0, 5);
  for (let k = 0; k < cells; k++) {
    const ref = cb.node(`ref${k}`);
    const out = cb.node(`out${k}`);
    cb.resistor(`RREF${k}`, vcc, ref, 4.3e3);
    cb.resistor(`RLOAD${k}`, vcc, out, 2e3);
    cb.npn(`QREF${k}`, ref, ref, 0, model);
    cb.npn(`QOUT${k}`, out, ref, 0, model);
  }
  return cb.build(`${cells} mirrors`);
}

/** The engine's MNA matrix of a circuit; for mirror arrays, with every BJT linearised at VBE = 0.65 V (one Newton Jacobian). */
function linearCase(family: LinearCase['family'], label: string, circuit: Circuit): LinearCase {
  const layout = new MnaLayout(circuit);
  const pattern = layout.pattern;
  const values = Float64Array.from(layout.linearValues);
  if (family === 'mirrors') {
    const pos = new Map<number, number>();
    for (let k = 0; k < pattern.rows.length; k++) pos.set(pattern.rows[k] * pattern.n + pattern.cols[k], k);
    const add = (r: number, c: number, v: number): void => {
      if (r < 0 || c < 0) return;
      const k = pos.get(r * pattern.n + c);
      if (k === undefined) throw new Error(`bench: entry (${r}, ${c}) missing from the engine's pattern`);
      values[k] += v;
    };
    const vt = 0.025865;
    const ic = 1e-16 * Math.exp(0.65 / vt);
    const gm = ic / vt;
    const gpi = gm / 100;
    const go = ic / 80;
    for (const el of circuit.elements) {
      if (el.kind !== 'Q') continue;
      const [c, b, e] = el.nodes.map((x) => x - 1);
      // Base–emitter conductance, transconductance from (b, e) into the collector, output conductance c–e.
      add(b, b, gpi); add(b, e, -gpi); add(e, b, -gpi); add(e, e, gpi);
      add(c, b, gm); add(c, e, -gm); add(e, b, -gm); add(e, e, gm);
      add(c, c, go); add(c, e, -go); add(e, c, -go); add(e, e, go);
    }
  }
  const rhs = new Float64Array(pattern.n);
  for (const s of layout.sources) if (s.kind === 'V') rhs[s.rows[0]] = s.nominal;
  return { family, label, nodes: circuit.nodes.length - 1, pattern, values, rhs, circuit };
}

// ---------------------------------------------------------------- timing

/**
 * The clock: process CPU time (user + system) by default, because this code is single-threaded
 * and CPU time stays meaningful on a shared machine whose load exceeds its cores, where wall
 * time is inflated by waiting for a core. QPOINT_BENCH_CLOCK=wall selects wall time instead.
 */
const CLOCK: 'cpu' | 'wall' = process.env.QPOINT_BENCH_CLOCK === 'wall' ? 'wall' : 'cpu';
const now: () => number =
  CLOCK === 'wall'
    ? () => performance.now()
    : () => {
        const u = process.cpuUsage();
        return (u.user + u.system) / 1000;
      };
/** Budgets are always wall time, so a loaded machine does not stretch the run. */
const wallNow = (): number => performance.now();
const gc = (): void => (globalThis as { gc?: () => void }).gc?.();

function median(xs: number[]): number {
  if (xs.length === 0) return NaN;
  const s = [...xs].sort((a, b) => a - b);
  const m = s.length >> 1;
  return s.length % 2 ? s[m] : (s[m - 1] + s[m]) / 2;
}

/** Runs `fn` MIN_REPS..MAX_REPS times within the budget and returns each run's milliseconds. */
function repeat(fn: () => void, budgetMs = OWN_BUDGET_MS): number[] {
  const times: number[] = [];
  fn(); // warm-up, untimed: lets the JIT compile before the timed runs
  const t0 = wallNow();
  while (times.length < MIN_REPS || (times.length < MAX_REPS && wallNow() - t0 < budgetMs)) {
    const t = now();
    fn();
    times.push(now() - t);
  }
  return times;
}

/**
 * Normwise backward error ‖b − A·x‖∞ / (‖A‖∞·‖x‖∞ + ‖b‖∞) (J. L. Rigal and J. Gaches, J. ACM 14(3), 1967;
 * N. J. Higham, "Accuracy and Stability of Numerical Algorithms", 2nd ed., §7.1): a few units of
 * rounding (1.1e-16) means the answer is exact for a matrix within rounding of the given one.
 */
function residual(c: LinearCase, x: Float64Array): number {
  const r = Float64Array.from(c.rhs);
  const rowAbs = new Float64Array(c.rhs.length);
  const { rows, cols } = c.pattern;
  for (let k = 0; k < rows.length; k++) {
    r[rows[k]] -= c.values[k] * x[cols[k]];
    rowAbs[rows[k]] += Math.abs(c.values[k]);
  }
  let rmax = 0;
  let amax = 0;
  let xmax = 0;
  let bmax = 0;
  for (let i = 0; i < r.length; i++) {
    rmax = Math.max(rmax, Math.abs(r[i]));
    amax = Math.max(amax, rowAbs[i]);
    xmax = Math.max(xmax, Math.abs(x[i]));
    bmax = Math.max(bmax, Math.abs(c.rhs[i]));
  }
  return rmax / (amax * xmax + bmax || 1);
}

interface OwnFigures {
  analysisMs: number;
  firstMs: number;
  refactorMs: number;
  factorNonzeros: number;
  residual: number;
  x: Float64Array;
}

function measureOwn(c: LinearCase): OwnFigures {
  gc();
  const analysis = repeat(() => void new SparseLU(c.pattern));
  let lu = new SparseLU(c.pattern);
  const x = new Float64Array(c.pattern.n);
  // First factorisation on a freshly constructed solver; construction stays outside the timed part.
  const first: number[] = [];
  lu.factor(c.values); // warm-up, untimed
  const t0 = wallNow();
  while (first.length < MIN_REPS || (first.length < MAX_REPS && wallNow() - t0 < OWN_BUDGET_MS)) {
    lu = new SparseLU(c.pattern);
    const t = now();
    const r = lu.factor(c.values);
    if (!r.ok) throw new Error(`bench: ${c.label} is singular at unknown ${r.singularIndex}`);
    lu.solve(c.rhs, x);
    first.push(now() - t);
  }
  const refactor = repeat(() => {
    const r = lu.factor(c.values);
    if (!r.ok) throw new Error(`bench: ${c.label} refactor failed`);
    lu.solve(c.rhs, x);
  });
  if (lu.stats.pivotFallbacks > 0) throw new Error(`bench: ${c.label} refactor fell back to pivoting on unchanged values`);
  return {
    analysisMs: median(analysis),
    firstMs: median(first),
    refactorMs: median(refactor),
    factorNonzeros: lu.stats.factorNonzeros,
    residual: residual(c, x),
    x: Float64Array.from(x),
  };
}

interface MathjsFigures {
  runs: number[];
  timedOut: boolean;
  x?: Float64Array;
}

/** Runs mathjs slu + lusolve in a worker so a run that exceeds the cap can be stopped. */
function measureMathjs(c: LinearCase): Promise<MathjsFigures> {
  // mathjs wants compressed columns with sorted rows.
  const n = c.pattern.n;
  const m = c.values.length;
  const order = Array.from({ length: m }, (_, k) => k).sort(
    (a, b) => c.pattern.cols[a] - c.pattern.cols[b] || c.pattern.rows[a] - c.pattern.rows[b],
  );
  const values: number[] = [];
  const index: number[] = [];
  const ptr: number[] = [0];
  let col = 0;
  for (const k of order) {
    while (col < c.pattern.cols[k]) { ptr.push(values.length); col++; }
    values.push(c.values[k]);
    index.push(c.pattern.rows[k]);
  }
  while (col < n) { ptr.push(values.length); col++; }
  return new Promise((resolve) => {
    const runs: number[] = [];
    let x: Float64Array | undefined;
    let settled = false;
    const worker = new Worker(__filename, {
      workerData: { values, index, ptr, n, rhs: Array.from(c.rhs), budgetMs: MATHJS_BUDGET_MS },
    });
    let warm: number | undefined;
    const finish = (timedOut: boolean): void => {
      if (settled) return;
      settled = true;
      clearTimeout(timer);
      void worker.terminate();
      resolve({ runs: runs.length > 0 || warm === undefined ? runs : [warm], timedOut, x });
    };
    let timer = setTimeout(() => finish(true), MATHJS_RUN_CAP_MS);
    worker.on('message', (msg: { ms?: number; warmup?: number; x?: number[]; done?: boolean }) => {
      if (msg.warmup !== undefined) warm = msg.warmup;
      if (msg.ms !== undefined) runs.push(msg.ms);
      if (msg.ms !== undefined || msg.warmup !== undefined) {
        clearTimeout(timer);
        timer = setTimeout(() => finish(true), MATHJS_RUN_CAP_MS);
      }
      if (msg.x) x = Float64Array.from(msg.x);
      if (msg.done) finish(false);
    });
    worker.on('error', () => finish(runs.length === 0));
    worker.on('exit', () => finish(false));
  });
}

/** Worker side: repeated slu + lusolve on one matrix, one message per run. */
function mathjsWorker(): void {
  const math = create(all);
  const d = workerData as { values: number[]; index: number[]; ptr: number[]; n: number; rhs: number[]; budgetMs: number };
  const A = math.sparse();
  const S = (A.constructor as unknown as { fromJSON(j: unknown): typeof A }).fromJSON({
    mathjs: 'SparseMatrix',
    values: d.values,
    index: d.index,
    ptr: d.ptr,
    size: [d.n, d.n],
  });
  const once = (): { ms: number; sol: unknown } => {
    const t = now();
    const lu = math.slu(S, MATHJS_ORDER, MATHJS_THRESHOLD);
    const sol = math.lusolve(lu, d.rhs);
    return { ms: now() - t, sol };
  };
  // The first run warms the JIT up; it is reported apart and used only when no other run fits the cap.
  const first = once();
  const flat = (first.sol as { toArray(): number[][] }).toArray().map((row) => row[0]);
  parentPort!.postMessage({ warmup: first.ms, x: flat });
  const t0 = wallNow();
  let runs = 0;
  while (runs < MIN_REPS || (runs < MAX_REPS && wallNow() - t0 < d.budgetMs)) {
    parentPort!.postMessage({ ms: once().ms });
    runs++;
  }
  parentPort!.postMessage({ done: true });
}

/**
 * The mirror cell by hand: IREF = (VCC − VBE)/RREF with VBE = VT·ln(IREF/IS), then
 * IOUT ≈ IREF·(1 + (VCE2 − VBE)/VA)/(1 + 2/β) with VCE2 = VCC − RLOAD·IOUT.
 * Source: Gray, Hurst, Lewis, Meyer, 5th ed., ch. 4 (simple mirror with finite β and Early effect).
 */
function handMirrorOutput(): { iout: number; vce: number } {
  const vt = (1.380649e-23 * 300.15) / 1.602176634e-19;
  let vbe = 0.7;
  let iref = 0;
  for (let k = 0; k < 50; k++) {
    iref = (5 - vbe) / 4.3e3;
    vbe = vt * Math.log(iref / 1e-16);
  }
  let iout = iref;
  for (let k = 0; k < 50; k++) iout = (iref * (1 + (5 - 2e3 * iout - vbe) / 80)) / (1 + 2 / 100);
  return { iout, vce: 5 - 2e3 * iout };
}

// ---------------------------------------------------------------- report

function fmtMs(ms: number): string {
  if (!Number.isFinite(ms)) return '—';
  if (ms >= 1000) return `${(ms / 1000).toFixed(2)} s`;
  if (ms >= 10) return `${ms.toFixed(1)} ms`;
  return `${ms.toFixed(2)} ms`;
}

function pad(s: string, w: number): string {
  return s.length >= w ? s : ' '.repeat(w - s.length) + s;
}

function maxRelDiff(a: Float64Array, b: Float64Array): number {
  let d = 0;
  let s = 0;
  for (let i = 0; i < a.length; i++) {
    d = Math.max(d, Math.abs(a[i] - b[i]));
    s = Math.max(s, Math.abs(b[i]));
  }
  return d / (s || 1);
}

async function main(): Promise<void> {
  const exposeGc = typeof (globalThis as { gc?: unknown }).gc === 'function';
  console.log('qpoint solver benchmark');
  const load = (): string => loadavg().map((v) => v.toFixed(2)).join(' / ');
  console.log(`Machine: ${cpus().length} × ${cpus()[0]?.model.trim() ?? 'unknown CPU'}; load average (1/5/15 min) at start ${load()}`);
  console.log(`Node ${process.version}, ${process.platform}/${process.arch}${exposeGc ? ', --expose-gc on' : ', --expose-gc off (run with node --expose-gc for steadier figures)'}`);
  console.log('Sections: QPOINT_BENCH_SECTIONS=linear,newton,scale (the default) selects what runs.');
  console.log(`Clock: ${CLOCK === 'cpu' ? 'process CPU time (user + system); QPOINT_BENCH_CLOCK=wall for wall time' : 'wall time'}. Medians of ${MIN_REPS}–${MAX_REPS} runs after one untimed warm-up run. mathjs slu(order ${MATHJS_ORDER}, threshold ${MATHJS_THRESHOLD}) + lusolve runs in a worker: repeats stop after ${MATHJS_BUDGET_MS / 1000} s, a single run is stopped at ${MATHJS_RUN_CAP_MS / 1000} s.`);
  console.log('');

  const sizes = [1_000, 10_000, 100_000];
  const builders: { family: LinearCase['family']; make: (nodes: number) => Circuit }[] = [
    { family: 'ladder', make: (nodes) => ladder(nodes) },
    { family: 'grid', make: (nodes) => grid(Math.round(Math.sqrt(nodes))) },
    { family: 'mirrors', make: (nodes) => mirrorArray(Math.round(nodes / 2)) },
  ];

  const only = (process.env.QPOINT_BENCH_SECTIONS ?? 'linear,newton,scale').split(',').map((x) => x.trim());
  const results = new Map<string, { own: OwnFigures; mj: MathjsFigures }>();
  let target2k: { solve: number; both: number; converged: boolean } | undefined;
  if (only.includes('linear')) {
    const header = ['case', 'unknowns', 'nnz(A)', 'nnz(L+U)', 'ordering', 'first f+s', 'refactor+s', 'mathjs f+s', 'vs first', 'vs refac', 'mathjs Δx', 'residual'];
    const widths = [22, 9, 9, 10, 10, 10, 11, 12, 9, 9, 10, 9];
    console.log('Linear systems (the engine\'s MNA matrix; mirror arrays linearised at VBE = 0.65 V)');
    console.log(header.map((h, i) => (i === 0 ? h.padEnd(widths[0]) : pad(h, widths[i]))).join(' '));
    const notes: string[] = [];
    for (const b of builders) {
      for (const size of sizes) {
        const c = linearCase(b.family, `${b.family} ${size / 1000}k`, b.make(size));
        const own = measureOwn(c);
        const mj = await measureMathjs(c);
        results.set(`${b.family}:${size}`, { own, mj });
        const mjMs = mj.runs.length > 0 ? median(mj.runs) : NaN;
        const ownFirst = own.analysisMs + own.firstMs;
        const row = [
          c.label,
          String(c.pattern.n),
          String(c.values.length),
          String(own.factorNonzeros),
          fmtMs(own.analysisMs),
          fmtMs(own.firstMs),
          fmtMs(own.refactorMs),
          mj.runs.length > 0 ? fmtMs(mjMs) + (mj.runs.length < MIN_REPS ? `(${mj.runs.length})` : '') : `>${MATHJS_RUN_CAP_MS / 1000} s`,
          mj.runs.length > 0 ? `${(mjMs / ownFirst).toFixed(1)}×` : `>${(MATHJS_RUN_CAP_MS / ownFirst).toFixed(0)}×`,
          mj.runs.length > 0 ? `${(mjMs / own.refactorMs).toFixed(1)}×` : `>${(MATHJS_RUN_CAP_MS / own.refactorMs).toFixed(0)}×`,
          mj.x ? maxRelDiff(own.x, mj.x).toExponential(1) : '—',
          own.residual.toExponential(1),
        ];
        console.log(row.map((s, i) => (i === 0 ? s.padEnd(widths[0]) : pad(s, widths[i]))).join(' '));
        if (mj.timedOut) notes.push(`${c.label}: mathjs stopped after ${mj.runs.length} completed run(s); a run exceeded the ${MATHJS_RUN_CAP_MS / 1000} s cap.`);
        else if (mj.runs.length < MIN_REPS) notes.push(`${c.label}: mathjs figure is from ${mj.runs.length} run(s) only (time budget).`);
      }
    }
    console.log('');
    console.log('Columns: ordering = construction (minimum-degree ordering and compressed structure); first f+s = first factorisation with pivoting plus one solve;');
    console.log('refactor+s = numeric refactorisation on the recorded pivots plus one solve; vs first = mathjs time / (ordering + first f+s); vs refac = mathjs time / refactor+s;');
    console.log('mathjs Δx = max |x_ours − x_mathjs| / max |x_mathjs|; residual = normwise backward error ‖b − A·x‖∞ / (‖A‖∞·‖x‖∞ + ‖b‖∞).');
    for (const n of notes) console.log(`Note: ${n}`);
    console.log('');

    console.log('Growth from 10k to 100k nodes (time at 100k / time at 10k)');
    for (const b of builders) {
      const a = results.get(`${b.family}:10000`)!.own;
      const z = results.get(`${b.family}:100000`)!.own;
      const g1 = (z.analysisMs + z.firstMs) / (a.analysisMs + a.firstMs);
      const g2 = z.refactorMs / a.refactorMs;
      console.log(`  ${b.family.padEnd(8)} ordering + first f+s ${g1.toFixed(1)}×, refactor+s ${g2.toFixed(1)}×, nnz(L+U) ${(z.factorNonzeros / a.factorNonzeros).toFixed(1)}×`);
    }
    console.log('');

  }
  // Newton before the million-node check, so its figures do not pay for collecting that check's heap.
  if (only.includes('newton')) {
    console.log('Newton to the operating point (DcSolver, zero initial guess)');
    const nh = ['case', 'BJTs', 'unknowns', 'iterations', 'factorizations', 'prepare', 'solve', 'prepare+solve', 'converged'];
    const nw = [22, 7, 9, 11, 15, 10, 10, 14, 10];
    console.log(nh.map((h, i) => (i === 0 ? h.padEnd(nw[0]) : pad(h, nw[i]))).join(' '));
    const newtonCases: { label: string; cells: number }[] = [
      { label: 'mirrors 2,000 BJTs', cells: 1_000 },
      { label: 'mirrors 1k nodes', cells: 500 },
      { label: 'mirrors 10k nodes', cells: 5_000 },
      { label: 'mirrors 100k nodes', cells: 50_000 },
    ];
    for (const nc of newtonCases) {
      const circuit = mirrorArray(nc.cells);
      gc();
      const prep = repeat(() => void new DcSolver(circuit));
      const solver = new DcSolver(circuit);
      let last = solver.solve();
      const solve = repeat(() => {
        last = solver.solve();
      });
      const both = repeat(() => {
        last = new DcSolver(circuit).solve();
      });
      const row = [
        nc.label,
        String(nc.cells * 2),
        String(solver.unknownCount),
        String(last.stats.iterations),
        String(last.stats.factorizations),
        fmtMs(median(prep)),
        fmtMs(median(solve)),
        fmtMs(median(both)),
        last.op.converged ? 'yes' : 'NO',
      ];
      console.log(row.map((s, i) => (i === 0 ? s.padEnd(nw[0]) : pad(s, nw[i]))).join(' '));
      if (nc.cells === 1_000) target2k = { solve: median(solve), both: median(both), converged: last.op.converged };
      if (last.op.converged) {
        const q = last.op.devices['QOUT0'];
        if (q && q.type === 'bjt') {
          const hand = handMirrorOutput();
          console.log(`${' '.repeat(nw[0])} check: QOUT0 IC = ${(q.ic * 1e3).toFixed(4)} mA at VCE = ${q.vce.toFixed(3)} V; hand analysis ${(hand.iout * 1e3).toFixed(4)} mA at ${hand.vce.toFixed(3)} V`);
        }
      }
    }
    console.log('');
    console.log('prepare = new DcSolver(circuit) (MNA layout, structural checks, ordering); solve = solver.solve() on a prepared solver; prepare+solve = both, as a first analysis does.');

  }
  if (only.includes('scale')) {
    console.log('Scale check at 1,000,000 nodes (one run each, no mathjs)');
    for (const b of builders.filter((x) => x.family !== 'grid')) {
      const c = linearCase(b.family, `${b.family} 1M`, b.make(1_000_000));
      gc();
      let t = now();
      const lu = new SparseLU(c.pattern);
      const ordering = now() - t;
      const x = new Float64Array(c.pattern.n);
      t = now();
      const r1 = lu.factor(c.values);
      lu.solve(c.rhs, x);
      const first = now() - t;
      t = now();
      const r2 = lu.factor(c.values);
      lu.solve(c.rhs, x);
      const refac = now() - t;
      const ok = r1.ok && r2.ok;
      console.log(`  ${c.label.padEnd(12)} unknowns ${c.pattern.n}, ordering ${fmtMs(ordering)}, first f+s ${fmtMs(first)}, refactor+s ${fmtMs(refac)}, residual ${ok ? residual(c, x).toExponential(1) : 'factor failed'}`);
    }
    console.log('');

  }
  console.log('');
  console.log('Targets');
  if (results.size > 0) {
    const tenK = ['ladder', 'grid', 'mirrors'].map((f) => {
      const r = results.get(`${f}:10000`)!;
      const mjMs = r.mj.runs.length > 0 ? median(r.mj.runs) : MATHJS_RUN_CAP_MS;
      return { f, first: mjMs / (r.own.analysisMs + r.own.firstMs), refac: mjMs / r.own.refactorMs };
    });
    for (const t of tenK) {
      console.log(`  10k ${t.f.padEnd(8)} ≥ 10× faster than mathjs per factor-and-solve: first ${t.first.toFixed(1)}× (${t.first >= 10 ? 'met' : 'missed'}), refactor ${t.refac.toFixed(1)}× (${t.refac >= 10 ? 'met' : 'missed'})`);
    }
    for (const b of builders) {
      const a = results.get(`${b.family}:10000`)!.own;
      const z = results.get(`${b.family}:100000`)!.own;
      const g = (z.analysisMs + z.firstMs) / (a.analysisMs + a.firstMs);
      const gr = z.refactorMs / a.refactorMs;
      console.log(`  ${b.family.padEnd(8)} 10k → 100k growth ≤ 15×: first ${g.toFixed(1)}× (${g <= 15 ? 'met' : 'missed'}), refactor ${gr.toFixed(1)}× (${gr <= 15 ? 'met' : 'missed'})`);
    }
  }
  if (target2k) {
    const ok = target2k.converged && target2k.both < 100;
    console.log(`  2,000-BJT mirror array at its operating point in < 100 ms median: prepare+solve ${fmtMs(target2k.both)}, solve ${fmtMs(target2k.solve)} (${ok ? 'met' : 'missed'})`);
  }
  console.log(`Load average at the end: ${load()} (figures taken under a load above the core count are inflated).`);
}

if (isMainThread) {
  main().catch((e: unknown) => {
    console.error(e instanceof Error ? e.stack ?? e.message : String(e));
    process.exitCode = 1;
  });
} else {
  mathjsWorker();
}
