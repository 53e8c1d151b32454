// Entry point of the `qpoint` bin: runs the CLI on the process's arguments.
import { EXIT, main } from './cli';

try {
  process.exitCode = main(process.argv.slice(2));
} catch (e) {
  // A defect of qpoint, not of the netlist: say so, and exit with the code CI reads as "qpoint failed".
  process.stderr.write(`qpoint: internal error: ${e instanceof Error ? (e.stack ?? e.message) : String(e)}\n`);
  process.exitCode = EXIT.failed;
}
