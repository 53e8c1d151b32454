// Finds the file an `.include` or `.lib` card names the way designers' netlists expect it found.

import type { Workspace } from '../types';

/** Where an include was found, or where it was looked for. */
export interface IncludeSearch {
  /** The id of the file read; when nothing was found, the id the path names beside the including file. */
  target: string;
  /** The file's text, when one was found. */
  text?: string;
  /** How it was found: as written, with other letter case, in a search folder, or by the tail of an absolute path. */
  how?: 'as-written' | 'letter-case' | 'search-folder' | 'path-tail';
  /** The folders looked in, in order, for the message when nothing was found. */
  searched: string[];
}

/** Deepest tail of an absolute path tried in the search folders (`C:/kits/acme/models/bjt.lib` → `acme/models/bjt.lib`, `models/bjt.lib`, `bjt.lib`). */
const MAX_TAIL_SEGMENTS = 6;

/**
 * Finds the file `ref` (as written in a card of `fromUri`) names:
 * 1. backslashes are read as `/` (`..\\models\\bjt.lib`), except in a network path, which the
 *    workspace refuses as written;
 * 2. the path beside the including file, then (for a relative path) in each of `folders` in order;
 * 3. each of those, when it does not exist with its letter case, retried case-insensitively
 *    (needs `workspace.list`);
 * 4. an absolute path that does not exist is looked up by its tail, longest first, beside the
 *    including file and in `folders`.
 * Never throws; a workspace that throws counts as "not found".
 */
export function findInclude(workspace: Workspace, fromUri: string, ref: string, folders: readonly string[]): IncludeSearch {
  const network = ref.startsWith('\\\\') || ref.startsWith('//');
  const path = network ? ref : ref.replace(/\\/g, '/');
  const absolute = path.startsWith('/') || /^[A-Za-z]:\//.test(path);
  const searched: string[] = [];
  const beside = safeResolve(workspace, fromUri, path);
  searched.push(folderOf(beside));

  const attempt = (id: string, how: IncludeSearch['how']): IncludeSearch | undefined => {
    const text = safeRead(workspace, id);
    if (text !== undefined) return { target: id, text, how, searched };
    if (network) return undefined;
    const other = caseInsensitive(workspace, id);
    if (other !== undefined && other !== id) {
      const t = safeRead(workspace, other);
      if (t !== undefined) return { target: other, text: t, how: 'letter-case', searched };
    }
    return undefined;
  };

  const found = attempt(beside, 'as-written');
  if (found) return found;
  if (network) return { target: beside, searched };
  const bases = folders.map((f) => (f.endsWith('/') ? f : `${f}/`));
  if (!absolute) {
    for (const base of bases) {
      searched.push(base);
      const hit = attempt(safeResolve(workspace, `${base}_`, path), 'search-folder');
      if (hit) return hit;
    }
    return { target: beside, searched };
  }
  const segments = path.split('/').filter((s) => s !== '' && !/^[A-Za-z]:$/.test(s));
  const besideDir = folderOf(safeResolve(workspace, fromUri, '_'));
  const tailBases = [besideDir, ...bases];
  for (const b of bases) searched.push(b);
  for (let k = Math.min(segments.length, MAX_TAIL_SEGMENTS); k >= 1; k--) {
    const tail = segments.slice(-k).join('/');
    for (const base of tailBases) {
      const hit = attempt(safeResolve(workspace, `${base}_`, tail), 'path-tail');
      if (hit) return hit;
    }
  }
  return { target: beside, searched };
}

/** The folder part of an id, with its trailing `/`. */
function folderOf(id: string): string {
  const cut = id.lastIndexOf('/');
  return cut >= 0 ? id.slice(0, cut + 1) : '';
}

function safeRead(workspace: Workspace, id: string): string | undefined {
  try {
    return workspace.read(id);
  } catch {
    return undefined;
  }
}

function safeResolve(workspace: Workspace, fromUri: string, ref: string): string {
  try {
    return workspace.resolve(fromUri, ref);
  } catch {
    return ref;
  }
}

function safeList(workspace: Workspace, folder: string): readonly string[] | undefined {
  try {
    return workspace.list?.(folder);
  } catch {
    return undefined;
  }
}

/**
 * The id of an existing file whose path matches `id` letter for letter when case is ignored:
 * climbs to the deepest folder the workspace can list, then walks down picking each entry,
 * exact spelling first. Undefined when the workspace cannot list folders or nothing matches.
 */
function caseInsensitive(workspace: Workspace, id: string): string | undefined {
  if (!workspace.list) return undefined;
  const uri = /^[a-z][a-z0-9+.-]*:/i.test(id) && !/^[a-z]:\//i.test(id);
  const plain = (s: string): string => {
    if (!uri) return s;
    try {
      return decodeURIComponent(s);
    } catch {
      return s;
    }
  };
  const parts: string[] = [];
  let dir = id;
  for (let climb = 0; climb < 32; climb++) {
    const cut = dir.lastIndexOf('/', dir.endsWith('/') ? dir.length - 2 : dir.length - 1);
    if (cut < 0) return undefined;
    parts.unshift(plain(dir.slice(cut + 1).replace(/\/$/, '')));
    dir = dir.slice(0, cut + 1);
    let listing = safeList(workspace, dir);
    if (!listing) continue;
    let cur = dir;
    for (let p = 0; p < parts.length; p++) {
      const want = parts[p]!;
      const lower = want.toLowerCase();
      const hit = listing.find((n) => n === want) ?? listing.find((n) => n.toLowerCase() === lower);
      if (hit === undefined) return undefined;
      const last = p === parts.length - 1;
      cur = safeResolve(workspace, `${cur}_`, last ? hit : `${hit}/`);
      if (!last) {
        if (!cur.endsWith('/')) cur += '/';
        listing = safeList(workspace, cur);
        if (!listing) return undefined;
      }
    }
    return cur;
  }
  return undefined;
}
