// Transfer benchmark: what a value edit costs between the engine and the main thread, stage by stage, in one process.
//
// Run (a script that prints figures, not a test):
//   npx esbuild test/bench/transfer-bench.ts --bundle --platform=node --format=cjs --outfile=/tmp/transfer-bench.js && node /tmp/transfer-bench.js
// Environment:
//   QPOINT_TRANSFER_CELLS, QPOINT_TRANSFER_LADDER  the netlist (default 20 mirror cells and 1,799 ladder resistors: the 2,000-element netlist of bench:editor)
//   QPOINT_TRANSFER_EDITS                          single-value edits measured (default 10)
//
// Each edit is analysed as the server's worker does (corners off, the last session's warm start and
// incremental state), then split against what was sent of the last result ("split + prepare": which
// cards and elements travel, and encoding them), its parts built, passed through `v8.serialize` /
// `deserialize` (what `postMessage` does), merged onto the last result and adopted, as the main thread
// does. CPU time per stage (user + system), medians over the edits; the load average is printed first.

import { loadavg } from 'node:os';
import { deserialize, serialize } from 'node:v8';
import { analyseSession } from '../../shared-analysis/src/service';
import { adoptKeptCards, partMerger, splitAnalysisLazily } from '../../server/src/analysis-transfer';
import { restoreNameTables } from '../../shared-analysis/src/names';
import type { Analysis } from '../../shared-analysis/src/analysis';
import { MemoryWorkspace } from '../../shared-analysis/src/types';
// @ts-expect-error: a plain script module without types
import { biasNetlist } from './netlist-generator.mjs';

const cells = Number(process.env.QPOINT_TRANSFER_CELLS ?? 20);
const ladder = Number(process.env.QPOINT_TRANSFER_LADDER ?? 1799);
const edits = Number(process.env.QPOINT_TRANSFER_EDITS ?? 10);
const cpuMs = () => {
  const c = process.cpuUsage();
  return (c.user + c.system) / 1000;
};

const { text, elements } = biasNetlist({ cells, ladderResistors: ladder }) as { text: string; elements: number };
const lines = text.split('\n');
const editLine = lines.findIndex((l) => /^R\S* /.test(l));
const uri = 'file:///bench/transfer.cir';
const figures = new Map<string, number[]>();
const record = (stage: string, ms: number) => figures.set(stage, [...(figures.get(stage) ?? []), ms]);
let session: ReturnType<typeof analyseSession> | undefined;
let sent: ReturnType<ReturnType<typeof splitAnalysisLazily>['prepare']> | undefined;
let held: Analysis | undefined;
console.log(`qpoint transfer benchmark — ${elements} elements, ${edits} value edits; load average ${loadavg().map((x) => x.toFixed(1)).join(' ')}`);
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
    split = splitAnalysisLazily(session!.analysis, sent);
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
  if (k > 0) record('message size (kB)', wire!.length / 1000);
  sent = nextSent;
  held = taken!;
}
const median = (xs: number[]) => [...xs].sort((a, b) => a - b)[Math.floor((xs.length - 1) / 2)]!;
for (const [name, xs] of figures) console.log(`${name.padEnd(38)} median ${median(xs).toFixed(2).padStart(8)}   (${xs.map((x) => x.toFixed(1)).join(', ')})`);
