// Entry point of the `qpoint` bin: runs the CLI on the process's arguments.
import { EXIT, main } from './cli';

// A reader that stops early (`qpoint check … | head`) closes the pipe: end quietly with the exit code already set,
// as command-line tools do, instead of dying on an unhandled EPIPE with a stack trace.
for (const stream of [process.stdout, process.stderr]) {
  stream.on('error', (e: NodeJS.ErrnoException) => {
    if (e.code === 'EPIPE') process.exit();
    throw e;
  });
}

try {
  process.exitCode = main(process.argv.slice(2));
} catch (e) {
  // A defect of qpoint, not of the netlist: say so, and exit with the code CI reads as "qpoint failed".
  process.stderr.write(`qpoint: internal error: ${e instanceof Error ? (e.stack ?? e.message) : String(e)}\n`);
  process.exitCode = EXIT.failed;
}
