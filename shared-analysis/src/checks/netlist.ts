// The finding codes of elaboration and topology checks, with their default severities and one-line summaries.

import type { Severity } from '../types';

/**
 * Every code the elaborator (`elaborate/`) and the topology checks (`checks/connectivity.ts`)
 * emit, with its default severity and a one-line description. The README table is generated
 * from this record, and the emitting code reads its severities from here.
 */
export const NETLIST_CODES: Record<string, { severity: Severity; summary: string }> = {
  // Files.
  'include-not-found': { severity: 'error', summary: 'An .include or .lib names a file that cannot be read, or that qpoint may not read (outside the allowed folders, not a regular text file, too large, on a network share); the message says which.' },
  'include-not-netlist': { severity: 'error', summary: 'An included file does not read as a netlist (most of its cards unreadable); none of its text is quoted.' },
  'include-missing-consequences': { severity: 'warning', summary: 'With an include unread, the devices whose models, subcircuits or parameters may come from it, counted in one finding per unread file instead of one error each.' },
  'findings-capped': { severity: 'warning', summary: 'A code raised more than 50 times in one file: the first 50 are listed and this one finding gives the count (`data.total`, `data.hidden`).' },
  'include-cycle': { severity: 'error', summary: 'Files include each other in a cycle; the chain is named and the repeated file is not read again.' },
  'include-repeated': { severity: 'info', summary: 'A file (or library section) already read is included again; it is not read a second time.' },
  'include-too-deep': { severity: 'error', summary: 'Includes nest deeper than the limit; the deeper files are not read.' },
  'library-section-not-found': { severity: 'error', summary: 'A .lib card names a section the library file does not have; the sections it has are listed.' },
  'card-ignored': { severity: 'info', summary: 'A card that reruns the analysis at other values (`.step`); one note per kind of card, and the nominal netlist is analysed.' },
  'alternatives-not-analysed': { severity: 'info', summary: 'The netlist analysed ends at `.alter`; the alternative versions after it are not analysed.' },
  'condition-invalid': { severity: 'error', summary: 'An `.if` or `.elseif` condition that cannot be evaluated; its branch is not taken.' },
  'element-not-analysed': { severity: 'warning', summary: 'Elements of a kind the solver does not read yet (Z, lossy and coupled lines, digital elements, E/F/G/H in a frequency-domain form); one finding per kind, and they are left out.' },
  'element-not-analysed-no-dc-effect': { severity: 'info', summary: 'Elements the solver does not read that have no effect at DC (inductor couplings K); one finding per kind.' },

  // Parameters.
  'param-invalid': { severity: 'error', summary: 'A .param or subcircuit parameter whose expression cannot be evaluated.' },
  'param-cycle': { severity: 'error', summary: 'Parameters refer to each other in a cycle; the chain is named.' },
  'param-chain-too-long': { severity: 'error', summary: 'Parameters refer to parameters more levels deep than the limit.' },
  'param-duplicate': { severity: 'warning', summary: 'A parameter is defined twice in one scope; the later definition is used.' },
  'temperature-invalid': { severity: 'error', summary: 'A .temp or .option tnom value that is not a temperature above absolute zero.' },

  // Models.
  'model-unknown-type': { severity: 'error', summary: 'A .model type other than NPN, PNP, D, NMOS, PMOS or R.' },
  'model-unknown-parameter': { severity: 'warning', summary: 'A model parameter the device equations do not know (one finding per card when there are more than three); the parameters they use are listed.' },
  'model-parameter-ignored': { severity: 'info', summary: 'Model parameters of the full device model that the DC bias equations here do not use.' },
  'model-parameter-invalid': { severity: 'error', summary: 'A model parameter outside its physical range (IS, BF, KP, NF ≤ 0; negative VAF) or unreadable; the default is used.' },
  'model-duplicate': { severity: 'error', summary: 'Two .model cards with the same name in one scope; the first is used.' },
  'model-level-unsupported': { severity: 'warning', summary: 'A diode or bipolar model LEVEL other than 1; it is solved with the equations of docs/DEVICE-MODELS.md, and its other parameters are listed in one note.' },
  'model-parameter-alias': { severity: 'info', summary: 'A model parameter written in another spelling of the family (VA for VAF, IK for IKF, ...); it is read as that parameter, with one note per model.' },
  'model-level-approximated': { severity: 'info', summary: 'A MOSFET model of a LEVEL above 1, solved with the level-1 square law after mapping VTH0, U0/TOX and K1 to VTO, KP and GAMMA; the finding names the numbers used.' },
  'model-bin-not-found': { severity: 'error', summary: 'A MOSFET names a binned model (NAME.1, NAME.2, …) but no bin covers its L and W; the bins and their ranges are listed and the element is left out.' },
  'model-threshold-sign': { severity: 'warning', summary: 'A PMOS model with a positive VTO: a depletion-mode device, on at VGS = 0 V, and usually a dropped minus sign for an enhancement device.' },
  'model-threshold-depletion': { severity: 'info', summary: 'An NMOS model with a negative VTO: a depletion-mode device, on at VGS = 0 V, which bias networks rarely use.' },
  'model-not-found': { severity: 'error', summary: 'An element names a model that no .model card defines.' },
  'model-wrong-kind': { severity: 'error', summary: 'An element names a model of another device type (a Q naming an NMOS model).' },

  // Elements.
  'element-duplicate-name': { severity: 'error', summary: 'Two elements with the same name (case-insensitive) in one scope; the second is left out.' },
  'element-node-count': { severity: 'error', summary: 'An element with the wrong number of nodes for its kind.' },
  'node-name-invalid': { severity: 'error', summary: 'A node written as an expression, which cannot name a node.' },
  'element-value-missing': { severity: 'error', summary: 'An element without the value it needs.' },
  'element-value-invalid': { severity: 'error', summary: 'An element value that is not a readable number or whose expression fails.' },
  'element-unknown-parameter': { severity: 'warning', summary: 'An instance parameter the element does not use; it is ignored.' },
  'resistor-zero-value': { severity: 'info', summary: 'A 0 Ω resistor (a jumper or option link); it is solved as a short and the current through it is reported.' },
  'resistor-negative-value': { severity: 'warning', summary: 'A negative resistance; it is kept as written.' },
  'device-area-invalid': { severity: 'error', summary: 'A device area or parallel count M that is zero or negative; 1 is used so the analysis continues.' },
  'value-out-of-range': { severity: 'warning', summary: 'A value beyond 1e15 in magnitude, or a MOSFET W or L outside 1 nm to 1 m (usually a missing suffix).' },
  'mosfet-geometry-missing': { severity: 'info', summary: 'A MOSFET without W or L; the documented default of 10 µm is used.' },
  'controlled-source-control-missing': { severity: 'error', summary: 'An F or H source names a controlling voltage source that does not exist.' },

  // Subcircuits.
  'subckt-not-found': { severity: 'error', summary: 'An X instance names a subcircuit that is not defined.' },
  'subckt-port-count': { severity: 'error', summary: 'An X instance connects a different number of nodes than the subcircuit has ports.' },
  'subckt-unknown-parameter': { severity: 'error', summary: 'An instance override of a parameter the subcircuit has neither on its .subckt line nor in a .param inside it; it is ignored.' },
  'subckt-recursive': { severity: 'error', summary: 'A chain of instances that re-enters a subcircuit it is inside; the chain is named.' },
  'subckt-duplicate': { severity: 'error', summary: 'Two subcircuit definitions with the same name in one scope; the first is used.' },
  'subckt-port-duplicate': { severity: 'error', summary: 'A subcircuit lists the same port twice.' },
  'subckt-port-unused': { severity: 'warning', summary: 'A subcircuit port that no element inside the subcircuit connects to.' },
  'subckt-nesting-too-deep': { severity: 'error', summary: 'Subcircuit instances nest deeper than the limit; the deeper instance is left out.' },
  'circuit-too-large': { severity: 'error', summary: 'Flattening would make more elements than the limit; the rest are left out.' },

  'elaboration-internal-error': { severity: 'error', summary: 'Elaboration stopped on an internal defect; the netlist should be reported.' },
  'analysis-part-failed': { severity: 'warning', summary: 'A stage after the operating point (the corner analysis or the tolerance spread) stopped on an internal defect; its results are left out, the rest of the analysis stands. The netlist should be reported.' },
  'value-not-finite': { severity: 'warning', summary: 'The engine computed a number that is not finite (NaN or infinite); it is left out of the results instead of reaching JSON as null or a report as Infinity. The netlist should be reported.' },

  // Topology (checks/connectivity.ts).
  'no-ground-node': { severity: 'error', summary: 'Nothing connects to ground (node 0 or gnd).' },
  'node-single-connection': { severity: 'warning', summary: 'A node with only one terminal attached (often a misspelt node name).' },
  'node-no-dc-path': { severity: 'error', summary: 'A group of nodes with no DC path to ground (only capacitors, gates or sensing inputs reach them).' },
  'voltage-source-loop': { severity: 'error', summary: 'A loop made only of voltage sources, inductors and voltage-output controlled sources.' },
  'current-source-cutset': { severity: 'error', summary: 'A group of nodes joined to the rest only through current sources, whose currents cannot balance exactly.' },
};

/** The default severity of a netlist code (codes not in the table are errors, so a typo is loud). */
export function netlistSeverity(code: string): Severity {
  return NETLIST_CODES[code]?.severity ?? 'error';
}
