// The transistors recognition found for a structure's devices, kept with the structure (not in its JSON) so the stages
// that read the structure next do not look each device up by name again.

import type { Transistor } from './topology';
import type { Estimate, Structure, StructureRole } from './types';
import { defineCorners } from './corner-columns';
import { nameTable } from '../names';
import { registerLazyTable } from '../output-guard';
import { distinctDevices, noFigures, numbersFit, tableOf } from './held-figures';

/** The fields of a structure recognition makes, in the order the JSON shows them (the checks fill the rest later). */
type RecognisedFields = Omit<Structure, 'corners' | 'solved' | 'estimate' | 'discrepancy' | 'startup' | 'variation'>;

/**
 * The accessors of `headroom`, `compliance`, `outputResistance`, `solved` and `estimate`, one each for every structure
 * (their functions are set in the class's static block, where they can reach its private fields): defined in the same
 * order with the same functions, every structure keeps one layout. Enumerable own properties, so JSON, `Object.keys`,
 * spreading, `copyStructure` and structured cloning read them as data; assigning one keeps the value assigned.
 */
const HEADROOM: PropertyDescriptor = { enumerable: true, configurable: true };
const COMPLIANCE: PropertyDescriptor = { enumerable: true, configurable: true };
const OUTPUT_RESISTANCE: PropertyDescriptor = { enumerable: true, configurable: true };
const SOLVED: PropertyDescriptor = { enumerable: true, configurable: true };
const ESTIMATE: PropertyDescriptor = { enumerable: true, configurable: true };
const ROLES: PropertyDescriptor = { enumerable: true, configurable: true };

/**
 * The roles a structure's devices can have, each coded by its position plus one in four bits of `#roleCodes`, the
 * first device's lowest: up to seven devices in one small integer (no object).
 */
const ROLE_NAMES: readonly StructureRole[] = ['reference', 'output', 'lower-diode', 'lower-partner', 'helper', 'cascode', 'cascode-bias', 'pass', 'reference-diode', 'vbe'];
/** Most devices whose roles `#roleCodes` holds. */
const CODED_DEVICES = 7;

/**
 * Where the structure check's figures sit in a structure's list of them (`checkedFigures`), n the number of outputs:
 * output o's figure of block b at `b·n + o`, then the structure's own figures from `PER_OUTPUT·n`. NaN where a table
 * has no entry for the output.
 */
export const FIGURE = {
  /** Per output: headroom (V), the compliance range's ends (V), output resistance (Ω), solved and estimated current (A), the estimate's output edge (V). */
  HEADROOM: 0,
  COMPLIANCE_MIN: 1,
  COMPLIANCE_MAX: 2,
  RESISTANCE: 3,
  SOLVED_IOUT: 4,
  ESTIMATE_IOUT: 5,
  ESTIMATE_EDGE: 6,
  PER_OUTPUT: 7,
  /** After the outputs' blocks: solved IREF, the estimate's IREF, VBE (VGS), 0.7 V-shortcut IREF and supply (available, needed). */
  SOLVED_IREF: 0,
  ESTIMATE_IREF: 1,
  ESTIMATE_VCONTROL: 2,
  ESTIMATE_SHORTCUT: 3,
  ESTIMATE_AVAILABLE: 4,
  ESTIMATE_NEEDED: 5,
  OWN: 6,
} as const;

/** Bits of what a structure holds as figures (`keepChecked`): a table or record each, and the estimate's optional members. */
export const HELD = {
  HEADROOM: 1,
  COMPLIANCE: 2,
  RESISTANCE: 4,
  SOLVED: 8,
  ESTIMATE: 16,
  /** The estimate has a 0.7 V-shortcut IREF, a supply, output edges (each undefined without its bit). */
  ESTIMATE_SHORTCUT: 32,
  ESTIMATE_SUPPLY: 64,
  ESTIMATE_EDGE: 128,
} as const;

/**
 * A structure as recognition makes it. Its transistors are a private field: JSON, `Object.keys`, spreading, structured
 * cloning and `copyStructure` leave it out, so a copy, or a structure sent to another thread, looks its devices up by
 * name as before. (A property keyed by a symbol and defined with `Object.defineProperty` did the same at about 0.4 µs
 * a structure; a private field is stored as the fields are.) Every field is written in the constructor, in the order
 * the JSON shows them (`corners` an accessor, see `defineCorners`), those the checks fill later undefined until then:
 * a structure keeps one layout (V8's map) from recognition to the report.
 */
