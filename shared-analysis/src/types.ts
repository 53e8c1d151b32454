// Core data shared by every layer of the engine: spans, findings and the workspace seam.

/** A half-open range of UTF-16 code-unit offsets into one document's text. */
export interface Span {
  start: number;
  end: number;
}

/** How serious a finding is. Users can override the default per code. */
export type Severity = 'error' | 'warning' | 'info' | 'hint';

/** A place in some document: the document's id (URI or path, as the Workspace names it) and a span. */
export interface Location {
  uri: string;
  span: Span;
}

/** A secondary place a finding points at (the other devices of a mirror, the X line of a subcircuit instance). */
export interface RelatedLocation extends Location {
  message: string;
}

/** One text replacement: replace `span` of document `uri` with `newText`. */
export interface TextEdit {
  uri: string;
  span: Span;
  newText: string;
}

/** A fix a user can apply: a title and the edits it makes. */
export interface Fix {
  title: string;
  /** Marks the fix a client should offer first. */
  preferred?: boolean;
  edits: TextEdit[];
  /**
   * Set when nothing can be offered: why (a sentence). Such a fix has no edits; an editor shows it
   * greyed out with the reason, and the command line prints the reason under the finding.
   */
  disabled?: string;
}

/**
 * One thing the engine wants to tell the user. Every finding has a stable kebab-case
 * code (one module owns each code), a default severity, a message carrying the numbers
 * that justify it, and the data its quick fixes need.
 */
export interface Finding {
  code: string;
  severity: Severity;
  message: string;
  uri: string;
  span: Span;
  related?: RelatedLocation[];
  fixes?: Fix[];
  /** Structured numbers behind the message (JSON-safe: no NaN, no Infinity). */
  data?: Record<string, unknown>;
}

/**
 * The engine's only access to files. Paths are opaque strings chosen by the host
 * (absolute file paths in the CLI, URIs in the server, anything in tests).
 */
export interface Workspace {
  /** The text of a document, or undefined when it does not exist or cannot be read. */
  read(uri: string): string | undefined;
  /** The id of `ref` (as written in an .include or .lib card) relative to the including document. */
  resolve(fromUri: string, ref: string): string;
  /**
   * Why the last `read` of `uri` gave nothing, as a fragment that follows the file's name
   * ("does not exist", "is a pipe, not a netlist file"); undefined when the host does not say.
   */
  whyUnreadable?(uri: string): string | undefined;
  /**
   * The names of the entries of a folder (`folder` is an id ending in `/`, as `resolve` makes
   * them), or undefined when it cannot be listed. Optional: with it, an include that does not
   * exist with its letter case is retried case-insensitively.
   */
  list?(folder: string): readonly string[] | undefined;
}

/** A Workspace over a fixed map of documents; paths resolve like POSIX paths. For tests and demos. */
export class MemoryWorkspace implements Workspace {
  private readonly files = new Map<string, string>();

  constructor(files: Record<string, string> = {}) {
    for (const [k, v] of Object.entries(files)) this.files.set(normalizePosix(k), v);
  }

  set(uri: string, text: string): void {
    this.files.set(normalizePosix(uri), text);
  }

  read(uri: string): string | undefined {
    return this.files.get(normalizePosix(uri));
  }

  list(folder: string): readonly string[] | undefined {
    const dir = normalizePosix(folder);
    const prefix = dir === '/' ? '/' : `${dir}/`;
    const names = new Set<string>();
    for (const k of this.files.keys()) if (k.startsWith(prefix)) names.add(k.slice(prefix.length).split('/')[0]!);
    return names.size > 0 ? [...names] : undefined;
  }

  resolve(fromUri: string, ref: string): string {
    if (ref.startsWith('/')) return normalizePosix(ref);
    const slash = fromUri.lastIndexOf('/');
    const dir = slash >= 0 ? fromUri.slice(0, slash + 1) : '';
    return normalizePosix(dir + ref);
  }
}

/** Collapses `.` and `..` segments and repeated slashes of a POSIX-style path. */
export function normalizePosix(path: string): string {
  const absolute = path.startsWith('/');
  const out: string[] = [];
  for (const seg of path.split('/')) {
    if (seg === '' || seg === '.') continue;
    if (seg === '..') {
      if (out.length > 0 && out[out.length - 1] !== '..') out.pop();
      else if (!absolute) out.push('..');
      continue;
    }
    out.push(seg);
  }
  return (absolute ? '/' : '') + out.join('/');
}
