// A structure's hand estimate as the hand analysis makes it, with its per-output tables and its supply held as numbers.

import { registerLazyTable } from '../output-guard';
import { distinctDevices, noFigures, numbersFit, tableOf } from './held-figures';
import type { Estimate, EstimateStep } from './types';

/**
 * The accessors of an estimate's `iout`, `supply` and `outputEdge`, one each for every estimate (their functions are set
 * in the class's static block, where they can reach its private fields), so every estimate keeps one layout. Enumerable
 * own properties: JSON, `Object.keys`, spreading and structured cloning read them as data; assigning one keeps the value.
 */
const IOUT: PropertyDescriptor = { enumerable: true, configurable: true };
const SUPPLY: PropertyDescriptor = { enumerable: true, configurable: true };
const OUTPUT_EDGE: PropertyDescriptor = { enumerable: true, configurable: true };

// Bits of `#held`: which of the values `#figures` stands for.
const HELD_IOUT = 1;
const HELD_EDGE = 2;
const HELD_SUPPLY = 4;

/**
 * An estimate with the members, and in the order, the hand analysis writes (`voltages` and `voltageTempco` added after,
 * when a kind has them). Its output currents and output edges, when each is a table of finite numbers keyed by the
 * outputs' devices in their order, and its supply, when both figures are finite, are kept as numbers in one list (the
 * outputs' currents at `o`, their edges at `n + o`, the supply's two figures at `2n` and `2n + 1`), and the table or
 * record is made again, the same names in the same order with the same values, each time it is read: the hand
 * analysis of 25,000 structures at 100,000 elements otherwise kept two tables and a record each for the whole run,
 * about 400 bytes a structure the collector copied on the way. Any other value is kept as given.
 */
export class HandEstimate {
  #figures: number[] | undefined = undefined;
  #held = 0;
  readonly #outs: readonly { device: string }[];
  #iout: Estimate['iout'];
  #supply: Estimate['supply'];
  #outputEdge: Estimate['outputEdge'];

  declare iref: number;
  declare iout: Estimate['iout'];
  declare vControl: number;
  declare irefShortcut: number | undefined;
  declare steps: EstimateStep[];
  declare irefFrom: Estimate['irefFrom'];
  declare starved: boolean | undefined;
  declare supply: Estimate['supply'];
  declare outputEdge: Estimate['outputEdge'];
  declare voltages?: Record<string, number>;
  declare voltageTempco?: Record<string, number>;

  constructor(
    outs: readonly { device: string }[],
    f: Pick<Required<Estimate>, 'iref' | 'iout' | 'vControl' | 'steps' | 'irefFrom' | 'starved'> & Pick<Estimate, 'irefShortcut' | 'supply' | 'outputEdge'>,
  ) {
    this.#outs = outs;
    const n = outs.length;
    let held = 0;
    const figures = noFigures(2 * n + 2);
    if (distinctDevices(outs)) {
      if (numbersFit(f.iout, outs, figures, 0)) held |= HELD_IOUT;
      if (f.outputEdge !== undefined && numbersFit(f.outputEdge, outs, figures, n)) held |= HELD_EDGE;
    }
    const supply = f.supply;
    if (supply !== undefined && isSupply(supply)) {
      figures[2 * n] = supply.available;
      figures[2 * n + 1] = supply.needed;
      held |= HELD_SUPPLY;
    }
    this.#figures = held !== 0 ? figures : undefined;
    this.#held = held;
    this.#iout = held & HELD_IOUT ? NO_TABLE : f.iout;
    this.#supply = held & HELD_SUPPLY ? undefined : supply;
    this.#outputEdge = held & HELD_EDGE ? undefined : f.outputEdge;
    this.iref = f.iref;
    Object.defineProperty(this, 'iout', IOUT);
    this.vControl = f.vControl;
    this.irefShortcut = f.irefShortcut;
    this.steps = f.steps;
    this.irefFrom = f.irefFrom;
    this.starved = f.starved;
    Object.defineProperty(this, 'supply', SUPPLY);
    Object.defineProperty(this, 'outputEdge', OUTPUT_EDGE);
  }

