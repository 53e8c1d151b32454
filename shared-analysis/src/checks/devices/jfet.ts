// Judge for junction FETs: a gate junction driven forward, which a JFET amplifier or source never intends (its gate is meant to stay reverse-biased and draw picoamperes).

import type { Jfet } from '../../circuit';
import { formatMeasured } from '../../fixes/format';
import type { JfetRecord } from '../../solve/types';
import type { JudgeContext } from './context';

/**
 * A gate current above this is a gate junction conducting forward (common practice: a JFET's
 * gate leaks picoamperes to nanoamperes when reverse-biased; 1 µA is far above any leakage).
 */
export const GATE_CONDUCTING_A = 1e-6;

/** `jfet-gate-forward` when a gate junction carries forward current. */
export function judgeJfet(el: Jfet, rec: JfetRecord, ctx: JudgeContext): void {
  const own = rec.polarity === 'pjf' ? -1 : 1;
  const ig = own * rec.ig;
  if (!(ig > GATE_CONDUCTING_A)) return;
  const vgs = own * rec.vgs;
  const vgd = own * (rec.vgs - rec.vds);
  const junction = vgs >= vgd ? 'gate-source' : 'gate-drain';
  const volts = Math.max(vgs, vgd);
  ctx.emit(
    'jfet-gate-forward',
    el,
    `${el.name}'s ${junction} junction is forward-biased by ${formatMeasured(volts, 'V')} and its gate draws ${formatMeasured(Math.abs(rec.ig), 'A')}; a JFET's gate is meant to stay reverse-biased (check the gate bias, or whether the ${rec.polarity === 'pjf' ? 'P-channel' : 'N-channel'} model matches the supply polarity).`,
    { gateCurrent: rec.ig, junction, volts },
  );
}
