// The server's Workspace: open editor documents first, then files on disk for file: URIs, read under the shared policy.

import * as path from 'node:path';
import { readdirSync } from 'node:fs';
import { fileURLToPath, pathToFileURL } from 'node:url';
import type { Workspace } from '../../shared-analysis/src/types';
import { defaultPolicy, isNetworkPath, PolicyReader, realRoots, type ReadPolicy } from './read-policy';

/**
 * A Workspace over URIs. Open documents (the editor's unsaved text) win over the disk;
 * disk reads follow the `ReadPolicy` (regular files, size and time limits, confined to the
 * allowed roots, nothing at all in an untrusted workspace) and are cached until
 * `invalidate` is told the file changed.
 */
export class FileWorkspace implements Workspace {
  private readonly open = new Map<string, string>();
  private readonly reader: PolicyReader;
  private readonly refusals = new Map<string, string>();

  /** Whether folders may be listed (for the case-insensitive retry of an include): not in an untrusted workspace. */
  private trusted: boolean;

  constructor(policy: ReadPolicy = defaultPolicy()) {
    this.reader = new PolicyReader(policy);
    this.trusted = policy.trusted;
  }

  /** Replaces the reading policy (trust, allowed roots); forgets nothing that was read. */
  setPolicy(policy: ReadPolicy): void {
    this.trusted = policy.trusted;
    this.reader.setPolicy(policy);
  }

  /** Sets (or, with undefined, forgets) the editor's text of an open document. */
  setOpen(uri: string, text: string | undefined): void {
    if (text === undefined) this.open.delete(uri);
    else this.open.set(uri, text);
  }

  /** Forgets cached disk contents of these URIs (all of them when none are given). */
  invalidate(uris?: string[]): void {
    if (!uris) this.reader.invalidate();
    else this.reader.invalidate(uris.map(filePath).filter((p): p is string => p !== undefined));
  }

  /** The workspace as the analysis of root netlist `rootUri` sees it: the root's folder tree is readable too. */
  forRoot(rootUri: string): Workspace {
    const rootPath = filePath(rootUri);
    const extra = rootPath !== undefined && !isNetworkPath(rootPath) ? realRoots([path.dirname(rootPath)]) : [];
    return {
      read: (uri) => this.readWith(uri, extra),
      resolve: (from, ref) => this.resolve(from, ref),
      whyUnreadable: (uri) => this.whyUnreadable(uri),
      list: (folder) => this.list(folder),
    };
  }

  read(uri: string): string | undefined {
    return this.readWith(uri, []);
  }

  private readWith(uri: string, extraRoots: readonly string[]): string | undefined {
    const open = this.open.get(uri);
    if (open !== undefined) return open;
    const file = filePath(uri);
    if (file === undefined) {
      this.refusals.set(uri, uri.startsWith('file:') ? 'is on a network share, which qpoint never reads' : 'is not a file the editor has open, and only file: locations are read from disk');
      return undefined;
    }
    const text = this.reader.read(file, extraRoots);
    if (text === undefined) this.refusals.set(uri, this.reader.whyUnreadable(file) ?? 'cannot be read');
    else this.refusals.delete(uri);
    return text;
  }

  whyUnreadable(uri: string): string | undefined {
    return this.refusals.get(uri);
  }

  /** The names in a local folder (a file: URI), for the engine's case-insensitive retry of an include; nothing in an untrusted workspace. */
  list(folder: string): readonly string[] | undefined {
    if (!this.trusted) return undefined;
    const dir = filePath(folder);
    if (dir === undefined) return undefined;
    try {
      return readdirSync(dir);
    } catch {
      return undefined;
    }
  }

  resolve(fromUri: string, ref: string): string {
    const cleaned = ref.trim().replace(/^["']|["']$/g, '');
    // A network path stays one (file://host/…), so reading refuses it rather than a local look-alike being tried.
    if (isNetworkPath(cleaned)) return `file:${cleaned.replace(/\\/g, '/')}`;
    if (/^[a-z][a-z0-9+.-]*:/i.test(cleaned) && !/^[a-z]:[\\/]/i.test(cleaned)) return cleaned;
    if (cleaned.startsWith('/') || /^[a-z]:[\\/]/i.test(cleaned)) {
      try {
        return pathToFileURL(cleaned).href;
      } catch {
        return cleaned;
      }
    }
    try {
      return new URL(cleaned.replace(/\\/g, '/'), fromUri).href;
    } catch {
      // A base that is not a URL (e.g. an untitled document): resolve against nothing.
      return cleaned;
    }
  }
}

/** The local path of a file: URI; undefined for other schemes and for URIs naming a host (a network share). */
function filePath(uri: string): string | undefined {
  if (!uri.startsWith('file:')) return undefined;
  try {
    const u = new URL(uri);
    if (u.host !== '' && u.host !== 'localhost') return undefined;
    return fileURLToPath(u);
  } catch {
    return undefined;
  }
}
