// The DC solver's finding codes with their default severities: the table behind the README and SARIF rules.

import type { Severity } from '../types';

/** Codes `DcSolver` reports. */
export const SOLVER_CODES: Record<string, { severity: Severity; summary: string }> = {
  'dc-no-convergence': { severity: 'error', summary: 'Newton iteration (with gmin and source stepping) did not settle; names the nodes and devices that did not.' },
  'dc-singular-matrix': { severity: 'error', summary: 'The circuit equations have no unique solution (a floating node or a source loop); names the elements involved.' },
  'dc-bad-node': { severity: 'error', summary: 'An element without the node connections its kind needs; it is left out of the solve.' },
  'dc-value-unusable': { severity: 'error', summary: 'A value that is not a finite number; the solver substitutes a safe one and says which.' },
  'dc-value-overflow': { severity: 'error', summary: 'A value so large that the device equations overflow.' },
  'dc-value-out-of-range': { severity: 'warning', summary: 'A value far outside what a physical part has.' },
  'dc-parameter-unusable': { severity: 'error', summary: 'A model or instance parameter the equations cannot use (area 0, IS ≤ 0, …); the substitute is named.' },
  'dc-zero-resistance': { severity: 'info', summary: 'A 0 Ω resistor, solved as a short circuit.' },
  'dc-negative-resistance': { severity: 'warning', summary: 'A negative resistance, solved as written.' },
  'dc-unknown-control': { severity: 'error', summary: 'A current-controlled source whose controlling source does not exist.' },
  'dc-temperature-unusable': { severity: 'error', summary: 'An analysis temperature at or below absolute zero.' },
  'dc-junction-shorted': { severity: 'warning', summary: 'Both ends of a junction on one node: it can never be biased.' },
  'dc-junction-overdriven': { severity: 'warning', summary: 'A source drives a junction directly far past its turn-on voltage.' },
  'dc-override-refused': { severity: 'warning', summary: 'A per-solve resistance override that could not be applied (unknown element, not a resistor, not a finite number, or a change to 0 Ω); the netlist value was used.' },
  'dc-behaviour-not-evaluable': { severity: 'error', summary: 'A behavioural source’s function has no finite value at the point the solver reached (the log of a negative number, a division by zero, …); names the element, the sub-expression and the controlling values.' },
  'dc-implausible-voltage': { severity: 'warning', summary: 'A solved node voltage far outside every source voltage.' },
};
