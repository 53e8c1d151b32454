// Parser benchmark: times parse() on generated netlists of growing size and on pathological lines, and prints throughput and scaling figures.
//
// Run (a script that prints figures, not a test):
//   npx esbuild test/bench/parse-bench.ts --bundle --platform=node --format=cjs --outfile=/tmp/parse-bench.js && node /tmp/parse-bench.js
// Optional: node --expose-gc /tmp/parse-bench.js also prints the heap each parsed document keeps.
// Environment: QPOINT_PARSE_BENCH_MAX_LINES caps the largest generated netlist (default 200000).
//
// What to read: the parser is meant to be linear in the text, so µs/line should stay roughly flat
// from the smallest to the largest netlist (the "scaling" column is µs/line relative to the
// smallest size), and the pathological cases (one 1 MB line, unclosed braces and quotes, a card
// with thousands of continuation lines) should cost about as much per byte as ordinary text.

import { cpus, loadavg } from 'node:os';
import { parse } from '../../shared-analysis/src/syntax/parser';
import type { ParsedDocument } from '../../shared-analysis/src/syntax/ast';

/** Repeats per measurement: at least MIN_REPS, more while under BUDGET_MS, at most MAX_REPS. */
const MIN_REPS = 3;
const MAX_REPS = 30;
const BUDGET_MS = 2_000;
const MAX_LINES = Number(process.env.QPOINT_PARSE_BENCH_MAX_LINES ?? 200_000);

/**
 * A netlist of about `lines` lines in the dialect's common card kinds: mirror cells of bipolar and MOS
 * devices, sources in several forms, parameters and braced expressions, `+` continuations, comments of
 * each marker, and a parameterised subcircuit instanced throughout. Values vary with the index.
 */
function generatedNetlist(lines: number): string {
  const out: string[] = [
    `Generated parse-bench netlist of about ${lines} lines`,
    '.param vsup=12 rbase=22k gain=2',
    '.model qgen NPN (IS=2e-16 BF=150 VAF=90)',
    '.model pgen PMOS (VTO=-0.6 KP=40u LAMBDA=0.03)',
    '.subckt cell top out ratio=1',
    'RREF top ref {rbase*ratio}',
    'QREF ref ref 0 qgen',
    'QOUT out ref 0 qgen {ratio}',
    '.ends cell',
    'VCC vcc 0 DC {vsup}',
  ];
  let i = 0;
  while (out.length < lines) {
    const k = i++;
    out.push(
      `* cell ${k}: a bipolar mirror, a PMOS pair and a divider`,
      `RR${k} vcc r${k} ${(10 + (k % 37)) / 10}k ; reference leg`,
      `QR${k} r${k} r${k} 0 qgen`,
      `QO${k} o${k} r${k} 0 qgen ${1 + (k % 4)}`,
      `RL${k} vcc o${k} {rbase/${2 + (k % 5)}}`,
      `MP${k} d${k} g${k} vcc vcc pgen`,
      `+ W=${4 + (k % 9)}u L=1u`,
      `XC${k} vcc x${k} cell ratio={gain*${1 + (k % 3)}} $ instanced cell`,
      `I${k} x${k} 0 DC ${(k % 50) / 100 + 0.1}m`,
      `V${k}S s${k} 0 PULSE(0 ${k % 5} 1n 1n 1n 1u 2u)`,
    );
  }
  out.push('.temp 27 85', '.op', '.end');
  return out.join('\n');
}

/** Pathological inputs of about `bytes` bytes each, to show none of them costs more than linear time. */
function pathological(bytes: number): { label: string; text: string }[] {
  const words = Math.floor(bytes / 6);
  const cont = Math.floor(bytes / 12);
  return [
    { label: 'one long element line', text: `t\nR1 a b ${Array.from({ length: words }, (_, i) => `w${i % 1000}`).join(' ')}\n` },
    { label: 'unclosed braces on one line', text: `t\nR1 a b ${'{'.repeat(bytes)}\n` },
    { label: 'unclosed quotes, one per line', text: `t\n${"R1 a b 'x\n".repeat(Math.floor(bytes / 10))}` },
    { label: 'one card, many + lines', text: `t\nR1 a b 1k\n${'+ p=1\n'.repeat(cont * 2)}` },
    { label: 'deep parentheses', text: `t\nV1 a 0 DC ${'('.repeat(bytes / 2)}1${')'.repeat(bytes / 2)}\n` },
    { label: 'unbalanced .subckt nesting', text: `t\n${'.subckt s a\n'.repeat(Math.floor(bytes / 12))}` },
  ];
}

