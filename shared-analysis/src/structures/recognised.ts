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

  constructor(transistors: readonly Transistor[], refNode: number, f: RecognisedFields) {
    this.#transistors = transistors;
    this.#refNode = refNode;
    const o = this as unknown as RecognisedFields;
    o.id = f.id;
    o.kind = f.kind;
    o.technology = f.technology;
    o.devices = f.devices;
    o.roles = f.roles;
    o.reference = f.reference;
    o.outputs = f.outputs;
    o.parts = f.parts;
    o.params = f.params;
    o.voltages = f.voltages;
    o.instance = f.instance;
    o.headroom = f.headroom;
    o.compliance = f.compliance;
    o.outputResistance = f.outputResistance;
    defineCorners(o);
    // What the checks fill later, undefined until then (left out of the JSON as an absent member).
    const later = this as unknown as Pick<Structure, 'solved' | 'estimate' | 'discrepancy' | 'startup' | 'variation'>;
    later.solved = undefined;
    later.estimate = undefined;
    later.discrepancy = undefined;
    later.startup = undefined;
    later.variation = undefined;
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
