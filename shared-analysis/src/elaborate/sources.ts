// Reads the root netlist and every file it includes into one tree of bodies: top level and subcircuit definitions.

import { parse, unquote } from '../syntax/parser';
import type { Card, ConditionCard, LibCard, ParsedDocument, SubcktCard, Token } from '../syntax/ast';
import type { IncludeSymbol } from '../analysis';
import type { Workspace } from '../types';
import type { Sink } from './sink';
import { findInclude } from './include-search';
import { nameTable } from '../names';
import { Branches } from './branches';

/** Deepest chain of nested includes followed. */
export const MAX_INCLUDE_DEPTH = 64;

/** A card together with the document it is written in. */
export interface Located<C extends Card = Card> {
  card: C;
  uri: string;
}

/** The cards of one scope (top level, or one subcircuit definition) and the definitions nested in it. */
export interface Body {
  /** Element, .param, .model and other cards, in reading order (includes expanded). */
  items: Located[];
  /** Subcircuit definitions declared directly in this body, by lower-case name. */
  defs: Map<string, SubcktDef>;
  /** The body this one is written in (undefined at top level). */
  parent?: Body;
}

/** One `.subckt` definition. */
export interface SubcktDef {
  card: SubcktCard;
  uri: string;
  body: Body;
  /** Lower-case name. */
  key: string;
}

/** Everything read: the tree of bodies, the documents, the include symbols and the global cards. */
export interface ReadResult {
  top: Body;
  documents: Record<string, ParsedDocument>;
  includes: IncludeSymbol[];
  /** Every subcircuit definition, in reading order (for symbols). */
  allDefs: SubcktDef[];
  /** The include cards whose file could not be read, in reading order. */
  missing: { uri: string; token: Token; ref: string }[];
}

/**
 * Decides the top level's `.if` conditions while files are read: `define` sees each top-level
 * `.param` and `.func` card taken, in reading order; `holds` evaluates a condition with them.
 */
export interface ConditionOracle {
  define(card: Card, uri: string): void;
  holds(card: ConditionCard, uri: string): boolean;
}

/**
 * Reads `root` and, through the workspace, every file it includes (`.include`, `.lib path section`),
 * relative to the including file. Each file, or library section, is read once; cycles, missing
 * files and missing sections are reported to `sink`.
 */
