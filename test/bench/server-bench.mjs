// Language-server benchmark: drives the built server over stdio with generated netlists and prints latency, re-analysis time and memory figures.
//
// Run: npm run bench:server   (builds first). Environment:
//   QPOINT_BENCH_ELEMENTS   elements of the large netlist (default 50000)
//   QPOINT_BENCH_CELLS      mirror cells in it, 10 elements each (default 100); the rest are bias-ladder resistors
//   QPOINT_BENCH_CORNERS    1 to keep the corner re-solves on (default off: 27 extra solves of the large circuit)
//   QPOINT_BENCH_TIMEOUT_S  how long to wait for any one analysis (default 1800)
//   QPOINT_TRACE_MAIN_THREAD 1 to have the server record its main thread's stretches of 1 ms or more and its collections
//                           during the take-in; the slowest answers then print what ran on that thread meanwhile
// Targets (from the performance brief): hover and inlay p99 < 20 ms from the cached analysis,
// 2,000-element re-analysis < 100 ms, peak resident memory < 400 MB for the 50,000-element netlist.

import { spawn } from 'node:child_process';
import { readFileSync, existsSync } from 'node:fs';
import { createRequire } from 'node:module';
import { dirname, join } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';
import { biasNetlist } from './netlist-generator.mjs';

const require = createRequire(import.meta.url);
const rpc = require('vscode-jsonrpc/node');

const here = dirname(fileURLToPath(import.meta.url));
const SERVER = join(here, '../../dist/server.js');
const ELEMENTS = Number(process.env.QPOINT_BENCH_ELEMENTS ?? 50000);
const CELLS = Number(process.env.QPOINT_BENCH_CELLS ?? 100);
const CORNERS = process.env.QPOINT_BENCH_CORNERS === '1';
const TIMEOUT_MS = Number(process.env.QPOINT_BENCH_TIMEOUT_S ?? 1800) * 1000;

if (!existsSync(SERVER)) {
  console.error(`The server bundle ${SERVER} is missing; run npm run build first.`);
  process.exit(1);
}

/** Deterministic pseudo-random numbers (fixed seed), so runs are comparable. */
function rng(seed) {
  let s = seed >>> 0;
  return () => {
    s = (s * 1664525 + 1013904223) >>> 0;
    return s / 2 ** 32;
  };
}

function percentile(sorted, p) {
  if (sorted.length === 0) return NaN;
  const i = Math.min(sorted.length - 1, Math.max(0, Math.ceil((p / 100) * sorted.length) - 1));
  return sorted[i];
}

/** The latency target of hover and inlay hints (ms): their summaries count the answers slower than it. */
const TARGET_MS = 20;

function summary(label, samples, countOverTarget = false) {
  const s = [...samples].sort((a, b) => a - b);
  const f = (x) => (Number.isFinite(x) ? x.toFixed(2) : 'n/a');
  const over = countOverTarget ? `  over ${TARGET_MS} ms: ${s.filter((x) => x > TARGET_MS).length}` : '';
  return `${label.padEnd(46)} n=${String(s.length).padStart(5)}  median ${f(percentile(s, 50))} ms  p99 ${f(percentile(s, 99))} ms  max ${f(s[s.length - 1])} ms${over}`;
}

function memoryOf(pid) {
  try {
    const status = readFileSync(`/proc/${pid}/status`, 'utf8');
    const kb = (key) => Number(new RegExp(`${key}:\\s+(\\d+)`).exec(status)?.[1] ?? NaN);
    return { hwmMB: kb('VmHWM') / 1024, rssMB: kb('VmRSS') / 1024 };
  } catch {
    return { hwmMB: NaN, rssMB: NaN };
  }
}

/** Line and character of the device names of a netlist (the positions a user would hover). */
function devicePositions(text) {
  const out = [];
  text.split('\n').forEach((line, i) => {
    if (/^[QRMD]/i.test(line)) out.push({ line: i, character: 1, kind: line[0].toUpperCase() });
  });
  return out;
}

