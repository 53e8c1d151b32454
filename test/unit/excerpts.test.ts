// What findings quote of included files: short excerpts, and nothing of a file that is not a netlist.
import { describe, expect, it } from 'vitest';
import { analyse } from '../../shared-analysis/src/service';
import { MemoryWorkspace } from '../../shared-analysis/src/types';
import { MAX_INCLUDED_EXCERPT, shortenQuotes } from '../../shared-analysis/src/excerpts';

const ROOT = '/p/top.cir';

/** The one helper: analyse `top` with `inc` as /p/inc.lib; the findings as code, uri and message. */
function check(top: string, inc: string) {
  const ws = new MemoryWorkspace({ [ROOT]: top, '/p/inc.lib': inc });
  return analyse({ uri: ROOT, text: top }, ws, { corners: { enabled: false } }).findings.map((f) => ({ code: f.code, uri: f.uri, message: f.message }));
}

describe('quotes from included files', () => {
  it('cuts every quote of an included file to a short excerpt, and leaves the root netlist’s quotes alone', () => {
    const long = 'x'.repeat(200);
    const findings = check(`Top\nV1 a 0 5\nR1 a 0 1k\n.include inc.lib\nR9 a 0 1k ${long}\n.end\n`, `R2 a 0 1k\nR3 a 0 1k ${long}\n`);
    const included = findings.filter((f) => f.uri === '/p/inc.lib');
    expect(included.length).toBeGreaterThan(0);
    for (const f of included) {
      for (const m of f.message.matchAll(/(`|')([^`'\n]*)\1/g)) expect(m[2]!.length).toBeLessThanOrEqual(MAX_INCLUDED_EXCERPT);
    }
    expect(findings.filter((f) => f.uri === ROOT).some((f) => f.message.includes('x'.repeat(100)))).toBe(true);
  });

  it('replaces the findings of an included file that does not read as a netlist with one that quotes nothing', () => {
    const secret = 'AKIAEXAMPLESECRETVALUE';
    const findings = check('Top\nV1 a 0 5\nR1 a 0 1k\n.include inc.lib\n.end\n', `[default]\naws_access_key_id = ${secret}\naws_secret_access_key = ${secret}x\n`);
    expect(findings.map((f) => f.code)).toContain('include-not-netlist');
    expect(findings.some((f) => f.message.includes(secret))).toBe(false);
    expect(findings.some((f) => f.uri === '/p/inc.lib')).toBe(false);
  });

  it('shortens without splitting a surrogate pair', () => {
    const s = shortenQuotes(`Model \`${'a'.repeat(MAX_INCLUDED_EXCERPT - 2)}😀😀😀\` is unknown.`);
    expect(s).not.toMatch(/[\uD800-\uDBFF](?![\uDC00-\uDFFF])/);
    expect(s).toMatch(/…`/);
  });
});
