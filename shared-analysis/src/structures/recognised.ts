// The transistors recognition found for a structure's devices, kept with the structure (not in its JSON) so the stages
// that read the structure next do not look each device up by name again.

import type { Transistor } from './topology';
import type { Structure } from './types';
import { defineCorners } from './corner-columns';
import { nameTable } from '../names';
import { registerLazyTable } from '../output-guard';
import { distinctDevices, noFigures, numbersFit, rangesFit, tableOf } from './held-figures';

/** The fields of a structure recognition makes, in the order the JSON shows them (the checks fill the rest later). */
type RecognisedFields = Omit<Structure, 'corners' | 'solved' | 'estimate' | 'discrepancy' | 'startup' | 'variation'>;

/**
 * The accessors of `headroom`, `compliance`, `outputResistance` and `solved`, one each for every structure (their
 * functions are set in the class's static block, where they can reach its private fields): defined in the same order
 * with the same functions, every structure keeps one layout. Enumerable own properties, so JSON, `Object.keys`,
 * spreading, `copyStructure` and structured cloning read the tables as data; assigning one keeps the value assigned.
 */
const HEADROOM: PropertyDescriptor = { enumerable: true, configurable: true };
const COMPLIANCE: PropertyDescriptor = { enumerable: true, configurable: true };
const OUTPUT_RESISTANCE: PropertyDescriptor = { enumerable: true, configurable: true };
const SOLVED: PropertyDescriptor = { enumerable: true, configurable: true };

/**
 * A structure as recognition makes it. Its transistors are a private field: JSON, `Object.keys`, spreading, structured
 * cloning and `copyStructure` leave it out, so a copy, or a structure sent to another thread, looks its devices up by
 * name as before. (A property keyed by a symbol and defined with `Object.defineProperty` did the same at about 0.4 µs
 * a structure; a private field is stored as the fields are.) Every field is written in the constructor, in the order
 * the JSON shows them (`corners` an accessor, see `defineCorners`), those the checks fill later undefined until then:
 * a structure keeps one layout (V8's map) from recognition to the report.
 */
export class RecognisedStructure {
  readonly #transistors: readonly Transistor[];
  /** The reference node's index. */
  readonly #refNode: number;
  /** The rail a resistor chain hangs from, by node index (-1 without one). */
  #railNode = -1;
  /** Each element of `reference.elements` by element index, in that order (-1 where none was found). */
  #feed: readonly number[] = NO_FEED;
  /**
   * The checks' per-output numbers held without their tables (see `keepChecked`): figure f of output o at
   * `f·n + o` (n outputs, in `outputs` order), NaN where the table has no entry, then the solved IREF.
   */
  #figures: number[] | undefined = undefined;
  /** Which of the tables below `#figures` stands for (`HELD_*` bits); the others are the objects assigned. */
  #held = 0;
  #headroom: Structure['headroom'];
  #compliance: Structure['compliance'];
  #outputResistance: Structure['outputResistance'];
  #solved: Structure['solved'] = undefined;

  // Declared only (no field of their own): the constructor writes them with `this.` in the JSON's order, which is also
  // how V8 sizes the object to hold them all (written through another name, they went to a second object that grew as
  // they were added, and the run made a full collection more at 100k).
  declare id: Structure['id'];
  declare kind: Structure['kind'];
  declare technology: Structure['technology'];
  declare devices: Structure['devices'];
  declare roles: Structure['roles'];
  declare reference: Structure['reference'];
  declare outputs: Structure['outputs'];
  declare parts: Structure['parts'];
  declare params: Structure['params'];
  declare voltages: Structure['voltages'];
  declare instance: Structure['instance'];
  declare headroom: Structure['headroom'];
  declare compliance: Structure['compliance'];
  declare outputResistance: Structure['outputResistance'];
  declare solved: Structure['solved'];
  declare estimate: Structure['estimate'];
  declare discrepancy: Structure['discrepancy'];
  declare startup: Structure['startup'];
  declare variation: Structure['variation'];

  constructor(transistors: readonly Transistor[], refNode: number, f: RecognisedFields) {
    this.#transistors = transistors;
    this.#refNode = refNode;
    this.id = f.id;
    this.kind = f.kind;
    this.technology = f.technology;
    this.devices = f.devices;
    this.roles = f.roles;
    this.reference = f.reference;
    this.outputs = f.outputs;
    this.parts = f.parts;
    this.params = f.params;
    this.voltages = f.voltages;
    this.instance = f.instance;
    // The checks' per-output tables: accessors every structure shares, in the JSON's order (see `keepChecked`).
    this.#headroom = f.headroom;
    this.#compliance = f.compliance;
    this.#outputResistance = f.outputResistance;
    Object.defineProperty(this, 'headroom', HEADROOM);
    Object.defineProperty(this, 'compliance', COMPLIANCE);
    Object.defineProperty(this, 'outputResistance', OUTPUT_RESISTANCE);
    defineCorners(this);
    // What the checks fill later, undefined until then (left out of the JSON as an absent member).
    Object.defineProperty(this, 'solved', SOLVED);
    this.estimate = undefined;
    this.discrepancy = undefined;
    this.startup = undefined;
    this.variation = undefined;
  }

