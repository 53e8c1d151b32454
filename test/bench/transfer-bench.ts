// Transfer benchmark: what a value edit costs between the engine and the main thread, stage by stage, in one process.
//
// Run (a script that prints figures, not a test):
//   npx esbuild test/bench/transfer-bench.ts --bundle --platform=node --format=cjs --outfile=/tmp/transfer-bench.js && node /tmp/transfer-bench.js
// Environment:
//   QPOINT_TRANSFER_CELLS, QPOINT_TRANSFER_LADDER  the netlist (default 20 mirror cells and 1,799 ladder resistors: the 2,000-element netlist of bench:editor)
//   QPOINT_TRANSFER_ARRAY                          elements of bench:editor's NPN sink array to use instead (e.g. 20000; 4 a cell)
//   QPOINT_TRANSFER_CORNERS                        1: after each take-in, the corner phase solved as the worker does and its
//                                                  columns and spread put on the taken-in result as the main thread does
//   QPOINT_TRANSFER_EDITS                          single-value edits measured (default 10)
//
// Each edit is analysed as the server's worker does (corners off, the last session's warm start and
// incremental state), then split against what was sent of the last result ("split + prepare": which
// cards, elements and structures travel, and encoding them), its parts built, passed through `v8.serialize` /
// `deserialize` (what `postMessage` does), merged onto the last result and adopted, as the main thread
// does. CPU time per stage (user + system), medians over the edits, and the message's bytes per kind of
// part; the load average is printed first.

import { loadavg } from 'node:os';
import { deserialize, serialize } from 'node:v8';
import { addCorners, analyseSession } from '../../shared-analysis/src/service';
import { adoptKeptCards, partMerger, splitAnalysisLazily } from '../../server/src/analysis-transfer';
import { restoreNameTables } from '../../shared-analysis/src/names';
import { cornerColumns, setCornerColumns } from '../../shared-analysis/src/structures/corner-columns';
import { attachVariation } from '../../shared-analysis/src/variation/index';
import type { Analysis } from '../../shared-analysis/src/analysis';
import { MemoryWorkspace } from '../../shared-analysis/src/types';
// @ts-expect-error: a plain script module without types
import { biasNetlist } from './netlist-generator.mjs';

const cells = Number(process.env.QPOINT_TRANSFER_CELLS ?? 20);
const ladder = Number(process.env.QPOINT_TRANSFER_LADDER ?? 1799);
const arrayElements = Number(process.env.QPOINT_TRANSFER_ARRAY ?? 0);
const withCorners = process.env.QPOINT_TRANSFER_CORNERS === '1';
const edits = Number(process.env.QPOINT_TRANSFER_EDITS ?? 10);
const cpuMs = () => {
  const c = process.cpuUsage();
  return (c.user + c.system) / 1000;
};

/** The NPN sink array of test/bench/editor-latency-bench.mjs (a reference resistor, a diode-connected device, an output device and a load a cell). */
function sinkArray(count: number): { text: string; elements: number } {
  const L = [`NPN sink array, ${count} elements`, 'VCC vcc 0 DC 5', '.model QN NPN (IS=1e-15 BF=120 VAF=80)'];
  for (let i = 0; i < count / 4; i++) L.push(`RR${i} vcc r${i} ${10 + (i % 7)}k`, `QR${i} r${i} r${i} 0 QN`, `QO${i} o${i} r${i} 0 QN`, `RL${i} vcc o${i} ${1 + (i % 3)}k`);
  L.push('.end', '');
  return { text: L.join('\n'), elements: count };
}

const { text, elements } = arrayElements > 0 ? sinkArray(arrayElements) : (biasNetlist({ cells, ladderResistors: ladder }) as { text: string; elements: number });
const lines = text.split('\n');
const editLine = lines.findIndex((l) => /^R\S* /.test(l));
const uri = 'file:///bench/transfer.cir';
const figures = new Map<string, number[]>();
const record = (stage: string, ms: number) => figures.set(stage, [...(figures.get(stage) ?? []), ms]);
let session: ReturnType<typeof analyseSession> | undefined;
let sent: ReturnType<ReturnType<typeof splitAnalysisLazily>['prepare']> | undefined;
let held: Analysis | undefined;
console.log(`qpoint transfer benchmark — ${elements} elements, ${edits} value edits${withCorners ? ', corner phase after each' : ''}; load average ${loadavg().map((x) => x.toFixed(1)).join(' ')}`);
for (let k = 0; k <= edits; k++) {
  if (k > 0) lines[editLine] = lines[editLine]!.replace(/\S+$/, `${10 + ((k + 1) % 5)}.${k % 10}k`);
  const version = lines.join('\n');
  const stage = (name: string, run: () => void) => {
    const t0 = cpuMs();
    run();
    if (k > 0) record(name, cpuMs() - t0);
  };
  stage('engine (analyseSession)', () => {
    session = analyseSession({ uri, text: version, version: k + 1 }, new MemoryWorkspace({ [uri]: version }), { corners: { enabled: false } }, { warmStart: session?.warmStart, previous: session?.incremental, keepIncremental: true });
  });
  let split: ReturnType<typeof splitAnalysisLazily>;
  let nextSent: typeof sent;
  stage('split + prepare', () => {
    split = splitAnalysisLazily(session!.analysis, sent, session!.incremental?.structures.map((k) => k.firstPass));
    nextSent = split.prepare();
  });
  let built: ReturnType<ReturnType<typeof splitAnalysisLazily>['parts'][number]>[] = [];
  stage('parts built', () => (built = split!.parts.map((make) => make())));
  let wire: Buffer;
  stage('serialize (worker)', () => (wire = serialize({ header: split!.header, built })));
  let message: { header: Analysis; built: typeof built };
  stage('deserialize (main thread)', () => (message = deserialize(wire!)));
  let taken: Analysis;
  stage('merge + index + adopt (main thread)', () => {
    taken = restoreNameTables(message.header);
    const merger = partMerger(taken, held);
    for (const part of message.built) for (const _ of merger.steps(part));
    merger.finish();
    adoptKeptCards(taken);
  });
  if (k > 0) {
    record('message size (kB)', wire!.length / 1000);
    const byKind = new Map<string, number>();
    for (const part of built) byKind.set(part.kind, (byKind.get(part.kind) ?? 0) + serialize(part).length / 1000);
    for (const [kind, kB] of byKind) record(`  of which ${kind} (kB)`, kB);
  }
  if (withCorners && session!.nominal && session!.solver) {
    const analysis = session!.analysis;
    stage('corner phase (worker)', () => void addCorners(analysis, { solver: session!.solver!, nominal: session!.nominal!, incremental: session!.incremental }));
    // What the main thread keeps of the phase: each structure's columns and the spread, as the server puts them on.
    for (const s of taken!.structures) {
      const own = analysis.structures.find((w) => w.id === s.id);
      const cols = own && cornerColumns(own);
      if (cols) setCornerColumns(s, cols);
    }
    if (analysis.variation) attachVariation(taken!.structures, analysis.variation);
  }
  sent = nextSent;
  held = taken!;
}
const median = (xs: number[]) => [...xs].sort((a, b) => a - b)[Math.floor((xs.length - 1) / 2)]!;
for (const [name, xs] of figures) console.log(`${name.padEnd(38)} median ${median(xs).toFixed(2).padStart(8)}   (${xs.map((x) => x.toFixed(1)).join(', ')})`);
