// The parser's finding codes with their default severities: the one table behind parser.ts, the README and SARIF rules.

import type { Severity } from '../types';

/**
 * Codes `parse()` reports in `ParsedDocument.errors`, each with the severity the parser gives it and a one-line
 * summary. parser.ts reads every severity from here, so the table cannot drift from what is emitted.
 */
export const SYNTAX_CODES = {
  'title-looks-like-card': { severity: 'hint', summary: 'The first line is read as the title, but it reads like an element or dot card.' },
  'continuation-without-card': { severity: 'error', summary: 'A `+` line with no element or dot card before it to continue.' },
  'unrecognised-card': { severity: 'error', summary: 'A line that starts with neither an element letter, a dot command, `*` nor `+`.' },
  'element-missing-fields': { severity: 'error', summary: 'An element card with fewer fields than its letter needs.' },
  'missing-model-name': { severity: 'error', summary: 'A D, Q or M card whose fields hold no model name where one is needed.' },
  'unsupported-source-form': { severity: 'error', summary: 'A V or I source form qpoint does not read (POLY, VALUE=, TABLE, LAPLACE, PWL from a file).' },
  'source-missing-value': { severity: 'error', summary: '`DC` with no value after it, or a transient function with no t=0 argument.' },
  'unexpected-field': { severity: 'warning', summary: 'A field beyond those the card uses; it is ignored.' },
  'ignored-keyword': { severity: 'hint', summary: 'An initial-condition keyword (`OFF`) that a DC bias analysis does not use.' },
  'unbalanced-brace': { severity: 'error', summary: 'A `{` with no matching `}` on its line, or a stray `}`.' },
  'unterminated-quote': { severity: 'error', summary: "A `'` or `\"` with no closing quote on its line." },
  'unbalanced-parenthesis': { severity: 'warning', summary: 'A `(` with no matching `)` in the card, or a stray `)`.' },
  'assignment-missing-value': { severity: 'error', summary: '`name=` with nothing after the `=`, or a `.model` parameter written without `=value`.' },
  'assignment-missing-name': { severity: 'error', summary: '`=value` with no name before the `=`.' },
  'model-missing-fields': { severity: 'error', summary: '`.model` without a model name and a device type.' },
  'subckt-missing-name': { severity: 'error', summary: '`.subckt` without a subcircuit name.' },
  'subckt-missing-ends': { severity: 'error', summary: 'A `.subckt` that no `.ends` closes before the end of the file (or `.end`).' },
  'ends-without-subckt': { severity: 'error', summary: '`.ends` with no open `.subckt`.' },
  'ends-name-mismatch': { severity: 'warning', summary: '`.ends NAME` where NAME is not the subcircuit being closed.' },
  'param-missing-assignment': { severity: 'error', summary: 'A `.param` field without `=value`, or a `.param` card with no assignments.' },
  'include-missing-path': { severity: 'error', summary: '`.include` without a file path.' },
  'lib-missing-fields': { severity: 'error', summary: '`.lib` without a path or section name.' },
  'lib-section-missing-endl': { severity: 'error', summary: 'A library section (`.lib NAME` in a library file) that no `.endl` closes.' },
  'endl-without-lib-section': { severity: 'warning', summary: '`.endl` with no open library section.' },
  'endl-name-mismatch': { severity: 'warning', summary: '`.endl NAME` where NAME is not the section being closed.' },
  'temp-missing-value': { severity: 'error', summary: '`.temp` without a temperature.' },
  'text-after-end': { severity: 'hint', summary: 'Non-blank text after `.end`; it is not read.' },
  'dot-card-unknown': { severity: 'warning', summary: 'A dot card qpoint neither reads nor knows to skip; it is skipped and its command is named (`data.command`), with the known card it most likely means (`data.suggestion`, "did you mean .model?") and a fix that writes it.' },
  'block-not-closed': { severity: 'warning', summary: 'A script, control or data block (`.control`, `.data`, ...) that the file never closes; everything after it is skipped.' },
  'condition-missing-endif': { severity: 'error', summary: 'An `.if` that no `.endif` closes.' },
  'condition-without-if': { severity: 'error', summary: 'An `.elseif`, `.else` or `.endif` with no open `.if`.' },
  'condition-missing-expression': { severity: 'error', summary: 'An `.if` or `.elseif` without a condition.' },
  'func-malformed': { severity: 'error', summary: '`.func` without a name, an argument list in parentheses or an expression.' },
  'too-many-problems': { severity: 'warning', summary: 'A card with more than 25 problems; only the first 25 are listed.' },
} as const satisfies Record<string, { severity: Severity; summary: string }>;

/** A code the parser can report. */
export type SyntaxCode = keyof typeof SYNTAX_CODES;

/** The severity the parser gives `code`. */
export function syntaxSeverity(code: SyntaxCode): Severity {
  return SYNTAX_CODES[code].severity;
}
