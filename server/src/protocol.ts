// Custom requests and command names shared by the qpoint client and server, beyond standard LSP.

/** The server command that re-reads included files from disk and re-analyses every open netlist (the client's re-analyse command sends it). */
export const REANALYSE_COMMAND = 'qpoint.server.reanalyse';
/** The client-side command the server's size refactor runs for a client that has it (the VS Code extension; it asks for the target first). */
export const SIZE_COMMAND = 'qpoint.sizeResistorForCurrent';
/**
 * The server-side sizing command, for any client: it asks for the target current with
 * `window/showMessageRequest` (or takes it as an argument) and writes the value with `workspace/applyEdit`.
 */
export const SIZE_SERVER_COMMAND = 'qpoint.server.sizeResistor';

/** The one argument of SIZE_SERVER_COMMAND. */
export interface SizeCommandArgs {
  uri: string;
  /** Resistor name (hierarchical, or a card name inside a subcircuit used once). */
  resistor: string;
  /** Target current text (`250u`, `1.2mA`); asked for when absent. */
  target?: string;
  /** The standard value to write (`4.3k`, one of the candidates); the nearest candidate when absent and the client cannot be asked. */
  value?: string;
}

/** What SIZE_SERVER_COMMAND answers. */
export interface SizeCommandResult {
  /** True when the client applied the edit. */
  applied: boolean;
  /** The value written. */
  value?: string;
  /** A sentence saying what was done, or why nothing was (also shown with window/showMessage). */
  message: string;
}

/** `initializationOptions.clientCommands`: commands the client runs itself; a client listing SIZE_COMMAND gets it in the sizing refactor. */
export const CLIENT_COMMANDS_OPTION = 'clientCommands';

/** `qpoint/outputCharacteristic`: sweep one mirror output's node voltage and return its current. */
export const OUTPUT_CHARACTERISTIC_REQUEST = 'qpoint/outputCharacteristic';

export interface OutputCharacteristicParams {
  uri: string;
  /** Output device name (hierarchical), e.g. `Q2` or `X1.M3`. */
  device: string;
  /** Number of sweep points (default 81). */
  points?: number;
}

/** Output-node voltage against output current, with the active-region edge and the corner spread (computed by the engine). */
export type { OutputCharacteristicResult } from '../../shared-analysis/src/features/sweep';

/** `qpoint/listOutputs`: the mirror outputs of a document, for the client's picker. */
export const LIST_OUTPUTS_REQUEST = 'qpoint/listOutputs';
export interface ListOutputsParams { uri: string }
export interface ListOutputsResult { outputs: { device: string; structureId: string; kind: string; node: string }[] }

/** `qpoint/sizeResistor`: standard-value candidates for a reference resistor and a target current. */
export const SIZE_RESISTOR_REQUEST = 'qpoint/sizeResistor';

export interface SizeResistorParams {
  uri: string;
  /** Resistor name (hierarchical). */
  resistor: string;
  /** Target current as typed by the user, engineering notation allowed (`250u`, `1.2mA`). */
  target: string;
}

export interface SizeResistorCandidate {
  /** E.g. "8.2k (E24) → 1.02 mA, +2.1 %". */
  label: string;
  /** Replacement value text, engineering notation. */
  valueText: string;
  /** Current the value gives (A). */
  current: number;
  /** Relative error from the target. */
  error: number;
  /** LSP WorkspaceEdit that writes the value. */
  edit: unknown;
}

export interface SizeResistorResult {
  /** The exact resistance that meets the target. */
  ideal: number;
  candidates: SizeResistorCandidate[];
}

/**
 * `qpoint/monteCarlo`: one chunk of seeded Monte Carlo runs on the last analysis of a netlist
 * (docs/VARIATION.md). The client asks chunk after chunk (runs `first` … `first + count − 1`),
 * which gives it progress and a place to stop; `first` = 0 starts afresh, and `finish` asks for
 * the figures of every run so far.
 */
export const MONTE_CARLO_REQUEST = 'qpoint/monteCarlo';
export interface MonteCarloParams {
  uri: string;
  seed: number;
  first: number;
  count: number;
  finish?: boolean;
}
export interface MonteCarloReply {
  /** Runs done so far and how many of them converged. */
  runs: number;
  converged: number;
  /** With `finish`: one block of lines per output (its linear spread, then the Monte Carlo figures and histogram). */
  report?: string[];
}

/**
 * `qpoint/inactiveText` (server → client notification): the text of a document that does not exist
 * for the analysis (`.if` branches no instance takes), sent after each analysis that changes it; an
 * empty list clears it. The VS Code client shows it faded.
 */
export const INACTIVE_TEXT_NOTIFICATION = 'qpoint/inactiveText';
export interface InactiveTextParams {
  uri: string;
  ranges: { start: { line: number; character: number }; end: { line: number; character: number } }[];
}
