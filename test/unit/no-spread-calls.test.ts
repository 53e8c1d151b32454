// No list is spread into a call's arguments anywhere in the shipped code: past ~100k elements that overflows the stack.
import { describe, expect, it } from 'vitest';
import { readdirSync, readFileSync, statSync } from 'node:fs';
import { join, relative } from 'node:path';
import { maxOf, minOf, pushAll } from '../../shared-analysis/src/arrays';

const ROOT = join(__dirname, '../..');
const FOLDERS = ['shared-analysis/src', 'server/src', 'client/src'];

function sources(dir: string): string[] {
  const out: string[] = [];
  for (const name of readdirSync(dir)) {
    const p = join(dir, name);
    if (statSync(p).isDirectory()) out.push(...sources(p)); // bounded: a folder listing
    else if (p.endsWith('.ts')) out.push(p);
  }
  return out;
}

/** Blanks comments and the text of string literals (keeping `${…}` code of templates), so only code is scanned. */
function codeOnly(src: string): string {
  let out = '';
  let i = 0;
  const templates: number[] = [];
  while (i < src.length) {
    const c = src[i]!;
    const n = src[i + 1];
    if (c === '/' && n === '/') {
      while (i < src.length && src[i] !== '\n') i++;
      continue;
    }
    if (c === '/' && n === '*') {
      const end = src.indexOf('*/', i + 2);
      const next = end < 0 ? src.length : end + 2;
      out += src.slice(i, next).replace(/[^\n]/g, '');
      i = next;
      continue;
    }
    if (c === "'" || c === '"') {
      out += c;
      i++;
      while (i < src.length && src[i] !== c && src[i] !== '\n') i += src[i] === '\\' ? 2 : 1;
      out += c;
      if (src[i] === c) i++;
      continue;
    }
    if (c === '`' || (c === '}' && templates.length && templates[templates.length - 1] === 0)) {
      if (c === '}') templates.pop();
      out += c;
      i++;
      while (i < src.length && src[i] !== '`') {
        if (src[i] === '\\') i += 2;
        else if (src[i] === '$' && src[i + 1] === '{') {
          templates.push(0);
          out += '${';
          i += 2;
          break;
        } else {
          if (src[i] === '\n') out += '\n';
          i++;
        }
      }
      if (src[i] === '`') {
        out += '`';
        i++;
      }
      continue;
    }
    if (templates.length) {
      if (c === '{') templates[templates.length - 1]!++;
      else if (c === '}') templates[templates.length - 1]!--;
    }
    out += c;
    i++;
  }
  return out;
}

/** Lines where `...` spreads into a call's argument list (rest parameters with a type are declarations, not calls). */
function spreadCalls(src: string): number[] {
  const code = codeOnly(src);
  const lines = src.split('\n');
  const stack: boolean[] = [];
  const found: number[] = [];
  let line = 0;
  for (let i = 0; i < code.length; i++) {
    const c = code[i]!;
    if (c === '\n') line++;
    else if (c === '(') {
      const before = code.slice(Math.max(0, i - 40), i);
      const isCall = /[\w$\])]\s*$/.test(before) && !/\b(if|for|while|switch|catch|function\s*[\w$]*|return|typeof|await)\s*$/.test(before);
      stack.push(isCall);
    } else if (c === '[' || c === '{') stack.push(false);
    else if (c === ')' || c === ']' || c === '}') stack.pop();
    else if (c === '.' && code.startsWith('...', i)) {
      const after = /^\.\.\.\s*([\w$]+)\s*([:?])?/.exec(code.slice(i));
      const typedRest = after?.[2] !== undefined;
      if (stack[stack.length - 1] && !typedRest && !/bounded:/.test(lines[line] ?? '')) found.push(line + 1);
      i += 2;
    }
  }
  return found;
}

describe('no spread into call arguments', () => {
  it('finds none in shipped code (use pushAll, maxOf, minOf from shared-analysis/src/arrays.ts, or mark a bounded list "// bounded: why")', () => {
    const hits: string[] = [];
    for (const folder of FOLDERS) {
      for (const file of sources(join(ROOT, folder))) {
        for (const l of spreadCalls(readFileSync(file, 'utf8'))) hits.push(`${relative(ROOT, file)}:${l}`);
      }
    }
    expect(hits).toEqual([]);
  });

  it('recognises the forms it forbids and leaves literals and rest parameters alone', () => {
    expect(spreadCalls('a.push(...b);')).toEqual([1]);
    expect(spreadCalls('x = Math.max(1, ...b);')).toEqual([1]);
    expect(spreadCalls('f(g(...h));')).toEqual([1]);
    expect(spreadCalls('const c = [...a, ...b];\nconst o = { ...p };\nconst f = (...args: number[]) => 1;')).toEqual([]);
    expect(spreadCalls('const s = `(${"..."}) ${[...a].length}`;\n// push(...a)')).toEqual([]);
    expect(spreadCalls('f(...small); // bounded: at most three')).toEqual([]);
  });

  it('handles lists far past the call-argument limit', () => {
    // Source: (common practice) V8 overflows its stack when a call gets ~120k+ spread arguments; 1e6 is far beyond.
    const big = Array.from({ length: 1_000_000 }, (_, i) => (i * 7919) % 1_000_003);
    expect(maxOf(big)).toBe(big.reduce((m, v) => (v > m ? v : m), -Infinity));
    expect(minOf(big)).toBe(big.reduce((m, v) => (v < m ? v : m), Infinity));
    expect(pushAll([1], big).length).toBe(1_000_001);
    expect(maxOf([])).toBe(-Infinity);
    expect(minOf([2, NaN])).toBeNaN();
  });
});
