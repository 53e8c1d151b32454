// Take-in benchmark: how long the main thread is held, task by task, while it takes in a large result beside the one it holds.
//
// Run (a script that prints figures, not a test):
//   npx esbuild test/bench/take-in-bench.ts --bundle --platform=node --format=cjs --outfile=/tmp/take-in-bench.js && node --expose-gc /tmp/take-in-bench.js
// Environment:
//   QPOINT_TAKE_IN_ELEMENTS  elements of the netlist (default 50000: bench:server's, 100 mirror cells and ladder resistors)
//   QPOINT_TAKE_IN_EDIT      'value' (default: bench:server's edit, a resistor's value of the same length) or 'longer' (one character more)
//   QPOINT_TAKE_IN_YOUNG     0 to leave out the young-generation collections between parts (to compare with them)
//   QPOINT_TAKE_IN_PROFILE   a file to write a CPU profile of the edited version's take-in to (100 µs sampling)
//
// The netlist is analysed as the server's worker does (corners off), its result split into parts, each part
// passed through `v8.serialize` (what `postMessage` does), then the engine's state is dropped and collected. The
// first version is taken in, as the server's main thread does, and held; then the edited version is taken in
// beside it: each part deserialised and merged by the same `partMerger` the server uses, sliced where the server
// slices (a turn for queued requests after each MERGE_SLICE_MS of merging and between parts), then adopted,
// the replaced analysis dropped and the hover tables prepared. Every such task is timed in the process's CPU time
// (one thread, but V8's collector threads count too; on a loaded machine wall times stretch, CPU times much less),
// and V8's collections meanwhile are listed by the task they fell in.
// What a request arriving during the take-in may wait for is the longest task plus the collections inside it.

import { Session } from 'node:inspector';
import { writeFileSync } from 'node:fs';
import { loadavg } from 'node:os';
import { PerformanceObserver, performance } from 'node:perf_hooks';
import { deserialize, serialize } from 'node:v8';
import { analyseSession } from '../../shared-analysis/src/service';
import { adoptKeptCards, partMerger, splitAnalysisLazily, type AnalysisPart } from '../../server/src/analysis-transfer';
import { MERGE_SLICE_MS, PARTS_IN_FLIGHT, TAKE_IN_YOUNG_BYTES } from '../../server/src/worker-host';
import { collectYoungGenerationPast } from '../../server/src/collect';
import { restoreNameTables } from '../../shared-analysis/src/names';
import { indexOf } from '../../shared-analysis/src/features/document-index';
import { prepareHover } from '../../shared-analysis/src/features/hover';
import type { Analysis } from '../../shared-analysis/src/analysis';
import { MemoryWorkspace } from '../../shared-analysis/src/types';
// @ts-expect-error: a plain script module without types
import { biasNetlist } from './netlist-generator.mjs';

const ELEMENTS = Number(process.env.QPOINT_TAKE_IN_ELEMENTS ?? 50000);
const CELLS = 100;
const COLLECT_YOUNG = process.env.QPOINT_TAKE_IN_YOUNG !== '0';
const EDIT = process.env.QPOINT_TAKE_IN_EDIT === 'longer' ? 'longer' : 'value';
const collect = (globalThis as { gc?: () => void }).gc;
if (!collect) {
  console.error('Run with node --expose-gc: the benchmark collects between its stages.');
  process.exit(1);
}

/** A result as the worker sends it: the header and each part as the bytes of a message. */
interface Sent {
  header: Buffer;
  parts: Buffer[];
}

const uri = 'file:///bench/take-in.cir';
const { text } = biasNetlist({ cells: CELLS, ladderResistors: Math.max(0, ELEMENTS - 1 - CELLS * 10) }) as { text: string };
const lines = text.split('\n');
const editLine = lines.findIndex((l) => /^R\S* /.test(l));
lines[editLine] = lines[editLine]!.replace(/\S+$/, EDIT === 'value' ? '21k' : '21.5k');
const edited = lines.join('\n');

