// Per-output numbers a structure keeps for the whole analysis, held in one list of numbers instead of tables keyed by
// the outputs' devices: the tables are made again, the same names in the same order with the same values, when read.

import { nameTable } from '../names';

/** Whether no two outputs name one device (a table keyed by them has an entry per output). */
export function distinctDevices(outs: readonly { device: string }[]): boolean {
  for (let i = 1; i < outs.length; i++) for (let j = 0; j < i; j++) if (outs[i].device === outs[j].device) return false;
  return true;
}

/** Whether `t` is a prototype-free table whose names are outputs' devices in their order (some may be missing). */
function tableNames(t: unknown, outs: readonly { device: string }[]): string[] | undefined {
  if (t === null || typeof t !== 'object' || Object.getPrototypeOf(t) !== null) return undefined;
  const names = Object.keys(t);
  let o = 0;
  for (const name of names) {
    while (o < outs.length && outs[o].device !== name) o++;
    if (o === outs.length) return undefined;
    o++;
  }
  return names;
}

/** Writes `t`'s numbers into `figures` from `at` by output, when `t` is a table `tableNames` takes of finite numbers only. */
export function numbersFit(t: unknown, outs: readonly { device: string }[], figures: number[], at: number): boolean {
  const names = tableNames(t, outs);
  if (names === undefined) return false;
  const table = t as Record<string, unknown>;
  for (const name of names) {
    const x = table[name];
    if (typeof x !== 'number' || !Number.isFinite(x)) return false;
  }
  for (let o = 0; o < outs.length; o++) {
    const x = table[outs[o].device];
    if (x !== undefined) figures[at + o] = x as number;
  }
  return true;
}

/** A new prototype-free table of `figures[at + o]` under each output's device, leaving out the NaN ones (no entry). */
export function tableOf(figures: readonly number[], at: number, outs: readonly { device: string }[]): Record<string, number> {
  const table: Record<string, number> = nameTable();
  for (let o = 0; o < outs.length; o++) {
    const x = figures[at + o];
    if (!Number.isNaN(x)) table[outs[o].device] = x;
  }
  return table;
}

/** A list of `length` NaNs (no entry yet), stored as numbers. */
export function noFigures(length: number): number[] {
  return new Array<number>(length).fill(NaN);
}
