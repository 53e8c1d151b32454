// The quantities whose spread is reported: each structure's reference current, output currents and produced voltages, and every element with a target current, as adjoint output functionals.

import type { Circuit } from '../circuit';
import { deviceKindOf } from '../devices/registry';
import { DEV_BIPOLAR, DEV_COMMON, DEV_CTRL, DEV_OUT, knownPlans, type MeasurementPlans } from '../structures/measure';
import { isBipolar, polaritySign, topologyOf } from '../structures/topology';
import type { Structure } from '../structures/types';
import type { OutputFunctional, OutputTerm } from './sensitivity';
import { structureDeviceSlots, type StructureDevices } from './sources';

/** One reported quantity and how it is read from the solution. */
export interface OutputSpec {
  /** Unique within one analysis: `structure-id iref`, `structure-id out Q2`, `structure-id voltage VBG`, `element Q2`. */
  key: string;
  /** As people read it: `IREF`, `Q2`, `VBG`. */
  label: string;
  unit: 'A' | 'V';
  role: 'iref' | 'iout' | 'voltage' | 'element';
  structure?: string;
  /** The element whose current it is (outputs and element currents). */
  element?: string;
  functional: OutputFunctional;
}

/**
 * The current an element carries, as the target check and the records read it: a BJT's
 * collector current, a MOSFET's or JFET's drain current, a diode's forward current, a
 * two-terminal element's current; as a magnitude.
 */
export function elementCurrent(circuit: Circuit, index: number): OutputFunctional | undefined {
  const el = circuit.elements[index];
  if (!el) return undefined;
  // Every nonlinear kind reports the current into its first terminal (collector, drain, anode, the + node of a switch or behavioural source).
  if (deviceKindOf(el.kind)) return { terms: [{ kind: 'terminal', element: index, terminal: 0, weight: 1 }], magnitude: true };
  if ('RLVIEFGH'.includes(el.kind)) return { terms: [{ kind: 'element', element: index, weight: 1 }], magnitude: true };
  return undefined;
}

/**
 * IREF's terms of structure k from its measurement plan, as the look-ups below make them, with its devices' elements into
 * `devices` from `first`; false (nothing written) unless every device of the structure was planned (each is a transistor of
 * the circuit and its reference node is one) and it has no parts, whose terms the look-ups below make.
 */
function plannedIref(plans: MeasurementPlans, k: number, s: Structure, devices: StructureDevices, first: number): OutputTerm[] | false {
  const from = plans.devStart[k];
  const count = s.devices.length;
  if (count === 0 || plans.devStart[k + 1] - from !== count || (s.parts !== undefined && Object.keys(s.parts).length > 0)) return false;
  const terms: OutputTerm[] = [];
  for (let d = 0; d < count; d++) {
    const i = plans.devE[from + d];
    const flags = plans.devFlags[from + d];
    devices.index[first + d] = i;
    // Currents into the terminals on the reference node (record convention: into the terminal); a MOSFET's gate draws none.
    if (flags & DEV_OUT) terms.push({ kind: 'terminal', element: i, terminal: 0, weight: 1 });
    if (flags & DEV_BIPOLAR || plans.devRecord[from + d] === 'jfet') {
      if (flags & DEV_CTRL) terms.push({ kind: 'terminal', element: i, terminal: 1, weight: 1 });
      if (flags & DEV_COMMON) terms.push({ kind: 'terminal', element: i, terminal: 2, weight: 1 });
    } else if (flags & DEV_COMMON) terms.push({ kind: 'terminal', element: i, terminal: 2, weight: 1 });
  }
  return terms;
}

/** What a structure without parts or produced voltages lists (one shared empty list, not one made per structure). */
const NO_NAMES: readonly string[] = [];
const NO_VOLTAGES: Readonly<NonNullable<Structure['voltages']>> = [];

/**
 * The outputs of every structure: IREF as `measureStructure` sums it, each output's current, each produced voltage.
 * `devices` (from `structureDeviceSlots`) is filled with the structures' devices as element indices as they are looked
 * up here, for the mismatch sources to read: each name is looked up once in the table of every element (a look-up there
 * misses the processor's caches at 100,000 elements; the transistor view read right after it does not).
 */
