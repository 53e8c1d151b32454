// Start-up benchmark: the self-biased-loop check at nominal and at every corner, against the corner table's own solves, on netlists of K ΔVBE cells.
//
// Run from the repository's root (a script that prints figures, not a test):
//   npx esbuild test/bench/startup-bench.ts --bundle --platform=node --format=cjs --outfile=/tmp/startup-bench.js && node /tmp/startup-bench.js
//
// For each netlist it prints the solves each stage made (counted by wrapping DcSolver.solve) and the
// median time of the start-up stage against the corner stage, measured in this one run; the load
// average comes first. Beta corners share the zero-state verdict of their supply/temperature twin, so
// the start-up check makes one loop-off solve per supply × temperature corner, plus the confirming
// solves from the all-off state (nominal and the hardest corner) when a start-up path exists.

import { cpus, loadavg } from 'node:os';
import { resolveOptions } from '../../shared-analysis/src/analysis';
import { checkStartup } from '../../shared-analysis/src/checks/startup';
import { analyse } from '../../shared-analysis/src/service';
import { DcSolver } from '../../shared-analysis/src/solve/dc';
import { MemoryWorkspace } from '../../shared-analysis/src/types';

const REPS = 5;
const median = (xs: number[]): number => {
  const s = [...xs].sort((a, b) => a - b);
  return s.length % 2 ? s[(s.length - 1) / 2] : (s[s.length / 2 - 1] + s[s.length / 2]) / 2;
};

/** K instances of an invented ΔVBE cell (area ratio 8, 1 kΩ), each with or without a 2 MΩ start-up resistor. */
function cells(k: number, startup: boolean): string {
  const lines = ['K invented ΔVBE cells', '.model qn npn (bf=100)', '.model qp pnp (bf=50)', 'VCC vcc 0 5', '.subckt cell vcc', 'Q1 n1 n1 0 qn', 'Q2 p n1 x qn area=8', 'R x 0 1k', 'QP1 p p vcc qp', 'QP2 n1 p vcc qp'];
  if (startup) lines.push('RSU vcc n1 2meg');
  lines.push('.ends');
  for (let i = 1; i <= k; i++) lines.push(`X${i} vcc cell`);
  lines.push('.end', '');
  return lines.join('\n');
}

// Count every solve.
let solves = 0;
const original = DcSolver.prototype.solve;
DcSolver.prototype.solve = function (this: DcSolver, ...args: Parameters<DcSolver['solve']>) {
  solves++;
  return original.apply(this, args);
};

console.log(`load average ${loadavg().map((x) => x.toFixed(2)).join(' ')} on ${cpus().length} cores`);
for (const k of [1, 4, 16]) {
  for (const startup of [false, true]) {
    const text = cells(k, startup);
    const t: { startup: number; corners: number }[] = [];
    for (let r = 0; r < REPS; r++) {
      const a = analyse({ uri: 'bench.cir', text }, new MemoryWorkspace({ 'bench.cir': text }), {});
      t.push({ startup: a.timings['startup'] ?? 0, corners: a.timings['corners'] ?? 0 });
      if (r > 0) continue;
      // The start-up check alone, once more on the finished analysis, to count its solves.
      solves = 0;
      checkStartup({ circuit: a.circuit!, structures: a.structures, op: a.operatingPoint!, options: resolveOptions({}) });
      const own = solves;
      const st = a.structures.find((s) => s.startup)?.startup;
      console.log(
        `${String(k).padStart(2)} cell${k > 1 ? 's' : ' '} ${startup ? 'with   ' : 'without'} start-up resistor: ${a.structures[0]?.corners.length ?? 0} corners in the table, ` +
          `${st?.corners?.length ?? 0} checked per loop, ${own} start-up solves (${(own / k).toFixed(0)} per loop)`,
      );
    }
    const su = median(t.map((x) => x.startup));
    const co = median(t.map((x) => x.corners));
    console.log(`    start-up stage ${su.toFixed(1)} ms, corner stage ${co.toFixed(1)} ms: ratio ${(su / co).toFixed(2)} (median of ${REPS})`);
  }
}
