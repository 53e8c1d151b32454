// What each element letter, dot card and model parameter means: the words hovers and completions show.

import { MODEL_DEFAULTS, type ModelKind } from '../circuit';
import { nameTable } from '../names';

/** One element letter: what it is and the order of its fields. */
export interface ElementLetterInfo {
  letter: string;
  title: string;
  fields: string;
  note: string;
}

export const ELEMENT_LETTERS: ElementLetterInfo[] = [
  { letter: 'R', title: 'Resistor', fields: 'Rname node1 node2 value [M=count]', note: 'Value in ohms; M= puts copies in parallel.' },
  { letter: 'C', title: 'Capacitor', fields: 'Cname node1 node2 value', note: 'Open circuit at DC.' },
  { letter: 'L', title: 'Inductor', fields: 'Lname node1 node2 value', note: 'Short circuit at DC; its current is solved.' },
  { letter: 'V', title: 'Voltage source', fields: 'Vname plus minus [DC] value', note: 'Holds V(plus) − V(minus) at the value; a transient form contributes its t = 0 value.' },
  { letter: 'I', title: 'Current source', fields: 'Iname plus minus [DC] value', note: 'The value in amperes flows from plus through the source to minus.' },
  { letter: 'E', title: 'Voltage-controlled voltage source', fields: 'Ename out+ out− control+ control− gain', note: 'V(out) = gain · V(control).' },
  { letter: 'G', title: 'Voltage-controlled current source', fields: 'Gname out+ out− control+ control− transconductance', note: 'gain · V(control) flows from out+ through the element to out−.' },
  { letter: 'F', title: 'Current-controlled current source', fields: 'Fname out+ out− Vcontrol gain', note: 'gain · I(Vcontrol) flows from out+ through the element to out−.' },
  { letter: 'H', title: 'Current-controlled voltage source', fields: 'Hname out+ out− Vcontrol transresistance', note: 'V(out) = gain · I(Vcontrol).' },
  { letter: 'D', title: 'Diode', fields: 'Dname anode cathode model [area]', note: 'Uses a .model of type D.' },
  { letter: 'Q', title: 'Bipolar transistor', fields: 'Qname collector base emitter [substrate] model [area] [M=count]', note: 'Uses a .model of type NPN or PNP; area multiplies IS.' },
  { letter: 'M', title: 'MOS transistor', fields: 'Mname drain gate source bulk model W=width L=length [M=count]', note: 'Uses a .model of type NMOS or PMOS (square law).' },
  { letter: 'J', title: 'Junction FET', fields: 'Jname drain gate source model [area] [M=count]', note: 'Uses a .model of type NJF or PJF; IDSS = BETA·VTO².' },
  { letter: 'S', title: 'Voltage-controlled switch', fields: 'Sname node1 node2 control+ control− model', note: 'Uses a .model of type SW: RON above VT + VH, ROFF below VT − VH.' },
  { letter: 'W', title: 'Current-controlled switch', fields: 'Wname node1 node2 Vcontrol model', note: 'Uses a .model of type CSW, switched by the current through Vcontrol.' },
  { letter: 'B', title: 'Behavioural source', fields: 'Bname out+ out− V={expression} | I={expression}', note: 'A voltage or current that is a function of V(node), V(node, node), I(Vsource) and parameters.' },
  { letter: 'T', title: 'Transmission line', fields: 'Tname port1+ port1− port2+ port2− Z0=… TD=…', note: 'At DC each conductor is a short from port 1 to port 2.' },
  { letter: 'X', title: 'Subcircuit instance', fields: 'Xname node… subcircuit [param=value …]', note: 'Copies a .subckt body; its devices are named Xname.device.' },
];

/** One dot card: its form and a one-line description. */
export interface DotCardInfo {
  name: string;
  form: string;
  description: string;
}

