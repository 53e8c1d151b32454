// Editor-feature benchmark: the cost of each editor feature on a netlist whose size is in its instances,
// a 546-byte-class current-steering DAC array (one cell subcircuit, N instances), at N = 1,024, 4,096 and
// 16,384. Each feature is timed on the same analysis; the printed ratio is the time at 4·N over the time
// at N: about 4 for work linear in instances, about 16 for quadratic work (the port hover was quadratic:
// it searched every instance's elements once per instance).
//
// Run (a script that prints figures, not a test):
//   npx esbuild test/bench/editor-features-bench.ts --bundle --platform=node --format=cjs --outfile=/tmp/editor-features-bench.js && node /tmp/editor-features-bench.js
// Environment: QPOINT_FEATURE_BENCH_SIZES (default "1024,4096,16384").

import { loadavg } from 'node:os';
import { analyse } from '../../shared-analysis/src/service';
import { MemoryWorkspace } from '../../shared-analysis/src/types';
import { hoverAt } from '../../shared-analysis/src/features/hover';
import { documentSymbols } from '../../shared-analysis/src/features/symbols';
import { inlayHints } from '../../shared-analysis/src/features/inlay';
import { definitionAt, referencesAt, prepareRename } from '../../shared-analysis/src/features/navigation';
import { completionsAt } from '../../shared-analysis/src/features/completion';

const URI = '/bench/dac.cir';

/** An invented binary-weighted current-steering array: N cells, each a PMOS source switched to one of two outputs. */
function dacArray(n: number): string {
  const lines = [
    'Current-steering DAC array',
    'VDD vdd 0 3.3',
    'VB vb 0 2.2',
    'RL1 outp 0 50',
    'RL2 outn 0 50',
    '.subckt cell top op on bias sw=1.65',
    'MS tail bias top top pch W=2u L=1u',
    'MP op swp tail top pch W=1u L=0.2u',
    'MN on swn tail top pch W=1u L=0.2u',
    'VSP swp 0 {sw}',
    'VSN swn 0 {3.3-sw}',
    '.ends cell',
  ];
  for (let i = 0; i < n; i++) lines.push(`X${i} vdd outp outn vb cell sw=${i % 2 === 0 ? '1.0' : '2.3'}`);
  lines.push('.model pch PMOS (VTO=-0.5 KP=40u LAMBDA=0.05)', '.end', '');
  return lines.join('\n');
}

function time(run: () => unknown, repeat = 3): number {
  let best = Infinity;
  for (let k = 0; k < repeat; k++) {
    const t0 = performance.now();
    run();
    best = Math.min(best, performance.now() - t0);
  }
  return best;
}

const sizes = (process.env.QPOINT_FEATURE_BENCH_SIZES ?? '1024,4096,16384').split(',').map(Number);
console.log(`load average ${loadavg().map((x) => x.toFixed(1)).join(' ')}; best of 3 runs per feature, milliseconds`);
const rows: Record<string, number[]> = {};
for (const n of sizes) {
  const text = dacArray(n);
  const t0 = performance.now();
  const a = analyse({ uri: URI, text }, new MemoryWorkspace({}), { corners: { enabled: false } });
  const analyseMs = performance.now() - t0;
  const at = (needle: string, inset = 0) => text.indexOf(needle) + inset;
  const features: [string, () => unknown][] = [
    ['hover on a port in .subckt', () => hoverAt(a, URI, at('.subckt cell top', 13))],
    ['hover on a port used inside', () => hoverAt(a, URI, at('MS tail bias top', 15))],
    ['hover on an internal node', () => hoverAt(a, URI, at('MS tail', 4))],
    ['hover on a cell device', () => hoverAt(a, URI, at('MS tail', 0))],
    ['references of the port', () => referencesAt(a, URI, at('.subckt cell top', 13), { includeDeclaration: true })],
    ['definition of an instance subckt', () => definitionAt(a, URI, at('X0 vdd outp outn vb cell', 21))],
    ['prepare rename of the port', () => prepareRename(a, URI, at('.subckt cell top', 13))],
    ['outline', () => documentSymbols(a, URI)],
    ['inlay hints, whole file', () => inlayHints(a, URI, { start: 0, end: text.length }, 'full')],
    ['completion at the end', () => completionsAt(a, URI, text.length)],
  ];
  console.log(`\nN = ${n} instances (${text.length} bytes, ${a.circuit?.elements.length} elements), analyse ${analyseMs.toFixed(0)} ms`);
  for (const [name, run] of features) {
    const ms = time(run);
    (rows[name] ??= []).push(ms);
    console.log(`  ${name.padEnd(34)} ${ms.toFixed(2).padStart(9)} ms`);
  }
}
console.log('\nratio per 4× instances (≈4 linear, ≈16 quadratic):');
for (const [name, list] of Object.entries(rows)) {
  const ratios = list.slice(1).map((ms, k) => (ms / Math.max(list[k]!, 0.01)).toFixed(1));
  console.log(`  ${name.padEnd(34)} ${ratios.join(', ')}`);
}
