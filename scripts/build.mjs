// Bundles the client, the language server, its analysis worker, the CLI, its batch worker and the solver benchmark with esbuild,
// then writes the CLI's V8 code cache (dist/cli-main.cache) from a run of the CLI on two small netlists.
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
 * the spread analysis and the JSON writer, as `check --format json` runs them).
 */
function writeCodeCache() {
  const dir = mkdtempSync(join(tmpdir(), 'qpoint-code-cache-'));
  try {
    const lines = ['NPN sink array for the code cache', 'VCC vcc 0 DC 5', '.model QN NPN (IS=1e-15 BF=120 VAF=80)'];
    for (let i = 0; i < 50; i++) lines.push(`RR${i} vcc r${i} ${10 + (i % 7)}k`, `QR${i} r${i} r${i} 0 QN`, `QO${i} o${i} r${i} 0 QN`, `RL${i} vcc o${i} ${1 + (i % 3)}k`);
    const array = join(dir, 'array.cir');
    writeFileSync(array, [...lines, '.end', ''].join('\n'));
    const run = spawnSync(process.execPath, ['dist/cli.js', 'check', '--format', 'json', '--workers', '1', 'examples/sensor-bias.cir', array], {
      env: { ...process.env, QPOINT_WRITE_CODE_CACHE: 'dist/cli-main.cache' },
      stdio: ['ignore', 'ignore', 'inherit'],
    });
    if (run.status === null || run.status > 1 || !existsSync('dist/cli-main.cache')) throw new Error(`writing the CLI's code cache failed (exit ${run.status})`);
  } finally {
    rmSync(dir, { recursive: true, force: true });
  }
}

rmSync('dist/cli-main.cache', { force: true });
writeCodeCache();
