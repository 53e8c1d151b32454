// Bundles the client, the language server, its analysis worker, the CLI, its batch worker and the solver benchmark with esbuild.
import { build } from 'esbuild';
import { existsSync } from 'node:fs';

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
  { in: 'server/src/cli-main.ts', out: 'dist/cli.js', bin: true },
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