export class RecognisedStructure {
  /**
   * The transistors, in `devices` order: the first two in fields of their own (most structures have no more: no list
   * kept for them), every one in `#all` when there are more.
   */
  readonly #first: Transistor | undefined;
  readonly #second: Transistor | undefined;
  readonly #all: readonly Transistor[] | undefined;
  /** The reference node's index. */
  readonly #refNode: number;
  /** The rail a resistor chain hangs from, by node index (-1 without one). */
  #railNode = -1;
  /** Each element of `reference.elements` by element index, in that order (-1 where none was found); a feed of one element as its index alone. */
  #feed: readonly number[] | number = NO_FEED;
  /**
   * What the structure check found, held as numbers where it could be (see `keepChecked`; `FIGURE` says where each
   * figure sits), and which tables and records they stand for (`HELD` bits); the others are the values assigned.
   */
  #figures: number[] | undefined = undefined;
  #held = 0;
  #headroom: Structure['headroom'];
  #compliance: Structure['compliance'];
  #outputResistance: Structure['outputResistance'];
  #solved: Structure['solved'] = undefined;
  #estimate: Structure['estimate'] = undefined;
  /** The devices' roles, coded (see `ROLE_NAMES`), when they are held so; -1 when `#roles` holds them as given. */
  #roleCodes = -1;
  #roles: Structure['roles'] = undefined;
  /** A held estimate's members that are not numbers. */
  #irefFrom: Estimate['irefFrom'] = undefined;
  #starved: boolean | undefined = undefined;

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
    this.#first = transistors[0];
    this.#second = transistors[1];
    this.#all = transistors.length > 2 ? transistors : undefined;
    this.#refNode = refNode;
    this.id = f.id;
    this.kind = f.kind;
    this.technology = f.technology;
    this.devices = f.devices;
    this.#roleCodes = roleCodes(f.devices, f.roles);
    this.#roles = this.#roleCodes >= 0 ? undefined : f.roles;
    Object.defineProperty(this, 'roles', ROLES);
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
    Object.defineProperty(this, 'estimate', ESTIMATE);
    this.discrepancy = undefined;
    this.startup = undefined;
    this.variation = undefined;
  }

  /** Where the reference branch's feed was found: the rail's node index (-1: none) and each feed element's index. */
  feedFound(railNode: number, elements: readonly number[]): void {
    this.#railNode = railNode;
    // One element (nearly every feed) as its index: no list kept for it.
    this.#feed = elements.length === 1 ? elements[0] : elements;
  }

  /**
   * Keeps what the structure check found: `figures` (made by `checkedFigures` for this structure, filled by the check)
   * stand for the tables and records of the `held` bits, `given` holds the others as they are to be assigned (and, when
   * the estimate is held, its members that are not numbers). A table held as figures is made again, the same names in
   * the same order with the same values, each time it is read: at 100,000 elements 25,000 structures otherwise kept
   * seven name-keyed tables and three records each for the whole run, copied by the collector on the way.
   */
  keepChecked(figures: number[] | undefined, held: number, given: CheckedValues): void {
    this.#figures = held !== 0 ? figures : undefined;
    this.#held = figures === undefined ? 0 : held;
    held = this.#held;
    this.#headroom = held & HELD.HEADROOM ? NO_TABLE : given.headroom;
    this.#compliance = held & HELD.COMPLIANCE ? NO_TABLE : given.compliance;
    this.#outputResistance = held & HELD.RESISTANCE ? NO_TABLE : given.outputResistance;
    this.#solved = held & HELD.SOLVED ? undefined : given.solved;
    this.#estimate = held & HELD.ESTIMATE ? undefined : given.estimate;
    this.#irefFrom = held & HELD.ESTIMATE ? given.estimate!.irefFrom : undefined;
    this.#starved = held & HELD.ESTIMATE ? given.estimate!.starved : undefined;
  }

  /** The table of figure block `block` (`FIGURE`): a new prototype-free table of the outputs that have a figure there. */
  #table(block: number): Record<string, number> {
    const outs = this.outputs;
    return tableOf(this.#figures!, block * outs.length, outs);
  }

  /** The structure's own figure `k` (`FIGURE.SOLVED_IREF` …). */
  #own(k: number): number {
    return this.#figures![FIGURE.PER_OUTPUT * this.outputs.length + k];
  }

  /**
   * The role of `device` in `s` (`s.roles[device]`, read without making the table when `s` holds the roles coded; a
   * structure whose `roles` member was deleted has none). Nothing assigns `roles` but recognition.
   */
  static roleOf(s: Structure, device: string): StructureRole | undefined {
    if (!(#roleCodes in s) || (s as unknown as RecognisedStructure).#roleCodes < 0) return s.roles?.[device];
    if (!('roles' in s)) return undefined;
    const k = s.devices.indexOf(device);
    return k < 0 ? undefined : ROLE_NAMES[(((s as unknown as RecognisedStructure).#roleCodes >> (4 * k)) & 15) - 1];
  }

  /** Whether `s`'s roles are held coded: made when read (strings only, nothing for the finiteness walk). */
  static rolesCoded(s: object): boolean {
    return #roleCodes in s && (s as RecognisedStructure).#roleCodes >= 0;
  }

  /** Whether `s`'s table or record `bit` (`HELD`) is held as figures: made when read, finite by construction. */
  static holds(s: object, bit: number): boolean {
    return #held in s && ((s as RecognisedStructure).#held & bit) !== 0;
  }

  static {
    HEADROOM.get = function (this: RecognisedStructure) {
      return this.#held & HELD.HEADROOM ? this.#table(FIGURE.HEADROOM) : this.#headroom;
    };
    HEADROOM.set = function (this: RecognisedStructure, v: Structure['headroom']) {
      this.#held &= ~HELD.HEADROOM;
      this.#headroom = v;
    };
    OUTPUT_RESISTANCE.get = function (this: RecognisedStructure) {
      return this.#held & HELD.RESISTANCE ? this.#table(FIGURE.RESISTANCE) : this.#outputResistance;
    };
    OUTPUT_RESISTANCE.set = function (this: RecognisedStructure, v: Structure['outputResistance']) {
      this.#held &= ~HELD.RESISTANCE;
      this.#outputResistance = v;
    };
    COMPLIANCE.get = function (this: RecognisedStructure) {
      if (!(this.#held & HELD.COMPLIANCE)) return this.#compliance;
      const outs = this.outputs;
      const n = outs.length;
      const figures = this.#figures!;
      const table: Structure['compliance'] = nameTable();
      for (let o = 0; o < n; o++) {
        const min = figures[FIGURE.COMPLIANCE_MIN * n + o];
        if (!Number.isNaN(min)) table[outs[o].device] = { min, max: figures[FIGURE.COMPLIANCE_MAX * n + o] };
      }
      return table;
    };
    COMPLIANCE.set = function (this: RecognisedStructure, v: Structure['compliance']) {
      this.#held &= ~HELD.COMPLIANCE;
      this.#compliance = v;
    };
    SOLVED.get = function (this: RecognisedStructure) {
      if (!(this.#held & HELD.SOLVED)) return this.#solved;
      return { iref: this.#own(FIGURE.SOLVED_IREF), iout: this.#table(FIGURE.SOLVED_IOUT) };
    };
    SOLVED.set = function (this: RecognisedStructure, v: Structure['solved']) {
      this.#held &= ~HELD.SOLVED;
      this.#solved = v;
    };
    ESTIMATE.get = function (this: RecognisedStructure): Estimate | undefined {
      const held = this.#held;
      if (!(held & HELD.ESTIMATE)) return this.#estimate;
      // The members and their order of the estimate the hand analysis makes (`HandAnalysis.run`, without steps or voltages).
      return {
        iref: this.#own(FIGURE.ESTIMATE_IREF),
        iout: this.#table(FIGURE.ESTIMATE_IOUT),
        vControl: this.#own(FIGURE.ESTIMATE_VCONTROL),
        irefShortcut: held & HELD.ESTIMATE_SHORTCUT ? this.#own(FIGURE.ESTIMATE_SHORTCUT) : undefined,
        steps: [],
        irefFrom: this.#irefFrom,
        starved: this.#starved,
        supply: held & HELD.ESTIMATE_SUPPLY ? { available: this.#own(FIGURE.ESTIMATE_AVAILABLE), needed: this.#own(FIGURE.ESTIMATE_NEEDED) } : undefined,
        outputEdge: held & HELD.ESTIMATE_EDGE ? this.#table(FIGURE.ESTIMATE_EDGE) : undefined,
      };
    };
    ROLES.get = function (this: RecognisedStructure) {
      const codes = this.#roleCodes;
      if (codes < 0) return this.#roles;
      const devices = this.devices;
      const table: Record<string, StructureRole> = nameTable();
      for (let k = 0; k < devices.length; k++) table[devices[k]] = ROLE_NAMES[((codes >> (4 * k)) & 15) - 1];
      return table;
    };
    ROLES.set = function (this: RecognisedStructure, v: Structure['roles']) {
      this.#roleCodes = -1;
      this.#roles = v;
    };
    ESTIMATE.set = function (this: RecognisedStructure, v: Structure['estimate']) {
      this.#held &= ~(HELD.ESTIMATE | HELD.ESTIMATE_SHORTCUT | HELD.ESTIMATE_SUPPLY | HELD.ESTIMATE_EDGE);
      this.#estimate = v;
    };
  }

  /** The transistor kept with `s` for its device `at` (in `devices` order), when recognition made it. */
  static transistorAt(s: object, at: number): Transistor | undefined {
    if (!(#first in s)) return undefined;
    const r = s as RecognisedStructure;
    if (r.#all !== undefined) return at >= 0 && at < r.#all.length ? r.#all[at] : undefined;
    return at === 0 ? r.#first : at === 1 ? r.#second : undefined;
  }

  /** The reference node's index kept with `s`, or -1. */
  static refNodeOf(s: object): number {
    return #refNode in s ? (s as RecognisedStructure).#refNode : -1;
  }

  /** The rail's node index kept with `s`, or -1. */
  static railNodeOf(s: object): number {
    return #railNode in s ? (s as RecognisedStructure).#railNode : -1;
  }

  /** The feed's element indices kept with `s` (one element's as its index alone). */
  static feedOf(s: object): readonly number[] | number {
    return #feed in s ? (s as RecognisedStructure).#feed : NO_FEED;
  }
}

// The finiteness walk leaves a table or record held as figures unread (every figure kept is finite); one assigned, it reads.
registerLazyTable('headroom', HEADROOM, (s) => RecognisedStructure.holds(s, HELD.HEADROOM));
registerLazyTable('compliance', COMPLIANCE, (s) => RecognisedStructure.holds(s, HELD.COMPLIANCE));
registerLazyTable('outputResistance', OUTPUT_RESISTANCE, (s) => RecognisedStructure.holds(s, HELD.RESISTANCE));
registerLazyTable('solved', SOLVED, (s) => RecognisedStructure.holds(s, HELD.SOLVED));
registerLazyTable('estimate', ESTIMATE, (s) => RecognisedStructure.holds(s, HELD.ESTIMATE));
registerLazyTable('roles', ROLES, (s) => RecognisedStructure.rolesCoded(s));

/**
 * `roles` coded (see `ROLE_NAMES`), when it is a prototype-free table of every device of `devices` in their order (at
 * most `CODED_DEVICES`, no name twice) with a known role each; else -1 (the table is kept as given).
 */
function roleCodes(devices: readonly string[], roles: Structure['roles']): number {
  if (roles === undefined || devices.length > CODED_DEVICES || Object.getPrototypeOf(roles) !== null || !distinctNames(devices)) return -1;
  const names = Object.keys(roles);
  if (names.length !== devices.length) return -1;
  let codes = 0;
  for (let k = 0; k < devices.length; k++) {
    if (names[k] !== devices[k]) return -1;
    const code = ROLE_NAMES.indexOf(roles[devices[k]]);
    if (code < 0) return -1;
    codes |= (code + 1) << (4 * k);
  }
  return codes;
}

/** Whether no name is listed twice. */
function distinctNames(names: readonly string[]): boolean {
  for (let i = 1; i < names.length; i++) for (let j = 0; j < i; j++) if (names[i] === names[j]) return false;
  return true;
}

/** The role of `device` in `s` (see `RecognisedStructure.roleOf`). */
export function roleOf(s: Structure, device: string): StructureRole | undefined {
  return RecognisedStructure.roleOf(s, device);
}

/** What a table held as figures leaves in its private field: nothing reads it while the figures stand for it. */
const NO_TABLE = Object.freeze(nameTable<never>());

/** What the structure check assigns to a structure, for the members it does not hold as figures. */
export interface CheckedValues {
  solved: Structure['solved'];
  headroom: Structure['headroom'];
  compliance: Structure['compliance'];
  outputResistance: Structure['outputResistance'];
  estimate: Structure['estimate'];
}

/**
 * A list for the structure check to fill with `s`'s figures (`FIGURE`), all NaN, when `s` can hold them: recognition
 * made it, and no two of its outputs name one device (a table keyed by them has an entry per output). Else undefined:
 * the check assigns its tables.
 */
export function checkedFigures(s: Structure): number[] | undefined {
  return s instanceof RecognisedStructure && distinctDevices(s.outputs) ? noFigures(FIGURE.PER_OUTPUT * s.outputs.length + FIGURE.OWN) : undefined;
}

/** The members of an estimate the hand analysis makes (`HandAnalysis.run`), in its order, when it has no voltages. */
const ESTIMATE_FIELDS: readonly string[] = ['iref', 'iout', 'vControl', 'irefShortcut', 'steps', 'irefFrom', 'starved', 'supply', 'outputEdge'];

/**
 * Writes estimate `e` of a structure with outputs `outs` (n of them) into `figures` (`FIGURE`) and returns the `HELD`
 * bits that then stand for it, when it can be made again from them: the members and order `ESTIMATE_FIELDS` lists, no
 * steps (a host that asks for them keeps them as made), every number finite, the supply a plain `{ available, needed }`
 * and the output currents and edges tables keyed by the outputs in their order. Else 0: the estimate is kept as made.
 */
export function estimateFigures(e: Estimate, outs: readonly { device: string }[], figures: number[], n: number): number {
  const keys = Object.keys(e);
  if (keys.length !== ESTIMATE_FIELDS.length) return 0;
  for (let i = 0; i < keys.length; i++) if (keys[i] !== ESTIMATE_FIELDS[i]) return 0;
  if (e.steps.length !== 0 || !Number.isFinite(e.iref) || !Number.isFinite(e.vControl)) return 0;
  let held = HELD.ESTIMATE;
  const own = FIGURE.PER_OUTPUT * n;
  if (e.irefShortcut !== undefined) {
    if (!Number.isFinite(e.irefShortcut)) return 0;
    figures[own + FIGURE.ESTIMATE_SHORTCUT] = e.irefShortcut;
    held |= HELD.ESTIMATE_SHORTCUT;
  }
  if (e.supply !== undefined) {
    if (!isSupply(e.supply)) return 0;
    figures[own + FIGURE.ESTIMATE_AVAILABLE] = e.supply.available;
    figures[own + FIGURE.ESTIMATE_NEEDED] = e.supply.needed;
    held |= HELD.ESTIMATE_SUPPLY;
  }
  if (!numbersFit(e.iout, outs, figures, FIGURE.ESTIMATE_IOUT * n)) return 0;
  if (e.outputEdge !== undefined) {
    if (!numbersFit(e.outputEdge, outs, figures, FIGURE.ESTIMATE_EDGE * n)) return 0;
    held |= HELD.ESTIMATE_EDGE;
  }
  figures[own + FIGURE.ESTIMATE_IREF] = e.iref;
  figures[own + FIGURE.ESTIMATE_VCONTROL] = e.vControl;
  return held;
}

/** A plain `{ available, needed }` of finite numbers, nothing else, as the hand analysis makes it. */
function isSupply(v: object): v is { available: number; needed: number } {
  if (Object.getPrototypeOf(v) !== Object.prototype) return false;
  const keys = Object.keys(v);
  const x = v as { available: unknown; needed: unknown };
  return keys.length === 2 && keys[0] === 'available' && keys[1] === 'needed' && typeof x.available === 'number' && Number.isFinite(x.available) && typeof x.needed === 'number' && Number.isFinite(x.needed);
}

/**
 * Gives `s` what the structure check found: the tables and records of the `held` bits as `figures` (from
 * `checkedFigures`), the others as `given`; a structure that holds no figures is assigned them all as data members.
 */
export function keepChecked(s: Structure, figures: number[] | undefined, held: number, given: CheckedValues): void {
  if (s instanceof RecognisedStructure) {
    s.keepChecked(figures, held, given);
    return;
  }
  s.solved = given.solved;
  s.headroom = given.headroom;
  s.compliance = given.compliance;
  s.outputResistance = given.outputResistance;
  s.estimate = given.estimate;
}

/** The feed of a structure without one found. */
const NO_FEED: readonly number[] = Object.freeze([]);

/**
 * The transistor recognition found for `s.devices[at]`, or undefined (a structure made or copied elsewhere, or `at`
 * outside the list). A hint only: `Topology.transistorNamed` takes it when it is that topology's view of the name.
 */
export function recognisedTransistor(s: Structure, at: number): Transistor | undefined {
  return RecognisedStructure.transistorAt(s, at);
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
  if (typeof feed === 'number') return k === 0 ? feed : -1;
  return k >= 0 && k < feed.length ? feed[k] : -1;
}

/** Keeps where recognition found `s`'s feed (see `RecognisedStructure.feedFound`), when recognition made `s`. */
export function keepFeed(s: Structure, railNode: number, elements: readonly number[]): void {
  if (s instanceof RecognisedStructure) s.feedFound(railNode, elements);
}
