// The state of nested `.if` / `.elseif` / `.else` / `.endif` blocks while cards are read in order.

import type { ConditionCard } from '../syntax/ast';

/** Which branch of each open `.if` block is taken, as cards are read in order. */
export class Branches {
  /** Per open `.if`: whether its enclosing branch is active, whether a branch was taken, whether the current one is. */
  private readonly stack: { outer: boolean; taken: boolean; active: boolean }[] = [];

  /** Whether a card read now takes part (outside every block, or in the taken branch of each). */
  active(): boolean {
    return this.stack.length === 0 || this.stack[this.stack.length - 1]!.active;
  }

  /** Whether a block is open. */
  open(): boolean {
    return this.stack.length > 0;
  }

  /** Steps over a condition card; `test` is asked only when the card's condition decides which branch is taken. */
  step(card: ConditionCard, test: () => boolean): void {
    const top = this.stack[this.stack.length - 1];
    switch (card.branch) {
      case 'if': {
        const outer = this.active();
        const taken = outer && test();
        this.stack.push({ outer, taken, active: taken });
        break;
      }
      case 'elseif':
        if (!top) break;
        if (top.outer && !top.taken) {
          top.active = test();
          top.taken = top.active;
        } else top.active = false;
        break;
      case 'else':
        if (!top) break;
        top.active = top.outer && !top.taken;
        top.taken = true;
        break;
      case 'endif':
        this.stack.pop();
        break;
    }
  }
}
