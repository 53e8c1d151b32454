// Elaboration benchmark: times elaborate() and checkConnectivity() on flat and hierarchical netlists of 2k to 100k elements and prints the figures.
//
// Run (a script that prints figures, not a test):
//   npx esbuild test/bench/elaborate-bench.ts --bundle --platform=node --format=cjs --outfile=/tmp/elaborate-bench.js && node --expose-gc /tmp/elaborate-bench.js
// Profile: node --cpu-prof --cpu-prof-dir=/tmp/elab-prof /tmp/elaborate-bench.js, then open the .cpuprofile in a profiler view.
// Environment: QPOINT_ELABORATE_BENCH_SIZES (comma-separated element counts, default 2000,50000,100000),
//   QPOINT_ELABORATE_BENCH_RUNS (warm runs per size, default 7).
//
// What to read: parsing is timed separately and left out of the "elaborate" and "topology" columns.
// Each figure is the median of the warm runs (one discarded warm-up run first), so a busy machine
// disturbs it less than a mean; the load average is printed with it. Wall-clock columns include time
// spent waiting for a CPU on a loaded machine; the "cpu" columns are the process's own CPU time over
// the same stretch (all its threads, so concurrent GC work is counted) and are the steadier figure. ms/kelem should stay roughly
// flat from 2k to 100k elements if both stages are linear. "heap kept" is the heap used with the
// result of one run still referenced, after a forced collection (needs --expose-gc, else "n/a").
// Targets from the task: re-analysis of a 2,000-element netlist well under 100 ms for all stages
// together (these two stages: a few ms), and a 50,000-element netlist opened within 400 MB.

import { cpus, loadavg } from 'node:os';
import { elaborate } from '../../shared-analysis/src/elaborate/index';
import { checkConnectivity } from '../../shared-analysis/src/checks/connectivity';
import { parse } from '../../shared-analysis/src/syntax/parser';
import { MemoryWorkspace } from '../../shared-analysis/src/types';

const SIZES = (process.env.QPOINT_ELABORATE_BENCH_SIZES ?? '2000,50000,100000').split(',').map(Number).filter((n) => n > 0);
const RUNS = Math.max(1, Number(process.env.QPOINT_ELABORATE_BENCH_RUNS ?? 7));
const URI = '/bench/top.cir';

/**
 * A flat netlist of about `elements` elements: NPN mirror cells (reference resistor, diode-connected
 * reference, three outputs with loads), PMOS loads with W/L, a few braced expressions and parameters.
 * Values vary with the index so no two cells are the same.
 */
function flatNetlist(elements: number): string {
  const out = [
    `Flat elaborate-bench netlist of about ${elements} elements`,
    '.param vsup=12 rbase=22k',
    '.model qb npn (BF=120 VAF=80)',
    '.model pl pmos (KP=40u VTO=-0.6 LAMBDA=0.03)',
    'VCC vcc 0 DC {vsup}',
  ];
  const cells = Math.max(1, Math.round((elements - 1) / 10));
  for (let c = 0; c < cells; c++) {
    out.push(
      `RREF${c} vcc r${c} {rbase*${1 + (c % 7)}/4}`,
      `QR${c} r${c} r${c} 0 qb`,
      `QA${c} a${c} r${c} 0 qb`,
      `QB${c} b${c} r${c} 0 qb 2`,
      `QC${c} k${c} r${c} 0 qb`,
      `RA${c} vcc a${c} ${4 + (c % 5)}.7k`,
      `RB${c} vcc b${c} 2.2k`,
      `MP${c} k${c} k${c} vcc vcc pl W=${10 + (c % 9)}u L=2u`,
      `RD${c} vcc d${c} 10k`,
      `RE${c} d${c} 0 ${5 + (c % 3)}.6k`,
    );
  }
  return out.join('\n') + '\n';
}

/**
 * The same cells inside a parameterised subcircuit, instanced so the flattened circuit has about
 * `elements` elements: each instance gives its own reference resistor scale.
 */
function hierarchicalNetlist(elements: number): string {
  const out = [
    `Hierarchical elaborate-bench netlist of about ${elements} elements`,
    '.param vsup=12 rbase=22k',
    '.model qb npn (BF=120 VAF=80)',
    '.model pl pmos (KP=40u VTO=-0.6 LAMBDA=0.03)',
    '.subckt cell top scale=1',
    'RREF top r {rbase*scale}',
    'QR r r 0 qb',
    'QA a r 0 qb',
    'QB b r 0 qb 2',
    'QC k r 0 qb',
    'RA top a 4.7k',
    'RB top b 2.2k',
    'MP k k top top pl W=10u L=2u',
    'RD top d 10k',
    'RE d 0 5.6k',
    '.ends cell',
    'VCC vcc 0 DC {vsup}',
  ];
  const cells = Math.max(1, Math.round((elements - 1) / 10));
  for (let c = 0; c < cells; c++) out.push(`X${c} vcc cell scale=${1 + (c % 7) / 4}`);
  return out.join('\n') + '\n';
}

function median(xs: number[]): number {
  const s = [...xs].sort((a, b) => a - b);
  const m = s.length >> 1;
  return s.length % 2 ? s[m]! : (s[m - 1]! + s[m]!) / 2;
}

