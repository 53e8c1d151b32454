// Faded text for `.if` branches no instance takes: the server's `qpoint/inactiveText` ranges, kept per
// document and drawn on every visible editor of that document with one decoration of our own look.

import type { InactiveTextParams } from '../../server/src/protocol';

/** How faded inactive text is drawn: about half the normal contrast, so it still reads but recedes. */
export const INACTIVE_OPACITY = '0.45';

type Ranges = InactiveTextParams['ranges'];

/** The latest inactive ranges of each document, by URI string. */
export class InactiveText {
  private readonly byUri = new Map<string, Ranges>();

  /** Takes a notification; returns the URI whose editors need drawing again, or undefined for a malformed one. */
  update(params: unknown): string | undefined {
    const p = params as Partial<InactiveTextParams> | null;
    if (!p || typeof p.uri !== 'string' || !Array.isArray(p.ranges)) return undefined;
    const ranges = p.ranges.filter(isRange);
    if (ranges.length > 0) this.byUri.set(p.uri, ranges);
    else this.byUri.delete(p.uri);
    return p.uri;
  }

  /** The ranges to fade in the document `uri` (none when nothing is known). */
  rangesOf(uri: string): Ranges {
    return this.byUri.get(uri) ?? [];
  }
}

function isPosition(p: unknown): boolean {
  const q = p as { line?: unknown; character?: unknown } | null;
  return !!q && Number.isInteger(q.line) && Number.isInteger(q.character) && (q.line as number) >= 0 && (q.character as number) >= 0;
}

function isRange(r: unknown): r is Ranges[number] {
  const q = r as { start?: unknown; end?: unknown } | null;
  return !!q && isPosition(q.start) && isPosition(q.end);
}