async function main() {
  const child = spawn(process.execPath, [SERVER, '--stdio'], { stdio: 'pipe' });
  let stderr = '';
  child.stderr.on('data', (d) => (stderr += d));
  const conn = rpc.createMessageConnection(new rpc.StreamMessageReader(child.stdout), new rpc.StreamMessageWriter(child.stdin));
  const published = new Map();
  const waiters = [];
  const logs = [];
  conn.onNotification('textDocument/publishDiagnostics', (p) => {
    published.set(p.uri, p);
    for (const w of [...waiters]) w();
  });
  /** When each log line arrived (ms, performance.now()), by index into `logs`. */
  const logTimes = [];
  conn.onNotification('window/logMessage', (p) => {
    logs.push(p.message);
    logTimes.push(performance.now());
  });
  const settings = { analysisDelayMs: 0, corners: { enabled: CORNERS } };
  conn.onRequest('workspace/configuration', (p) => p.items.map((i) => (i.section === 'qpoint' ? settings : null)));
  conn.onRequest('client/registerCapability', () => null);
  conn.onRequest('window/workDoneProgress/create', () => null);
  conn.onRequest('workspace/inlayHint/refresh', () => null);
  conn.listen();
  await conn.sendRequest('initialize', {
    processId: process.pid,
    rootUri: null,
    capabilities: { workspace: { configuration: true, inlayHint: { refreshSupport: true } }, window: { workDoneProgress: true } },
  });
  await conn.sendNotification('initialized', {});

  /** Resolves when diagnostics for `uri` at `version` arrive (or rejects after the timeout). */
  const diagnosticsFor = (uri, version) =>
    new Promise((resolve, reject) => {
      const check = () => {
        const p = published.get(uri);
        if (p && p.version === version) {
          waiters.splice(waiters.indexOf(check), 1);
          clearTimeout(timer);
          resolve(p);
        }
      };
      const timer = setTimeout(() => reject(new Error(`No diagnostics for ${uri} version ${version} within ${TIMEOUT_MS / 1000} s.\n${stderr}`)), TIMEOUT_MS);
      waiters.push(check);
      check();
    });

  const timed = async (fn) => {
    const t0 = performance.now();
    await fn();
    return performance.now() - t0;
  };

  console.log(`qpoint language-server benchmark — node ${process.version}, server pid ${child.pid}, corners ${CORNERS ? 'on' : 'off'}`);

  // ---- The large netlist ----------------------------------------------------------------
  const big = biasNetlist({ cells: CELLS, ladderResistors: Math.max(0, ELEMENTS - 1 - CELLS * 10) });
  const bigUri = pathToFileURL('/tmp/qpoint-bench/large.cir').href;
  console.log(`Large netlist: ${big.elements} elements (${CELLS} mirror cells, ${big.elements - 1 - CELLS * 10} ladder resistors), ${(big.text.length / 1e6).toFixed(2)} MB of text`);
  const openedAt = performance.now();
  await conn.sendNotification('textDocument/didOpen', { textDocument: { uri: bigUri, languageId: 'netlist', version: 1, text: big.text } });
  const first = await diagnosticsFor(bigUri, 1);
  const firstMs = performance.now() - openedAt;
  console.log(`Time to first diagnostics: ${(firstMs / 1000).toFixed(2)} s (${first.diagnostics.length} diagnostics)`);
  const lastLog = () => logs.filter((l) => l.includes('Analysed')).at(-1) ?? '';
  // A large result's diagnostics go out before the rest of it is taken in; hovers need all of it.
  while (!logs.some((l) => /Analysed large\.cir \(version 1\)/.test(l))) await new Promise((r) => setTimeout(r, 20));
  console.log(`  server: ${lastLog().replace(/^\[qpoint\] /, '')}`);

  const positions = devicePositions(big.text);
  const random = rng(42);
  const pick = () => positions[Math.floor(random() * positions.length)];
  const lines = big.text.split('\n').length;
  const hover = (pos) => conn.sendRequest('textDocument/hover', { textDocument: { uri: bigUri }, position: { line: pos.line, character: pos.character } });
  const inlay = () => {
    const start = Math.floor(random() * (lines - 60));
    return conn.sendRequest('textDocument/inlayHint', { textDocument: { uri: bigUri }, range: { start: { line: start, character: 0 }, end: { line: start + 60, character: 0 } } });
  };

  // The first request after an analysis lands, then steady state once the server has settled.
  const firstHover = await timed(() => hover(pick()));
  console.log(`First hover after the analysis landed: ${firstHover.toFixed(2)} ms`);
  await new Promise((r) => setTimeout(r, 3000));
  const idleHover = [];
  const idleInlay = [];
  for (let k = 0; k < 300; k++) idleHover.push(await timed(() => hover(pick())));
  for (let k = 0; k < 300; k++) idleInlay.push(await timed(() => inlay()));

  // Hammer hovers and inlay hints while a re-analysis of the large netlist runs.
  const editLine = positions.find((p) => p.kind === 'R').line;
  const lineText = big.text.split('\n')[editLine];
  const valueStart = lineText.lastIndexOf(' ') + 1;
  await conn.sendNotification('textDocument/didChange', {
    textDocument: { uri: bigUri, version: 2 },
    contentChanges: [{ range: { start: { line: editLine, character: valueStart }, end: { line: editLine, character: lineText.length } }, text: '21k' }],
  });
  const reanalysisStart = performance.now();
  let publishedAt = 0;
  const second = diagnosticsFor(bigUri, 2).then((p) => {
    publishedAt = performance.now();
    return p;
  });
  // The server publishes a large result's diagnostics before it has taken the rest in: keep asking until
  // it logs that version 2 is wholly in.
  const takenIn = () => logs.findIndex((l) => /Analysed large\.cir \(version 2\)/.test(l));
  const busyHover = [];
  const busyInlay = [];
  while (!publishedAt || takenIn() < 0) {
    const at = performance.now();
    busyHover.push({ at, ms: await timed(() => hover(pick())) });
    // Once the diagnostics are out the result is being taken in: an inlay request after every hover there (one in
    // five before), so that window's inlay p99 rests on a few hundred answers rather than a few dozen.
    if (publishedAt || busyHover.length % 5 === 0) busyInlay.push({ at: performance.now(), ms: await timed(() => inlay()) });
  }
  await second;
  const reMs = publishedAt - reanalysisStart;
  // Split the samples at the moment the worker finished and the main thread began taking the result in.
  const takeIn = Number(/taking the result in took (\d+) ms/.exec(logs[takenIn()])?.[1] ?? 0);
  const boundary = logTimes[takenIn()] - takeIn;
  const during = (list, engine) => list.filter((x) => (engine ? x.at < boundary : x.at >= boundary)).map((x) => x.ms);
  console.log(`Re-analysis of the large netlist after an edit: ${(reMs / 1000).toFixed(2)} s to its diagnostics`);
  console.log(`  server: ${logs[takenIn()].replace(/^\[qpoint\] /, '')}`);
  console.log(summary('Hover, idle (cached analysis, settled)', idleHover, true));
  console.log(summary('Inlay hints (60 lines), idle, settled', idleInlay, true));
  console.log(summary('Hover while the worker analyses', during(busyHover, true), true));
  console.log(summary('Inlay hints while the worker analyses', during(busyInlay, true), true));
  console.log(summary('Hover while the result is taken in', during(busyHover, false), true));
  console.log(summary('Inlay hints while the result is taken in', during(busyInlay, false), true));
  console.log(summary('Hover over the whole re-analysis', busyHover.map((x) => x.ms), true));
  // Which answers decide the take-in's p99: the slowest of each kind, when they were sent (ms after the take-in began)
  // and, with QPOINT_TRACE_MAIN_THREAD=1, what the server's main thread did while they waited.
  let trace = [];
  if (process.env.QPOINT_TRACE_MAIN_THREAD === '1') {
    const traceAt = () => logs.findIndex((l, i) => i > takenIn() && l.includes('Main-thread trace: '));
    while (traceAt() < 0) await new Promise((r) => setTimeout(r, 20));
    trace = JSON.parse(logs[traceAt()].slice(logs[traceAt()].indexOf('Main-thread trace: ') + 19));
  }
  const slowest = (label, list) => {
    const inTakeIn = list.filter((x) => x.at >= boundary).sort((a, b) => b.ms - a.ms).slice(0, 5);
    for (const x of inTakeIn) {
      const from = performance.timeOrigin + x.at;
      const to = from + x.ms;
      const meanwhile = trace
        .filter(([, start, ms]) => start < to && start + ms > from)
        .map(([what, start, ms]) => `${what} ${ms.toFixed(1)} ms at +${(start - from).toFixed(1)}`);
      console.log(`  ${label} ${x.ms.toFixed(2)} ms, sent ${(x.at - boundary).toFixed(0)} ms into the take-in${meanwhile.length ? `; meanwhile: ${meanwhile.join(', ')}` : ''}`);
    }
  };
  slowest('slow take-in hover', busyHover);
  slowest('slow take-in inlay', busyInlay);
  const mem = memoryOf(child.pid);
  console.log(`Server memory after the large netlist (process incl. worker thread): peak ${mem.hwmMB.toFixed(0)} MB (VmHWM), now ${mem.rssMB.toFixed(0)} MB (VmRSS)`);

  // ---- A 2,000-element netlist: edit → diagnostics ----------------------------------------
  await conn.sendNotification('textDocument/didClose', { textDocument: { uri: bigUri } });
  const small = biasNetlist({ cells: 20, ladderResistors: 2000 - 1 - 200 });
  const smallUri = pathToFileURL('/tmp/qpoint-bench/small.cir').href;
  await conn.sendNotification('textDocument/didOpen', { textDocument: { uri: smallUri, languageId: 'netlist', version: 1, text: small.text } });
  await diagnosticsFor(smallUri, 1);
  const smallLines = small.text.split('\n');
  const rLine = smallLines.findIndex((l) => l.startsWith('RA0 '));
  const edits = [];
  const workerMs = [];
  const transferMs = [];
  const sendMs = [];
  for (let k = 0; k < 10; k++) {
    const v = k + 2;
    const text = smallLines[rLine];
    const at = text.lastIndexOf(' ') + 1;
    const ms = await timed(async () => {
      await conn.sendNotification('textDocument/didChange', {
        textDocument: { uri: smallUri, version: v },
        contentChanges: [{ range: { start: { line: rLine, character: at }, end: { line: rLine, character: text.length } }, text: `${4 + (k % 4)}.7k` }],
      });
      smallLines[rLine] = text.slice(0, at) + `${4 + (k % 4)}.7k`;
      await diagnosticsFor(smallUri, v);
    });
    edits.push(ms);
    const m = /in (\d+) ms in the worker, then (\d+) ms preparing it to send; taking the result in took (\d+) ms/.exec(lastLog());
    if (m) {
      workerMs.push(Number(m[1]));
      sendMs.push(Number(m[2]));
      transferMs.push(Number(m[3]));
    }
  }
  console.log(`2,000-element netlist (${small.elements} elements):`);
  console.log(summary('  Edit → re-published diagnostics', edits));
  console.log(summary('  of which the engine in the worker', workerMs));
  console.log(summary('  of which preparing it to send in the worker', sendMs));
  console.log(summary('  of which taking the result in', transferMs));
  const memEnd = memoryOf(child.pid);
  console.log(`Server peak memory over the whole run: ${memEnd.hwmMB.toFixed(0)} MB (VmHWM)`);
  // The server collects a replaced large analysis on its main thread; that pause blocks requests, so show it.
  const pauses = logs.map((m) => /Freed the previous analysis .* in (\d+) ms/.exec(m)?.[1]).filter((x) => x !== undefined).map(Number);
  if (pauses.length) console.log(`Main-thread collections of a replaced large analysis: ${pauses.length}, ${pauses.join(', ')} ms`);
  console.log('Targets: hover/inlay p99 < 20 ms; 2,000-element re-analysis < 100 ms; peak memory < 400 MB at 50,000 elements.');

  await conn.sendRequest('shutdown');
  await conn.sendNotification('exit');
  await new Promise((r) => child.once('exit', r));
  conn.dispose();
}

main().catch((e) => {
  console.error(e instanceof Error ? e.message : String(e));
  process.exit(1);
});