export function readSources(root: ParsedDocument, workspace: Workspace, sink: Sink, folders: readonly string[] = [], conditions?: ConditionOracle): ReadResult {
  const documents: Record<string, ParsedDocument> = nameTable({ [root.uri]: root });
  const includes: IncludeSymbol[] = [];
  const allDefs: SubcktDef[] = [];
  const missing: ReadResult['missing'] = [];
  const top: Body = { items: [], defs: new Map() };
  /** Where each (file, section) was first read, for the repeated-include note. */
  const readAt = new Map<string, { uri: string; token: Token }>();
  readAt.set(`${root.uri}\u0000`, { uri: root.uri, token: { text: root.uri, span: { start: 0, end: 0 }, kind: 'word' } });


  // The top level's `.if` blocks, decided as they are read (only the taken branch exists: an include
  // or a subcircuit in another branch is not read or defined). Inside a subcircuit the branch
  // depends on each instance's parameters, so those are decided when instances are flattened.
  const branches = new Branches();
  /** Nesting of `.subckt` cards inside a top-level branch that is not taken (skipped whole). */
  let skippedDepth = 0;
  /** Whether a top-level card is left out by a branch not taken; steps over condition cards. */
  const leftOut = (card: Card, uri: string, body: Body): boolean => {
    if (skippedDepth > 0) {
      if (card.kind === 'subckt') skippedDepth++;
      else if (card.kind === 'ends') skippedDepth--;
      return true;
    }
    if (card.kind === 'condition') {
      branches.step(card, () => conditions!.holds(card, uri));
      body.items.push({ card, uri });
      return true;
    }
    if (!branches.active()) {
      if (card.kind === 'subckt') skippedDepth = 1;
      return true;
    }
    if (card.kind === 'param' || card.kind === 'func') conditions!.define(card, uri);
    return false;
  };

  /** Reads a list of cards of document `uri` into the body on top of `stack`. */
  const readCards = (uri: string, cards: readonly Card[], stack: Body[], chain: string[]): void => {
    const openHere: number[] = [];
    for (let i = 0; i < cards.length; i++) {
      const card = cards[i]!;
      const body = stack[stack.length - 1]!;
      if (conditions && stack.length === 1 && leftOut(card, uri, body)) continue;
      switch (card.kind) {
        case 'title':
        case 'comment':
        case 'error':
        case 'op':
        case 'end':
        case 'endl':
          break;
        case 'subckt': {
          const key = card.name.text.toLowerCase();
          const def: SubcktDef = { card, uri, key, body: { items: [], defs: new Map(), parent: body } };
          const prev = body.defs.get(key);
          if (prev) {
            sink.add('subckt-duplicate', `Subcircuit \`${card.name.text}\` is already defined in this scope; the first definition is used.`, uri, card.name.span, [
              { uri: prev.uri, span: prev.card.name.span, message: `\`${prev.card.name.text}\` is first defined here.` },
            ]);
          } else {
            body.defs.set(key, def);
          }
          allDefs.push(def);
          const seenPorts = new Map<string, Token>();
          for (const port of card.ports) {
            const lower = port.text.toLowerCase();
            const first = seenPorts.get(lower);
            if (first) {
              sink.add('subckt-port-duplicate', `Port \`${port.text}\` is listed twice in subcircuit \`${card.name.text}\`; inside the subcircuit it stands for the node an instance connects at its later position.`, uri, port.span, [
                { uri, span: first.span, message: `\`${first.text}\` is first listed here.` },
              ]);
            } else seenPorts.set(lower, port);
          }
          // A duplicate is still read (so its cards are checked as written) but nothing can instantiate it.
          stack.push(def.body);
          openHere.push(stack.length);
          break;
        }
        case 'ends':
          if (openHere.length > 0) {
            openHere.pop();
            stack.pop();
          }
          break;
        case 'include': {
          if (card.path) readInclude(uri, card.path, undefined, stack, chain);
          break;
        }
        case 'lib': {
          if (card.path) {
            readInclude(uri, card.path, card.section, stack, chain);
          } else if (card.section) {
            // The start of a section definition inside a library: skipped unless that section is asked for.
            i = endOfSection(cards, i);
          }
          break;
        }
        default:
          body.items.push({ card, uri });
      }
    }
    // A .subckt that this file does not close ends with the file (the parser reports the missing .ends).
    while (openHere.length > 0) {
      openHere.pop();
      stack.pop();
    }
  };

  const readInclude = (fromUri: string, pathToken: Token, section: Token | undefined, stack: Body[], chain: string[]): void => {
    const ref = unquote(pathToken);
    const search = findInclude(workspace, fromUri, ref, folders);
    const target = search.target;
    let doc = documents[target];
    if (!doc && search.text !== undefined) {
      doc = parsedInclude(target, search.text);
      documents[target] = doc;
    }
    const symbol: IncludeSymbol = { uri: fromUri, span: pathToken.span, target, found: doc !== undefined };
    if (doc && search.how && search.how !== 'as-written') symbol.how = search.how;
    includes.push(symbol);
    if (!doc) {
      let why: string | undefined;
      try {
        why = workspace.whyUnreadable?.(target);
      } catch {
        why = undefined;
      }
      const reason = why ? `\`${target}\` ${why}` : `looked for \`${target}\``;
      const others = search.searched.slice(1);
      const folderText = others.length > 0 ? `; also looked in ${others.map((f) => `\`${f}\``).join(', ')}` : '';
      sink.add('include-not-found', `The file \`${ref}\` cannot be read (${reason}${folderText}); nothing from it is included.`, fromUri, pathToken.span, undefined, {
        path: ref,
        target,
        searched: search.searched,
        ...(why ? { reason: why } : {}),
      });
      missing.push({ uri: fromUri, token: pathToken, ref });
      return;
    }
    const sectionName = section ? unquote(section) : '';
    const key = `${target}\u0000${sectionName.toLowerCase()}`;
    const what = section ? `section \`${sectionName}\` of \`${ref}\`` : `\`${ref}\``;
    if (chain.includes(key)) {
      const names = [...chain, key].map(describeKey);
      sink.add('include-cycle', `Including ${what} here closes a cycle (${names.join(' → ')}); it is not read again.`, fromUri, pathToken.span, undefined, {
        chain: names,
      });
      return;
    }
    const first = readAt.get(key);
    if (first) {
      sink.add('include-repeated', `${capitalise(what)} is already read; it is not read a second time.`, fromUri, pathToken.span, [
        { uri: first.uri, span: first.token.span, message: 'It is first read here.' },
      ]);
      return;
    }
    if (chain.length >= MAX_INCLUDE_DEPTH) {
      sink.add('include-too-deep', `Includes nest more than ${MAX_INCLUDE_DEPTH} files deep; ${what} is not read.`, fromUri, pathToken.span);
      return;
    }
    readAt.set(key, { uri: fromUri, token: pathToken });
    let cards: readonly Card[] = doc.cards;
    if (section) {
      const found = findSection(doc.cards, sectionName);
      if (!found) {
        const available = listSections(doc.cards);
        sink.add(
          'library-section-not-found',
          `\`${ref}\` has no section \`${sectionName}\`${available.length > 0 ? `; its sections are ${available.map((s) => `\`${s}\``).join(', ')}` : '; it defines no sections'}.`,
          fromUri,
          section.span,
          undefined,
          { section: sectionName, available },
        );
        return;
      }
      cards = found;
    }
    readCards(target, cards, stack, [...chain, key]);
  };

  readCards(root.uri, root.cards, [top], [`${root.uri}\u0000`]);
  return { top, documents, includes, allDefs, missing };
}

