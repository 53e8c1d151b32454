// Go to definition, find references and rename for nodes, parameters, models, subcircuits and include paths.

import type { Analysis, ParamSymbol } from '../analysis';
import type { Card, ParsedDocument, Token } from '../syntax/ast';
import type { Location, Span, TextEdit } from '../types';
import { cardAt, isGround, sameToken, scopeAt, tokenAt, tokenIndex, type SubcktScope } from './document-index';
import { identifierAt, parameterUses, resolveParam } from './params';
import { UNLIMITED, type WorkBudget } from './budget';

/** What the cursor is on, as far as navigation is concerned. */
type Target =
  | { kind: 'node'; name: string; scope: ScopeId; token: Token }
  | { kind: 'param'; symbol: ParamSymbol; span: Span }
  | { kind: 'model'; name: string; span: Span }
  | { kind: 'subckt'; name: string; span: Span }
  | { kind: 'include'; target: string; span: Span };

/** A node scope: top level (shared by the root and included files) or one subcircuit body. */
type ScopeId = string;

function scopeId(uri: string, scope: SubcktScope | undefined): ScopeId {
  return scope ? `${uri}#${scope.span.start}` : '';
}

function targetAt(analysis: Analysis, uri: string, offset: number): Target | undefined {
  const doc = analysis.documents[uri];
  if (!doc || !Number.isFinite(offset) || offset < 0 || offset > doc.text.length) return undefined;
  const card = cardAt(doc, offset);
  if (!card) return undefined;
  const token = tokenAt(card, offset);
  if (!token) return undefined;
  const scope = scopeAt(doc, offset);

  if (card.kind === 'include' || card.kind === 'lib') {
    if (sameToken(token, card.path)) {
      const inc = analysis.symbols.includes.find((i) => i.uri === uri && i.span.start < token.span.end && token.span.start < i.span.end);
      if (inc) return { kind: 'include', target: inc.target, span: token.span };
    }
    return undefined;
  }
  if (tokenIndex(nodeTokens(card), token) >= 0) return { kind: 'node', name: token.text, scope: isGround(token.text) ? '' : scopeId(uri, scope), token };
  if (card.kind === 'element' && sameToken(token, card.model)) return { kind: 'model', name: token.text, span: token.span };
  if (card.kind === 'model' && sameToken(token, card.name)) return { kind: 'model', name: token.text, span: token.span };
  if (card.kind === 'element' && sameToken(token, card.subckt)) return { kind: 'subckt', name: token.text, span: token.span };
  if (card.kind === 'subckt' && sameToken(token, card.name)) return { kind: 'subckt', name: token.text, span: token.span };
  if (card.kind === 'ends' && sameToken(token, card.name)) return { kind: 'subckt', name: token.text, span: token.span };

  // A parameter: its definition, an X-card override of it, or a use inside a value.
  if ('params' in card) {
    const a = card.params.find((p) => sameToken(p.name, token));
    if (a) {
      if (card.kind === 'param' || card.kind === 'subckt') {
        const sym = analysis.symbols.params.find((p) => p.uri === uri && p.nameSpan.start === a.name.span.start);
        if (sym) return { kind: 'param', symbol: sym, span: token.span };
      }
      if (card.kind === 'element' && card.letter === 'X' && card.subckt) {
        const sub = card.subckt.text.toLowerCase();
        const sym = analysis.symbols.params.find((p) => p.scope === sub && p.name.toLowerCase() === token.text.toLowerCase());
        if (sym) return { kind: 'param', symbol: sym, span: token.span };
      }
      return undefined;
    }
  }
  const ident = identifierAt(token, offset);
  if (ident && (token.kind === 'expr' || ('params' in card && card.params.some((p) => sameToken(p.value, token))))) {
    const sym = resolveParam(analysis, uri, scope, ident.name);
    if (sym) return { kind: 'param', symbol: sym, span: ident.span };
  }
  return undefined;
}

/** The node fields of a card: device and instance nodes, and subcircuit ports. */
function nodeTokens(card: Card): readonly Token[] {
  if (card.kind === 'element') return card.nodes;
  if (card.kind === 'subckt') return card.ports;
  return [];
}

