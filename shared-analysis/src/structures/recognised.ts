// The transistors recognition found for a structure's devices, kept with the structure (not in its JSON) so the stages
// that read the structure next do not look each device up by name again.

import type { Transistor } from './topology';
import type { Structure } from './types';
import { defineCorners } from './corner-columns';

/** The fields of a structure recognition makes, in the order the JSON shows them (the checks fill the rest later). */
type RecognisedFields = Omit<Structure, 'corners' | 'solved' | 'estimate' | 'discrepancy' | 'startup' | 'variation'>;

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
    this.headroom = f.headroom;
    this.compliance = f.compliance;
    this.outputResistance = f.outputResistance;
    defineCorners(this);
    // What the checks fill later, undefined until then (left out of the JSON as an absent member).
    this.solved = undefined;
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
