// Names from a netlist are data: tables keyed by them have no prototype, so `constructor`, `__proto__` or `toString` are ordinary names.

/**
 * A table keyed by names a netlist chose (nodes, models, subcircuits, parameters, devices).
 * It has no prototype: reading a missing `constructor` gives undefined, and writing
 * `__proto__` stores a value instead of replacing the prototype. JSON.stringify writes it
 * like any object.
 */
export function nameTable<T>(entries?: { readonly [key: string]: T }): Record<string, T> {
  const table = Object.create(null) as Record<string, T>;
  if (entries) for (const key of Object.keys(entries)) table[key] = entries[key]!;
  return table;
}

/** `table[key]` when the table itself holds `key` (never an inherited `constructor` or `toString`). */
export function own<T>(table: { readonly [key: string]: T } | undefined, key: string): T | undefined {
  return table !== undefined && Object.prototype.hasOwnProperty.call(table, key) ? table[key] : undefined;
}

/** Gives a plain object that came through JSON or a worker message back its prototype-free form, in place. */
export function asNameTable<T>(table: Record<string, T> | undefined): Record<string, T> | undefined {
  if (table && typeof table === 'object' && Object.getPrototypeOf(table) !== null) Object.setPrototypeOf(table, null);
  return table;
}

/**
 * `restoreNameTables` for one structure: a host that takes a result's structures in a few at a time restores each as it
 * arrives (5,000 structures' tables at once held its thread 20–70 ms), then the rest with `{ structures: false }`.
 */
export function restoreStructureTables(s: StructureTables): void {
  if (s.estimate) for (const t of [s.estimate.iout, s.estimate.outputEdge, s.estimate.voltages, s.estimate.voltageTempco]) asNameTable(t);
  asNameTable(s.solved?.iout);
  for (const t of [s.headroom, s.compliance, s.outputResistance, s.roles, s.parts, s.params]) asNameTable(t as Record<string, unknown> | undefined);
  // Corners still held as columns (an accessor) build prototype-free records when first read.
  if (Object.getOwnPropertyDescriptor(s, 'corners')?.get) return;
  for (const c of s.corners ?? []) for (const t of [c.iout, c.headroom, c.voltages]) asNameTable(t);
}

/** The parts of a Structure `restoreStructureTables` restores (kept structural, as `NameTables`). */
interface StructureTables {
  estimate?: { iout?: Record<string, number>; outputEdge?: Record<string, number>; voltages?: Record<string, number>; voltageTempco?: Record<string, number> };
  solved?: { iout?: Record<string, number> };
  headroom?: Record<string, number>;
  compliance?: Record<string, unknown>;
  outputResistance?: Record<string, number>;
  roles?: Record<string, unknown>;
  parts?: Record<string, string>;
  params?: Record<string, number>;
  corners?: readonly { iout?: Record<string, number>; headroom?: Record<string, number>; voltages?: Record<string, number> }[];
}

/** The parts of an Analysis this module needs to know of (kept structural, so names.ts imports no engine types). */
interface NameTables {
  documents?: Record<string, unknown>;
  circuit?: { models?: Record<string, { params?: Record<string, number> }>; params?: Record<string, number> };
  operatingPoint?: { nodes?: Record<string, number>; devices?: Record<string, unknown> };
  structures?: readonly StructureTables[];
  symbols?: { subckts?: readonly { params?: Record<string, unknown> }[] };
}

/**
 * Gives every name-keyed table of an analysis that came through JSON or a worker message
 * (which rebuild plain objects) its prototype-free form again, in place, so lookups by a
 * netlist's names behave as in the engine. Returns the analysis.
 */
export function restoreNameTables<A extends NameTables>(analysis: A, which: { structures: boolean } = { structures: true }): A {
  asNameTable(analysis.documents);
  if (analysis.circuit) {
    asNameTable(analysis.circuit.models);
    asNameTable(analysis.circuit.params);
    for (const m of Object.values(analysis.circuit.models ?? {})) asNameTable(m?.params);
  }
  asNameTable(analysis.operatingPoint?.nodes);
  asNameTable(analysis.operatingPoint?.devices);
  if (which.structures) for (const s of analysis.structures ?? []) restoreStructureTables(s);
  for (const sc of analysis.symbols?.subckts ?? []) asNameTable(sc.params);
  return analysis;
}

/**
 * `s.toLowerCase()`, without a new string for an ASCII name that has no upper-case letter (node names mostly):
 * `toLowerCase` and `toUpperCase` make a new string every time, even when nothing changes.
 */
export function lowerCase(s: string): string {
  for (let i = 0; i < s.length; i++) {
    const c = s.charCodeAt(i);
    if (c > 127 || (c >= 65 && c <= 90)) return s.toLowerCase();
  }
  return s;
}

/** `s.toUpperCase()`, without a new string for an ASCII name that has no lower-case letter (element names mostly). */
export function upperCase(s: string): string {
  for (let i = 0; i < s.length; i++) {
    const c = s.charCodeAt(i);
    if (c > 127 || (c >= 97 && c <= 122)) return s.toUpperCase();
  }
  return s;
}
