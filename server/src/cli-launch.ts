// How the `qpoint` bin starts the CLI for the netlists it is given. A run on large netlists is started again in a
// Node process with V8 settings for a long batch job; every other run goes on in this process. Only Node's own
// modules and the exit codes are used here: the loader decides before it loads the CLI bundle, so a run that
// starts again never compiles the bundle twice.
import { spawn } from 'node:child_process';
import { statSync } from 'node:fs';
import { totalmem } from 'node:os';
import { getHeapStatistics } from 'node:v8';
import { EXIT } from './cli-exit';

/**
 * Netlist bytes from which a run is started again with LARGE_RUN_FLAGS: about 5,000 elements of a bias array
 * (25 bytes of text each). Below it the second start (about a tenth of a second of CPU) would cost more than the
 * flags save; above it they save about half the whole process's CPU (docs/PERFORMANCE.md, "The CLI process").
 */
export const LARGE_RUN_BYTES = 128 * 1024;

/**
 * V8 settings for a large run. `--single-threaded` keeps the compiler and the collector on this thread: on a batch
 * run their helper threads cost more CPU than they save in wall time (about a third of the whole process's CPU went
 * to them at 20,000 elements, for no shorter run). `--no-allocation-site-pretenuring` keeps V8 from moving an
 * allocation site's new objects straight to the old generation once earlier ones survived a young collection: at
 * 100,000 elements it did so for about 80 sites, whose objects were then freed only by a full collection, and whose
 * fields pointing at young objects every young collection had to visit; without it that run takes 2–7 % less CPU and
 * about 60 MB less peak memory. With pretenuring off, 16 MB semi-spaces are as fast as the 64 MB this run used
 * before, at 20,000 and 100,000 elements, for 75–120 MB less peak memory; the size is given, not left to the
 * release: Node 24's own default let the young generation grow to 500 MB at 100,000 elements (a 1.1 GB peak). Node 24
 * still lets it grow past the given size while a full collection's incremental marking runs (a 1.06 GB peak at 100,000
 * elements); turning that marking off cost the 1,000,000-element run 44 % more CPU, so it stays on.
 * `--initial-old-space-size` lets the old generation grow to INITIAL_OLD_SPACE_MB before its first full collection:
 * nearly everything such a run keeps stays alive until it ends, so the collections V8 starts at its default limits
 * (at about 50 and 250 MB of heap at 100,000 elements) marked the whole analysis to free a tenth of it. The value is
 * fixed, not scaled to the netlist, because V8 accepts a code cache only under the flags it was made with.
 * docs/PERFORMANCE.md has the figures.
 */
export const LARGE_RUN_FLAGS: readonly string[] = ['--max-semi-space-size=16', '--single-threaded', '--no-allocation-site-pretenuring', '--initial-old-space-size=512'];

/**
 * The old generation's size before a large run's first full collection, MB (in LARGE_RUN_FLAGS): above the heap a
 * 100,000-element bias array keeps (about 380 MB). Memory is taken only as the run allocates; what a run's garbage
 * adds to its peak is what its young collections promoted and it let go (about 40 MB at 100,000 elements).
 */
const INITIAL_OLD_SPACE_MB = 512;

/** For a heap-sized run, the old generation before its first full collection: bytes of it per byte of netlist. */
const INITIAL_OLD_BYTES_PER_NETLIST_BYTE = 256;

/** Netlist bytes beyond which the default heap may not hold the analysis (about 8 KB of heap per element). */
const HEAP_SIZED_BYTES = 8 * 1024 * 1024;

/** Set in the environment of the process started again, so it does not start another; the loader reads it too. */
export const RELAUNCHED = 'QPOINT_CLI_STARTED_FOR_SIZE';

/** The total size of the files named on the command line (options and names that are not files count nothing). */
export function namedFileBytes(args: readonly string[]): number {
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
  return bytes;
}

/** What the machine offers, passed in so the choice can be checked without a large machine. */
export interface MachineLimits {
  /** Bytes of memory. */
  totalMemory: number;
  /** The heap this process may grow to, bytes. */
  heapLimit: number;
}

/**
 * The Node arguments to start the run again with (before the script and its arguments), or undefined when this
 * process should run it: not already started again, and the named netlists at least LARGE_RUN_BYTES. Beyond
 * HEAP_SIZED_BYTES the heap is also sized: about 500 bytes of heap per byte of netlist, at most three quarters of
 * the machine's memory, when that is more than a tenth above what this process has; and the old generation before
 * the first full collection is 256 bytes per byte of netlist (at most half the heap) when that is above
 * INITIAL_OLD_SPACE_MB.
 */
export function relaunchFlags(inputBytes: number, alreadyRelaunched: boolean, machine: MachineLimits): string[] | undefined {
  if (alreadyRelaunched || inputBytes < LARGE_RUN_BYTES) return undefined;
  const flags = [...LARGE_RUN_FLAGS];
  if (inputBytes >= HEAP_SIZED_BYTES) {
    const mb = Math.min(Math.ceil((inputBytes * 500) / 2 ** 20), Math.floor((machine.totalMemory * 0.75) / 2 ** 20));
    const sized = mb > (machine.heapLimit / 2 ** 20) * 1.1;
    if (sized) flags.push(`--max-old-space-size=${mb}`);
    // The first full collection waits in proportion to the netlist, up to half the heap. Under a value other than
    // INITIAL_OLD_SPACE_MB V8 does not read the code cache, which matters little in a run this long.
    const limitMb = sized ? mb : Math.floor(machine.heapLimit / 2 ** 20);
    const initialMb = Math.min(Math.ceil((inputBytes * INITIAL_OLD_BYTES_PER_NETLIST_BYTE) / 2 ** 20), Math.floor(limitMb / 2));
    if (initialMb > INITIAL_OLD_SPACE_MB) flags[flags.indexOf(`--initial-old-space-size=${INITIAL_OLD_SPACE_MB}`)] = `--initial-old-space-size=${initialMb}`;
  }
  return flags;
}

/** This process's limits. */
export function thisMachine(): MachineLimits {
  return { totalMemory: totalmem(), heapLimit: getHeapStatistics().heap_size_limit };
}

/** Signals a user or a job runner sends to stop a run: passed on to the second process, which then ends both. */
const STOP_SIGNALS: readonly NodeJS.Signals[] = ['SIGINT', 'SIGTERM', 'SIGHUP'];

/**
 * Runs the CLI again in a Node process started with `flags` (then this process's own Node arguments), on the same
 * standard streams; this process ends with its exit code, or by the signal that stopped it.
 */
export function runAgainWith(flags: readonly string[], script: string, args: readonly string[]): void {
  // The handlers are in place before the second process exists: a signal that came while it was being started
  // (it is in the process table from the fork on) would otherwise end this process by default and leave the second
  // running. A handler runs from the event loop, after `spawn` has returned.
  const passOn = (signal: NodeJS.Signals): void => {
    child.kill(signal);
  };
  for (const s of STOP_SIGNALS) process.on(s, passOn);
  const child = spawn(process.execPath, [...flags, ...process.execArgv, script, ...args], {
    stdio: 'inherit',
    env: { ...process.env, [RELAUNCHED]: '1' },
  });
  child.on('error', (e) => {
    process.stderr.write(`qpoint: could not start the analysis process: ${e.message}\n`);
    process.exitCode = EXIT.failed;
  });
  child.on('exit', (code, signal) => {
    for (const s of STOP_SIGNALS) process.off(s, passOn);
    if (signal) process.kill(process.pid, signal);
    else process.exitCode = code ?? EXIT.failed;
  });
}