/** Both versions analysed and split as the worker does; the engine's state is garbage once this returns. */
function workerSide(): [Sent, Sent] {
  const options = { corners: { enabled: false } };
  const first = analyseSession({ uri, text, version: 1 }, new MemoryWorkspace({ [uri]: text }), options, {});
  const split1 = splitAnalysisLazily(first.analysis);
  const sent1 = split1.prepare();
  const one: Sent = { header: serialize(split1.header), parts: split1.parts.map((make) => serialize(make())) };
  const second = analyseSession({ uri, text: edited, version: 2 }, new MemoryWorkspace({ [uri]: edited }), options, { warmStart: first.warmStart });
  const split2 = splitAnalysisLazily(second.analysis, sent1);
  split2.prepare();
  const two: Sent = { header: serialize(split2.header), parts: split2.parts.map((make) => serialize(make())) };
  return [one, two];
}

/** One uninterrupted piece of the main thread's work: what it was, when it started and how long it ran (wall clock), and its CPU time. */
interface Task {
  label: string;
  start: number;
  ms: number;
  cpuMs: number;
}

/** The process's CPU time (user + system, ms): on a loaded machine a task's wall time stretches, its CPU time much less. */
const cpuNow = (): number => {
  const c = process.cpuUsage();
  return (c.user + c.system) / 1000;
};

/** A clock for one task: `end` records it under `label`. */
function taskClock(tasks: Task[]): { reset(): void; elapsed(): number; end(label: string): void } {
  let start = 0;
  let cpu = 0;
  const clock = {
    reset() {
      start = performance.now();
      cpu = cpuNow();
    },
    elapsed: () => performance.now() - start,
    end(label: string) {
      tasks.push({ label, start, ms: performance.now() - start, cpuMs: cpuNow() - cpu });
      clock.reset();
    },
  };
  clock.reset();
  return clock;
}

/** Takes `sent` in as the server's main thread does, timing each task; returns the analysis. */
function takeIn(sent: Sent, held: Analysis | undefined, tasks: Task[]): Analysis {
  const clock = taskClock(tasks);
  const analysis = restoreNameTables(deserialize(sent.header) as Analysis);
  clock.end('header');
  const merger = partMerger(analysis, held);
  // Messages of the parts in flight arrive, each deserialised in a task of its own, while earlier parts are merged.
  const arrived: AnalysisPart[] = [];
  const arrive = (index: number) => {
    if (index >= sent.parts.length) return;
    clock.reset();
    arrived[index] = deserialize(sent.parts[index]!) as AnalysisPart;
    clock.end(`part ${index}, its message deserialised`);
  };
  for (let k = 0; k < PARTS_IN_FLIGHT / 2; k++) arrive(k);
  sent.parts.forEach((_, index) => {
    arrive(index + PARTS_IN_FLIGHT / 2);
    const part = arrived[index]!;
    delete arrived[index];
    clock.reset();
    let label = `part ${index} (${part.kind}), the first slice`;
    if (COLLECT_YOUNG) collectYoungGenerationPast(TAKE_IN_YOUNG_BYTES);
    for (const _ of merger.steps(part)) {
      if (clock.elapsed() < MERGE_SLICE_MS) continue;
      clock.end(label);
      label = `part ${index} (${part.kind}), a later slice`;
    }
    clock.end(label);
  });
  clock.reset();
  let label = 'finish (index rows, name tables), the first slice';
  for (const _ of merger.finishSteps()) {
    if (clock.elapsed() < MERGE_SLICE_MS) continue;
    clock.end(label);
    label = 'finish, a later slice';
  }
  clock.end(label);
  adoptKeptCards(analysis);
  clock.end('adoption (the kept cards moved)');
  indexOf(analysis);
  prepareHover(analysis);
  clock.end('hover tables (indexOf, prepareHover)');
  return analysis;
}

interface Collection {
  start: number;
  ms: number;
  kind: string;
}

const GC_KINDS: Record<number, string> = { 1: 'young', 4: 'full', 8: 'incremental step', 16: 'weak callbacks' };

/** Starts the CPU profile QPOINT_TAKE_IN_PROFILE asks for; `stop` writes it. */
async function startProfile(): Promise<{ stop(): Promise<void> } | undefined> {
  const file = process.env.QPOINT_TAKE_IN_PROFILE;
  if (!file) return undefined;
  const session = new Session();
  session.connect();
  const post = (method: string, params?: object) => new Promise<unknown>((resolve, reject) => session.post(method, params, (e, r) => (e ? reject(e) : resolve(r))));
  await post('Profiler.enable');
  await post('Profiler.setSamplingInterval', { interval: 100 });
  await post('Profiler.start');
  return {
    async stop() {
      const { profile } = (await post('Profiler.stop')) as { profile: unknown };
      writeFileSync(file, JSON.stringify(profile));
      session.disconnect();
    },
  };
}

