// The one file-reading policy of the CLI and the language server: which files a netlist may make qpoint read, and how.

import * as fs from 'node:fs';
import { decodeNetlistText } from '../../shared-analysis/src/syntax/decode';
import * as path from 'node:path';

/**
 * What a netlist may make qpoint read. A netlist is untrusted input (a pull request, a
 * downloaded example): its `.include` lines must not turn qpoint into a way to read, or
 * print, any file the user running it can read.
 */
export interface ReadPolicy {
  /** False in an untrusted editor workspace: nothing is read from disk, only the open documents. */
  trusted: boolean;
  /** Absolute folders whose trees may be read (the netlist's folder, search folders, the workspace). */
  roots: readonly string[];
  /** True when the user lifted the confinement to `roots` (regular files, size and time limits still apply). */
  anywhere: boolean;
  /** Largest file read, in bytes. */
  maxBytes: number;
  /** Longest a read of one file may take, in milliseconds. */
  deadlineMs: number;
}

/** Default size limit: far above any hand-written or generated netlist, far below what exhausts memory. */
export const DEFAULT_MAX_BYTES = 64 * 1024 * 1024;
/** Default read deadline: a local file of the size limit reads in well under a second. */
export const DEFAULT_DEADLINE_MS = 10_000;

/** A policy with the defaults: trusted, confined to `roots`. */
export function defaultPolicy(roots: readonly string[] = []): ReadPolicy {
  return { trusted: true, roots, anywhere: false, maxBytes: DEFAULT_MAX_BYTES, deadlineMs: DEFAULT_DEADLINE_MS };
}

/** The text of a file, or the reason it was not read (a sentence fragment: "is a directory"). */
export type ReadOutcome = { text: string; real: string } | { refused: string };

/** True for paths that name a network share (`\\host\share`, `//host/share`, `\\?\UNC\…`) — never touched, not even stat'ed. */
export function isNetworkPath(p: string): boolean {
  return /^[\\/]{2}/.test(p);
}

/** True when `real` (a resolved path) lies in the tree of one of `roots` (resolved paths too). */
export function insideRoots(real: string, roots: readonly string[]): boolean {
  for (const root of roots) {
    const rel = path.relative(root, real);
    if (rel === '' || (!rel.startsWith('..') && !path.isAbsolute(rel))) return true;
  }
  return false;
}

/** The real paths of `roots` (roots that do not exist are kept as given, so nothing under them matches by accident). */
export function realRoots(roots: readonly string[]): string[] {
  const out: string[] = [];
  for (const r of roots) {
    if (isNetworkPath(r)) continue;
    try {
      out.push(fs.realpathSync.native(path.resolve(r)));
    } catch {
      out.push(path.resolve(r));
    }
  }
  return [...new Set(out)];
}

const CHUNK = 1 << 16;

/**
 * Where `file` really is, if `policy` lets it be read: refuses network paths, untrusted
 * workspaces and anything outside the roots (symbolic links followed first). `roots` must
 * already be real paths (see `realRoots`).
 */
export function locate(file: string, policy: ReadPolicy): { real: string } | { refused: string } {
  if (isNetworkPath(file)) return { refused: NETWORK };
  if (!policy.trusted) return { refused: 'is not read: the workspace is not trusted, so only open documents are analysed' };
  let real: string;
  try {
    real = fs.realpathSync.native(file);
  } catch {
    return { refused: 'does not exist' };
  }
  if (isNetworkPath(real)) return { refused: NETWORK };
  if (!policy.anywhere && !insideRoots(real, policy.roots)) {
    return { refused: OUTSIDE };
  }
  return { real };
}

const NETWORK = 'is on a network share, which qpoint never reads';
const OUTSIDE =
  'lies outside the folders qpoint may read: the netlist’s folder tree, the workspace or current folder, and the include folders ' +
  'you allowed (--include-root on the command line; the setting qpoint.includes.readOutsideWorkspace in the editor)';

/**
 * Reads a located file: refuses anything that is not a regular file (FIFOs, devices,
 * folders), files over the size limit (counted while reading too, since `/proc` files
 * report size 0), reads slower than the deadline, and files that are not text (a NUL byte
 * outside a UTF-16 file).
 */
