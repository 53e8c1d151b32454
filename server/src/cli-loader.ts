// The `qpoint` bin: runs the CLI bundle (dist/cli-main.js) from the V8 code cache the build wrote beside it, so a
// run does not first parse and compile 1.7 MB of script (about a tenth of a second of CPU, docs/PERFORMANCE.md).
import { readFileSync, writeFileSync } from 'node:fs';
import { createRequire } from 'node:module';
import * as path from 'node:path';
import { Script } from 'node:vm';

const bundle = path.join(__dirname, 'cli-main.js');
const cacheFile = path.join(__dirname, 'cli-main.cache');

/**
 * Set by the build only (scripts/build.mjs): the file to write the code cache to when this run ends, with every
 * function the run compiled in it.
 */
const CACHE_OUT = 'QPOINT_WRITE_CODE_CACHE';

/** The cache bytes, or undefined when there are none (V8 checks the rest: its version, flags and the source). */
function cachedData(): Buffer | undefined {
  try {
    return readFileSync(cacheFile);
  } catch {
    return undefined;
  }
}

// The bundle is CommonJS: wrapped as Node wraps a module, with its own require, module, file and folder.
const source = readFileSync(bundle, 'utf8');
const script = new Script(`(function (exports, require, module, __filename, __dirname) {${source}\n})`, { filename: bundle, cachedData: cachedData() });
const out = process.env[CACHE_OUT];
if (out) process.on('exit', () => writeFileSync(out, script.createCachedData()));
const cliModule = { exports: {} };
(script.runInThisContext() as (...args: unknown[]) => void)(cliModule.exports, createRequire(bundle), cliModule, bundle, __dirname);
