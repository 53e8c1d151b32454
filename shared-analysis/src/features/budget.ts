// A work budget for editor features: a count of work units and, in a host, a deadline, so no feature can hold the thread that answers the editor.

declare const performance: { now(): number } | undefined;

/** How often (in work units) a budget with a deadline reads the clock. */
const CLOCK_EVERY = 256;

/**
 * What an editor feature may spend on one request. A feature calls `spend(units)` inside every
 * loop whose length grows with the netlist; once it answers false the feature stops and returns
 * what it has, marked as partial in the feature's own way (an outline entry, `incomplete`, a
 * note in the hover). `exhausted` tells the host afterwards that the answer was cut.
 */
export class WorkBudget {
  private used = 0;
  private clockAt = 0;
  private stopped = false;
  private readonly start: number;

  /**
   * `units`: the most work units to spend (a count, so tests are deterministic); `deadlineMs`:
   * also stop once this much time has passed since the budget was made (read every few hundred
   * units; omit for a count-only budget); `clock`: milliseconds, for tests that inject one.
   */
  constructor(
    readonly units: number,
    private readonly deadlineMs?: number,
    private readonly clock: () => number = defaultClock,
  ) {
    this.start = deadlineMs === undefined ? 0 : clock();
  }

  /** Spends `units` of work; false (and from then on always false) once the budget is used up. */
  spend(units = 1): boolean {
    if (this.stopped) return false;
    this.used += units;
    if (this.used > this.units) return this.stop();
    if (this.deadlineMs !== undefined && this.used - this.clockAt >= CLOCK_EVERY) {
      this.clockAt = this.used;
      if (this.clock() - this.start > this.deadlineMs) return this.stop();
    }
    return true;
  }

  /** True once `spend` has answered false: the feature's answer is partial. */
  get exhausted(): boolean {
    return this.stopped;
  }

  /** Work units spent so far. */
  get spent(): number {
    return this.used;
  }

  private stop(): false {
    this.stopped = true;
    return false;
  }
}

/** A budget that never runs out (the default of every feature called without one). */
export const UNLIMITED: WorkBudget = new WorkBudget(Number.POSITIVE_INFINITY);

function defaultClock(): number {
  return typeof performance !== 'undefined' ? performance.now() : Date.now();
}
