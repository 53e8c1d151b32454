// The voltages a structure produces (a bandgap's VBG, a VBE multiplier's voltage): read off an operating point and summarised across corners.

import { maxOf, minOf } from '../arrays';
import type { OperatingPoint } from '../solve/types';
import { polaritySign, topologyOf } from './topology';
import type { Circuit } from '../circuit';
import { pointVectors } from '../solve/point';
import type { DerivedVoltage, Structure } from './types';
import { nameTable } from '../names';

/**
 * A derived voltage at one solution: V(node) to ground, or — with `from` — how far `node` sits
 * beyond `from` in the structure's own polarity (above for NPN/NMOS, below for PNP/PMOS).
 * Undefined when a node is missing or not finite.
 */
export function voltageAt(s: Pick<Structure, 'technology'>, v: DerivedVoltage, nodes: Record<string, number> | ((name: string) => number | undefined)): number | undefined {
  const at = typeof nodes === 'function' ? nodes : (name: string) => nodes[name];
  const a = at(v.node);
  if (a === undefined || !Number.isFinite(a)) return undefined;
  if (v.from === undefined) return a;
  const b = at(v.from);
  if (b === undefined || !Number.isFinite(b)) return undefined;
  return polaritySign(s.technology) * (a - b);
}

/**
 * Every derived voltage of a structure at one operating point (name -> volts), or undefined when it
 * has none. With the point's `circuit` the voltages are read by node index, without building the
 * point's name-keyed tables.
 */
export function structureVoltages(s: Structure, op: OperatingPoint, circuit?: Circuit): Record<string, number> | undefined {
  if (!s.voltages || s.voltages.length === 0) return undefined;
  const out: Record<string, number> = nameTable();
  const vec = circuit ? pointVectors(op) : undefined;
  const index = circuit && vec ? topologyOf(circuit).nodeIndex : undefined;
  const nodes: Record<string, number> | ((name: string) => number | undefined) =
    vec && index
      ? (name) => {
          const i = index.get(name);
          return i === undefined ? undefined : vec.volts[i];
        }
      : op.nodes;
  for (const v of s.voltages) {
    const x = voltageAt(s, v, nodes);
    if (x !== undefined) out[v.name] = x;
  }
  return out;
}

/**
 * Fills each derived voltage's corner range (lowest and highest converged corner value, nominal
 * included) and its temperature coefficient from the cold and hot corners at nominal supply and beta:
 * (V(hot) − V(cold))/(T(hot) − T(cold)) over the nominal value, in ppm/°C.
 */
export function summariseVoltageCorners(s: Structure): void {
  for (const v of s.voltages ?? []) {
    const vals = s.corners.filter((c) => c.converged && c.voltages?.[v.name] !== undefined).map((c) => c.voltages![v.name]);
    if (v.solved !== undefined) vals.push(v.solved);
    v.cornerRange = vals.length > 0 ? { min: minOf(vals), max: maxOf(vals) } : undefined;
    const temps = s.corners.filter((c) => c.converged && c.supplyScale === 1 && c.betaScale === 1 && !c.process && c.voltages?.[v.name] !== undefined);
    const cold = temps.reduce<(typeof temps)[number] | undefined>((a, c) => (!a || c.temperatureC < a.temperatureC ? c : a), undefined);
    const hot = temps.reduce<(typeof temps)[number] | undefined>((a, c) => (!a || c.temperatureC > a.temperatureC ? c : a), undefined);
    const nominal = v.solved ?? v.estimate;
    if (cold && hot && hot.temperatureC > cold.temperatureC && nominal !== undefined && nominal !== 0) {
      v.tempcoPpmPerC = ((hot.voltages![v.name] - cold.voltages![v.name]) / (hot.temperatureC - cold.temperatureC) / Math.abs(nominal)) * 1e6;
    } else v.tempcoPpmPerC = undefined;
  }
}
