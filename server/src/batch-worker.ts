// A worker thread of a batch run (`qpoint check|report` over several files, `--workers`): it analyses
// the files the pool in batch.ts hands it, one at a time, and sends back each file's rendered output.

import { parentPort, workerData } from 'node:worker_threads';
import { checkFileForWorker, optionsInWorker, workspaceForWorker } from './cli';

const opts = optionsInWorker((workerData as { options: Parameters<typeof optionsInWorker>[0] }).options);
const workspace = workspaceForWorker(opts);

/**
 * For the CLI tests only: `QPOINT_TEST_WORKER_FAULT=crash:NAME` (or `hang:NAME`) makes the worker
 * given the file whose name ends in NAME throw outside any handler (or loop for ever), so the tests
 * can prove a crashed or hung worker costs that file only. Unset, it does nothing.
 */
function plantedFault(file: string): void {
  const spec = process.env.QPOINT_TEST_WORKER_FAULT;
  if (!spec) return;
  const [kind, name] = [spec.slice(0, spec.indexOf(':')), spec.slice(spec.indexOf(':') + 1)];
  if (!name || !file.endsWith(name)) return;
  if (kind === 'crash') throw new Error('planted crash for the tests');
  if (kind === 'hang') for (;;);
}

parentPort!.on('message', (m: { index: number; path: string }) => {
  plantedFault(m.path);
  parentPort!.postMessage({ index: m.index, outcome: checkFileForWorker(opts, workspace, m.index, m.path) });
});
