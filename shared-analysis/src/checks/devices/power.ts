// Power each device and resistor dissipates at the operating point, and the limit it is compared against.

import type { ResolvedOptions } from '../../analysis';
import type { Element } from '../../circuit';
import type { DeviceRecord } from '../../solve/types';
import type { PointVectors } from '../../solve/point';
import { nameTable } from '../../names';

/**
 * Power an element absorbs at its operating-point record, watts (negative when it delivers, as a
 * source does): the sum of each terminal's voltage times the current into it. BJT: IC·VCE +
 * IB·VBE; MOSFET: ID·VDS (no gate current); diode: ID·VD; two-terminal elements: their
 * record's power. Undefined when the record gives nothing to multiply.
 */
export function dissipation(rec: DeviceRecord | undefined): number | undefined {
  if (!rec) return undefined;
  const fields = rec as unknown as Record<string, number | undefined>;
  return dissipationOf(rec.type, (q) => fields[q]);
}

/**
 * `dissipation` of element `e` of a point, read from the point's vectors: the few numbers it multiplies,
 * without the record (which a power table of every element would otherwise build once more per device).
 */
export function dissipationAt(v: PointVectors, e: number): number | undefined {
  const type = v.type(e);
  return type === undefined ? undefined : dissipationOf(type, (q) => v.value(e, q));
}

/** `dissipation` of a record of `type` whose numbers `n` reads by name (undefined, and so NaN in a product, when it has none). */
function dissipationOf(type: DeviceRecord['type'], n: (quantity: string) => number | undefined): number | undefined {
  let p: number;
  switch (type) {
    case 'bjt':
      p = n('ic')! * n('vce')! + n('ib')! * n('vbe')!;
      break;
    case 'mosfet':
      p = n('id')! * n('vds')!;
      break;
    case 'diode':
      p = n('id')! * n('vd')!;
      break;
    case 'jfet':
      // ID·VDS + IG·VGS: the source carries −(ID + IG).
      p = n('id')! * n('vds')! + n('ig')! * n('vgs')!;
      break;
    default:
      p = n('power')!;
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
  for (const [name, entry] of powerEntries(elements, (e) => dissipation(devices[elements[e].name]), options)) out[name] = entry;
  return out;
}

/**
 * The entries of `powerTable` one at a time (a streaming writer's form), each element's power read through
 * `powerOf(element index)` (its record's `dissipation`, or `dissipationAt` the point's vectors).
 */
export function* powerEntries(elements: readonly Element[], powerOf: (e: number) => number | undefined, options: ResolvedOptions): Iterable<[string, PowerEntry]> {
  for (let e = 0; e < elements.length; e++) {
    const el = elements[e];
    const limit = powerLimit(el, options);
    if (!limit) continue;
    const watts = powerOf(e);
    if (watts === undefined) continue;
    yield [el.name, { watts, limitW: limit.watts, limitFrom: limit.from }];
  }
}