interface Timing {
  medianMs: number;
  minMs: number;
  reps: number;
  doc: ParsedDocument;
}

function time(text: string): Timing {
  // One untimed run so the timed ones see optimised code.
  let doc = parse('bench://parse.cir', text, { hasTitle: true });
  const samples: number[] = [];
  const started = performance.now();
  while (samples.length < MIN_REPS || (samples.length < MAX_REPS && performance.now() - started < BUDGET_MS)) {
    const t0 = performance.now();
    doc = parse('bench://parse.cir', text, { hasTitle: true });
    samples.push(performance.now() - t0);
  }
  samples.sort((a, b) => a - b);
  return { medianMs: samples[Math.floor(samples.length / 2)], minMs: samples[0], reps: samples.length, doc };
}

/** Heap kept by one parsed document, when the script runs with --expose-gc; undefined otherwise. */
function retainedHeapMB(text: string): number | undefined {
  const gc = (globalThis as { gc?: () => void }).gc;
  if (!gc) return undefined;
  gc();
  const before = process.memoryUsage().heapUsed;
  const keep = parse('bench://parse.cir', text, { hasTitle: true });
  gc();
  const after = process.memoryUsage().heapUsed;
  if (keep.cards.length < 0) console.log(''); // keeps `keep` alive across the second gc()
  return (after - before) / 1e6;
}

function pad(s: string | number, n: number): string {
  return String(s).padStart(n);
}

function main(): void {
  console.log(`parse benchmark on ${cpus().length} cores (${cpus()[0]?.model ?? 'unknown CPU'}), load average ${loadavg().map((l) => l.toFixed(2)).join(' ')}`);
  console.log('');
  console.log('Generated netlists');
  console.log(`${pad('lines', 9)} ${pad('MB', 7)} ${pad('cards', 8)} ${pad('median ms', 10)} ${pad('min ms', 9)} ${pad('µs/line', 8)} ${pad('MB/s', 7)} ${pad('scaling', 8)} ${pad('heap MB', 8)} ${pad('reps', 5)}`);
  let baseline: number | undefined;
  for (const size of [2_000, 20_000, 50_000, 100_000, 200_000].filter((s) => s <= MAX_LINES)) {
    const text = generatedNetlist(size);
    const lines = text.split('\n').length;
    const t = time(text);
    const usPerLine = (t.medianMs * 1000) / lines;
    baseline ??= usPerLine;
    const heap = retainedHeapMB(text);
    console.log(
      `${pad(lines, 9)} ${pad((text.length / 1e6).toFixed(2), 7)} ${pad(t.doc.cards.length, 8)} ${pad(t.medianMs.toFixed(1), 10)} ${pad(t.minMs.toFixed(1), 9)} ` +
        `${pad(usPerLine.toFixed(2), 8)} ${pad((text.length / 1e6 / (t.medianMs / 1000)).toFixed(1), 7)} ${pad((usPerLine / baseline).toFixed(2) + '×', 8)} ` +
        `${pad(heap === undefined ? '-' : heap.toFixed(1), 8)} ${pad(t.reps, 5)}`,
    );
    if (t.doc.errors.length > 0) console.log(`  note: the generated netlist drew ${t.doc.errors.length} findings, first: ${t.doc.errors[0].code}`);
  }

  console.log('');
  console.log('Pathological inputs (about 1 MB each)');
  console.log(`${'case'.padEnd(32)} ${pad('MB', 6)} ${pad('findings', 9)} ${pad('median ms', 10)} ${pad('MB/s', 7)}`);
  for (const c of pathological(1_000_000)) {
    const t = time(c.text);
    console.log(
      `${c.label.padEnd(32)} ${pad((c.text.length / 1e6).toFixed(2), 6)} ${pad(t.doc.errors.length, 9)} ${pad(t.medianMs.toFixed(1), 10)} ` +
        `${pad((c.text.length / 1e6 / (t.medianMs / 1000)).toFixed(1), 7)}`,
    );
  }
}

main();