export function readRegular(real: string, policy: ReadPolicy, now: () => number = Date.now): ReadOutcome {
  let st: fs.Stats;
  try {
    st = fs.statSync(real);
  } catch {
    return { refused: 'cannot be examined' };
  }
  const kind = st.isFile() ? undefined : st.isDirectory() ? 'a folder' : st.isFIFO() ? 'a pipe' : st.isSocket() ? 'a socket' : st.isCharacterDevice() || st.isBlockDevice() ? 'a device' : 'not a regular file';
  if (kind) return { refused: `is ${kind}, not a netlist file` };
  const tooLarge = { refused: `is larger than the ${mebibytes(policy.maxBytes)} limit` };
  if (st.size > policy.maxBytes) return tooLarge;
  let fd: number;
  try {
    // Non-blocking: if the file was swapped for a pipe after the check, opening it does not wait for a writer.
    fd = fs.openSync(real, fs.constants.O_RDONLY | (fs.constants.O_NONBLOCK ?? 0));
  } catch {
    return { refused: 'cannot be opened (no permission?)' };
  }
  try {
    if (!fs.fstatSync(fd).isFile()) return { refused: 'is not a regular file' };
    const started = now();
    const chunks: Buffer[] = [];
    let total = 0;
    for (;;) {
      const buf = Buffer.allocUnsafe(Math.min(CHUNK, policy.maxBytes + 1 - total));
      let n: number;
      try {
        n = fs.readSync(fd, buf, 0, buf.length, null);
      } catch {
        return { refused: 'could not be read' };
      }
      if (n === 0) break;
      chunks.push(n === buf.length ? buf : buf.subarray(0, n));
      total += n;
      if (total > policy.maxBytes) return tooLarge;
      if (now() - started > policy.deadlineMs) return { refused: `took longer than ${policy.deadlineMs / 1000} s to read` };
    }
    const text = decodeText(Buffer.concat(chunks, total));
    if (text === undefined) return { refused: 'holds binary data, not netlist text' };
    return { text, real };
  } finally {
    fs.closeSync(fd);
  }
}

/** `locate` then `readRegular`. */
export function readUnderPolicy(file: string, policy: ReadPolicy, now: () => number = Date.now): ReadOutcome {
  const where = locate(file, policy);
  return 'refused' in where ? where : readRegular(where.real, policy, now);
}

/**
 * Reads files under a policy, keeping what was read (by real path) until told the file
 * changed, and the reason of the last refusal of each path for `whyUnreadable`.
 */
export class PolicyReader {
  private readonly texts = new Map<string, ReadOutcome>();
  private readonly refusals = new Map<string, string>();
  private policy: ReadPolicy;

  constructor(policy: ReadPolicy) {
    this.policy = { ...policy, roots: realRoots(policy.roots) };
  }

  /** Replaces the policy (roots are resolved to real paths here); what was read stays cached. */
  setPolicy(policy: ReadPolicy): void {
    this.policy = { ...policy, roots: realRoots(policy.roots) };
  }

  /** The text of `file`, with `extraRoots` (real paths) allowed besides the policy's roots (and `override.anywhere` instead of the policy's). */
  read(file: string, extraRoots: readonly string[] = [], override: Partial<ReadPolicy> = {}): string | undefined {
    let policy = extraRoots.length ? { ...this.policy, roots: [...this.policy.roots, ...extraRoots] } : this.policy;
    if (override.anywhere !== undefined) policy = { ...policy, anywhere: override.anywhere };
    const where = locate(file, policy);
    let outcome: ReadOutcome;
    if ('refused' in where) outcome = where;
    else {
      outcome = this.texts.get(where.real) ?? readRegular(where.real, policy);
      this.texts.set(where.real, outcome);
    }
    if ('refused' in outcome) {
      this.refusals.set(file, outcome.refused);
      return undefined;
    }
    this.refusals.delete(file);
    return outcome.text;
  }

  whyUnreadable(file: string): string | undefined {
    return this.refusals.get(file);
  }

  /** Forgets what was read (of these paths, or of all). */
  invalidate(files?: readonly string[]): void {
    if (!files) this.texts.clear();
    else
      for (const f of files) {
        this.texts.delete(f);
        try {
          this.texts.delete(fs.realpathSync.native(f));
        } catch {
          // A deleted file: its real path was its own path, or is stale and harmless.
        }
      }
  }
}

/**
 * Netlist text from bytes, through the engine's one decoding (`decodeNetlist`: byte-order marks,
 * UTF-16, Windows-1252 for bytes that are not UTF-8, a Ctrl-Z at the end); undefined for binary
 * data (a NUL byte in a file without a UTF-16 byte-order mark).
 */
export function decodeText(bytes: Buffer): string | undefined {
  const utf16 = bytes.length >= 2 && ((bytes[0] === 0xff && bytes[1] === 0xfe) || (bytes[0] === 0xfe && bytes[1] === 0xff));
  if (!utf16 && bytes.includes(0)) return undefined;
  return decodeNetlistText(bytes);
}

function mebibytes(n: number): string {
  return n >= 1024 * 1024 ? `${+(n / (1024 * 1024)).toPrecision(3)} MiB` : `${n} byte`;
}
