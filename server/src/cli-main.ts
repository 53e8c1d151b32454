// Entry point of the `qpoint` bin: runs the CLI on the process's arguments.
import { main } from './cli';

process.exitCode = main(process.argv.slice(2));
