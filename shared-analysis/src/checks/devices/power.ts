// Power each device and resistor dissipates at the operating point, and the limit it is compared against.

import type { ResolvedOptions } from '../../analysis';
import type { Element } from '../../circuit';
import type { DeviceRecord } from '../../solve/types';
import type { EntryTable, PointVectors } from '../../solve/point';
import { nameTable } from '../../names';

/**
 * Power an element absorbs at its operating-point record, watts (negative when it delivers, as a
 * source does): the sum of each terminal's voltage times the current into it. BJT: IC·VCE +
 * IB·VBE; MOSFET: ID·VDS (no gate current); diode: ID·VD; two-terminal elements: their
 * record's power. Undefined when the record gives nothing to multiply.
 */
export function dissipation(rec: DeviceRecord | undefined): number | undefined {
  if (!rec) return undefined;
  return dissipationOf(rec.type, rec as unknown as Record<string, number | undefined>, 0, fieldOf);
}

/**
 * `dissipation` of element `e` of a point, read from the point's vectors: the few numbers it multiplies,
 * without the record (which a power table of every element would otherwise build once more per device).
 */
export function dissipationAt(v: PointVectors, e: number): number | undefined {
  const type = v.type(e);
  return type === undefined ? undefined : dissipationOf(type, v, e, valueOf);
}

/** A record's number by name. */
const fieldOf = (rec: Record<string, number | undefined>, _e: number, quantity: string): number | undefined => rec[quantity];
/** Element `e`'s number by name from a point's vectors. */
const valueOf = (v: PointVectors, e: number, quantity: string): number | undefined => v.value(e, quantity);

/**
 * `dissipation` of a record of `type` whose numbers `read(from, e, quantity)` gives by name (undefined, and so NaN in a
 * product, when it has none): the readers are made once, not a closure per element.
 */
function dissipationOf<S>(type: DeviceRecord['type'], from: S, e: number, read: (from: S, e: number, quantity: string) => number | undefined): number | undefined {
  let p: number;
  switch (type) {
    case 'bjt':
      p = read(from, e, 'ic')! * read(from, e, 'vce')! + read(from, e, 'ib')! * read(from, e, 'vbe')!;
      break;
    case 'mosfet':
      p = read(from, e, 'id')! * read(from, e, 'vds')!;
      break;
    case 'diode':
      p = read(from, e, 'id')! * read(from, e, 'vd')!;
      break;
    case 'jfet':
      // ID·VDS + IG·VGS: the source carries −(ID + IG).
      p = read(from, e, 'id')! * read(from, e, 'vds')! + read(from, e, 'ig')! * read(from, e, 'vgs')!;
      break;
    default:
      p = read(from, e, 'power')!;
  }
  return Number.isFinite(p) ? p : undefined;
}

/** Where a power limit came from. */
export type LimitSource = 'instance' | 'model' | 'setting';

/** Element kinds whose dissipation is judged, and which default limit applies when the part gives none. */
const LIMIT_KIND: Record<string, 'resistor' | 'device'> = nameTable({ R: 'resistor', D: 'device', Q: 'device', M: 'device', J: 'device' });

/**
 * The dissipation limit of an element, watts: the card's `RATEDPOWER=`, else its model's
 * `RATEDPOWER`, else the setting for its kind (an ordinary resistor 0.25 W, a small-signal
 * transistor or diode 0.5 W; common practice). A rating is per part, so it is multiplied by the
 * card's parallel count M. Undefined for kinds without a limit (sources, capacitors).
 */
export function powerLimit(el: Element, options: ResolvedOptions): { watts: number; from: LimitSource } | undefined {
  const kind = LIMIT_KIND[el.kind];
  if (!kind) return undefined;
  const parts = 'm' in el && typeof el.m === 'number' && el.m > 0 && Number.isFinite(el.m) ? el.m : 1;
  if (el.ratedPowerW !== undefined) return { watts: el.ratedPowerW * parts, from: 'instance' };
  const model = el.kind === 'R' ? el.modelRatedPowerW : 'model' in el ? el.model.ratings?.['RATEDPOWER'] : undefined;
  if (model !== undefined) return { watts: model * parts, from: 'model' };
  return { watts: (kind === 'resistor' ? options.powerLimits.resistorW : options.powerLimits.deviceW) * parts, from: 'setting' };
}

/** One element's dissipation at the operating point and the limit it is judged against. */
export interface PowerEntry {
  /** Watts absorbed (negative when delivering). */
  watts: number;
  limitW: number;
  limitFrom: LimitSource;
}

/**
 * The dissipation of every device and resistor of an operating point, by element name, with
 * each one's limit (for reports and JSON). Elements without a record or a limit are left out.
 */
export function powerTable(elements: readonly Element[], devices: Record<string, DeviceRecord>, options: ResolvedOptions): Record<string, PowerEntry> {
  const out: Record<string, PowerEntry> = nameTable();
  const table = powerColumns(elements, (e) => dissipation(devices[elements[e].name]), options);
  for (let k = 0; k < table.count; k++) out[table.name(k)] = table.value(k);
  return out;
}

/** Where a limit came from, by its position in `powerColumns`' `from` column. */
const LIMIT_SOURCES: readonly LimitSource[] = ['instance', 'model', 'setting'];

/**
 * The entries of `powerTable` by position (a streaming writer's form: an entry's object is made when it is read), each
 * element's power read through `powerOf(element index)` (its record's `dissipation`, or `dissipationAt` the point's
 * vectors). Worked out in one pass into columns, with no pair or object kept per element.
 */
export function powerColumns(elements: readonly Element[], powerOf: (e: number) => number | undefined, options: ResolvedOptions): EntryTable<PowerEntry> {
  const element = new Int32Array(elements.length);
  const watts = new Float64Array(elements.length);
  const limitW = new Float64Array(elements.length);
  const from = new Uint8Array(elements.length);
  let count = 0;
  for (let e = 0; e < elements.length; e++) {
    const limit = powerLimit(elements[e], options);
    if (!limit) continue;
    const w = powerOf(e);
    if (w === undefined) continue;
    element[count] = e;
    watts[count] = w;
    limitW[count] = limit.watts;
    from[count] = LIMIT_SOURCES.indexOf(limit.from);
    count++;
  }
  return {
    count,
    name: (k) => elements[element[k]].name,
    value: (k) => ({ watts: watts[k], limitW: limitW[k], limitFrom: LIMIT_SOURCES[from[k]] }),
  };
}