const gc = (globalThis as { gc?: () => void }).gc;

function heapMB(): number {
  return process.memoryUsage().heapUsed / 2 ** 20;
}

interface Row {
  shape: string;
  size: number;
  elements: number;
  parseMs: number;
  elaborateMs: number;
  topologyMs: number;
  elaborateCpuMs: number;
  topologyCpuMs: number;
  findings: number;
  heapKeptMB: number | undefined;
  rssMB: number;
}

function measure(shape: 'flat' | 'subckt', size: number): Row {
  const text = shape === 'flat' ? flatNetlist(size) : hierarchicalNetlist(size);
  const ws = new MemoryWorkspace({ [URI]: text });
  const parseTimes: number[] = [];
  const elabTimes: number[] = [];
  const topoTimes: number[] = [];
  const elabCpu: number[] = [];
  const topoCpu: number[] = [];
  const cpuMs = (): number => {
    const u = process.cpuUsage();
    return (u.user + u.system) / 1000;
  };
  let elements = 0;
  let findings = 0;
  let kept: unknown;
  for (let run = 0; run <= RUNS; run++) {
    kept = undefined;
    const t0 = performance.now();
    const doc = parse(URI, text, { hasTitle: true });
    const c1 = cpuMs();
    const t1 = performance.now();
    const r = elaborate(doc, ws);
    const t2 = performance.now();
    const c2 = cpuMs();
    const topo = checkConnectivity(r.circuit);
    const t3 = performance.now();
    const c3 = cpuMs();
    // Run 0 warms up the JIT and the expression cache and is not counted.
    if (run > 0) {
      parseTimes.push(t1 - t0);
      elabTimes.push(t2 - t1);
      topoTimes.push(t3 - t2);
      elabCpu.push(c2 - c1);
      topoCpu.push(c3 - c2);
    }
    elements = r.circuit.elements.length;
    findings = r.findings.length + topo.length;
    kept = { doc, r, topo };
  }
  let heapKeptMB: number | undefined;
  if (gc) {
    gc();
    heapKeptMB = heapMB();
  }
  const rssMB = process.memoryUsage().rss / 2 ** 20;
  if (!kept) throw new Error('unreachable');
  return { shape, size, elements, parseMs: median(parseTimes), elaborateMs: median(elabTimes), topologyMs: median(topoTimes), elaborateCpuMs: median(elabCpu), topologyCpuMs: median(topoCpu), findings, heapKeptMB, rssMB };
}

function pad(s: string | number, n: number): string {
  return String(s).padStart(n);
}

function main(): void {
  const load = loadavg().map((x) => x.toFixed(2)).join(' ');
  console.log(`elaborate-bench: node ${process.version}, ${cpus().length} CPUs (${cpus()[0]?.model ?? '?'}), load average ${load}`);
  console.log(`median of ${RUNS} warm runs after one warm-up; times in ms${gc ? '' : '; run with --expose-gc for heap figures'}`);
  console.log(
    `${'shape'.padEnd(7)}${pad('elements', 9)}${pad('parse', 9)}${pad('elaborate', 11)}${pad('topology', 10)}${pad('elab+topo', 11)}${pad('cpu elab', 10)}${pad('cpu topo', 10)}${pad('cpu ms/kelem', 14)}${pad('findings', 10)}${pad('heap kept MB', 14)}${pad('rss MB', 8)}`,
  );
  const rows: Row[] = [];
  for (const shape of ['flat', 'subckt'] as const) {
    for (const size of SIZES) {
      gc?.();
      const row = measure(shape, size);
      rows.push(row);
      const both = row.elaborateMs + row.topologyMs;
      const cpuBoth = row.elaborateCpuMs + row.topologyCpuMs;
      console.log(
        `${shape.padEnd(7)}${pad(row.elements, 9)}${pad(row.parseMs.toFixed(1), 9)}${pad(row.elaborateMs.toFixed(1), 11)}${pad(row.topologyMs.toFixed(1), 10)}${pad(both.toFixed(1), 11)}${pad(row.elaborateCpuMs.toFixed(1), 10)}${pad(row.topologyCpuMs.toFixed(1), 10)}${pad(((cpuBoth / row.elements) * 1000).toFixed(2), 14)}${pad(row.findings, 10)}${pad(row.heapKeptMB === undefined ? 'n/a' : row.heapKeptMB.toFixed(0), 14)}${pad(row.rssMB.toFixed(0), 8)}`,
      );
    }
  }
  const small = rows.filter((r) => r.size === SIZES[0]);
  const large = rows.filter((r) => r.size === SIZES[SIZES.length - 1]);
  for (let i = 0; i < small.length && i < large.length; i++) {
    const a = small[i]!;
    const b = large[i]!;
    const per = (r: Row) => (r.elaborateCpuMs + r.topologyCpuMs) / r.elements;
    console.log(`scaling ${a.shape}: CPU ms/element at ${b.elements} is ${(per(b) / per(a)).toFixed(2)}× that at ${a.elements} (1.00 = linear)`);
  }
}

main();
