// Exit codes of the `qpoint` command, in a module of their own: the bin's loader needs them without the engine.

/** Exit codes of the `qpoint` command (documented in the README and in the usage text). */
export const EXIT = {
  /** Every file was checked and nothing reached --fail-level. */
  clean: 0,
  /** Every file was checked and a finding reached --fail-level. */
  findings: 1,
  /** The command line was wrong (usage printed on stderr). */
  usage: 2,
  /** qpoint could not do the job: a file could not be read, or an analysis stopped with an internal error. */
  failed: 3,
} as const;