export const DOT_CARDS: DotCardInfo[] = [
  { name: '.model', form: '.model name type (param=value …)', description: 'Defines device parameters for D, Q, M, J, S, W or R elements (types D, NPN, PNP, NMOS, PMOS, NJF, PJF, SW, CSW, R).' },
  { name: '.param', form: '.param name=value …', description: 'Defines named values usable in {expressions}.' },
  { name: '.subckt', form: '.subckt name port… [param=default …]', description: 'Starts a reusable subcircuit body, ended by .ends.' },
  { name: '.ends', form: '.ends [name]', description: 'Ends the current subcircuit body.' },
  { name: '.include', form: '.include "path"', description: 'Reads the cards of another file in place.' },
  { name: '.lib', form: '.lib "path" section', description: 'Reads one section of a library file (or, inside a library, starts a section).' },
  { name: '.endl', form: '.endl [section]', description: 'Ends a library section.' },
  { name: '.temp', form: '.temp celsius', description: 'Sets the analysis temperature in °C (27 °C by default).' },
  { name: '.option', form: '.option tnom=celsius …', description: 'Sets analysis options, such as the nominal model temperature tnom.' },
  { name: '.op', form: '.op', description: 'Asks for the DC operating point (qpoint always solves it).' },
  { name: '.end', form: '.end', description: 'Ends the netlist: nothing after it is read.' },
];

import type { ModelParameterInfo } from '../devices/parameters';
export type { ModelParameterInfo } from '../devices/parameters';
/** Model parameters the engine reads, per model kind, with meaning, unit and default (one table in devices/). */
export { MODEL_PARAMETERS } from '../devices/parameters';

/** The model kinds a model type word names (`npn` → npn), or undefined. */
export function modelKindOf(type: string): ModelKind | undefined {
  const t = type.toLowerCase();
  if (t === 'res') return 'r';
  return t === 'npn' || t === 'pnp' || t === 'd' || t === 'nmos' || t === 'pmos' || t === 'njf' || t === 'pjf' || t === 'sw' || t === 'csw' || t === 'r' ? t : undefined;
}

/** The default of a model parameter, if the engine has one. */
export function defaultOf(kind: ModelKind, param: string): number | undefined {
  return MODEL_DEFAULTS[kind][param.toUpperCase()];
}

/** Which model kinds an element letter accepts. */
export function modelKindsFor(letter: string): ModelKind[] {
  switch (letter.toUpperCase()) {
    case 'Q':
      return ['npn', 'pnp'];
    case 'M':
      return ['nmos', 'pmos'];
    case 'D':
      return ['d'];
    case 'J':
      return ['njf', 'pjf'];
    case 'S':
      return ['sw'];
    case 'W':
      return ['csw'];
    case 'R':
      return ['r'];
    default:
      return [];
  }
}

/** Instance parameters of element cards, with their meaning. */
export const INSTANCE_PARAMETERS: Record<string, ModelParameterInfo[]> = nameTable({
  M: [
    { name: 'W', meaning: 'channel width', unit: 'm' },
    { name: 'L', meaning: 'channel length', unit: 'm' },
    { name: 'M', meaning: 'number of parallel devices', unit: '' },
  ],
  Q: [{ name: 'M', meaning: 'number of parallel devices', unit: '' }],
  D: [{ name: 'M', meaning: 'number of parallel devices', unit: '' }],
  R: [
    { name: 'M', meaning: 'number of parallel resistors', unit: '' },
    { name: 'TC1', meaning: 'first-order temperature coefficient (overrides the model’s)', unit: '1/K' },
    { name: 'TC2', meaning: 'second-order temperature coefficient (overrides the model’s)', unit: '1/K²' },
    { name: 'TC', meaning: 'TC=a,b gives TC1 and TC2 together', unit: '1/K' },
    { name: 'L', meaning: 'drawn length, for R = RSH·L/W from a model', unit: 'm' },
    { name: 'W', meaning: 'drawn width, for R = RSH·L/W from a model', unit: 'm' },
  ],
  J: [
    { name: 'AREA', meaning: 'area factor: multiplies BETA and IS', unit: '' },
    { name: 'M', meaning: 'number of parallel devices', unit: '' },
  ],
});