/** Where the thing under the cursor is defined (models, subcircuits, parameters, include targets, subcircuit ports). */
export function definitionAt(analysis: Analysis, uri: string, offset: number): Location[] {
  const t = targetAt(analysis, uri, offset);
  if (!t) return [];
  const doc = analysis.documents[uri];
  switch (t.kind) {
    case 'include': {
      // A file that was not read has no place to go to; the include-not-found finding already says why.
      const read = analysis.documents[t.target] !== undefined || analysis.symbols.includes.some((i) => i.target === t.target && i.found);
      return read ? [{ uri: t.target, span: { start: 0, end: 0 } }] : [];
    }
    case 'param':
      return [{ uri: t.symbol.uri, span: t.symbol.nameSpan }];
    case 'model': {
      const scope = scopeAt(doc, offset);
      const all = analysis.symbols.models.filter((m) => m.name.toLowerCase() === t.name.toLowerCase());
      const local = scope ? all.filter((m) => m.uri === uri && scope.span.start <= m.span.start && m.span.end <= scope.span.end) : [];
      return (local.length ? local : all).map((m) => ({ uri: m.uri, span: m.nameSpan }));
    }
    case 'subckt':
      return analysis.symbols.subckts.filter((s) => s.name.toLowerCase() === t.name.toLowerCase()).map((s) => ({ uri: s.uri, span: s.nameSpan }));
    case 'node': {
      // A node inside a subcircuit is defined by the port that names it, if any.
      const scope = scopeAt(doc, offset);
      if (!scope) return [];
      const port = scope.card.ports.find((p) => p.text.toLowerCase() === t.name.toLowerCase());
      return port ? [{ uri, span: port.span }] : [];
    }
  }
}

/** Options for {@link referencesAt}. */
export interface ReferenceOptions {
  includeDeclaration: boolean;
}

/**
 * Every place that names the same node, parameter, model or subcircuit as the cursor, across the
 * analysed documents. One work unit per card or use looked at; when `budget` runs out the places
 * found so far are returned (`budget.exhausted` tells the host the list is partial).
 */
export function referencesAt(analysis: Analysis, uri: string, offset: number, options: ReferenceOptions = { includeDeclaration: true }, budget: WorkBudget = UNLIMITED): Location[] {
  const t = targetAt(analysis, uri, offset);
  if (!t) return [];
  switch (t.kind) {
    case 'include':
      return analysis.symbols.includes.filter((i) => i.target === t.target).map((i) => ({ uri: i.uri, span: i.span }));
    case 'node':
      return nodeReferences(analysis, t.name, t.scope, budget);
    case 'param':
      return paramReferences(analysis, t.symbol, options.includeDeclaration, budget);
    case 'model':
    case 'subckt':
      return nameReferences(analysis, t.kind, t.name, options.includeDeclaration, budget);
  }
}

/** Runs `fn` on each analysed document until the budget is spent. */
function forEachDoc(analysis: Analysis, budget: WorkBudget, fn: (uri: string, doc: ParsedDocument) => void): void {
  for (const [uri, doc] of Object.entries(analysis.documents)) {
    if (budget.exhausted) return;
    fn(uri, doc);
  }
}

function nodeReferences(analysis: Analysis, name: string, scope: ScopeId, budget: WorkBudget): Location[] {
  const lower = name.toLowerCase();
  const out: Location[] = [];
  forEachDoc(analysis, budget, (uri, doc) => {
    for (const card of doc.cards) {
      if (!budget.spend()) return;
      for (const tok of nodeTokens(card)) {
        if (tok.text.toLowerCase() !== lower) continue;
        if (!isGround(lower) && scopeId(uri, scopeAt(doc, tok.span.start)) !== scope) continue;
        out.push({ uri, span: tok.span });
      }
    }
  });
  return out;
}

function paramReferences(analysis: Analysis, sym: ParamSymbol, includeDeclaration: boolean, budget: WorkBudget): Location[] {
  const lower = sym.name.toLowerCase();
  const out: Location[] = [];
  if (includeDeclaration) out.push({ uri: sym.uri, span: sym.nameSpan });
  forEachDoc(analysis, budget, (uri, doc) => {
    if (!budget.spend(doc.cards.length)) return;
    for (const use of parameterUses(doc)) {
      if (!budget.spend()) return;
      if (use.ref.name.toLowerCase() !== lower) continue;
      const resolved = resolveParam(analysis, uri, use.scope, use.ref.name);
      if (resolved === sym) out.push({ uri, span: use.ref.span });
    }
    if (sym.scope) {
      // Instance overrides `Xn … sub name=value` name the subcircuit's parameter.
      for (const card of doc.cards) {
        if (!budget.spend()) return;
        if (card.kind !== 'element' || card.letter !== 'X' || card.subckt?.text.toLowerCase() !== sym.scope) continue;
        for (const a of card.params) if (a.name.text.toLowerCase() === lower) out.push({ uri, span: a.name.span });
      }
    }
  });
  return dedupe(out);
}

