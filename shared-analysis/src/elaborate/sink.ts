// Collects elaboration findings once each, with severities from the netlist code table.

import { netlistSeverity } from '../checks/netlist';
import type { Finding, RelatedLocation, Span } from '../types';
import { nameTable } from '../names';

/**
 * The findings of one elaboration. A subcircuit instantiated many times reports a problem in its
 * definition once: findings with the same code at the same place are kept only the first time.
 */
export class Sink {
  readonly findings: Finding[] = [];
  private readonly seen = new Set<string>();

  /** Adds a finding unless one with the same code and place exists. */
  add(code: string, message: string, uri: string, span: Span, related?: RelatedLocation[], data?: Record<string, unknown>): void {
    const key = `${code}\u0000${uri}\u0000${span.start}\u0000${span.end}`;
    if (this.seen.has(key)) return;
    this.seen.add(key);
    const f: Finding = { code, severity: netlistSeverity(code), message, uri, span: { start: span.start, end: span.end } };
    if (related && related.length > 0) f.related = related;
    if (data) f.data = jsonSafe(data);
    this.findings.push(f);
  }
}

/** Replaces non-finite numbers (not allowed in finding data) by their text. */
function jsonSafe(data: Record<string, unknown>): Record<string, unknown> {
  const out: Record<string, unknown> = nameTable();
  for (const [k, v] of Object.entries(data)) out[k] = typeof v === 'number' && !Number.isFinite(v) ? String(v) : v;
  return out;
}