/** The index of the `.endl` that closes the section started at `start` (or the last card). */
function endOfSection(cards: readonly Card[], start: number): number {
  for (let j = start + 1; j < cards.length; j++) if (cards[j]!.kind === 'endl') return j;
  return cards.length - 1;
}

/** The cards of section `name` (between `.lib name` and its `.endl`), or undefined. */
function findSection(cards: readonly Card[], name: string): Card[] | undefined {
  const lower = name.toLowerCase();
  for (let i = 0; i < cards.length; i++) {
    const c = cards[i]!;
    if (c.kind === 'lib' && !c.path && c.section && unquote(c.section).toLowerCase() === lower) {
      const end = endOfSection(cards, i);
      return cards.slice(i + 1, cards[end]!.kind === 'endl' ? end : end + 1);
    }
  }
  return undefined;
}

function listSections(cards: readonly Card[]): string[] {
  return cards.filter((c): c is LibCard => c.kind === 'lib' && !c.path && c.section !== undefined).map((c) => unquote(c.section!));
}

function describeKey(key: string): string {
  const [uri, section] = key.split('\u0000') as [string, string];
  const base = uri.slice(uri.lastIndexOf('/') + 1) || uri;
  return section ? `${base} (${section})` : base;
}

function capitalise(s: string): string {
  return s.length > 0 ? s[0]!.toUpperCase() + s.slice(1) : s;
}

/**
 * Included files parsed by recent analyses, by file: an edit to a netlist leaves the model libraries
 * it includes as they were, so a re-analysis takes their parse as it is (a parse is a function of the
 * file and its text alone, and nothing changes a parsed document afterwards). At most
 * PARSED_INCLUDES_KEPT files of PARSED_INCLUDE_CHARS characters in all, the least recently used
 * dropped first.
 */
const parsedIncludes = new Map<string, { text: string; doc: ParsedDocument }>();
const PARSED_INCLUDES_KEPT = 32;
const PARSED_INCLUDE_CHARS = 2_000_000;
let parsedIncludeChars = 0;

function parsedInclude(target: string, text: string): ParsedDocument {
  const kept = parsedIncludes.get(target);
  if (kept && kept.text === text) {
    // Most recently used last.
    parsedIncludes.delete(target);
    parsedIncludes.set(target, kept);
    return kept.doc;
  }
  const doc = parse(target, text, { hasTitle: false });
  if (kept) {
    parsedIncludes.delete(target);
    parsedIncludeChars -= kept.text.length;
  }
  if (text.length <= PARSED_INCLUDE_CHARS) {
    parsedIncludes.set(target, { text, doc });
    parsedIncludeChars += text.length;
    while (parsedIncludes.size > PARSED_INCLUDES_KEPT || parsedIncludeChars > PARSED_INCLUDE_CHARS) {
      const [oldest, entry] = parsedIncludes.entries().next().value as [string, { text: string }];
      parsedIncludes.delete(oldest);
      parsedIncludeChars -= entry.text.length;
    }
  }
  return doc;
}
