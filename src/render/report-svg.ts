import type { Histogram } from '../profile/types.js';
import { escapeHtml } from './html.js';
import { formatNumber } from './profile.js';

/**
 * Inline SVG plots for the report. Raw is drawn as a dashed outline with a light fill, clean as a solid
 * fill, and every chart has a legend in words and counts in text, so colour is never the only signal and
 * the plots read in black and white print.
 */

export const CHART = { width: 360, height: 190, left: 44, right: 12, top: 30, bottom: 36 } as const;

const STYLE = {
  raw: 'fill="#c9d4ea" fill-opacity="0.45" stroke="#2f4f86" stroke-width="1.2" stroke-dasharray="4 2"',
  clean: 'fill="#c8641e" fill-opacity="0.65" stroke="#7a3a0c" stroke-width="1"',
};

export type Side = 'raw' | 'clean';

/** One drawn histogram bar, in SVG user units. */
export interface HistogramBar {
  side: Side;
  from: number;
  to: number;
  count: number;
  x: number;
  y: number;
  width: number;
  height: number;
}

/** The narrowest a bar is drawn, so a bin of a single value stays visible. */
const MIN_BAR_WIDTH = 2;

/**
 * Bars of the raw and clean histograms on one shared axis: x runs from the lowest bin edge of either
 * side to the highest. Raw and clean bins differ in width (an outlier widens the raw bins), so bars are
 * drawn on the density scale: height ∝ count ÷ bin width, making each bar's area ∝ its count and the two
 * sides comparable (the usual rule for unequal bins, e.g. Freedman, Pisani & Purves, Statistics, ch. 3, cited from memory).
 * A bin of zero width (every value equal) counts as width 1.
 *
 * @example
 *   histogramBars({ rule: 'sturges', bins: [{ from: 0, to: 5, count: 2 }] }, null)[0] // { x: 44, width: 304, height: 124, … }
 */
export function histogramBars(raw: Histogram | null, clean: Histogram | null): HistogramBar[] {
  const sides = [
    ['raw', raw],
    ['clean', clean],
  ] as const;
  const bins = sides.flatMap(([, h]) => h?.bins ?? []);
  if (bins.length === 0) return [];
  const lo = Math.min(...bins.map((b) => b.from));
  const hi = Math.max(...bins.map((b) => b.to));
  const maxDensity = Math.max(Number.MIN_VALUE, ...bins.map(density));
  const plotWidth = CHART.width - CHART.left - CHART.right;
  const plotHeight = CHART.height - CHART.top - CHART.bottom;
  const x = (v: number) => (hi === lo ? CHART.left + plotWidth / 2 : CHART.left + ((v - lo) / (hi - lo)) * plotWidth);
  const bars: HistogramBar[] = [];
  for (const [side, histogram] of sides) {
    for (const bin of histogram?.bins ?? []) {
      const height = (density(bin) / maxDensity) * plotHeight;
      let left = x(bin.from);
      let width = x(bin.to) - left;
      if (width < MIN_BAR_WIDTH) {
        left -= (MIN_BAR_WIDTH - width) / 2;
        width = MIN_BAR_WIDTH;
      }
      bars.push({ side, from: bin.from, to: bin.to, count: bin.count, x: left, y: CHART.top + plotHeight - height, width, height });
    }
  }
  return bars;
}

/** Rows per unit of value. */
export const density = (bin: { from: number; to: number; count: number }) => bin.count / (bin.to - bin.from || 1);

const n = (v: number) => String(Math.round(v * 100) / 100);

function legend(): string {
  return `<g font-size="11">
<rect x="${CHART.left}" y="6" width="14" height="10" ${STYLE.raw}/><text x="${CHART.left + 18}" y="15">raw (dashed)</text>
<rect x="${CHART.left + 110}" y="6" width="14" height="10" ${STYLE.clean}/><text x="${CHART.left + 128}" y="15">clean (solid)</text>
</g>`;
}

function open(id: string, title: string, description: string, height: number): string {
  return `<svg class="chart" xmlns="http://www.w3.org/2000/svg" viewBox="0 0 ${CHART.width} ${height}" width="${CHART.width}" height="${height}" role="img" aria-labelledby="${id}-t ${id}-d" font-family="system-ui, sans-serif">
<title id="${id}-t">${escapeHtml(title)}</title><desc id="${id}-d">${escapeHtml(description)}</desc>`;
}

