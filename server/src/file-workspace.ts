// The server's Workspace: open editor documents first, then files on disk for file: URIs.

import { readFileSync, statSync } from 'node:fs';
import { fileURLToPath, pathToFileURL } from 'node:url';
import type { Workspace } from '../../shared-analysis/src/types';

/** Files larger than this are reported as unreadable rather than read (a stray include of a binary). */
const MAX_FILE_BYTES = 64 * 1024 * 1024;

/**
 * A Workspace over URIs. Open documents (the editor's unsaved text) win over the disk;
 * disk reads are cached until `invalidate` is told the file changed.
 */
export class FileWorkspace implements Workspace {
  private readonly open = new Map<string, string>();
  private readonly disk = new Map<string, string | undefined>();

  /** Sets (or, with undefined, forgets) the editor's text of an open document. */
  setOpen(uri: string, text: string | undefined): void {
    const key = uri;
    if (text === undefined) this.open.delete(key);
    else this.open.set(key, text);
  }

  /** Forgets cached disk contents of these URIs (all of them when none are given). */
  invalidate(uris?: string[]): void {
    if (!uris) this.disk.clear();
    else for (const u of uris) this.disk.delete(u);
  }

  read(uri: string): string | undefined {
    const key = uri;
    const open = this.open.get(key);
    if (open !== undefined) return open;
    if (this.disk.has(key)) return this.disk.get(key);
    const text = readDisk(key);
    this.disk.set(key, text);
    return text;
  }

  resolve(fromUri: string, ref: string): string {
    const cleaned = ref.trim().replace(/^["']|["']$/g, '');
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

function readDisk(uri: string): string | undefined {
  if (!uri.startsWith('file:')) return undefined;
  try {
    const path = fileURLToPath(uri);
    const st = statSync(path);
    if (!st.isFile() || st.size > MAX_FILE_BYTES) return undefined;
    return readFileSync(path, 'utf8');
  } catch {
    return undefined;
  }
}
