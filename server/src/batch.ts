// Batch runs of the command line: file patterns expanded by qpoint itself, a pool of worker threads, and a progress line on a terminal.

import * as fs from 'node:fs';
import * as path from 'node:path';
import { Worker } from 'node:worker_threads';
import { isNetworkPath } from './read-policy';

/** Whether a command-line word is a pattern (`*`, `?` or `[...]`) rather than a file name. */
export function isPattern(word: string): boolean {
  return /[*?[]/.test(word);
}

/** One path segment of a pattern as a regular expression: `*` any run within a name, `?` one character, `[...]` a class. */
function segmentRegExp(segment: string): RegExp {
  let re = '';
  for (let i = 0; i < segment.length; i++) {
    const c = segment[i]!;
    if (c === '*') re += '[^/]*';
    else if (c === '?') re += '[^/]';
    else if (c === '[') {
      const close = segment.indexOf(']', i + 1);
      if (close < 0) re += '\\[';
      else {
        const body = segment.slice(i + 1, close).replace(/\\/g, '\\\\');
        re += `[${body.startsWith('!') ? '^' + body.slice(1) : body}]`;
        i = close;
      }
    } else re += c.replace(/[.+^${}()|\\]/g, '\\$&');
  }
  return new RegExp(`^${re}$`);
}

/** At most this many files from one pattern, so a stray `**` at the root cannot walk the whole disk. */
export const MAX_PATTERN_FILES = 100_000;

/**
 * The files a pattern names, sorted: `netlists/*.cir`, `boards/**\/*.sp` (`**` is any depth of
 * folders, itself included), `cell?.cir`, `[ab]*.cir`. Hidden folders and files (a leading dot)
 * are matched only by a segment that starts with a dot; symbolic links to folders are not
 * followed. A pattern that matches nothing gives an empty list.
 */
export function expandPattern(pattern: string, cwd = process.cwd()): string[] {
  const normal = pattern.replace(/\\/g, '/');
  const absolute = path.isAbsolute(normal);
  const parts = normal.split('/').filter((p, i) => p !== '' || i === 0);
  let base = absolute ? (parts[0] === '' ? '/' : parts[0]! + '/') : '';
  let k = absolute ? 1 : 0;
  // Literal leading folders are a plain prefix.
  while (k < parts.length - 1 && !isPattern(parts[k]!) && parts[k] !== '**') base += parts[k++] + '/';
  const rest = parts.slice(k);
  const out: string[] = [];
  const walk = (dir: string, i: number): void => {
    if (out.length >= MAX_PATTERN_FILES) return;
    const seg = rest[i]!;
    const last = i === rest.length - 1;
    const here = path.resolve(cwd, dir || '.');
    let entries: fs.Dirent[];
    try {
      entries = fs.readdirSync(here, { withFileTypes: true });
    } catch {
      return;
    }
    entries.sort((a, b) => (a.name < b.name ? -1 : a.name > b.name ? 1 : 0));
    if (seg === '**') {
      if (!last) walk(dir, i + 1);
      for (const e of entries) if (e.isDirectory() && !e.name.startsWith('.')) walk(`${dir}${e.name}/`, i);
      return;
    }
    const re = segmentRegExp(seg);
    for (const e of entries) {
      if (e.name.startsWith('.') && !seg.startsWith('.')) continue;
      if (!re.test(e.name)) continue;
      if (last) {
        if (e.isFile()) out.push(`${dir}${e.name}`);
      } else if (e.isDirectory()) walk(`${dir}${e.name}/`, i + 1);
    }
  };
  if (rest.length) walk(base, 0);
  // Sorted as sh sorts an expansion (IEEE Std 1003.1, 2.13.3), here by code unit.
  return [...new Set(out)].sort((a, b) => (a < b ? -1 : a > b ? 1 : 0));
}

/**
 * The command line's files with patterns expanded by qpoint (for shells that pass them on
 * unexpanded, and for quoted patterns): a word that names an existing file stays as it is; a
 * pattern that matches nothing stays too, so it is reported as a file that cannot be read.
 */
export function expandFiles(words: string[], cwd = process.cwd()): string[] {
  const out: string[] = [];
  for (const w of words) {
    // A network path is never listed (docs/RELIABILITY.md); it stays as written and reading refuses it.
    if (!isPattern(w) || isNetworkPath(w) || fs.existsSync(path.resolve(cwd, w))) {
      out.push(w);
      continue;
    }
    const found = expandPattern(w, cwd);
    if (found.length === 0) out.push(w);
    else for (const f of found) out.push(f);
  }
  return out;
}

/**
 * The progress line of a batch run, for a terminal: `qpoint: 12/40 files, 3.4 s — boards/adc.cir`,
 * cut to `columns` so it never wraps (a wrapped line cannot be rewritten in place).
 */
export function progressLine(done: number, total: number, elapsedMs: number, current: string, columns = 80): string {
  const head = `qpoint: ${done}/${total} files, ${(elapsedMs / 1000).toFixed(1)} s`;
  const full = current ? `${head} — ${current}` : head;
  const width = Math.max(20, columns - 1);
  if ([...full].length <= width) return full;
  const room = width - [...head].length - 4;
  return room > 8 ? `${head} — …${[...current].slice(-room + 1).join('')}` : [...head].slice(0, width).join('');
}

/** Writes the progress line to a terminal's standard error, rewriting it in place; does nothing elsewhere. */
export class Progress {
  private readonly started = Date.now();
  private shown = false;

  constructor(
    private readonly total: number,
    private readonly stream: NodeJS.WriteStream = process.stderr,
  ) {}

  /** Whether a line is drawn at all: only on a terminal, and only for more than one file. */
  get active(): boolean {
    return !!this.stream.isTTY && this.total > 1;
  }

  update(done: number, current: string): void {
    if (!this.active) return;
    this.stream.write(`\r\x1b[2K${progressLine(done, this.total, Date.now() - this.started, current, this.stream.columns || 80)}`);
    this.shown = true;
  }

  /** Clears the line, so the report that follows starts on a clean line. */
  done(): void {
    if (this.shown) this.stream.write('\r\x1b[2K');
    this.shown = false;
  }
}

/** A file of a batch run that a worker did not report on: it stopped (crashed, or ended) or overran its time. */
export interface PoolFailure {
  index: number;
  path: string;
  /** Why, in words: "its worker thread stopped: …", or "it ran past the 600 s time limit of a file …". */
  reason: string;
}

export interface PoolOptions<T> {
  /** The worker's script: it answers each `{ index, path }` message with `{ index, outcome }`. */
  script: string;
  workerData: unknown;
  /** Threads to run at once (at least 1, never more than the files). */
  workers: number;
  files: readonly string[];
  /** Wall-clock time one file may take in its worker; past it the worker is stopped and the file reported. */
  fileTimeLimitMs: number;
  /** Called when a file is handed to a worker (for the progress line). */
  started?(index: number, done: number): void;
  /** The outcome to report for a file whose worker failed it. */
  failed(f: PoolFailure): T;
}

/**
 * Runs the files on a pool of worker threads, one file per worker at a time, and gives their
 * outcomes in the files' order whatever order they finish in. A worker that crashes, ends or
 * runs past the time limit of a file costs that file only: it is reported through `failed` and a
 * fresh worker takes the next file.
 */
export function runPool<T>(o: PoolOptions<T>): Promise<T[]> {
  const outcomes: T[] = new Array(o.files.length);
  let next = 0;
  let done = 0;
  let live = 0;
  return new Promise((resolve) => {
    const start = (): void => {
      if (next >= o.files.length) return;
      live++;
      const worker = new Worker(o.script, { workerData: o.workerData, stdout: false, stderr: false });
      let current = -1;
      let timer: NodeJS.Timeout | undefined;
      let finished = false;
      const give = (): void => {
        if (next >= o.files.length) {
          finished = true;
          void worker.terminate();
          return;
        }
        current = next++;
        o.started?.(current, done);
        timer = setTimeout(() => {
          fail(`it ran past the ${o.fileTimeLimitMs / 1000} s time limit of a file (--file-time-limit), so its worker thread was stopped`);
          void worker.terminate();
        }, o.fileTimeLimitMs);
        worker.postMessage({ index: current, path: o.files[current] });
      };
      /** The file in hand is reported as failed; this worker is done with, and a fresh one carries on. */
      const fail = (reason: string): void => {
        if (finished) return;
        finished = true;
        if (timer) clearTimeout(timer);
        if (current >= 0 && outcomes[current] === undefined) {
          outcomes[current] = o.failed({ index: current, path: o.files[current]!, reason });
          done++;
        }
        current = -1;
      };
      worker.on('message', (m: { index: number; outcome: T }) => {
        if (finished || m.index !== current) return;
        clearTimeout(timer);
        outcomes[current] = m.outcome;
        done++;
        give();
      });
      worker.on('error', (e) => fail(`its worker thread stopped: ${e instanceof Error ? e.message : String(e)}`));
      worker.on('exit', (code) => {
        fail(`its worker thread ended with exit code ${code}`);
        live--;
        if (next < o.files.length) start();
        else if (live === 0) resolve(outcomes);
      });
      give();
    };
    for (let w = 0; w < Math.max(1, Math.min(o.workers, o.files.length)); w++) start();
  });
}
