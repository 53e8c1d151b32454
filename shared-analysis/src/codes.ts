// Every finding code the engine can report, gathered from the modules that own them.

import type { Severity } from './types';
import { SYNTAX_CODES } from './syntax/codes';
import { NETLIST_CODES } from './checks/netlist';
import { SOLVER_CODES } from './solve/codes';
import { STRUCTURE_CODES } from './checks/structures';
import { DEVICE_CODES } from './checks/devices/index';
import { PLAUSIBILITY_CODES } from './checks/plausibility';
import { CORNER_CODES } from './checks/corners';
import { STARTUP_CODES } from './checks/startup';
import { TARGET_CODES } from './checks/targets';
import { VARIATION_CODES } from './checks/variation';
import { FIX_CODES } from './fixes/index';
import { nameTable } from './names';

export interface CodeInfo {
  severity: Severity;
  summary: string;
  /** The module family that owns the code. */
  group: 'syntax' | 'netlist' | 'solver' | 'structures' | 'devices' | 'plausibility' | 'corners' | 'targets' | 'fixes' | 'host';
}

/** Codes a host reports about the analysis itself (the language server or the CLI; the engine never emits them). */
export const HOST_CODES: Record<string, { severity: Severity; summary: string }> = {
  'analysis-stopped': { severity: 'error', summary: 'An analysis failed or ran past its time limit (the language server keeps the last finished results shown; the CLI exits with code 3).' },
  'sizing-budget-spent': { severity: 'info', summary: 'The command line spent its per-file time budget for re-solved resistor fixes (30 s); the findings it did not reach (missed targets, outputs out of region, implausible values) have none.' },
  'file-unreadable': { severity: 'error', summary: 'A netlist named on the command line cannot be read (missing, not a regular text file, or too large); the CLI exits with code 3.' },
};

/** Code -> default severity, one-line summary and owning group. */
export function findingCatalogue(): Record<string, CodeInfo> {
  const out: Record<string, CodeInfo> = nameTable();
  const groups: [CodeInfo['group'], Record<string, { severity: Severity; summary: string }>][] = [
    ['syntax', SYNTAX_CODES],
    ['netlist', NETLIST_CODES],
    ['solver', SOLVER_CODES],
    ['structures', STRUCTURE_CODES],
    ['devices', DEVICE_CODES],
    ['structures', STARTUP_CODES],
    ['plausibility', PLAUSIBILITY_CODES],
    ['corners', CORNER_CODES],
    ['targets', TARGET_CODES],
    ['targets', VARIATION_CODES],
    ['fixes', FIX_CODES],
    ['host', HOST_CODES],
  ];
  for (const [group, table] of groups) for (const [code, info] of Object.entries(table)) out[code] ??= { ...info, group };
  return out;
}
