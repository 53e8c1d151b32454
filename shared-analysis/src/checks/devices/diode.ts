// Judge for junction diodes: a diode that blocks the only path of a branch (reverse breakdown itself is solved, docs/DEVICE-MODELS.md).

import type { Diode } from '../../circuit';
import { formatMeasured, formatSigned } from '../../fixes/format';
import type { DiodeRecord } from '../../solve/types';
import { judgeBlockedBranch } from './branch';
import type { JudgeContext } from './context';
import type { JudgeMemory } from './transistors';

const V = (x: number) => formatMeasured(x, 'V');

/** The breakdown voltage a diode's model gives (BV), when it gives one. */
export function breakdownVolts(el: Diode): number | undefined {
  const bv = el.model.params['BV'];
  return bv !== undefined && Number.isFinite(bv) && bv > 0 ? bv : undefined;
}

/** Judges one diode at the operating point. */
export function judgeDiode(el: Diode, rec: DiodeRecord, ctx: JudgeContext, memory: JudgeMemory): void {
  const bv = breakdownVolts(el);
  if (!ctx.isOff([rec.id], Math.abs(rec.vd))) return;
  // A diode with a breakdown voltage is often meant to sit reversed (a zener reference); its breakdown is judged above.
  if (bv !== undefined || ctx.inStructure(el.name)) return;
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
