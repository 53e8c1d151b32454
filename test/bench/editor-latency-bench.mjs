// Editor-latency benchmark: drives the built language server over stdio like an editor and prints how long a
// single-value edit takes to reach fresh diagnostics and fresh corner findings on the 20,000-element sink array,
// and to reach fresh diagnostics on a 2,000-element netlist, with hover and inlay latency while that happens.
//
// Run: npm run bench:editor   (builds first). Environment:
//   QPOINT_LATENCY_ELEMENTS  elements of the large array (default 20000, 4 a cell; 0 skips it)
//   QPOINT_LATENCY_EDITS     single-value edits measured on each netlist (default 8)
// Targets (the performance issue): 20k array, edit → fresh diagnostics ≤ 150 ms median, → fresh corner
// findings ≤ 1 s; 2,000-element edit → diagnostics ≤ 50 ms median; hover and inlay p99 ≤ 20 ms throughout.
// The machine's load average is printed before and after: on a shared machine absolute times are inflated.

import { spawn } from 'node:child_process';
import { existsSync } from 'node:fs';
import { loadavg } from 'node:os';
import { createRequire } from 'node:module';
import { dirname, join } from 'node:path';
import { fileURLToPath, pathToFileURL } from 'node:url';
import { biasNetlist } from './netlist-generator.mjs';

const require = createRequire(import.meta.url);
const rpc = require('vscode-jsonrpc/node');
const here = dirname(fileURLToPath(import.meta.url));
const SERVER = join(here, '../../dist/server.js');
const ELEMENTS = Number(process.env.QPOINT_LATENCY_ELEMENTS ?? 20000);
const EDITS = Number(process.env.QPOINT_LATENCY_EDITS ?? 8);
const TIMEOUT_MS = 600_000;

if (!existsSync(SERVER)) {
  console.error(`The server bundle ${SERVER} is missing; run npm run build first.`);
  process.exit(1);
}

/** The NPN sink array of test/bench/array-bench.ts (per cell a reference resistor, a diode-connected device, an output device and a load). */
function sinkArray(elements) {
  const L = [`NPN sink array, ${elements} elements`, 'VCC vcc 0 DC 5', '.model QN NPN (IS=1e-15 BF=120 VAF=80)'];
  for (let i = 0; i < elements / 4; i++) {
    L.push(`RR${i} vcc r${i} ${10 + (i % 7)}k`, `QR${i} r${i} r${i} 0 QN`, `QO${i} o${i} r${i} 0 QN`, `RL${i} vcc o${i} ${1 + (i % 3)}k`);
  }
  L.push('.end', '');
  return L.join('\n');
}

const load = () => loadavg().map((x) => x.toFixed(1)).join(' ');
const median = (xs) => {
  const s = [...xs].sort((a, b) => a - b);
  return s.length ? s[Math.floor((s.length - 1) / 2)] : NaN;
};
const p99 = (xs) => {
  const s = [...xs].sort((a, b) => a - b);
  return s.length ? s[Math.min(s.length - 1, Math.ceil(0.99 * s.length) - 1)] : NaN;
};
const f = (x) => (Number.isFinite(x) ? x.toFixed(1) : 'n/a');

