// Newton benchmark: cold and warm DC solves of 2,000-device BJT and MOS mirror arrays, split into prepare, assembly and factorisation, with corner re-solve iteration counts.

import { cpus, loadavg } from 'node:os';
import type { Bjt, Circuit, Element, Model, Mosfet, Origin } from '../../shared-analysis/src/circuit';
import { MODEL_DEFAULTS } from '../../shared-analysis/src/circuit';
import { DcSolver } from '../../shared-analysis/src/solve/dc';
import type { DcSolveResult } from '../../shared-analysis/src/solve/dc';
import { SparseLU } from '../../shared-analysis/src/solve/sparse-lu';
import { NewtonEngine } from '../../shared-analysis/src/solve/newton';
import { MnaLayout } from '../../shared-analysis/src/solve/mna';

const ORIGIN: Origin = { uri: 'bench://generated', span: { start: 0, end: 0 }, instances: [] };
const REPS = 15;

/** `cells` mirrors on a 5 V rail (our own scenario): a reference resistor into a diode-connected device and a resistor load on the output device. */
function mirrorArray(cells: number, kind: 'npn' | 'nmos'): Circuit {
  const nodes = ['0', 'vcc'];
  const elements: Element[] = [{ kind: 'V', name: 'VCC', nodes: [1, 0], origin: ORIGIN, dc: 5 }];
  const model: Model =
    kind === 'npn'
      ? { name: 'qgen', kind: 'npn', params: { ...MODEL_DEFAULTS.npn, VAF: 80 }, given: ['VAF'], origin: ORIGIN }
      : { name: 'ngen', kind: 'nmos', params: { ...MODEL_DEFAULTS.nmos, VTO: 0.7, KP: 1e-4, LAMBDA: 0.02 }, given: ['VTO', 'KP', 'LAMBDA'], origin: ORIGIN };
  for (let k = 0; k < cells; k++) {
    const ref = nodes.push(`ref${k}`) - 1;
    const out = nodes.push(`out${k}`) - 1;
    elements.push({ kind: 'R', name: `RREF${k}`, nodes: [1, ref], origin: ORIGIN, resistance: kind === 'npn' ? 4.3e3 : 20e3 });
    elements.push({ kind: 'R', name: `RLOAD${k}`, nodes: [1, out], origin: ORIGIN, resistance: kind === 'npn' ? 2e3 : 10e3 });
    if (kind === 'npn') {
      const q = (name: string, c: number): Bjt => ({ kind: 'Q', name, nodes: [c, ref, 0], origin: ORIGIN, model, area: 1, m: 1 });
      elements.push(q(`QREF${k}`, ref), q(`QOUT${k}`, out));
    } else {
      const m = (name: string, d: number): Mosfet => ({ kind: 'M', name, nodes: [d, ref, 0, 0], origin: ORIGIN, model, w: 10e-6, l: 1e-6, m: 1 });
      elements.push(m(`MREF${k}`, ref), m(`MOUT${k}`, out));
    }
  }
  return { title: `${cells} ${kind} mirrors`, nodes, elements, models: { [model.name]: model }, temperatureC: 27, tnomC: 27, params: {} };
}

const now = (): number => performance.now();
function median(xs: number[]): number {
  const s = [...xs].sort((a, b) => a - b);
  return s.length % 2 ? s[(s.length - 1) / 2] : (s[s.length / 2 - 1] + s[s.length / 2]) / 2;
}
const ms = (v: number): string => `${v.toFixed(2)} ms`;

/** Time spent inside SparseLU.factor/solve and NewtonEngine's assembly, by wrapping the prototypes. */
const phase = { factor: 0, linsolve: 0, assemble: 0, records: 0, checks: 0 };
function instrument(): void {
  const wrap = <T extends object>(proto: T, name: string, key: keyof typeof phase): void => {
    const p = proto as unknown as Record<string, (...a: unknown[]) => unknown>;
    const orig = p[name];
    p[name] = function (this: unknown, ...args: unknown[]) {
      const t = now();
      try {
        return orig.apply(this, args);
      } finally {
        phase[key] += now() - t;
      }
    };
  };
  wrap(SparseLU.prototype, 'factor', 'factor');
  wrap(SparseLU.prototype, 'solve', 'linsolve');
  wrap(NewtonEngine.prototype, 'assemble', 'assemble');
  wrap(DcSolver.prototype, 'buildOperatingPoint', 'records');
  wrap(DcSolver.prototype, 'postSolveFindings', 'checks');
}

