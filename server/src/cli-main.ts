// Entry point of the `qpoint` bin: runs the CLI on the process's arguments, with a heap sized for the netlists named.
import { spawnSync } from 'node:child_process';
import { statSync } from 'node:fs';
import { totalmem } from 'node:os';
import { getHeapStatistics } from 'node:v8';
import { EXIT, main } from './cli';

/** Netlist bytes beyond which the default heap may not hold the analysis (about 8 KB of heap per element, 25 bytes of text per element). */
const LARGE_INPUT_BYTES = 8 * 1024 * 1024;
/** Set in the environment of the process started with the larger heap, so it does not start another. */
const RELAUNCHED = 'QPOINT_CLI_HEAP_SIZED';

/**
 * The heap (MB) to run with when the named files are large: about 500 bytes of heap per byte of
 * netlist, at most three quarters of the machine's memory; undefined when the default will do.
 */
function heapForInput(args: string[]): number | undefined {
  if (process.env[RELAUNCHED]) return undefined;
  let bytes = 0;
  for (const a of args) {
    if (a.startsWith('-')) continue;
    try {
      const st = statSync(a);
      if (st.isFile()) bytes += st.size;
    } catch {
      // Not a file (an option's value, a missing file): the CLI reports what it must.
    }
  }
  if (bytes < LARGE_INPUT_BYTES) return undefined;
  const wantMB = Math.ceil((bytes * 500) / 2 ** 20);
  const capMB = Math.floor((totalmem() * 0.75) / 2 ** 20);
  const haveMB = getHeapStatistics().heap_size_limit / 2 ** 20;
  const mb = Math.min(wantMB, capMB);
  return mb > haveMB * 1.1 ? mb : undefined;
}

const args = process.argv.slice(2);
const heapMB = heapForInput(args);
if (heapMB !== undefined) {
  // Run again in a process whose heap can hold the analysis; its output and exit code are this one's.
  const r = spawnSync(process.execPath, [`--max-old-space-size=${heapMB}`, ...process.execArgv, process.argv[1]!, ...args], {
    stdio: 'inherit',
    env: { ...process.env, [RELAUNCHED]: '1' },
  });
  process.exitCode = r.status ?? EXIT.failed;
} else {
  // A reader that stops early (`qpoint check … | head`) closes the pipe: end quietly with the exit code already set,
  // as command-line tools do, instead of dying on an unhandled EPIPE with a stack trace.
  for (const stream of [process.stdout, process.stderr]) {
    stream.on('error', (e: NodeJS.ErrnoException) => {
      if (e.code === 'EPIPE') process.exit();
      throw e;
    });
  }

  const internalError = (e: unknown): void => {
    // A defect of qpoint, not of the netlist: say so, and exit with the code CI reads as "qpoint failed".
    process.stderr.write(`qpoint: internal error: ${e instanceof Error ? (e.stack ?? e.message) : String(e)}\n`);
    process.exitCode = EXIT.failed;
  };
  try {
    // A run on worker threads gives a promise of its exit code.
    const code = main(args);
    if (typeof code === 'number') process.exitCode = code;
    else code.then((c) => (process.exitCode = c), internalError);
  } catch (e) {
    internalError(e);
  }
}
