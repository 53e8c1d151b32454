// The nonlinear device kinds the solver knows, by element letter: add a kind's descriptor here and the layout, the structural checks and the records pick it up.

import { BEHAVIOURAL } from './behavioural';
import { BJT } from './bjt';
import type { DeviceKind } from './device';
import { DIODE } from './diode';
import { JFET } from './jfet';
import { LINE } from './line';
import { MOSFET } from './mosfet';
import { CURRENT_SWITCH, VOLTAGE_SWITCH } from './switch';

/** Every nonlinear kind, one per element letter. */
export const DEVICE_KINDS: readonly DeviceKind[] = [DIODE, BJT, MOSFET, JFET, VOLTAGE_SWITCH, CURRENT_SWITCH, BEHAVIOURAL, LINE];

const BY_LETTER = new Map<string, DeviceKind>(DEVICE_KINDS.map((k) => [k.letter, k]));

/** The nonlinear kind that solves elements of letter `letter` (`'Q'`), if any. */
export function deviceKindOf(letter: string): DeviceKind | undefined {
  return BY_LETTER.get(letter);
}
