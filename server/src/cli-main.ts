// The CLI bundle's entry (dist/cli-main.js): runs the CLI on the process's arguments. The `qpoint` bin (cli-loader.ts)
// runs it from its code cache, in a process started for the size of the netlists named.
import { EXIT, main } from './cli';

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
try {
  // A run on worker threads gives a promise of its exit code.
  const code = main(process.argv.slice(2));
  if (typeof code === 'number') process.exitCode = code;
  else code.then((c) => (process.exitCode = c), internalError);
} catch (e) {
  internalError(e);
}
