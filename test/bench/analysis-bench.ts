// Analysis benchmark: times analyse() stage by stage on generated bias arrays of ~2,000 and ~20,000 elements, the corner phase apart, and one on-demand sizing fix.
//
// Run (a script that prints figures, not a test):
//   npx esbuild test/bench/analysis-bench.ts --bundle --platform=node --format=cjs --outfile=/tmp/analysis-bench.js && node /tmp/analysis-bench.js
// Environment:
//   QPOINT_ANALYSIS_BENCH_SIZES  comma-separated cell counts (default "400,4000": 5 elements a cell, ~2,000 and ~20,000 elements)
//   QPOINT_ANALYSIS_BENCH_RUNS   timed warm runs per size (default 5 for the small size, 2 above 1,000 cells)
//
// What to read: "one pass" is analyse() with corners on (what the command line does); "first pass"
// is analyse() with corners.enabled = false (what an editor shows first), "corner phase" is
// addCorners() afterwards, split into the corner solves and the measurement of every structure at
// every corner; "sizing" is sizingFixesOf() for one missed target, the cost of a code-action request.
// The editor target is a first pass under 100 ms for ~2,000 elements. The machine's load average is
// printed first: on a loaded machine every figure is inflated, the proportions are not.

import { cpus, loadavg } from 'node:os';
import type { CornerStats } from '../../shared-analysis/src/checks/corners';
import { addCorners, analyse, analyseSession, sizingFixesOf } from '../../shared-analysis/src/service';
import { MemoryWorkspace } from '../../shared-analysis/src/types';

const now = (): number => performance.now();

/**
 * A bias array of `cells` cells on a 12 V rail, five elements a cell: reference resistor, diode-
 * connected reference device, output device, load resistor and a bleed resistor. Every tenth cell
 * is an instance of a subcircuit holding the same mirror (so hierarchy and flattening are timed
 * too), and every fiftieth output carries an `expect` target it misses (the reference resistors
 * give about 0.4–1.1 mA, the targets ask for 1.5 mA ±2 %). Invented values, varied with the index.
 */
function biasArray(cells: number): { text: string; targets: number } {
  const L = [
    `Generated bias array: ${cells} NPN mirror cells with loads on one 12 V rail`,
    'VCC vcc 0 DC 12',
    '.model QN NPN (IS=1e-15 BF=120 VAF=80)',
    '.subckt mcell top out',
    'RSET top r 15k',
    'QREF r r 0 QN',
    'QOUT out r 0 QN',
    '.ends mcell',
  ];
  let targets = 0;
  for (let i = 0; i < cells; i++) {
    const target = i % 50 === 0;
    if (target) targets++;
    if (i % 10 === 5) {
      L.push(`X${i} vcc o${i} mcell`, `RL${i} vcc o${i} ${2 + (i % 5)}k`, `RB${i} o${i} 0 100k`);
      continue;
    }
    L.push(
      `RR${i} vcc r${i} ${10 + (i % 20)}k`,
      `QR${i} r${i} r${i} 0 QN`,
      `QO${i} o${i} r${i} 0 QN${target ? ' ; expect 1.5mA ±2%' : ''}`,
      `RL${i} vcc o${i} ${2 + (i % 5)}k`,
      `RB${i} o${i} 0 100k`,
    );
  }
  L.push('.end', '');
  return { text: L.join('\n'), targets };
}

function quantile(xs: number[], q: number): number {
  const s = [...xs].sort((a, b) => a - b);
  if (s.length === 0) return NaN;
  const i = Math.min(s.length - 1, Math.max(0, Math.ceil(q * s.length) - 1));
  return s[i];
}

function row(label: string, xs: number[]): string {
  return `  ${label.padEnd(26)} median ${quantile(xs, 0.5).toFixed(1).padStart(9)} ms   p90 ${quantile(xs, 0.9).toFixed(1).padStart(9)} ms`;
}

/** Median and p90 of every stage over the runs. */
function stageRows(runs: Record<string, number>[], totals: number[]): string[] {
  const stages = [...new Set(runs.flatMap((r) => Object.keys(r)))];
  return [row('total', totals), ...stages.map((s) => row(s, runs.map((r) => r[s] ?? 0)))];
}

