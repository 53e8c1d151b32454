// Writes the README's finding-code table and structure-kind table from the engine's catalogues (`npm run docs:codes`).
import { readFileSync, writeFileSync } from 'node:fs';
import { join } from 'node:path';
import { findingCatalogue } from '../shared-analysis/src/codes';
import { KINDS } from '../shared-analysis/src/structures/catalogue';

const START = '<!-- codes:start -->';
const END = '<!-- codes:end -->';

const groupTitle: Record<string, string> = {
  syntax: 'Reading the text',
  netlist: 'Netlist structure',
  solver: 'Operating point',
  structures: 'Mirrors and reference branches',
  devices: 'Every device at the operating point',
  plausibility: 'Plausibility',
  corners: 'Corners',
  targets: 'Target currents',
  fixes: 'Fixes',
  host: 'Hosts (editor and command line)',
};

/** The markdown table, grouped by the module family that owns each code. */
export function codesMarkdown(): string {
  const cat = findingCatalogue();
  // A code whose group has no title would silently fall out of the table.
  const untitled = Object.entries(cat).filter(([, i]) => !(i.group in groupTitle)).map(([c]) => c);
  if (untitled.length) throw new Error(`Finding codes in groups without a README title: ${untitled.join(', ')}`);
  const lines: string[] = ['| code | default | meaning |', '|---|---|---|'];
  for (const group of Object.keys(groupTitle)) {
    const codes = Object.entries(cat).filter(([, i]) => i.group === group);
    if (!codes.length) continue;
    lines.push(`| **${groupTitle[group]}** | | |`);
    for (const [code, info] of codes) lines.push(`| \`${code}\` | ${info.severity} | ${info.summary.replace(/\|/g, '\\|')} |`);
  }
  return lines.join('\n');
}

/** README text with the table between the markers replaced by the current one. */
export function withCodesTable(readme: string): string {
  const a = readme.indexOf(START);
  const b = readme.indexOf(END);
  if (a < 0 || b < a) throw new Error(`README.md lacks the ${START} … ${END} markers.`);
  return readme.slice(0, a + START.length) + '\n' + codesMarkdown() + '\n' + readme.slice(b);
}

const KINDS_START = '<!-- kinds:start -->';
const KINDS_END = '<!-- kinds:end -->';

/** The markdown table of structure kinds, in the order recognition tries them. */
export function kindsMarkdown(): string {
  const techs = (t: readonly string[]) => t.map((x) => x.toUpperCase()).join(', ');
  const lines = ['| kind | name | technologies | what it is |', '|---|---|---|---|'];
  for (const k of KINDS) lines.push(`| \`${k.id}\` | ${k.name} | ${techs(k.technologies)} | ${k.summary.replace(/\|/g, '\\|')} |`);
  return lines.join('\n');
}

/** README text with the kinds table between its markers replaced by the current one. */
export function withKindsTable(readme: string): string {
  const a = readme.indexOf(KINDS_START);
  const b = readme.indexOf(KINDS_END);
  if (a < 0 || b < a) throw new Error(`README.md lacks the ${KINDS_START} … ${KINDS_END} markers.`);
  return readme.slice(0, a + KINDS_START.length) + '\n' + kindsMarkdown() + '\n' + readme.slice(b);
}

if (require.main === module) {
  const path = join(process.cwd(), 'README.md');
  writeFileSync(path, withKindsTable(withCodesTable(readFileSync(path, 'utf8'))));
}
