// Floor benchmark: what a one-shot `check --format json` run on the sink array spends that is not the analysis's own
// work, measured in one run: Node's start, V8's optimising compilers, and the native JSON writer on the document.
//
// Run (a script that prints figures, not a test):
//   npm run bench:floor
// Environment:
//   QPOINT_FLOOR_BENCH_ELEMENTS  elements of the sink array (default 20000; 4 elements a cell)
//   QPOINT_FLOOR_BENCH_RUNS      runs after the first in the traced process (default 6)
//
// Every figure is process CPU time (user + system) of a child process, as the `qpoint` bin's process started for the
// netlist's size runs it: under the V8 flags of server/src/cli-launch.ts (`--single-threaded` among them, so V8's
// compilers and collector work on the one thread whose CPU is counted), the CLI in-process, its output counted and
// dropped. What is measured:
//   start      Node's own start under those flags: CPU before the first statement of a one-line script (the bin's
//              process adds the load of the CLI bundle from its code cache, this benchmark's the load of its own bundle);
//   cold       the CLI's run in a fresh process, as the bin's second process does it (start not included);
//   runs       in a second process started with `--trace-opt`: the same run cold and then QPOINT_FLOOR_BENCH_RUNS
//              times again, each run's CPU and the optimising compilers' time in it, summed from V8's own lines
//              ("completed compiling … took A, B, C ms": the three phases of each compilation; with
//              `--single-threaded` they run on the counted thread; the trace's printing is not in them). V8 goes on
//              compiling for several runs (functions reach the optimising tier later, some are compiled again), so
//              the least of the later runs is taken as the warm run, with what it still compiled;
//   stringify  `JSON.stringify` of the document the last run wrote (parsed back), in that warm process: the native
//              writer alone, without the engine, the streaming or the bytes; the smallest of three.
// What is printed besides: the cold run less its compilations (the run's own work, interpreted and baseline code
// included) and the sum start + compiling + stringify, a cost the run pays before any analysis. The issue's target
// for the 20k array is 1.0 s for the whole process (docs/PERFORMANCE.md, "Targets"); the bin's first process, which
// only starts the second, adds about 0.05 s more and is not counted here.

import { spawnSync } from 'node:child_process';
import { mkdtempSync, statSync, writeFileSync } from 'node:fs';
import { loadavg, tmpdir } from 'node:os';
import { join } from 'node:path';
import { main } from '../../server/src/cli';
import { relaunchFlags, thisMachine } from '../../server/src/cli-launch';
import { setColumnsUncounted } from '../../shared-analysis/src/columns';
import { sinkArray } from './sink-array';

function cpuMs(): number {
  const u = process.cpuUsage();
  return (u.user + u.system) / 1000;
}

/** One CLI run in this process, as the bin's second process runs it; the document's chunks kept when asked. */
function runCli(file: string, keep: boolean): { ms: number; bytes: number; chunks: Buffer[] } {
  const chunks: Buffer[] = [];
  let bytes = 0;
  const t0 = cpuMs();
  main(['check', '--format', 'json', file], (s) => {
    bytes += s.length;
    if (keep) chunks.push(Buffer.from(s));
  });
  return { ms: cpuMs() - t0, bytes, chunks };
}

const median = (xs: number[]): number => {
  const s = [...xs].sort((a, b) => a - b);
  return s.length % 2 ? s[(s.length - 1) >> 1]! : (s[s.length / 2 - 1]! + s[s.length / 2]!) / 2;
};

function child(what: string, file: string, runs: number): void {
  const out: Record<string, unknown> = {};
  // As the bin's process started for the netlist's size does (server/src/cli-main.ts).
  if (relaunchFlags(statSync(file).size, false, thisMachine())) setColumnsUncounted(true);
  if (what === 'cold') {
    out.ms = runCli(file, false).ms;
  } else {
    // The first run cold, then the same run again and again in this process. No collection is asked for between
    // runs: a full collection throws V8's optimised code away (about 410 of the 450 functions were compiled again
    // after each \`gc()\`), which would make every run a cold one. A line on the standard output between runs lets
    // the parent add up each run's compilations from the trace.
    const ms: number[] = [];
    let last: Buffer[] = [];
    for (let i = 0; i <= runs; i++) {
      process.stdout.write(`@@run ${i}\n`);
      const r = runCli(file, i === runs);
      ms.push(r.ms);
      last = r.chunks;
    }
    process.stdout.write('@@end\n');
    out.runMs = ms;
    const doc = JSON.parse(Buffer.concat(last).toString('utf8')) as unknown;
    last = [];
    const stringify: number[] = [];
    let length = 0;
    for (let i = 0; i < 3; i++) {
      const t0 = cpuMs();
      length = JSON.stringify(doc).length;
      stringify.push(cpuMs() - t0);
    }
    out.stringifyMs = Math.min(...stringify);
    out.documentUnits = length;
  }
  process.stderr.write(`@@${JSON.stringify(out)}\n`);
}

interface ChildOut {
  /** `cold`: the run's CPU. */
  ms?: number;
  /** `runs`: each run's CPU, the first one cold. */
  runMs?: number[];
  stringifyMs?: number;
  documentUnits?: number;
  /** `runs`: each run's compilers' time and compilations, from V8's trace on the child's standard output. */
  compileMs?: number[];
  compilations?: number[];
}

