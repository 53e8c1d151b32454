// The `qpoint` bin. A run on large netlists is started again with V8 settings for a batch job (cli-launch.ts);
// otherwise it runs the CLI bundle (dist/cli-main.js) from the V8 code cache the build wrote beside it, so a run
// does not first parse and compile 1.7 MB of script (about a tenth of a second of CPU, docs/PERFORMANCE.md).
import { readFileSync, writeFileSync } from 'node:fs';
import { createRequire } from 'node:module';
import * as path from 'node:path';
import { Script } from 'node:vm';
import { namedFileBytes, relaunchFlags, RELAUNCHED, runAgainWith, thisMachine } from './cli-launch';

const bundle = path.join(__dirname, 'cli-main.js');

/**
 * Set by the build only (scripts/build.mjs): when this run ends, write the code cache it read (or would have read),
 * with every function the run compiled in it.
 */
const CACHE_OUT = 'QPOINT_WRITE_CODE_CACHE';

/** The cache bytes, or undefined when there are none (V8 checks the rest: its version, flags and the source). */
function cachedData(file: string): Buffer | undefined {
  try {
    return readFileSync(file);
  } catch {
    return undefined;
  }
}

/**
 * Runs the bundle in this process. V8 accepts a code cache only under the flags it was made with, so a run started
 * again with the large-run flags reads the cache the build made under them.
 */
function runBundle(relaunched: boolean): void {
  const cacheFile = path.join(__dirname, relaunched ? 'cli-main-large-run.cache' : 'cli-main.cache');
  // The bundle is CommonJS: wrapped as Node wraps a module, with its own require, module, file and folder.
  const source = readFileSync(bundle, 'utf8');
  const script = new Script(`(function (exports, require, module, __filename, __dirname) {${source}\n})`, { filename: bundle, cachedData: cachedData(cacheFile) });
  if (process.env[CACHE_OUT]) process.on('exit', () => writeFileSync(cacheFile, script.createCachedData()));
  const cliModule = { exports: {} };
  (script.runInThisContext() as (...args: unknown[]) => void)(cliModule.exports, createRequire(bundle), cliModule, bundle, __dirname);
}

const args = process.argv.slice(2);
const relaunched = process.env[RELAUNCHED] !== undefined;
const flags = relaunchFlags(namedFileBytes(args), relaunched, thisMachine());
if (flags) runAgainWith(flags, process.argv[1]!, args);
else runBundle(relaunched);
