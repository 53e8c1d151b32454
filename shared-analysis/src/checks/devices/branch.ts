// The blocked-branch judgement shared by every device kind: an off device that is the only path of a series branch between two rails.

import type { Element } from '../../circuit';
import { formatMeasured } from '../../fixes/format';
import type { JudgeContext, PathSide } from './context';

/** How a device describes itself to the blocked-branch judgement. */
export interface BranchCandidate {
  element: Element;
  /** The terminal current enters when the device conducts the normal way (collector, drain, PNP emitter, anode). */
  enters: number;
  /** The terminal it leaves by. */
  leaves: number;
  /** Names of the two terminals, as written in messages ("collector", "emitter"). */
  enterName: string;
  leaveName: string;
  /** Why it does not conduct, with the voltages that show it ("VBE = 0.21 V, below the about 0.6 V a silicon junction needs"). */
  why: string;
  /** What to write when the rails are the wrong way round for it ("collector and emitter look swapped"). */
  reversedHint: string;
  /** What to write when the rails are the right way round ("check what drives its base"). */
  forwardHint: string;
}

/**
 * Raises `branch-blocked` when `c.element` (already known to be off) is the only path of a
 * branch between two rails at different potentials: walking from each main terminal through
 * series elements reaches a rail, at least one other element lies on the branch, and no other
 * device of the branch has been reported. The message names the branch, the voltages and
 * the likely mistake. Returns whether it raised the finding.
 */
export function judgeBlockedBranch(ctx: JudgeContext, c: BranchCandidate, reported: Set<string>): boolean {
  const a = ctx.walk(c.enters, c.element);
  const b = ctx.walk(c.leaves, c.element);
  if (!a.rail || !b.rail) return false;
  if (a.elements.length + b.elements.length === 0) return false;
  const va = a.rail.volts;
  const vb = b.rail.volts;
  // Two rails at (nearly) one potential drive nothing through the branch.
  if (Math.abs(va - vb) < 0.05) return false;
  const key = branchKey(c.element, a, b);
  if (reported.has(key)) return false;
  reported.add(key);
  const path = [
    railText(ctx, a),
    ...[...a.elements].reverse().map((e) => e.name),
    c.element.name,
    ...b.elements.map((e) => e.name),
    railText(ctx, b),
  ].join(' – ');
  const reversed = va < vb;
  const hint = reversed
    ? `The branch's higher rail is on ${c.element.name}'s ${c.leaveName} side, the wrong way round for it: ${c.reversedHint}.`
    : `${c.forwardHint}.`;
  const message =
    `${c.element.name} does not conduct (${c.why}), and it is the only path of the branch ${path}, which therefore carries no current. ${hint}`;
  const others = [...a.elements, ...b.elements];
  ctx.emit(
    'branch-blocked',
    c.element,
    message,
    { branch: [a.rail.node, ...a.elements.map((e) => e.name).reverse(), c.element.name, ...b.elements.map((e) => e.name), b.rail.node], reversed, railVolts: [va, vb] },
    ctx.related(others.map((e) => ({ element: e, message: `${e.name}: in series with ${c.element.name}, carries no current` }))),
  );
  return true;
}

function railText(ctx: JudgeContext, side: PathSide): string {
  const r = side.rail!;
  return `${r.node} (${formatMeasured(r.volts, 'V')})`;
}

/** One key per branch, whichever of its devices is judged first. */
function branchKey(el: Element, a: PathSide, b: PathSide): string {
  return [el.name, ...a.elements.map((e) => e.name), ...b.elements.map((e) => e.name)].map((n) => n.toLowerCase()).sort().join('|');
}

/** `V(node) = 1.23 V`, for messages. */
export function describeVolts(ctx: JudgeContext, node: number): string {
  return `V(${ctx.nodeName(node)}) = ${formatMeasured(ctx.v(node), 'V')}`;
}