async function main() {
  const child = spawn(process.execPath, [SERVER, '--stdio'], { stdio: 'pipe' });
  let stderr = '';
  child.stderr.on('data', (d) => (stderr += d));
  const conn = rpc.createMessageConnection(new rpc.StreamMessageReader(child.stdout), new rpc.StreamMessageWriter(child.stdin));
  const waiters = new Set();
  const events = [];
  const notify = () => {
    for (const w of [...waiters]) w();
  };
  conn.onNotification('textDocument/publishDiagnostics', (p) => {
    events.push({ kind: 'diagnostics', uri: p.uri, version: p.version, at: performance.now() });
    notify();
  });
  const analysed = [];
  /** Every log line of the server with when it arrived, to place the slowest requests among the server's doings. */
  const logLines = [];
  conn.onNotification('window/logMessage', (p) => {
    logLines.push({ at: performance.now(), message: p.message.replace(/^\[qpoint\] /, '') });
    const m = /Analysed (\S+) \(version (\d+)\) in (\d+) ms in the worker, then (\d+) ms preparing it to send; taking the result in took (\d+) ms/.exec(p.message);
    if (m) analysed.push({ file: m[1], version: Number(m[2]), worker: Number(m[3]), send: Number(m[4]), takeIn: Number(m[5]) });
    if (p.message.includes('Solved the corners of') || p.message.includes('corner phase')) events.push({ kind: 'corners', at: performance.now(), message: p.message });
    notify();
  });
  const settings = { analysisDelayMs: 0 };
  conn.onRequest('workspace/configuration', (p) => p.items.map((i) => (i.section === 'qpoint' ? settings : null)));
  conn.onRequest('client/registerCapability', () => null);
  conn.onRequest('window/workDoneProgress/create', () => null);
  conn.onRequest('workspace/inlayHint/refresh', () => null);
  conn.listen();
  await conn.sendRequest('initialize', { processId: process.pid, rootUri: null, capabilities: { workspace: { configuration: true, inlayHint: { refreshSupport: true } }, window: { workDoneProgress: true } } });
  await conn.sendNotification('initialized', {});

  /** Resolves with the first event after index `from` that `match` accepts. */
  const eventAfter = (from, match) =>
    new Promise((resolve, reject) => {
      const check = () => {
        for (let k = from; k < events.length; k++) {
          if (match(events[k])) {
            waiters.delete(check);
            clearTimeout(timer);
            resolve(events[k]);
            return;
          }
        }
      };
      const timer = setTimeout(() => reject(new Error(`Timed out waiting for the server.\n${stderr}`)), TIMEOUT_MS);
      waiters.add(check);
      check();
    });

  console.log(`qpoint editor-latency benchmark — node ${process.version}; load average before: ${load()}`);

  async function run(label, text, uri, withCorners) {
    const lines = text.split('\n');
    const editLine = lines.findIndex((l) => /^R\S* /.test(l));
    let from = events.length;
    const opened = performance.now();
    await conn.sendNotification('textDocument/didOpen', { textDocument: { uri, languageId: 'netlist', version: 1, text } });
    const first = await eventAfter(from, (e) => e.kind === 'diagnostics' && e.uri === uri && e.version === 1);
    let line = `${label}: first diagnostics ${f(first.at - opened)} ms`;
    /** Each hover and inlay request: its time, when it was sent, and which edit it waited through. */
    const requests = [];
    if (withCorners) {
      const c = await eventAfter(from, (e) => e.kind === 'corners');
      line += `, first corner findings ${f(c.at - opened)} ms`;
    }
    console.log(line);
    const toDiagnostics = [];
    const toCorners = [];
    const hovers = [];
    const inlays = [];
    const hoverLine = lines.findIndex((l) => /^Q/.test(l));
    for (let k = 0; k < EDITS; k++) {
      const version = k + 2;
      const old = lines[editLine];
      const at = old.lastIndexOf(' ') + 1;
      const value = `${10 + ((k + 1) % 5)}.${k % 10}k`;
      from = events.length;
      const t0 = performance.now();
      await conn.sendNotification('textDocument/didChange', {
        textDocument: { uri, version },
        contentChanges: [{ range: { start: { line: editLine, character: at }, end: { line: editLine, character: old.length } }, text: value }],
      });
      lines[editLine] = old.slice(0, at) + value;
      let done = false;
      const diag = eventAfter(from, (e) => e.kind === 'diagnostics' && e.uri === uri && e.version === version);
      const corners = withCorners ? eventAfter(from, (e) => e.kind === 'corners') : Promise.resolve(undefined);
      const both = Promise.all([diag, corners]).then((r) => ((done = true), r));
      // An editor keeps asking while the analysis runs: hovers and inlay hints, one at a time.
      while (!done) {
        const h0 = performance.now();
        await conn.sendRequest('textDocument/hover', { textDocument: { uri }, position: { line: hoverLine, character: 1 } });
        hovers.push(performance.now() - h0);
        requests.push({ kind: 'hover', ms: hovers.at(-1), at: h0, edit: k + 1, sinceEdit: h0 - t0, nth: hovers.length });
        const i0 = performance.now();
        await conn.sendRequest('textDocument/inlayHint', { textDocument: { uri }, range: { start: { line: hoverLine, character: 0 }, end: { line: hoverLine + 60, character: 0 } } });
        inlays.push(performance.now() - i0);
        requests.push({ kind: 'inlay', ms: inlays.at(-1), at: i0, edit: k + 1, sinceEdit: i0 - t0, nth: inlays.length });
      }
      const [d, c] = await both;
      toDiagnostics.push(d.at - t0);
      if (c) toCorners.push(c.at - t0);
    }
    console.log(`  single-value edit → fresh diagnostics: median ${f(median(toDiagnostics))} ms (${toDiagnostics.map(f).join(', ')})`);
    const mine = analysed.filter((x) => uri.endsWith(x.file) && x.version > 1);
    console.log(`    of which the engine in the worker: median ${f(median(mine.map((x) => x.worker)))} ms; preparing it to send: median ${f(median(mine.map((x) => x.send)))} ms; taking the result in: median ${f(median(mine.map((x) => x.takeIn)))} ms`);
    if (withCorners) console.log(`  single-value edit → fresh corner findings: median ${f(median(toCorners))} ms (${toCorners.map(f).join(', ')})`);
    // With a few dozen answers the p99 is the slowest one; the count over the target says how many there were.
    const over = (xs) => xs.filter((x) => x > 20).length;
    console.log(`  hover while editing: n=${hovers.length} median ${f(median(hovers))} ms p99 ${f(p99(hovers))} ms (over 20 ms: ${over(hovers)}); inlay hints: median ${f(median(inlays))} ms p99 ${f(p99(inlays))} ms (over 20 ms: ${over(inlays)})`);
    // Which requests set the p99s: the slowest ones, with the edit they were sent during and what the server logged
    // while they waited (a collection, a result taken in), so a slow answer can be told from a slow phase.
    const slowest = [...requests].sort((a, b) => b.ms - a.ms).slice(0, 4);
    for (const r of slowest) {
      const meanwhile = logLines.filter((l) => l.at >= r.at && l.at <= r.at + r.ms).map((l) => l.message.slice(0, 200));
      console.log(`    slow ${r.kind} ${f(r.ms)} ms: the ${r.nth}. of its kind, edit ${r.edit}, sent ${f(r.sinceEdit)} ms after the change${meanwhile.length ? `; logged meanwhile: ${meanwhile.join(' | ')}` : ''}`);
    }
    await conn.sendNotification('textDocument/didClose', { textDocument: { uri } });
  }

  if (ELEMENTS > 0) await run(`${ELEMENTS.toLocaleString('en')}-element sink array (corners on)`, sinkArray(ELEMENTS), pathToFileURL('/tmp/qpoint-latency/array.cir').href, true);
  const small = biasNetlist({ cells: 20, ladderResistors: 2000 - 1 - 200 });
  await run('2,000-element netlist (corners on)', small.text, pathToFileURL('/tmp/qpoint-latency/small.cir').href, false);
  console.log(`load average after: ${load()}`);
  console.log('Targets: 20k edit → diagnostics ≤ 150 ms median, → corner findings ≤ 1 s; 2,000-element edit → diagnostics ≤ 50 ms median; hover/inlay p99 ≤ 20 ms.');
  await conn.sendRequest('shutdown');
  await conn.sendNotification('exit');
  await new Promise((r) => child.once('exit', r));
  conn.dispose();
}

main().catch((e) => {
  console.error(e instanceof Error ? e.message : String(e));
  process.exit(1);
});
