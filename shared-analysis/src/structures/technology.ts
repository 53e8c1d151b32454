// The facts of each device technology a structure can be built in, as one table: family, polarity, record type, region names and edge words.

import type { Technology } from './types';

/** Device family: the formulas a structure's hand analysis uses (junction law and beta, or a square law). */
export type Family = 'bipolar' | 'mos' | 'jfet';

/** What the engine knows of one technology; shared code reads this table instead of switching on the technology. */
export interface TechnologyFacts {
  family: Family;
  /** +1 when current enters the output terminal from above (NPN, NMOS, N-channel JFET), −1 for the mirrored devices. */
  sign: 1 | -1;
  /** The element letter of its devices. */
  letter: 'Q' | 'M' | 'J';
  /** The type of its solved record (`DeviceRecord['type']`). */
  record: 'bjt' | 'mosfet' | 'jfet';
  /** The record's name of the region an output works in (docs/DEVICE-MODELS.md). */
  activeRegion: 'forward-active' | 'saturation';
  /** The record's name of the region beyond the output's edge. */
  beyondRegion: 'saturation' | 'triode' | 'linear';
  /** That region as the view says it after "into", "clear of", "the edge of". */
  beyondWords: string;
  /** An output beyond the edge, in words after "is" ("saturated", "in triode", "in the linear region"). */
  beyondState: string;
  /** The edge of the active region in words. */
  edge: string;
  /** The control voltage's name in formulas. */
  controlVoltage: 'VBE' | 'VGS';
  /** The device in words ("NPN", "N-channel JFET"). */
  words: string;
}

/**
 * Every technology. BJT: forward-active up to the VBC = 0 edge, saturated beyond; MOSFET: saturation
 * up to VDS = VGS − VTH, triode beyond; JFET: saturation up to VDS = VGS − VP (VP the pinch-off
 * voltage, the model's VTO), the linear region beyond (docs/DEVICE-MODELS.md names it so).
 */
export const TECHNOLOGIES: Readonly<Record<Technology, TechnologyFacts>> = {
  npn: bipolar(1, 'NPN'),
  pnp: bipolar(-1, 'PNP'),
  nmos: mos(1, 'NMOS'),
  pmos: mos(-1, 'PMOS'),
  njf: jfet(1, 'N-channel JFET'),
  pjf: jfet(-1, 'P-channel JFET'),
};

function bipolar(sign: 1 | -1, words: string): TechnologyFacts {
  return {
    family: 'bipolar',
    sign,
    letter: 'Q',
    record: 'bjt',
    activeRegion: 'forward-active',
    beyondRegion: 'saturation',
    beyondWords: 'saturation',
    beyondState: 'saturated',
    edge: 'the VBC = 0 edge',
    controlVoltage: 'VBE',
    words,
  };
}

function mos(sign: 1 | -1, words: string): TechnologyFacts {
  return {
    family: 'mos',
    sign,
    letter: 'M',
    record: 'mosfet',
    activeRegion: 'saturation',
    beyondRegion: 'triode',
    beyondWords: 'triode',
    beyondState: 'in triode',
    edge: 'the VDS = VGS − VTH edge',
    controlVoltage: 'VGS',
    words,
  };
}

function jfet(sign: 1 | -1, words: string): TechnologyFacts {
  return {
    family: 'jfet',
    sign,
    letter: 'J',
    record: 'jfet',
    activeRegion: 'saturation',
    beyondRegion: 'linear',
    beyondWords: 'the linear region',
    beyondState: 'in the linear region',
    edge: 'the VDS = VGS − VP edge',
    controlVoltage: 'VGS',
    words,
  };
}

/** The facts of a technology, or undefined for a name the engine does not know (a structure read back from JSON, say). */
export function technologyFacts(t: string): TechnologyFacts | undefined {
  return Object.prototype.hasOwnProperty.call(TECHNOLOGIES, t) ? TECHNOLOGIES[t as Technology] : undefined;
}

/** A technology in words for headings ("NPN", "NMOS", "N-channel JFET"); one the engine does not know reads as its name in capitals. */
export function technologyWords(t: string): string {
  return technologyFacts(t)?.words ?? t.toUpperCase();
}

/** Whether a technology is a bipolar one (the formulas then carry beta and VBE). */
export function isBipolar(t: Technology): boolean {
  return TECHNOLOGIES[t]?.family === 'bipolar';
}

/** +1 when current enters the output terminal from above (NPN, NMOS, N-channel JFET), −1 for PNP, PMOS and P-channel JFET. */
export function polaritySign(t: Technology): 1 | -1 {
  return TECHNOLOGIES[t]?.sign ?? 1;
}

/** The technology of a transistor model kind, or undefined for a model that is not a transistor's. */
export function technologyOfModel(kind: string): Technology | undefined {
  return technologyFacts(kind) ? (kind as Technology) : undefined;
}
