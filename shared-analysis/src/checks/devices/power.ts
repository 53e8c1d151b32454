// Power each device and resistor dissipates at the operating point, and the limit it is compared against.

import type { ResolvedOptions } from '../../analysis';
import type { Element } from '../../circuit';
import type { DeviceRecord } from '../../solve/types';
import { nameTable } from '../../names';

/**
 * Power an element absorbs at its operating-point record, watts (negative when it delivers, as a
 * source does): the sum of each terminal's voltage times the current into it. BJT: IC·VCE +
 * IB·VBE; MOSFET: ID·VDS (no gate current); diode: ID·VD; two-terminal elements: their
 * record's power. Undefined when the record gives nothing to multiply.
 */
export function dissipation(rec: DeviceRecord | undefined): number | undefined {
  if (!rec) return undefined;
  let p: number;
  switch (rec.type) {
    case 'bjt':
      p = rec.ic * rec.vce + rec.ib * rec.vbe;
      break;
    case 'mosfet':
      p = rec.id * rec.vds;
      break;
    case 'diode':
      p = rec.id * rec.vd;
      break;
    case 'jfet':
      // ID·VDS + IG·VGS: the source carries −(ID + IG).
      p = rec.id * rec.vds + rec.ig * rec.vgs;
      break;
    default:
      p = rec.power;
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
  for (const [name, entry] of powerEntries(elements, (e) => devices[elements[e].name], options)) out[name] = entry;
  return out;
}

/** The entries of `powerTable` one at a time, each element's record read through `recordOf(element index)` (a streaming writer's form). */
export function* powerEntries(elements: readonly Element[], recordOf: (e: number) => DeviceRecord | undefined, options: ResolvedOptions): Iterable<[string, PowerEntry]> {
  for (let e = 0; e < elements.length; e++) {
    const el = elements[e];
    const limit = powerLimit(el, options);
    if (!limit) continue;
    const watts = dissipation(recordOf(e));
    if (watts === undefined) continue;
    yield [el.name, { watts, limitW: limit.watts, limitFrom: limit.from }];
  }
}
