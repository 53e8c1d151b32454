// `npm run fuzz -- [--cases N] [--seed S] [--from K] [--workers W] [--failures FILE]`: runs cases K … K+N−1 of
// the fuzz target (test/fuzz/target.ts) seeded with S, on W worker threads, and prints one line per failure
// (case index, what broke) plus a summary. Exit code 0 when every case held, 1 otherwise, 2 for a bad
// command line. CI runs the default: 20,000 cases of seed 20261202.

import { Worker, isMainThread, parentPort, workerData } from 'node:worker_threads';
import { writeFileSync } from 'node:fs';
import { DEFAULT_SEED, caseText, runCase } from './target';

interface Range {
  seed: number;
  from: number;
  cases: number;
  stride: number;
}

interface Failure {
  index: number;
  error: string;
}

/** Runs every `stride`-th case of the range starting at `from`; reports progress through `tick`. */
function runRange(r: Range, offset: number, tick: (done: number, failure?: Failure) => void): void {
  for (let i = r.from + offset; i < r.from + r.cases; i += r.stride) {
    try {
      runCase(r.seed, i);
      tick(1);
    } catch (e) {
      const error = e instanceof Error ? `${e.name === 'InvariantError' ? '' : `${e.name}: `}${e.message}${e.name === 'InvariantError' ? '' : `\n${e.stack ?? ''}`}` : String(e);
      tick(1, { index: i, error });
    }
  }
}

function usage(message: string): never {
  process.stderr.write(`${message}\nusage: npm run fuzz -- [--cases N] [--seed S] [--from K] [--workers W] [--failures FILE]\n`);
  process.exit(2);
}

function parse(argv: string[]): Range & { workers: number; failuresFile?: string } {
  const out = { seed: DEFAULT_SEED, from: 0, cases: 20_000, stride: 1, workers: 1, failuresFile: undefined as string | undefined };
  for (let k = 0; k < argv.length; k++) {
    const flag = argv[k]!;
    const value = argv[++k];
    if (value === undefined) usage(`${flag} needs a value`);
    if (flag === '--failures') {
      out.failuresFile = value;
      continue;
    }
    if (!/^\d+$/.test(value)) usage(`${flag} takes a whole number, not ${JSON.stringify(value)}`);
    const n = Number(value);
    if (flag === '--cases') out.cases = n;
    else if (flag === '--seed') out.seed = n;
    else if (flag === '--from') out.from = n;
    else if (flag === '--workers') out.workers = Math.max(1, n);
    else usage(`unknown option ${flag}`);
  }
  return out;
}

if (!isMainThread) {
  const { range, offset } = workerData as { range: Range; offset: number };
  let done = 0;
  runRange(range, offset, (n, failure) => {
    done += n;
    if (failure) parentPort!.postMessage({ failure });
    if (done % 500 === 0) parentPort!.postMessage({ done: 500 });
  });
  parentPort!.postMessage({ done: done % 500, finished: true });
} else {
  const opts = parse(process.argv.slice(2));
  const t0 = Date.now();
  const failures: Failure[] = [];
  let done = 0;
  let lastShown = 0;
  const progress = (): void => {
    if (Date.now() - lastShown < 30_000) return;
    lastShown = Date.now();
    process.stdout.write(`fuzz: ${done} of ${opts.cases} cases, ${failures.length} failed, ${((Date.now() - t0) / 1000).toFixed(0)} s\n`);
  };
  const onFailure = (f: Failure): void => {
    failures.push(f);
    process.stdout.write(`fuzz: case ${f.index} (seed ${opts.seed}) failed: ${f.error.split('\n')[0]}\n`);
  };
  const finish = (): void => {
    const seconds = (Date.now() - t0) / 1000;
    failures.sort((x, y) => x.index - y.index);
    if (opts.failuresFile) {
      writeFileSync(opts.failuresFile, JSON.stringify(failures.map((f) => ({ ...f, seed: opts.seed, netlist: caseText(opts.seed, f.index) })), null, 1));
    }
    if (failures.length > 0) {
      const f = failures[0]!;
      process.stdout.write(`\nFirst failure, case ${f.index}; replay it with: npm run fuzz -- --seed ${opts.seed} --from ${f.index} --cases 1\n${f.error}\nNetlist:\n${caseText(opts.seed, f.index)}\n\n`);
    }
    // CPU time of every thread of the process: on a shared machine it says what a case costs better than the wall clock.
    const cpu = process.cpuUsage();
    const cpuMs = (cpu.user + cpu.system) / 1000;
    process.stdout.write(`fuzz: seed ${opts.seed}, cases ${opts.from}..${opts.from + opts.cases - 1}, ${seconds.toFixed(1)} s (${((seconds * 1000) / Math.max(1, opts.cases)).toFixed(2)} ms a case, ${(cpuMs / Math.max(1, opts.cases)).toFixed(2)} ms CPU a case) on ${opts.workers} thread${opts.workers === 1 ? '' : 's'}\n`);
    process.stdout.write(`fuzz: ${opts.cases - failures.length} passed, ${failures.length} failed\n`);
    process.exit(failures.length > 0 ? 1 : 0);
  };
  if (opts.workers === 1) {
    runRange({ ...opts, stride: 1 }, 0, (n, failure) => {
      done += n;
      if (failure) onFailure(failure);
      progress();
    });
    finish();
  } else {
    let running = opts.workers;
    for (let w = 0; w < opts.workers; w++) {
      const worker = new Worker(__filename, { workerData: { range: { ...opts, stride: opts.workers }, offset: w } });
      worker.on('message', (m: { done?: number; failure?: Failure; finished?: boolean }) => {
        if (m.failure) onFailure(m.failure);
        if (m.done) done += m.done;
        progress();
      });
      worker.on('error', (e) => onFailure({ index: -1, error: `a worker stopped: ${e.stack ?? e.message}` }));
      worker.on('exit', () => {
        if (--running === 0) finish();
      });
    }
  }
}