  /** Whether `e`'s value `bit` (`HELD_*`) is held as figures: made when read, finite by construction. */
  static holds(e: object, bit: number): boolean {
    return #held in e && ((e as HandEstimate).#held & bit) !== 0;
  }

  static {
    IOUT.get = function (this: HandEstimate) {
      return this.#held & HELD_IOUT ? tableOf(this.#figures!, 0, this.#outs) : this.#iout;
    };
    IOUT.set = function (this: HandEstimate, v: Estimate['iout']) {
      this.#held &= ~HELD_IOUT;
      this.#iout = v;
    };
    OUTPUT_EDGE.get = function (this: HandEstimate) {
      return this.#held & HELD_EDGE ? tableOf(this.#figures!, this.#outs.length, this.#outs) : this.#outputEdge;
    };
    OUTPUT_EDGE.set = function (this: HandEstimate, v: Estimate['outputEdge']) {
      this.#held &= ~HELD_EDGE;
      this.#outputEdge = v;
    };
    SUPPLY.get = function (this: HandEstimate) {
      if (!(this.#held & HELD_SUPPLY)) return this.#supply;
      const n = this.#outs.length;
      return { available: this.#figures![2 * n], needed: this.#figures![2 * n + 1] };
    };
    SUPPLY.set = function (this: HandEstimate, v: Estimate['supply']) {
      this.#held &= ~HELD_SUPPLY;
      this.#supply = v;
    };
  }
}

/** The members of an estimate `HandAnalysis.run` makes, in its order, before `voltages` and `voltageTempco`. */
const FIELDS: readonly string[] = ['iref', 'iout', 'vControl', 'irefShortcut', 'steps', 'irefFrom', 'starved', 'supply', 'outputEdge'];

/**
 * `e` (as the hand analysis made it, for a structure with outputs `outs`) as a `HandEstimate`, when its members are
 * `FIELDS` in that order, then `voltages` and `voltageTempco` when present; any other estimate as it is.
 */
export function heldEstimate(outs: readonly { device: string }[], e: Estimate): Estimate {
  const keys = Object.keys(e);
  if (keys.length < FIELDS.length || keys.length > FIELDS.length + 2) return e;
  for (let i = 0; i < FIELDS.length; i++) if (keys[i] !== FIELDS[i]) return e;
  let k = FIELDS.length;
  if (keys[k] === 'voltages') k++;
  if (keys[k] === 'voltageTempco') k++;
  if (k !== keys.length) return e;
  const held = new HandEstimate(outs, e as ConstructorParameters<typeof HandEstimate>[1]);
  if (e.voltages !== undefined) held.voltages = e.voltages;
  if (e.voltageTempco !== undefined) held.voltageTempco = e.voltageTempco;
  return held;
}

// The finiteness walk leaves a value held as figures unread (every figure kept is finite); one assigned, it reads.
registerLazyTable('iout', IOUT, (e) => HandEstimate.holds(e, HELD_IOUT));
registerLazyTable('supply', SUPPLY, (e) => HandEstimate.holds(e, HELD_SUPPLY));
registerLazyTable('outputEdge', OUTPUT_EDGE, (e) => HandEstimate.holds(e, HELD_EDGE));

/** What a table held as figures leaves in its private field: nothing reads it while the figures stand for it. */
const NO_TABLE: Record<string, number> = Object.freeze(Object.create(null) as Record<string, number>);

/** A plain `{ available, needed }` of finite numbers, nothing else, as the hand analysis makes it. */
function isSupply(v: object): v is { available: number; needed: number } {
  if (Object.getPrototypeOf(v) !== Object.prototype) return false;
  const keys = Object.keys(v);
  const x = v as { available: unknown; needed: unknown };
  return keys.length === 2 && keys[0] === 'available' && keys[1] === 'needed' && typeof x.available === 'number' && Number.isFinite(x.available) && typeof x.needed === 'number' && Number.isFinite(x.needed);
}
