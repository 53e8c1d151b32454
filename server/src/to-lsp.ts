// The one place engine offsets become LSP positions and engine data becomes LSP types.

import {
  CodeAction,
  CodeActionKind,
  CompletionItem,
  CompletionItemKind,
  InsertTextFormat,
  Diagnostic,
  DiagnosticRelatedInformation,
  DiagnosticSeverity,
  DocumentSymbol,
  InlayHint,
  Location,
  MarkupKind,
  SymbolKind,
  type Hover,
  type Position,
  type Range,
  type TextEdit as LspTextEdit,
  type WorkspaceEdit,
} from 'vscode-languageserver';
import type { CompletionData } from '../../shared-analysis/src/features/completion';
import type { HoverResult } from '../../shared-analysis/src/features/hover';
import type { InlayHintData } from '../../shared-analysis/src/features/inlay';
import type { OutlineKind, OutlineSymbol } from '../../shared-analysis/src/features/symbols';
import { LineIndex, type PositionEncoding } from '../../shared-analysis/src/syntax/line-index';
import type { Finding, Fix, Location as EngineLocation, Severity, Span, TextEdit } from '../../shared-analysis/src/types';
import { nameTable } from '../../shared-analysis/src/names';

/** Converts between one text's UTF-16 offsets and LSP positions in the negotiated encoding. */
export class PositionConverter {
  private readonly index: LineIndex;

  constructor(readonly text: string, readonly encoding: PositionEncoding) {
    this.index = new LineIndex(text);
  }

  /** The offset of an LSP position; positions past a line's end or the text's end are clamped. */
  toOffset(pos: Position): number {
    return this.index.offsetAt(pos, this.encoding);
  }

  toPosition(offset: number): Position {
    return this.index.positionAt(offset, this.encoding);
  }

  toRange(span: Span): Range {
    return { start: this.toPosition(span.start), end: this.toPosition(span.end) };
  }

  toSpan(range: Range): Span {
    const a = this.toOffset(range.start);
    const b = this.toOffset(range.end);
    return a <= b ? { start: a, end: b } : { start: b, end: a };
  }
}

/**
 * Texts whose converters are kept per document: while a large result is taken in, its diagnostics are published
 * from the new text and hovers answered from the held analysis's, so a single converter was made again for each
 * in turn (a pass over the whole text, 5–30 ms for 1.4 MB, inside a hover).
 */
const TEXTS_KEPT_PER_DOCUMENT = 2;

/** Hands out converters by document id; a converter is reused while its text is one of the last few it was asked for. */
export class Converters {
  private readonly cache = new Map<string, PositionConverter[]>();

  constructor(public encoding: PositionEncoding = 'utf-16') {}

  /** A converter for `uri` whose text is `text`. */
  get(uri: string, text: string): PositionConverter {
    const kept = (this.cache.get(uri) ?? []).filter((c) => c.encoding === this.encoding);
    const at = kept.findIndex((c) => c.text === text);
    const converter = at >= 0 ? kept[at]! : new PositionConverter(text, this.encoding);
    if (at !== 0) this.cache.set(uri, [converter, ...kept.filter((c) => c !== converter)].slice(0, TEXTS_KEPT_PER_DOCUMENT));
    return converter;
  }

  forget(uri: string): void {
    this.cache.delete(uri);
  }
}

/** Looks up the converter for any document of an analysis (or undefined when its text is unknown). */
export type ConverterLookup = (uri: string) => PositionConverter | undefined;

const SEVERITY: Record<Severity, DiagnosticSeverity> = {
  error: DiagnosticSeverity.Error,
  warning: DiagnosticSeverity.Warning,
  info: DiagnosticSeverity.Information,
  hint: DiagnosticSeverity.Hint,
};

/** What a diagnostic carries so its code actions can be rebuilt without guessing. */
export interface DiagnosticData {
  /** The analysed document version the finding came from. */
  version: number | undefined;
  /** Index of the finding among the analysis's findings. */
  index: number;
  /** The finding's own data (the numbers behind the message). */
  finding?: Record<string, unknown>;
  fixCount: number;
}

/** A finding as an LSP diagnostic. */
export function toDiagnostic(f: Finding, index: number, version: number | undefined, conv: PositionConverter, lookup: ConverterLookup): Diagnostic {
  const d = Diagnostic.create(conv.toRange(f.span), f.message, SEVERITY[f.severity] ?? DiagnosticSeverity.Warning, f.code, 'qpoint');
  if (f.related?.length) {
    const related: DiagnosticRelatedInformation[] = [];
    for (const r of f.related) {
      const rc = lookup(r.uri);
      if (rc) related.push(DiagnosticRelatedInformation.create(Location.create(r.uri, rc.toRange(r.span)), r.message));
    }
    if (related.length) d.relatedInformation = related;
  }
  const data: DiagnosticData = { version, index, finding: f.data, fixCount: f.fixes?.length ?? 0 };
  d.data = data;
  return d;
}

