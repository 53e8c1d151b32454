// Judge for junction diodes: reverse bias beyond a rated breakdown, and a diode that blocks the only path of a branch.

import type { Diode } from '../../circuit';
import { formatMeasured, formatSigned } from '../../fixes/format';
import type { DiodeRecord } from '../../solve/types';
import { judgeBlockedBranch } from './branch';
import type { JudgeContext } from './context';
import type { JudgeMemory } from './transistors';

const V = (x: number) => formatMeasured(x, 'V');

/** The breakdown voltage a diode's model gives (BV), when it gives one. */
export function breakdownVolts(el: Diode): number | undefined {
  const bv = el.model.params['BV'] ?? el.model.ratings?.['BV'];
  return bv !== undefined && Number.isFinite(bv) && bv > 0 ? bv : undefined;
}

/** Judges one diode at the operating point. */
export function judgeDiode(el: Diode, rec: DiodeRecord, ctx: JudgeContext, memory: JudgeMemory): void {
  const bv = breakdownVolts(el);
  // A solver that models breakdown reports the region itself; only a point past BV without it is wrong.
  if (bv !== undefined && (rec.region as string) !== 'breakdown' && rec.vd < -bv) {
    ctx.emit(
      'breakdown-not-solved',
      el,
      `${el.name} is reverse-biased by ${V(-rec.vd)}, beyond the breakdown voltage BV = ${V(bv)} of its model ${el.model.name}, and this analysis does not solve reverse breakdown yet: a real part would conduct there and hold about ${V(bv)}, so the voltages around ${el.name} are not what the circuit does. A zener reference meant to sit in breakdown is shown wrong for the same reason.`,
      { junction: 'diode', reverseV: -rec.vd, limitV: bv },
    );
  }
  if (!ctx.isOff([rec.id], Math.abs(rec.vd))) return;
  // A diode with a breakdown voltage is often meant to sit reversed (a zener reference); its breakdown is judged above.
  if (bv !== undefined || ctx.structureMembers.has(el.name.toLowerCase())) return;
  const [anode, cathode] = el.nodes;
  judgeBlockedBranch(
    ctx,
    {
      element: el,
      enters: anode,
      leaves: cathode,
      enterName: 'anode',
      leaveName: 'cathode',
      why: rec.vd < 0 ? `it is reverse-biased, VD = ${formatSigned(rec.vd, 'V')}` : `VD = ${V(rec.vd)}, below its forward drop`,
      reversedHint: 'its anode and cathode look swapped, or the supply polarity is reversed',
      forwardHint: `The rails leave it only VD = ${formatSigned(rec.vd, 'V')}; check the other elements of the branch and the supply`,
    },
    memory.branches,
  );
}