async function main(): Promise<void> {
  console.log(`qpoint take-in benchmark — ${ELEMENTS} elements, edit '${EDIT}', node ${process.version}; load average ${loadavg().map((x) => x.toFixed(1)).join(' ')}`);
  const [one, two] = workerSide();
  collect!();
  const collections: Collection[] = [];
  const observer = new PerformanceObserver((list) => {
    for (const e of list.getEntries()) collections.push({ start: e.startTime, ms: e.duration, kind: GC_KINDS[(e as unknown as { detail: { kind: number } }).detail.kind] ?? 'other' });
  });
  observer.observe({ entryTypes: ['gc'] });
  const heldTasks: Task[] = [];
  let held: Analysis | undefined = takeIn(one, undefined, heldTasks);
  collect!();
  // Entries reach the observer only after a turn of the event loop: let those of the first take-in arrive, then forget them.
  await new Promise((r) => setTimeout(r, 50));
  collections.length = 0;
  const before = process.memoryUsage();
  const tasks: Task[] = [];
  const profiler = await startProfile();
  const cpu0 = process.cpuUsage();
  const t0 = performance.now();
  const taken = takeIn(two, held, tasks);
  const wall = performance.now() - t0;
  const cpu = process.cpuUsage(cpu0);
  const after = process.memoryUsage();
  await profiler?.stop();
  await new Promise((r) => setTimeout(r, 50));
  const inside = (t: Task) => collections.filter((c) => c.start >= t.start && c.start < t.start + t.ms);
  const sorted = [...tasks].sort((a, b) => b.cpuMs - a.cpuMs);
  const pct = (p: number) => [...tasks].map((t) => t.cpuMs).sort((a, b) => a - b)[Math.min(tasks.length - 1, Math.ceil((p / 100) * tasks.length) - 1)]!;
  console.log(`taking the edited version in: ${tasks.length} tasks, ${wall.toFixed(0)} ms wall, ${((cpu.user + cpu.system) / 1000).toFixed(0)} ms CPU (the process, collector threads included)`);
  console.log(`task CPU time: median ${pct(50).toFixed(2)} ms, p99 ${pct(99).toFixed(2)} ms, max ${sorted[0]!.cpuMs.toFixed(2)} ms; over 8 ms: ${tasks.filter((t) => t.cpuMs > 8).length}, over 16 ms: ${tasks.filter((t) => t.cpuMs > 16).length}`);
  const young = collections.filter((c) => c.kind === 'young');
  const full = collections.filter((c) => c.kind === 'full');
  const sum = (cs: Collection[]) => cs.reduce((s, c) => s + c.ms, 0);
  console.log(`collections during it (wall clock): ${young.length} young (${sum(young).toFixed(0)} ms, longest ${Math.max(0, ...young.map((c) => c.ms)).toFixed(1)} ms), ${full.length} full (${sum(full).toFixed(0)} ms, longest ${Math.max(0, ...full.map((c) => c.ms)).toFixed(1)} ms)`);
  console.log('longest tasks:');
  for (const t of sorted.slice(0, 8)) {
    const gcs = inside(t);
    console.log(`  ${t.cpuMs.toFixed(2).padStart(7)} ms CPU (${t.ms.toFixed(1)} ms wall)  ${t.label}${gcs.length ? `; collections inside: ${gcs.map((c) => `${c.kind} ${c.ms.toFixed(1)} ms`).join(', ')}` : ''}`);
  }
  const mb = (x: number) => (x / 2 ** 20).toFixed(1);
  console.log(`heap used: ${mb(before.heapUsed)} MB holding one analysis, ${mb(after.heapUsed)} MB after taking the next in beside it (committed ${mb(before.heapTotal)} -> ${mb(after.heapTotal)} MB, the process ${mb(before.rss)} -> ${mb(after.rss)} MB)`);
  // The server drops the replaced analysis and collects once requests pause: how long that holds the thread.
  held = undefined;
  const c0 = cpuNow();
  collect!();
  const replacedMs = cpuNow() - c0;
  console.log(`the server's full collection of the replaced analysis: ${replacedMs.toFixed(1)} ms CPU; heap used then ${mb(process.memoryUsage().heapUsed)} MB (${taken.circuit?.elements.length ?? 0} elements held)`);
  observer.disconnect();
}

void main();