/** V8's line for one finished compilation, any tier: "[completed compiling 0x… <JSFunction f …> (target T) … - took A, B, C ms]". */
const COMPILED = /^\[completed compiling .* - took ([\d.]+), ([\d.]+), ([\d.]+) ms\]$/;

function runChild(what: 'cold' | 'runs', file: string, runs: number): ChildOut {
  const flags = [...(relaunchFlags(statSync(file).size, false, thisMachine()) ?? [])];
  if (what === 'runs') flags.push('--trace-opt');
  const r = spawnSync(process.execPath, [...flags, __filename, '--child', what, file, String(runs)], { encoding: 'utf8', maxBuffer: 1 << 28 });
  const line = (r.stderr ?? '').split('\n').find((l) => l.startsWith('@@'));
  if (!line) throw new Error(`${what} failed: ${r.stderr}`);
  const out = JSON.parse(line.slice(2)) as ChildOut;
  if (what === 'runs') {
    const ms: number[] = [];
    const n: number[] = [];
    let run = -1;
    for (const l of (r.stdout ?? '').split('\n')) {
      if (l.startsWith('@@run ')) {
        run = Number(l.slice(6));
        ms[run] = 0;
        n[run] = 0;
      } else if (l === '@@end') run = -1;
      const m = run >= 0 ? COMPILED.exec(l) : null;
      if (!m) continue;
      ms[run]! += Number(m[1]) + Number(m[2]) + Number(m[3]);
      n[run]!++;
    }
    if (n.reduce((a, b) => a + b, 0) === 0) throw new Error("no compilation found in V8's trace: has this Node's --trace-opt format changed?");
    out.compileMs = ms;
    out.compilations = n;
  }
  return out;
}

/** Node's start under the bin's flags for the file: CPU before the first statement of a one-line script. */
function nodeStartMs(file: string): number {
  const flags = relaunchFlags(statSync(file).size, false, thisMachine()) ?? [];
  const r = spawnSync(process.execPath, [...flags, '-e', 'const u = process.cpuUsage(); process.stderr.write(`@@${(u.user + u.system) / 1000}\\n`)'], { encoding: 'utf8' });
  const line = (r.stderr ?? '').split('\n').find((l) => l.startsWith('@@'));
  if (!line) throw new Error(`Node's start failed: ${r.stderr}`);
  return Number(line.slice(2));
}

const fmt = (ms: number): string => (ms >= 1000 ? `${(ms / 1000).toFixed(2)} s` : `${ms.toFixed(0)} ms`);

function bench(): void {
  const elements = Number(process.env.QPOINT_FLOOR_BENCH_ELEMENTS ?? 20000);
  const runs = Math.max(1, Number(process.env.QPOINT_FLOOR_BENCH_RUNS ?? 6));
  const dir = mkdtempSync(join(tmpdir(), 'qpoint-floor-bench-'));
  const file = join(dir, `sink${elements}.cir`);
  writeFileSync(file, sinkArray(elements));
  console.log(`load average before: ${loadavg().map((x) => x.toFixed(2)).join(' ')}; node ${process.version}`);
  console.log(`${elements.toLocaleString('en')}-element sink array, \`check --format json\` with corners, the bin's flags for its size: ${(relaunchFlags(statSync(file).size, false, thisMachine()) ?? []).join(' ') || '(none)'}`);
  const cold = runChild('cold', file, runs);
  const startMs = nodeStartMs(file);
  const traced = runChild('runs', file, runs);
  const coldMs = cold.ms!;
  const runMs = traced.runMs!;
  const compileMs = traced.compileMs!;
  const stringifyMs = traced.stringifyMs!;
  const compile0 = compileMs[0]!;
  // The warm run taken: the least CPU after the first.
  let w = 1;
  for (let i = 2; i < runMs.length; i++) if (runMs[i]! < runMs[w]!) w = i;
  console.log('the same run repeated in one traced process: CPU (of it compiling, compilations)');
  console.log(runMs.map((ms, i) => `${i === 0 ? 'cold' : `#${i}`} ${fmt(ms)} (${fmt(compileMs[i]!)}, ${traced.compilations![i]})`).join(' | '));
  console.log('start | cold run | compiling in a cold run | cold less compiling | least warm run (its compiling) | stringify of the document (MB) | start + compiling + stringify');
  console.log(
    [
      fmt(startMs),
      fmt(coldMs),
      `${fmt(compile0)} (${traced.compilations![0]})`,
      fmt(coldMs - compile0),
      `${fmt(runMs[w]!)} (${fmt(compileMs[w]!)})`,
      `${fmt(stringifyMs)} (${(traced.documentUnits! / 1e6).toFixed(1)})`,
      fmt(startMs + compile0 + stringifyMs),
    ].join(' | '),
  );
  console.log(
    `shares of the cold run: compiling ${((100 * compile0) / coldMs).toFixed(0)} %, stringify ${((100 * stringifyMs) / coldMs).toFixed(0)} %; ` +
      `start + cold run ${fmt(startMs + coldMs)}, of which start + compiling + stringify ${((100 * (startMs + compile0 + stringifyMs)) / (startMs + coldMs)).toFixed(0)} %; ` +
      `cold ÷ least warm ${(coldMs / runMs[w]!).toFixed(2)}×`,
  );
  console.log(`load average after: ${loadavg().map((x) => x.toFixed(2)).join(' ')}`);
}

const at = process.argv.indexOf('--child');
if (at >= 0) child(process.argv[at + 1]!, process.argv[at + 2]!, Number(process.argv[at + 3]));
else bench();
