// Builds the HTML page of the output-characteristic panel: the chart, the corner table and a strict Content-Security-Policy.
import type { OutputCharacteristicResult } from '../../server/src/protocol';
import { OUTPUT_CHARACTERISTIC_CSS, escapeXml, monteCarloSentence, renderCornerTableHtml, renderDriftSvg, renderHistogramSvg, renderOutputCharacteristicSvg } from '../../shared-analysis/src/view/plot';
import { formatQuantity, formatTempco } from '../../shared-analysis/src/view/format';

/** What the panel page shows besides the sweep itself. */
export interface PanelPageOptions {
  /** A random token that lets the page's one style block past the policy. */
  nonce: string;
  /** The netlist the sweep belongs to, as shown to the user (file name). */
  documentLabel: string;
  /** Chart size in pixels (the chart scales down to the panel width). */
  size?: { width: number; height: number };
}

/**
 * The policy of the panel: nothing may load or run; only the page's own nonce-tagged style block
 * applies. The chart is drawn in the extension host, so the page needs no script at all.
 */
export function panelContentSecurityPolicy(nonce: string): string {
  return `default-src 'none'; style-src 'nonce-${nonce}'; img-src data:; script-src 'none'; frame-src 'none'; form-action 'none'; base-uri 'none'`;
}

/** The sentence under the title: what is swept, where the output is a current source, and the rails it spans. */
export function panelSubtitle(result: OutputCharacteristicResult, documentLabel: string): string {
  const side = result.activeSide === 'below' ? 'below' : 'above';
  const where = result.activeSide === 'below' ? 'right' : 'left';
  const range = result.range && Number.isFinite(result.range.low) && Number.isFinite(result.range.high)
    ? ` Swept from ${formatQuantity(result.range.low, 'V')} to ${formatQuantity(result.range.high, 'V')}, the rails the structure hangs from${result.range.rails?.length ? ` (${result.range.rails.join(', ')})` : ''}.`
    : '';
  return `Output current against the voltage at node ${result.node}, in ${documentLabel}, with its load removed. It is a current source ${side} the edge of its active region; the hatched band to the ${where} is where it leaves that region. Positive current flows the way the output normally carries it.${range}`;
}

/** The output's predicted spread and drift in one sentence, or what is missing. */
export function spreadSentence(result: OutputCharacteristicResult): string {
  const sp = result.spread;
  const where = 'Output current with its load in place, solved from the cold to the hot corner temperature.';
  if (!sp || !Number.isFinite(sp.sigmaRelative)) return where;
  const pct = (r: number) => `${+(Math.abs(r) * 100).toPrecision(3)} %`;
  const ppm = formatTempco(sp.tempcoPpmPerC);
  return `${where} At the operating point it drifts ${ppm}; its predicted spread is σ ${pct(sp.sigmaRelative)} (±3σ ${pct(3 * sp.sigmaRelative)}), worst case ±${pct(sp.worstCaseRelative)}.`;
}

/** The complete HTML page for one output characteristic. */
export function renderPanelHtml(result: OutputCharacteristicResult, options: PanelPageOptions): string {
  const nonce = options.nonce.replace(/[^A-Za-z0-9+/=]/g, '');
  const size = options.size ?? { width: 640, height: 400 };
  const title = result.title || `Output characteristic of ${result.device}`;
  return `<!DOCTYPE html>
<html lang="en">
<head>
<meta charset="utf-8">
<meta http-equiv="Content-Security-Policy" content="${panelContentSecurityPolicy(nonce)}">
<meta name="viewport" content="width=device-width, initial-scale=1">
<title>Output characteristic of ${escapeXml(result.device)}</title>
<style nonce="${nonce}">${OUTPUT_CHARACTERISTIC_CSS}</style>
</head>
<body>
<main>
<h1 tabindex="-1">${escapeXml(title)}</h1>
<p class="qp-subtitle">${escapeXml(panelSubtitle(result, options.documentLabel))}</p>
${renderOutputCharacteristicSvg(result, size)}
${renderCornerTableHtml(result)}
<h2>Drift with temperature</h2>
<p class="qp-subtitle">${escapeXml(spreadSentence(result))}</p>
${renderDriftSvg(result, { width: size.width, height: Math.round(size.height * 0.7) })}
<h2>Spread over Monte Carlo runs</h2>
<p class="qp-subtitle">${escapeXml(monteCarloSentence(result))}</p>
${result.monteCarlo ? renderHistogramSvg(result, { width: size.width, height: Math.round(size.height * 0.7) }) : ''}
</main>
</body>
</html>
`;
}