function benchSize(cells: number, runs: number): void {
  const { text, targets } = biasArray(cells);
  const uri = '/bench/array.cir';
  const ws = new MemoryWorkspace({ [uri]: text });
  const input = { uri, text };

  // One pass, corners included (the command line).
  const onePass: Record<string, number>[] = [];
  const oneTotals: number[] = [];
  let elements = 0;
  let findings = 0;
  for (let i = 0; i < runs + 1; i++) {
    const t0 = now();
    const a = analyse(input, ws, {});
    const ms = now() - t0;
    elements = a.circuit?.elements.length ?? 0;
    findings = a.findings.length;
    if (i === 0) continue; // warm-up
    onePass.push(a.timings);
    oneTotals.push(ms);
  }
  console.log(`\n${cells} cells: ${elements} elements, ${targets} targets, ${findings} findings`);
  console.log(' one pass (corners on):');
  for (const line of stageRows(onePass, oneTotals)) console.log(line);

  // First pass without corners, then the corner phase, then one sizing on demand.
  const first: Record<string, number>[] = [];
  const firstTotals: number[] = [];
  const phase: number[] = [];
  const phaseSolve: number[] = [];
  const phaseMeasure: number[] = [];
  const sizing: number[] = [];
  let cornerInfo = '';
  let sizingInfo = '';
  for (let i = 0; i < runs + 1; i++) {
    const t0 = now();
    const session = analyseSession(input, ws, { corners: { enabled: false } });
    const ms = now() - t0;
    // addCorners adds its own time to the same timings object; keep the first pass's figures apart.
    const firstTimings = { ...session.analysis.timings };
    const stats: CornerStats = { corners: 0, converged: 0, iterations: 0, solveMs: 0, measureMs: 0, keptFigures: 0, keptFindings: 0, partCorners: 0 };
    const t1 = now();
    const extra = session.solver && session.nominal ? addCorners(session.analysis, { solver: session.solver, nominal: session.nominal, stats }) : [];
    const phaseMs = now() - t1;
    const missed = session.analysis.findings.find((f) => f.code === 'target-missed');
    const t2 = now();
    const fixes = missed ? sizingFixesOf(session, missed) : [];
    const sizingMs = now() - t2;
    cornerInfo = `${stats.corners} corners, ${stats.converged} converged, ${stats.iterations} Newton iterations in all, ${extra.length} corner findings`;
    sizingInfo = `${fixes.length} fixes offered for ${missed?.data?.['element'] ?? 'no target'}`;
    if (i === 0) continue;
    first.push(firstTimings);
    firstTotals.push(ms);
    phase.push(phaseMs);
    phaseSolve.push(stats.solveMs);
    phaseMeasure.push(stats.measureMs);
    sizing.push(sizingMs);
  }
  console.log(' first pass (corners.enabled = false):');
  for (const line of stageRows(first, firstTotals)) console.log(line);
  console.log(` corner phase (addCorners; ${cornerInfo}):`);
  console.log(row('total', phase));
  console.log(row('corner solves', phaseSolve));
  console.log(row('measure + findings', phaseMeasure));
  console.log(` sizing one missed target on demand (${sizingInfo}):`);
  console.log(row('sizingFixesOf', sizing));
}

function main(): void {
  const sizes = (process.env.QPOINT_ANALYSIS_BENCH_SIZES ?? '400,4000')
    .split(',')
    .map((s) => Number(s.trim()))
    .filter((n) => Number.isInteger(n) && n > 0);
  const runsEnv = Number(process.env.QPOINT_ANALYSIS_BENCH_RUNS);
  console.log(`analysis benchmark: node ${process.version}, ${cpus().length} cores, load average ${loadavg().map((l) => l.toFixed(1)).join(' ')}`);
  for (const cells of sizes) benchSize(cells, Number.isInteger(runsEnv) && runsEnv > 0 ? runsEnv : cells > 1000 ? 2 : 5);
}

main();
