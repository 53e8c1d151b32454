// The one harness of the CLI tests: the built `qpoint` CLI run as a child process, and a scratch folder per test file.
import { beforeAll } from 'vitest';
import { spawnSync } from 'node:child_process';
import { existsSync, mkdtempSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { tmpdir } from 'node:os';

export const ROOT = join(__dirname, '../..');
export const CLI = join(ROOT, 'dist/cli.js');

/** Runs the built CLI with `args` (and `env` added to the environment) and returns its exit code and both streams. */
export function runCli(args: string[], cwd = ROOT, timeoutMs = 120000, env: Record<string, string> = {}): { code: number | null; stdout: string; stderr: string } {
  // A buffer for a large document whole (spawnSync's default, 1 MB, would cut it, and two cut documents compare equal).
  const r = spawnSync(process.execPath, [CLI, ...args], { cwd, encoding: 'utf8', timeout: timeoutMs, maxBuffer: 1 << 28, env: { ...process.env, ...env } });
  if ((r.error as NodeJS.ErrnoException | undefined)?.code === 'ENOBUFS') throw new Error(`runCli: the output of ${args.join(' ')} is larger than the buffer`);
  return { code: r.status, stdout: r.stdout, stderr: r.stderr };
}

/**
 * A fresh folder made before the calling file's tests (after checking that the CLI is built),
 * and a writer of files into it. One object per test file: files share loaded modules.
 */
export function scratchFolder(prefix: string): { readonly dir: string; file(name: string, text: string): string } {
  let dir = '';
  beforeAll(() => {
    if (!existsSync(CLI)) throw new Error('dist/cli.js is missing: run `npm run build` first (npm test does).');
    dir = mkdtempSync(join(tmpdir(), prefix));
  });
  return {
    get dir() {
      return dir;
    },
    file(name: string, text: string): string {
      const p = join(dir, name);
      writeFileSync(p, text);
      return p;
    },
  };
}

/**
 * Whether V8 rejects `cache` (a file in dist/) for the CLI bundle in a fresh process started with `nodeFlags`, wrapped and
 * named as the loader (server/src/cli-loader.ts) wraps it: V8 rejects a cache made for other source text or other flags.
 * Gives the child's stdout ('true' or 'false') and stderr.
 */
export function codeCacheRejected(cache: string, nodeFlags: readonly string[] = []): { stdout: string; stderr: string } {
  const bundle = join(ROOT, 'dist/cli-main.js');
  const check = `
    const { readFileSync } = require('node:fs');
    const { Script } = require('node:vm');
    const source = readFileSync(${JSON.stringify(bundle)}, 'utf8');
    const script = new Script('(function (exports, require, module, __filename, __dirname) {' + source + '\\n})', {
      filename: ${JSON.stringify(bundle)},
      cachedData: readFileSync(${JSON.stringify(join(ROOT, 'dist', cache))}),
    });
    process.stdout.write(String(script.cachedDataRejected));`;
  const r = spawnSync(process.execPath, [...nodeFlags, '-e', check], { cwd: ROOT, encoding: 'utf8' });
  return { stdout: r.stdout, stderr: r.stderr };
}