/** `--prepare`: where the prepare time goes (layout, linear solver's symbolic analysis, the rest of DcSolver's constructor). */
function prepareSplit(): void {
  const circuit = mirrorArray(1000, 'npn');
  for (let i = 0; i < 3; i++) new DcSolver(mirrorArray(50, 'npn'));
  const layout: number[] = [];
  const symbolic: number[] = [];
  const whole: number[] = [];
  for (let r = 0; r < REPS; r++) {
    let t = now();
    const l = new MnaLayout(circuit);
    layout.push(now() - t);
    t = now();
    new SparseLU(l.pattern);
    symbolic.push(now() - t);
    t = now();
    new DcSolver(circuit);
    whole.push(now() - t);
  }
  console.log(`\nPrepare split, BJT mirror array (2,000 devices): MnaLayout ${ms(median(layout))}, SparseLU symbolic ${ms(median(symbolic))}, whole DcSolver constructor ${ms(median(whole))} (medians of ${REPS})`);
}

function main(): void {
  const [l1, l5] = loadavg();
  console.log(`Newton benchmark — ${cpus()[0]?.model ?? 'cpu'} ×${cpus().length}, load ${l1.toFixed(2)} / ${l5.toFixed(2)} (1 / 5 min), node ${process.version}`);
  const split = process.argv.includes('--split');
  if (split) instrument();
  const kinds = process.argv.includes('--bjt') ? (['npn'] as const) : (['npn', 'nmos'] as const);
  for (const kind of kinds) {
    const circuit = mirrorArray(1000, kind);
    // Warm the JIT on a small array first so the first measured run is not the compile.
    for (let i = 0; i < 3; i++) new DcSolver(mirrorArray(50, kind)).solve();
    const prep: number[] = [];
    const cold: number[] = [];
    const both: number[] = [];
    const split0 = { factor: 0, linsolve: 0, assemble: 0, records: 0, checks: 0 };
    let last: DcSolveResult | undefined;
    let solver: DcSolver | undefined;
    for (let r = 0; r < REPS; r++) {
      let t = now();
      solver = new DcSolver(circuit);
      prep.push(now() - t);
      Object.assign(phase, split0);
      t = now();
      last = solver.solve();
      cold.push(now() - t);
      both.push(prep[r] + cold[r]);
    }
    const s = solver!;
    const r0 = last!;
    console.log(`\n${kind === 'npn' ? 'BJT' : 'MOS'} mirror array, 2,000 devices, ${s.unknownCount} unknowns, cold start (zero initial guess)`);
    console.log(`  converged ${r0.op.converged}, ${r0.stats.iterations} iterations, ${r0.stats.factorizations} factorisations`);
    console.log(`  prepare (new DcSolver) median ${ms(median(prep))}; solve median ${ms(median(cold))}; prepare+solve median ${ms(median(both))} (target < 100 ms)`);
    if (split) console.log(`  last solve split: assemble ${ms(phase.assemble)}, factor ${ms(phase.factor)}, triangular solves ${ms(phase.linsolve)}, operating-point records ${ms(phase.records)}, post-solve checks ${ms(phase.checks)}`);
    // Warm corner re-solves as the corner phase runs them: from the nominal solution.
    const corners: { label: string; opts: Parameters<DcSolver['solve']>[0] }[] = [
      { label: '−40 °C', opts: { temperatureC: -40 } },
      { label: '125 °C', opts: { temperatureC: 125 } },
      { label: 'beta ×0.5', opts: { betaScale: 0.5 } },
      { label: 'beta ×2', opts: { betaScale: 2 } },
      { label: 'supply 4.5 V', opts: { sourceValues: { VCC: 4.5 } } },
    ];
    const parts: string[] = [];
    let warmMs = 0;
    for (const c of corners) {
      const t = now();
      const w = s.solve({ ...c.opts, initialGuess: r0.x });
      warmMs += now() - t;
      parts.push(`${c.label}: ${w.stats.iterations} it${w.op.converged ? '' : ' (NOT converged)'}`);
    }
    console.log(`  warm corner re-solves from the nominal point: ${parts.join(', ')}; ${ms(warmMs / corners.length)} each on average`);
  }
}

main();
if (process.argv.includes('--prepare')) prepareSplit();