/** Engine text edits as an LSP WorkspaceEdit; edits into documents whose text is unknown are dropped. */
export function toWorkspaceEdit(edits: TextEdit[], lookup: ConverterLookup): WorkspaceEdit | undefined {
  const changes: Record<string, LspTextEdit[]> = nameTable();
  for (const e of edits) {
    const c = lookup(e.uri);
    if (!c) return undefined;
    (changes[e.uri] ??= []).push({ range: c.toRange(e.span), newText: e.newText });
  }
  return { changes };
}

/** A finding's fix as a quick-fix code action on its diagnostic. */
export function toQuickFix(fix: Fix, diagnostic: Diagnostic, lookup: ConverterLookup): CodeAction | undefined {
  if (fix.disabled) {
    // Nothing to apply: the editor shows the action greyed out with the reason (LSP 3.16 `disabled`).
    const action = CodeAction.create(fix.title, CodeActionKind.QuickFix);
    action.diagnostics = [diagnostic];
    action.disabled = { reason: fix.disabled };
    return action;
  }
  const edit = toWorkspaceEdit(fix.edits, lookup);
  if (!edit) return undefined;
  const action = CodeAction.create(fix.title, edit, CodeActionKind.QuickFix);
  action.diagnostics = [diagnostic];
  if (fix.preferred) action.isPreferred = true;
  return action;
}

export function toHover(h: HoverResult, conv: PositionConverter): Hover {
  return { contents: { kind: MarkupKind.Markdown, value: h.markdown }, range: conv.toRange(h.span) };
}

export function toInlayHint(h: InlayHintData, conv: PositionConverter): InlayHint {
  const hint = InlayHint.create(conv.toPosition(h.offset), h.label);
  hint.paddingLeft = true;
  if (h.tooltip) hint.tooltip = h.tooltip;
  return hint;
}

const SYMBOL_KIND: Record<OutlineKind, SymbolKind> = {
  subcircuit: SymbolKind.Module,
  model: SymbolKind.Class,
  parameter: SymbolKind.Constant,
  structure: SymbolKind.Struct,
  device: SymbolKind.Object,
  include: SymbolKind.File,
  section: SymbolKind.Namespace,
  'skipped-block': SymbolKind.String,
  'cut-short': SymbolKind.Null,
};

export function toDocumentSymbol(s: OutlineSymbol, conv: PositionConverter): DocumentSymbol {
  const range = conv.toRange(s.span);
  let selection = conv.toRange(s.selectionSpan);
  // LSP requires the selection range inside the full range.
  if (s.selectionSpan.start < s.span.start || s.selectionSpan.end > s.span.end) selection = range;
  return DocumentSymbol.create(s.name || '(unnamed)', s.detail, SYMBOL_KIND[s.kind], range, selection, s.children.map((c) => toDocumentSymbol(c, conv)));
}

export function toLocations(list: EngineLocation[], lookup: ConverterLookup): Location[] {
  const out: Location[] = [];
  for (const l of list) {
    const c = lookup(l.uri);
    out.push(Location.create(l.uri, c ? c.toRange(l.span) : { start: { line: 0, character: 0 }, end: { line: 0, character: 0 } }));
  }
  return out;
}

const COMPLETION_KIND: Record<CompletionData['kind'], CompletionItemKind> = {
  element: CompletionItemKind.Class,
  'dot-card': CompletionItemKind.Keyword,
  model: CompletionItemKind.Reference,
  'model-type': CompletionItemKind.EnumMember,
  'model-parameter': CompletionItemKind.Property,
  'instance-parameter': CompletionItemKind.Property,
  subcircuit: CompletionItemKind.Module,
  node: CompletionItemKind.Variable,
  parameter: CompletionItemKind.Constant,
};

/** An LSP completion item; a template goes in as a snippet when the client takes snippets, else as plain text with its defaults. */
export function toCompletionItem(c: CompletionData, conv: PositionConverter, snippets = false): CompletionItem {
  const item = CompletionItem.create(c.label);
  item.kind = COMPLETION_KIND[c.kind];
  item.detail = c.detail;
  if (c.documentation) item.documentation = { kind: MarkupKind.PlainText, value: c.documentation };
  if (c.sortText) item.sortText = c.sortText;
  if (c.snippet && snippets) {
    item.insertTextFormat = InsertTextFormat.Snippet;
    item.textEdit = { range: conv.toRange(c.replace), newText: c.snippet };
  } else item.textEdit = { range: conv.toRange(c.replace), newText: c.insertText ?? c.label };
  return item;
}
