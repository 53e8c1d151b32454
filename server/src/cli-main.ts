// The CLI bundle's entry (dist/cli-main.js): runs the CLI on the process's arguments. The `qpoint` bin (cli-loader.ts)
// runs it from its code cache, in a process started for the size of the netlists named.
import { EXIT, main } from './cli';
import { RELAUNCHED } from './cli-launch';
import { setColumnsUncounted } from '../../shared-analysis/src/columns';

// The process the bin started for large netlists runs one batch and ends, and the engine's columns live until then:
// they are made outside V8's external-memory count, so their growth does not start full collections that find
// nothing to free (shared-analysis/src/columns.ts). Worker threads keep their own setting (off).
if (process.env[RELAUNCHED] !== undefined) setColumnsUncounted(true);

// A reader that stops early (`qpoint check … | head`) closes the pipe: end quietly with the exit code already set,
// as command-line tools do, instead of dying on an unhandled EPIPE with a stack trace.
for (const stream of [process.stdout, process.stderr]) {
  stream.on('error', (e: NodeJS.ErrnoException) => {
    if (e.code === 'EPIPE') process.exit();
    throw e;
  });
}

// Into a pipe, Node writes the standard output without blocking and queues what the reader has not taken yet: a run
// writes its whole document before the event loop turns, so all of it (about 100 MB at 100,000 elements) was queued
// as ArrayBuffer memory, which starts full collections of the whole analysis. Written blocking, as Node writes into a
// file, each chunk is out when `write` returns (the run waits for a slow reader instead), and the JSON writer fills
// the same buffer again. A reader that closes the pipe still ends the run as above.
const stdout = process.stdout as unknown as { _type?: string; _handle?: { setBlocking?: (blocking: boolean) => number } };
if (stdout._type === 'pipe') stdout._handle?.setBlocking?.(true);

const internalError = (e: unknown): void => {
  // A defect of qpoint, not of the netlist: say so, and exit with the code CI reads as "qpoint failed".
  process.stderr.write(`qpoint: internal error: ${e instanceof Error ? (e.stack ?? e.message) : String(e)}\n`);
  process.exitCode = EXIT.failed;
};
/**
 * Ends the process as soon as a run in this thread has written everything, with its exit code, instead of letting
 * Node wind down: the event loop's last turn gave V8 the idle moment it waits for to collect the whole heap (a full
 * mark-compact of the finished analysis, about 25 ms of CPU at 20,000 elements), and Node then freed the heap (about
 * as much again at 100,000). Only when nothing is queued on the standard streams: into a file, a terminal or the pipe
 * made blocking above every chunk is out when written; what a pipe on the error stream still holds ends as usual.
 * The `exit` listeners run either way (the build's code cache is written in one, cli-loader.ts).
 */
function endOnceWritten(): void {
  if (process.stdout.writableLength === 0 && process.stderr.writableLength === 0) process.exit();
}

let ran: number | Promise<number> | undefined;
try {
  // A run on worker threads gives a promise of its exit code.
  ran = main(process.argv.slice(2));
  if (typeof ran === 'number') process.exitCode = ran;
  else ran.then((c) => (process.exitCode = c), internalError);
} catch (e) {
  internalError(e);
}
if (typeof ran === 'number') endOnceWritten();