/** A histogram per numeric variable, raw and clean overlaid on one axis. */
export function histogramSvg(id: string, title: string, raw: Histogram | null, clean: Histogram | null): string {
  const bars = histogramBars(raw, clean);
  const bottom = CHART.height - CHART.bottom;
  const right = CHART.width - CHART.right;
  const froms = bars.map((b) => b.from);
  const tos = bars.map((b) => b.to);
  const lo = froms.length ? Math.min(...froms) : 0;
  const hi = tos.length ? Math.max(...tos) : 0;
  const maxDensity = Math.max(0, ...bars.map(density));
  const describe = (side: Side, h: Histogram | null) =>
    h ? `${side}: ${h.bins.map((b) => `${formatNumber(b.from)} to ${formatNumber(b.to)}: ${b.count}`).join('; ')}` : `${side}: no values`;
  const rects = bars
    .map(
      (b) =>
        `<rect class="bar ${b.side}" data-side="${b.side}" data-from="${b.from}" data-to="${b.to}" data-count="${b.count}" x="${n(b.x)}" y="${n(b.y)}" width="${n(b.width)}" height="${n(b.height)}" ${STYLE[b.side]}><title>${b.side} ${escapeHtml(formatNumber(b.from))} to ${escapeHtml(formatNumber(b.to))}: ${b.count}</title></rect>`,
    )
    .join('\n');
  return `${open(id, title, `${describe('raw', raw)}. ${describe('clean', clean)}.`, CHART.height)}
${legend()}
<g font-size="10" fill="#333">
<line x1="${CHART.left}" y1="${bottom}" x2="${right}" y2="${bottom}" stroke="#555"/>
<line x1="${CHART.left}" y1="${CHART.top}" x2="${CHART.left}" y2="${bottom}" stroke="#555"/>
<text x="${CHART.left - 4}" y="${bottom}" text-anchor="end">0</text>
<text x="${CHART.left - 4}" y="${CHART.top + 8}" text-anchor="end">${escapeHtml(formatNumber(Number(maxDensity.toPrecision(3))))}</text>
<text x="${CHART.left}" y="${bottom + 14}" text-anchor="start">${escapeHtml(formatNumber(lo))}</text>
<text x="${right}" y="${bottom + 14}" text-anchor="end">${escapeHtml(formatNumber(hi))}</text>
<text x="${(CHART.left + right) / 2}" y="${bottom + 28}" text-anchor="middle">value; height = rows per unit, area = rows</text>
</g>
${rects}
</svg>`;
}

/** One labelled pair of counts; null where the variable or rule does not exist on that side. */
export interface PairedItem {
  label: string;
  raw: number | null;
  clean: number | null;
}

const ROW = 24;
const LABEL_WIDTH = 120;
const LABEL_CHARS = 18;

/** Raw and clean counts side by side per label: codes of a coded variable, discrepancies per rule. */
export function pairedBarsSvg(id: string, title: string, items: readonly PairedItem[]): string {
  const height = CHART.top + items.length * ROW + 8;
  const barLeft = LABEL_WIDTH + 4;
  const barSpace = CHART.width - barLeft - 40;
  const max = Math.max(1, ...items.flatMap((i) => [i.raw ?? 0, i.clean ?? 0]));
  const rows = items.map((item, i) => {
    const top = CHART.top + i * ROW;
    const short = item.label.length > LABEL_CHARS ? `${item.label.slice(0, LABEL_CHARS - 1)}…` : item.label;
    const bar = (side: Side, value: number | null, y: number) => {
      if (value === null) return `<text x="${barLeft}" y="${y + 8}" font-size="10">${side}: none</text>`;
      const width = Math.max(value > 0 ? 1 : 0, (value / max) * barSpace);
      return `<rect class="bar ${side}" data-side="${side}" data-count="${value}" x="${barLeft}" y="${y}" width="${n(width)}" height="9" ${STYLE[side]}><title>${side}: ${value}</title></rect><text x="${n(barLeft + width + 4)}" y="${y + 8}" font-size="10">${value}</text>`;
    };
    return `<g><text x="${LABEL_WIDTH}" y="${top + 13}" text-anchor="end" font-size="11">${escapeHtml(short)}<title>${escapeHtml(item.label)}</title></text>
${bar('raw', item.raw, top + 1)}
${bar('clean', item.clean, top + 11)}</g>`;
  });
  const description = items.map((i) => `${i.label}: raw ${i.raw ?? 'none'}, clean ${i.clean ?? 'none'}`).join('; ');
  return `${open(id, title, description, height)}
${legend()}
${rows.join('\n')}
</svg>`;
}