  /** Where the reference branch's feed was found: the rail's node index (-1: none) and each feed element's index. */
  feedFound(railNode: number, elements: readonly number[]): void {
    this.#railNode = railNode;
    this.#feed = elements;
  }

  /**
   * Keeps what the structure check found (`solved`, `headroom`, `compliance`, `outputResistance`, as they would be
   * assigned). A table keyed by the outputs' devices, in their order, whose values are finite numbers (compliance:
   * finite `{ min, max }` ranges) is kept as numbers in one list, and the table is made again, the same names in the
   * same order with the same values, each time it is read: about 25,000 structures at 100,000 elements otherwise kept
   * five tables of a few hundred bytes each for the whole run, copied by the collector on the way. Any other value
   * (an empty table with a prototype, a name twice, a number that is not finite) is kept as assigned.
   */
  keepChecked(
    solved: Structure['solved'],
    headroom: Structure['headroom'],
    compliance: Structure['compliance'],
    outputResistance: Structure['outputResistance'],
  ): void {
    const outs = this.outputs;
    const n = outs.length;
    let figures: number[] | undefined;
    let held = 0;
    if (distinctDevices(outs)) {
      figures = noFigures(FIGURES * n + 1);
      if (solved !== undefined && isSolvedRecord(solved) && Number.isFinite(solved.iref) && numbersFit(solved.iout, outs, figures, SOLVED_IOUT * n)) {
        figures[FIGURES * n] = solved.iref;
        held |= HELD_SOLVED;
      }
      if (numbersFit(headroom, outs, figures, HEADROOM_AT * n)) held |= HELD_HEADROOM;
      if (rangesFit(compliance, outs, figures, COMPLIANCE_MIN_AT * n, COMPLIANCE_MAX_AT * n)) held |= HELD_COMPLIANCE;
      if (numbersFit(outputResistance, outs, figures, RESISTANCE_AT * n)) held |= HELD_RESISTANCE;
    }
    this.#figures = held !== 0 ? figures : undefined;
    this.#held = held;
    this.#solved = held & HELD_SOLVED ? undefined : solved;
    this.#headroom = held & HELD_HEADROOM ? NO_TABLE : headroom;
    this.#compliance = held & HELD_COMPLIANCE ? NO_TABLE : compliance;
    this.#outputResistance = held & HELD_RESISTANCE ? NO_TABLE : outputResistance;
  }

  /** The table of figure `at` (an offset into `#figures`): a new prototype-free table of the outputs that have one. */
  #numbers(at: number): Record<string, number> {
    return tableOf(this.#figures!, at, this.outputs);
  }

  /** Whether `s`'s table `bit` (`HELD_*`) is held as figures: made when read, finite by construction. */
  static holds(s: object, bit: number): boolean {
    return #held in s && ((s as RecognisedStructure).#held & bit) !== 0;
  }