export function structureOutputs(circuit: Circuit, structures: readonly Structure[], devices: StructureDevices = structureDeviceSlots(structures)): OutputSpec[] {
  const topo = topologyOf(circuit);
  const indexOf = topo.elementIndex;
  // The measurement's plans of this list (made by the nominal check) hold each device's element and the terminals it has on
  // the reference node, which IREF sums: read there, not looked up by name again (five look-ups per structure).
  const plans = knownPlans(topo, structures);
  const out: OutputSpec[] = [];
  // Indexed loops: a for-of step makes an iterator result object until the function is optimised (once per structure,
  // device and output here).
  for (let k = 0; k < structures.length; k++) {
    const s = structures[k];
    const first = devices.start[k];
    const planned = plans !== undefined && plannedIref(plans, k, s, devices, first);
    const refNode = planned ? undefined : topo.nodeIndex.get(s.reference.node);
    if (planned) {
      if (planned.length > 0) out.push({ key: `${s.id} iref`, label: 'IREF', unit: 'A', role: 'iref', structure: s.id, element: s.reference.device, functional: { terms: planned, magnitude: true } });
    } else if (refNode === undefined) for (let d = 0; d < s.devices.length; d++) devices.index[first + d] = indexOf.get(s.devices[d]) ?? -1;
    else {
      const terms: OutputTerm[] = [];
      for (let d = 0; d < s.devices.length; d++) {
        const name = s.devices[d];
        const i = (devices.index[first + d] = indexOf.get(name) ?? -1);
        if (i < 0) continue;
        const t = topo.byName.get(name);
        if (!t) continue;
        // Currents into the terminals on the reference node (record convention: into the terminal).
        if (t.out === refNode) terms.push({ kind: 'terminal', element: i, terminal: 0, weight: 1 });
        if (isBipolar(t.tech) || t.element.kind === 'J') {
          if (t.ctrl === refNode) terms.push({ kind: 'terminal', element: i, terminal: 1, weight: 1 });
          if (t.common === refNode) terms.push({ kind: 'terminal', element: i, terminal: 2, weight: 1 });
        } else if (t.common === refNode) terms.push({ kind: 'terminal', element: i, terminal: 2, weight: 1 });
      }
      const parts = s.parts ? Object.keys(s.parts) : NO_NAMES;
      for (let p = 0; p < parts.length; p++) {
        const i = indexOf.get(parts[p]);
        if (i === undefined) continue;
        const el = circuit.elements[i];
        if (el.nodes.length < 2 || el.kind === 'Q' || el.kind === 'M' || el.kind === 'J') continue;
        const w = el.nodes[0] === refNode ? 1 : el.nodes[1] === refNode ? -1 : 0;
        if (w === 0) continue;
        terms.push(el.kind === 'D' ? { kind: 'terminal', element: i, terminal: 0, weight: w } : { kind: 'element', element: i, weight: w });
      }
      if (terms.length > 0) out.push({ key: `${s.id} iref`, label: 'IREF', unit: 'A', role: 'iref', structure: s.id, element: s.reference.device, functional: { terms, magnitude: true } });
    }
    for (let d = 0; d < s.outputs.length; d++) {
      const o = s.outputs[d];
      // An output is one of the structure's devices (found by `===` among a few names), looked up already.
      const at = s.devices.indexOf(o.device);
      const i = at >= 0 ? devices.index[first + at] : (indexOf.get(o.device) ?? -1);
      if (i < 0) continue;
      out.push({ key: `${s.id} out ${o.device}`, label: o.device, unit: 'A', role: 'iout', structure: s.id, element: o.device, functional: { terms: [{ kind: 'terminal', element: i, terminal: 0, weight: 1 }], magnitude: true } });
    }
    const voltages = s.voltages ?? NO_VOLTAGES;
    for (let d = 0; d < voltages.length; d++) {
      const v = voltages[d];
      const a = topo.nodeIndex.get(v.node);
      if (a === undefined) continue;
      const terms: OutputTerm[] = [];
      if (v.from === undefined) terms.push({ kind: 'node', node: a, weight: 1 });
      else {
        const b = topo.nodeIndex.get(v.from);
        if (b === undefined) continue;
        const sign = polaritySign(s.technology);
        terms.push({ kind: 'node', node: a, weight: sign }, { kind: 'node', node: b, weight: -sign });
      }
      out.push({ key: `${s.id} voltage ${v.name}`, label: v.name, unit: 'V', role: 'voltage', structure: s.id, functional: { terms, magnitude: false } });
    }
  }
  return out;
}
