// Variation benchmark: every sensitivity of every output of a 2,000-device mirror array against its nominal solve, and 1,000 Monte Carlo runs of the example netlist.
//
// Run from the repository's root (a script that prints figures, not a test):
//   npx esbuild test/bench/variation-bench.ts --bundle --platform=node --format=cjs --outfile=/tmp/variation-bench.js && node /tmp/variation-bench.js
//
// Targets (docs/VARIATION.md): all sensitivities of all outputs of the 2,000-device mirror array in
// under 3 times its nominal solve; 1,000 Monte Carlo runs of examples/sensor-bias.cir in under 2 s.
// Both figures are measured in this one run on this machine; the load average is printed first.

import { readFileSync } from 'node:fs';
import * as path from 'node:path';
import { cpus, loadavg } from 'node:os';
import type { Bjt, Circuit, Element, Model, Mosfet, Origin } from '../../shared-analysis/src/circuit';
import { MODEL_DEFAULTS } from '../../shared-analysis/src/circuit';
import { DcSolver } from '../../shared-analysis/src/solve/dc';
import { recogniseStructures } from '../../shared-analysis/src/structures/recognise';
import { analyseVariation } from '../../shared-analysis/src/variation/index';
import { analyseSession, monteCarloOf } from '../../shared-analysis/src/service';
import { MemoryWorkspace } from '../../shared-analysis/src/types';
import { minOf } from '../../shared-analysis/src/arrays';

const ORIGIN: Origin = { uri: 'bench://generated', span: { start: 0, end: 0 }, instances: [] };
const REPS = 15;
const now = (): number => performance.now();
/** CPU time of this process (user + system), ms: on a shared machine it counts less of the other work than the wall clock does. */
const cpu = (): number => {
  const u = process.cpuUsage();
  return (u.user + u.system) / 1000;
};
const median = (xs: number[]): number => {
  const s = [...xs].sort((a, b) => a - b);
  return s.length % 2 ? s[(s.length - 1) / 2] : (s[s.length / 2 - 1] + s[s.length / 2]) / 2;
};
const best = (xs: number[]): number => minOf(xs);
const ms = (v: number): string => `${v.toFixed(1)} ms`;

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

function sensitivityRun(kind: 'npn' | 'nmos'): void {
  const circuit = mirrorArray(1000, kind);
  const structures = recogniseStructures(circuit);
  const solver = new DcSolver(circuit);
  const solves: number[] = [];
  const spreads: number[] = [];
  const solvesCpu: number[] = [];
  const spreadsCpu: number[] = [];
  const derivatives: number[] = [];
  let outputs = 0;
  let parameters = 0;
  for (let r = 0; r < REPS + 1; r++) {
    let t = now();
    let c = cpu();
    const nominal = solver.solve();
    const solveMs = now() - t;
    const solveCpu = cpu() - c;
    t = now();
    c = cpu();
    const d = analyseVariation({
      circuit,
      structures,
      documents: {},
      solver,
      nominal,
      targets: [],
      settings: { resistorTolerance: 0.01, resistorFrom: 'setting', supplyTolerance: 0.05 },
      defaultTargetTolerance: 0.05,
    })!;
    const spreadMs = now() - t;
    const spreadCpu = cpu() - c;
    if (r === 0) continue; // warm-up
    solves.push(solveMs);
    spreads.push(spreadMs);
    solvesCpu.push(solveCpu);
    spreadsCpu.push(spreadCpu);
    derivatives.push(d.sensitivityMs);
    outputs = d.result.stats.adjointSolves;
    parameters = d.result.stats.parameters;
  }
  const label = `${kind === 'npn' ? 'BJT' : 'MOS'} mirror array, 2,000 devices, ${solver.unknownCount} unknowns, ${outputs} outputs, ${parameters} parameters`;
  // The median, and the best repetition: on a shared machine the best is the run least slowed by other work, so its ratio is the steadier one.
  for (const [how, pick] of [['median', median], ['best', best]] as const) {
    const ratio = pick(spreads) / pick(solves);
    console.log(
      `${label} (${how} of ${REPS}): nominal solve (cold) ${ms(pick(solves))}; spread analysis (every sensitivity, σ, worst case, ranked contributors) ${ms(pick(spreads))}, ratio ${ratio.toFixed(2)}× (target < 3×: ${ratio < 3 ? 'met' : 'missed'}); ` +
        `in CPU time ${ms(pick(solvesCpu))} and ${ms(pick(spreadsCpu))}, ratio ${(pick(spreadsCpu) / pick(solvesCpu)).toFixed(2)}×; ` +
        `the derivatives alone (Jacobian factored at the solution, ∂F/∂p, one transposed solve per output) ${ms(pick(derivatives))}, ratio ${(pick(derivatives) / pick(solves)).toFixed(2)}×`,
    );
  }
}

function monteCarloRun(): void {
  // Run from the repository's root (as the header says), so the example is found wherever the bundle was written.
  const dir = path.join(process.cwd(), 'examples');
  const text = readFileSync(path.join(dir, 'sensor-bias.cir'), 'utf8');
  const inc = readFileSync(path.join(dir, 'models', 'front-end-models.inc'), 'utf8');
  const ws = new MemoryWorkspace({ 'mem://examples/models/front-end-models.inc': inc });
  const times: number[] = [];
  let converged = 0;
  for (let r = 0; r < 4; r++) {
    const session = analyseSession({ uri: 'mem://examples/sensor-bias.cir', text }, ws, { corners: { enabled: false } });
    const t = now();
    const mc = monteCarloOf(session, { runs: 1000, seed: 2026 })!;
    if (r === 0) continue;
    times.push(now() - t);
    converged = mc.converged;
  }
  const m = median(times);
  console.log(`Monte Carlo of examples/sensor-bias.cir: 1,000 runs (${converged} converged) in ${ms(m)} (median of ${times.length}; target < 2 s: ${m < 2000 ? 'met' : 'missed'})`);
}

console.log(`Load average ${loadavg().map((x) => x.toFixed(2)).join(' ')} on ${cpus().length} cores`);
sensitivityRun('npn');
sensitivityRun('nmos');
monteCarloRun();