function nameReferences(analysis: Analysis, kind: 'model' | 'subckt', name: string, includeDeclaration: boolean, budget: WorkBudget): Location[] {
  const lower = name.toLowerCase();
  const out: Location[] = [];
  forEachDoc(analysis, budget, (uri, doc) => {
    for (const card of doc.cards) {
      if (!budget.spend()) return;
      if (kind === 'model') {
        if (card.kind === 'element' && card.model?.text.toLowerCase() === lower) out.push({ uri, span: card.model.span });
        if (includeDeclaration && card.kind === 'model' && card.name.text.toLowerCase() === lower) out.push({ uri, span: card.name.span });
      } else {
        if (card.kind === 'element' && card.subckt?.text.toLowerCase() === lower) out.push({ uri, span: card.subckt.span });
        if (includeDeclaration && card.kind === 'subckt' && card.name.text.toLowerCase() === lower) out.push({ uri, span: card.name.span });
        if (includeDeclaration && card.kind === 'ends' && card.name?.text.toLowerCase() === lower) out.push({ uri, span: card.name.span });
      }
    }
  });
  return out;
}

function dedupe(list: Location[]): Location[] {
  const seen = new Set<string>();
  return list.filter((l) => {
    const k = `${l.uri}#${l.span.start}:${l.span.end}`;
    if (seen.has(k)) return false;
    seen.add(k);
    return true;
  });
}

/** The span and current text of a renameable symbol under the cursor, or why it cannot be renamed. */
export type PrepareRenameResult = { span: Span; placeholder: string } | { error: string };

/** Whether the thing under the cursor can be renamed (nodes and parameters can; ground cannot). */
export function prepareRename(analysis: Analysis, uri: string, offset: number): PrepareRenameResult {
  const t = targetAt(analysis, uri, offset);
  if (!t) return { error: 'Only node names and parameter names can be renamed; the cursor is on neither.' };
  if (t.kind === 'node') {
    if (isGround(t.name)) return { error: 'Node 0 is the ground node; it cannot be renamed.' };
    return { span: t.token.span, placeholder: t.token.text };
  }
  if (t.kind === 'param') return { span: t.span, placeholder: t.symbol.name };
  return { error: `Renaming a ${t.kind === 'include' ? 'file path' : t.kind === 'subckt' ? 'subcircuit' : 'model'} is not supported; only node names and parameter names can be renamed.` };
}

/** The edits that rename the node or parameter under the cursor, or why they cannot be made. */
export type RenameResult = { edits: TextEdit[] } | { error: string };

const NODE_NAME = /^[A-Za-z0-9_][A-Za-z0-9_\-#!<>:]*$/;
const PARAM_NAME = /^[A-Za-z_][A-Za-z0-9_]*$/;
const RESERVED_PARAMS = new Set(['pi', 'e', 'true', 'false']);

/**
 * Renames the node or parameter under the cursor everywhere it is used (within its scope). A rename
 * is never partial: when `budget` runs out before every use is found, no edit is returned, only why.
 */
export function renameAt(analysis: Analysis, uri: string, offset: number, newName: string, budget: WorkBudget = UNLIMITED): RenameResult {
  const r = renameWithin(analysis, uri, offset, newName, budget);
  if (budget.exhausted) {
    return { error: `The rename was not made: finding every use took longer than the editor's time budget (${budget.spent.toLocaleString('en-US')} places looked at), and renaming only some uses would change the circuit.` };
  }
  return r;
}

function renameWithin(analysis: Analysis, uri: string, offset: number, newName: string, budget: WorkBudget): RenameResult {
  const prep = prepareRename(analysis, uri, offset);
  if ('error' in prep) return prep;
  const t = targetAt(analysis, uri, offset)!;
  if (t.kind === 'node') {
    if (isGround(newName)) return { error: 'A node cannot be renamed to 0: that would join it to ground.' };
    if (!NODE_NAME.test(newName)) {
      return { error: `"${newName}" is not a valid node name: use letters, digits and _ (no spaces, '=', '.', quotes, braces, parentheses, commas, ';' or '$'); '.' is reserved for subcircuit instance paths.` };
    }
    const existing = nodeReferences(analysis, newName, t.scope, budget);
    if (existing.length && newName.toLowerCase() !== t.name.toLowerCase()) {
      return { error: `Node "${newName}" already exists in this scope (${existing.length} use${existing.length === 1 ? '' : 's'}); renaming "${t.name}" to it would join the two nodes.` };
    }
    return { edits: nodeReferences(analysis, t.name, t.scope, budget).map((l) => ({ uri: l.uri, span: l.span, newText: newName })) };
  }
  if (t.kind === 'param') {
    if (!PARAM_NAME.test(newName) || RESERVED_PARAMS.has(newName.toLowerCase())) {
      return { error: `"${newName}" is not a valid parameter name: start with a letter or _, then letters, digits or _ (pi, e, true and false are reserved).` };
    }
    const clash = analysis.symbols.params.find((p) => p !== t.symbol && p.scope === t.symbol.scope && p.name.toLowerCase() === newName.toLowerCase());
    if (clash) return { error: `Parameter "${newName}" is already defined in the same scope; pick another name.` };
    return { edits: paramReferences(analysis, t.symbol, true, budget).map((l) => ({ uri: l.uri, span: l.span, newText: newName })) };
  }
  return { error: 'Only node names and parameter names can be renamed.' };
}