  static {
    HEADROOM.get = function (this: RecognisedStructure) {
      return this.#held & HELD_HEADROOM ? this.#numbers(HEADROOM_AT * this.outputs.length) : this.#headroom;
    };
    HEADROOM.set = function (this: RecognisedStructure, v: Structure['headroom']) {
      this.#held &= ~HELD_HEADROOM;
      this.#headroom = v;
    };
    OUTPUT_RESISTANCE.get = function (this: RecognisedStructure) {
      return this.#held & HELD_RESISTANCE ? this.#numbers(RESISTANCE_AT * this.outputs.length) : this.#outputResistance;
    };
    OUTPUT_RESISTANCE.set = function (this: RecognisedStructure, v: Structure['outputResistance']) {
      this.#held &= ~HELD_RESISTANCE;
      this.#outputResistance = v;
    };
    COMPLIANCE.get = function (this: RecognisedStructure) {
      if (!(this.#held & HELD_COMPLIANCE)) return this.#compliance;
      const outs = this.outputs;
      const n = outs.length;
      const figures = this.#figures!;
      const table: Structure['compliance'] = nameTable();
      for (let o = 0; o < n; o++) {
        const min = figures[COMPLIANCE_MIN_AT * n + o];
        if (!Number.isNaN(min)) table[outs[o].device] = { min, max: figures[COMPLIANCE_MAX_AT * n + o] };
      }
      return table;
    };
    COMPLIANCE.set = function (this: RecognisedStructure, v: Structure['compliance']) {
      this.#held &= ~HELD_COMPLIANCE;
      this.#compliance = v;
    };
    SOLVED.get = function (this: RecognisedStructure) {
      if (!(this.#held & HELD_SOLVED)) return this.#solved;
      const n = this.outputs.length;
      return { iref: this.#figures![FIGURES * n], iout: this.#numbers(SOLVED_IOUT * n) };
    };
    SOLVED.set = function (this: RecognisedStructure, v: Structure['solved']) {
      this.#held &= ~HELD_SOLVED;
      this.#solved = v;
    };
  }

  /** The transistors kept with `s`, when recognition made it. */
  static transistorsOf(s: object): readonly Transistor[] | undefined {
    return #transistors in s ? (s as RecognisedStructure).#transistors : undefined;
  }

  /** The reference node's index kept with `s`, or -1. */
  static refNodeOf(s: object): number {
    return #refNode in s ? (s as RecognisedStructure).#refNode : -1;
  }

  /** The rail's node index kept with `s`, or -1. */
  static railNodeOf(s: object): number {
    return #railNode in s ? (s as RecognisedStructure).#railNode : -1;
  }

  /** The feed's element indices kept with `s`. */
  static feedOf(s: object): readonly number[] {
    return #feed in s ? (s as RecognisedStructure).#feed : NO_FEED;
  }
}

// Where each figure of `keepChecked` sits (times the number of outputs), and the bits of the tables held as figures.
const HEADROOM_AT = 0;
const COMPLIANCE_MIN_AT = 1;
const COMPLIANCE_MAX_AT = 2;
const RESISTANCE_AT = 3;
const SOLVED_IOUT = 4;
const FIGURES = 5;
const HELD_HEADROOM = 1;
const HELD_COMPLIANCE = 2;
const HELD_RESISTANCE = 4;
const HELD_SOLVED = 8;

// The finiteness walk leaves a table held as figures unread (every figure kept is finite); one assigned, it reads.
registerLazyTable('headroom', HEADROOM, (s) => RecognisedStructure.holds(s, HELD_HEADROOM));
registerLazyTable('compliance', COMPLIANCE, (s) => RecognisedStructure.holds(s, HELD_COMPLIANCE));
registerLazyTable('outputResistance', OUTPUT_RESISTANCE, (s) => RecognisedStructure.holds(s, HELD_RESISTANCE));
registerLazyTable('solved', SOLVED, (s) => RecognisedStructure.holds(s, HELD_SOLVED));

/** What a table held as figures leaves in its private field: nothing reads it while the figures stand for it. */
const NO_TABLE = Object.freeze(nameTable<never>());

/** A plain object of exactly `iref` and `iout`, in that order (as the structure check makes it). */
function isSolvedRecord(v: object): v is { iref: number; iout: Record<string, number> } {
  if (Object.getPrototypeOf(v) !== Object.prototype) return false;
  const keys = Object.keys(v);
  return keys.length === 2 && keys[0] === 'iref' && keys[1] === 'iout' && typeof (v as { iref: unknown }).iref === 'number';
}

/**
 * Assigns what the structure check found to `s`: kept as figures where it can be (`RecognisedStructure.keepChecked`),
 * for a structure recognition made; as data members for any other (a copy, a structure from another thread).
 */
export function keepChecked(s: Structure, solved: Structure['solved'], headroom: Structure['headroom'], compliance: Structure['compliance'], outputResistance: Structure['outputResistance']): void {
  if (s instanceof RecognisedStructure) {
    s.keepChecked(solved, headroom, compliance, outputResistance);
    return;
  }
  s.solved = solved;
  s.headroom = headroom;
  s.compliance = compliance;
  s.outputResistance = outputResistance;
}

/** The feed of a structure without one found. */
const NO_FEED: readonly number[] = Object.freeze([]);

/**
 * The transistor recognition found for `s.devices[at]`, or undefined (a structure made or copied elsewhere, or `at`
 * outside the list). A hint only: `Topology.transistorNamed` takes it when it is that topology's view of the name.
 */
export function recognisedTransistor(s: Structure, at: number): Transistor | undefined {
  const list = RecognisedStructure.transistorsOf(s);
  return list !== undefined && at >= 0 && at < list.length ? list[at] : undefined;
}

/** The node index recognition found for `s.reference.node`, or -1: a hint for `Topology.nodeNamed`. */
export function recognisedRefNode(s: Structure): number {
  return RecognisedStructure.refNodeOf(s);
}

/** The node index recognition found for `s.reference.rail.node`, or -1: a hint for `Topology.nodeNamed`. */
export function recognisedRailNode(s: Structure): number {
  return RecognisedStructure.railNodeOf(s);
}

/** The element index recognition found for `s.reference.elements[k]`, or -1: a hint for `Topology.elementNamedAt`. */
export function recognisedFeed(s: Structure, k: number): number {
  const feed = RecognisedStructure.feedOf(s);
  return k >= 0 && k < feed.length ? feed[k] : -1;
}

/** Keeps where recognition found `s`'s feed (see `RecognisedStructure.feedFound`), when recognition made `s`. */
export function keepFeed(s: Structure, railNode: number, elements: readonly number[]): void {
  if (s instanceof RecognisedStructure) s.feedFound(railNode, elements);
}
