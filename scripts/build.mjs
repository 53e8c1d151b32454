// Bundles the client, the language server, its analysis worker, the CLI, its batch worker and the solver benchmark with esbuild,
// then writes the CLI's V8 code caches (dist/cli-main.cache, dist/cli-main-large-run.cache) from runs of the CLI on small netlists.
import { build } from 'esbuild';
import { spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, rmSync, writeFileSync } from 'node:fs';
import { tmpdir } from 'node:os';
import { join } from 'node:path';

const common = {
  bundle: true,
  platform: 'node',
  format: 'cjs',
  target: 'node20',
  sourcemap: true,
  logLevel: 'warning',
};

const entries = [
  { in: 'client/src/extension.ts', out: 'dist/client.js', external: ['vscode'] },
  { in: 'server/src/server.ts', out: 'dist/server.js', bin: true },
  { in: 'server/src/analysis-worker.ts', out: 'dist/analysis-worker.js' },
  { in: 'server/src/cli-main.ts', out: 'dist/cli-main.js' },
  { in: 'server/src/cli-loader.ts', out: 'dist/cli.js', bin: true },
  { in: 'server/src/batch-worker.ts', out: 'dist/batch-worker.js' },
  { in: 'bench/solve-bench.ts', out: 'dist/bench-solve.js', optional: true },
];

for (const e of entries) {
  if (e.optional && !existsSync(e.in)) continue;
  await build({
    ...common,
    entryPoints: [e.in],
    outfile: e.out,
    external: e.external ?? [],
    banner: e.bin ? { js: '#!/usr/bin/env node' } : undefined,
  });
}

/**
 * The code cache holds the bytecode of every function the run compiled, so a later run of the same
 * Node skips parsing and compiling them; a run of another Node version (or other V8 flags) finds it
 * rejected and compiles as usual. The netlists: the demo, and a small array of our own (with corners,
 * the spread analysis and the JSON writer, as `check --format json` runs them). The bin starts a run
 * on large netlists again under other V8 flags (server/src/cli-launch.ts), and V8 accepts a cache only
 * under the flags it was made with: a second run, on the array padded with comment lines past that
 * size, writes the cache such runs read (dist/cli-main-large-run.cache).
 */
function writeCodeCaches() {
  const dir = mkdtempSync(join(tmpdir(), 'qpoint-code-cache-'));
  try {
    const lines = ['NPN sink array for the code cache', 'VCC vcc 0 DC 5', '.model QN NPN (IS=1e-15 BF=120 VAF=80)'];
    for (let i = 0; i < 50; i++) lines.push(`RR${i} vcc r${i} ${10 + (i % 7)}k`, `QR${i} r${i} r${i} 0 QN`, `QO${i} o${i} r${i} 0 QN`, `RL${i} vcc o${i} ${1 + (i % 3)}k`);
    const array = join(dir, 'array.cir');
    writeFileSync(array, [...lines, '.end', ''].join('\n'));
    writeCodeCache(['examples/sensor-bias.cir', array], 'dist/cli-main.cache');
    const padding = Array.from({ length: 4096 }, (_, i) => `* padding line ${i}: makes this file as large as a netlist the bin runs under the large-run flags`);
    const large = join(dir, 'large.cir');
    writeFileSync(large, [...lines, ...padding, '.end', ''].join('\n'));
    writeCodeCache(['examples/sensor-bias.cir', large], 'dist/cli-main-large-run.cache');
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}

/** Runs the bin's `check --format json` on `netlists`, which writes the cache its run reads to `cache`. */
function writeCodeCache(netlists, cache) {
  const run = spawnSync(process.execPath, ['dist/cli.js', 'check', '--format', 'json', '--workers', '1', ...netlists], {
    env: { ...process.env, QPOINT_WRITE_CODE_CACHE: '1' },
    stdio: ['ignore', 'ignore', 'inherit'],
  });
  if (run.status === null || run.status > 1 || !existsSync(cache)) throw new Error(`writing the CLI's code cache ${cache} failed (exit ${run.status})`);
}

for (const cache of ['dist/cli-main.cache', 'dist/cli-main-large-run.cache']) rmSync(cache, { force: true });
writeCodeCaches();
