import { describe, expect, it } from 'vitest';
import type { Histogram } from '../../src/profile/types.js';
import { CHART, histogramBars, histogramSvg, pairedBarsSvg } from '../../src/render/report-svg.js';

const plotWidth = CHART.width - CHART.left - CHART.right;
const plotHeight = CHART.height - CHART.top - CHART.bottom;

describe('report plots', () => {
  it('places histogram bars of raw and clean on one shared axis, each at its bin edges', () => {
    const raw: Histogram = { rule: 'sturges', bins: [{ from: 0, to: 50, count: 10 }, { from: 50, to: 100, count: 30 }] };
    const clean: Histogram = { rule: 'sturges', bins: [{ from: 20, to: 40, count: 8 }, { from: 40, to: 60, count: 16 }] };
    const bars = histogramBars(raw, clean);
    // Independent computation: a linear map of [0, 100] onto the plot's width (common practice).
    const x = (v: number) => CHART.left + (v / 100) * plotWidth;
    for (const bar of bars) {
      expect(bar.x).toBeCloseTo(x(bar.from), 9);
      expect(bar.x + bar.width).toBeCloseTo(x(bar.to), 9);
      expect(bar.y + bar.height).toBeCloseTo(CHART.top + plotHeight, 9);
    }
    expect(bars.map((b) => b.side)).toEqual(['raw', 'raw', 'clean', 'clean']);
  });

  it('draws bins of unequal width on the density scale, so each bar\'s area is proportional to its count', () => {
    const raw: Histogram = { rule: 'sturges', bins: [{ from: 0, to: 100, count: 40 }, { from: 100, to: 400, count: 30 }] };
    const clean: Histogram = { rule: 'sturges', bins: [{ from: 0, to: 50, count: 20 }, { from: 50, to: 100, count: 20 }] };
    const bars = histogramBars(raw, clean);
    // Densities by hand: 40/100 = 0.4, 30/300 = 0.1, 20/50 = 0.4, 20/50 = 0.4; the tallest fill the plot.
    expect(bars.map((b) => b.height / plotHeight)).toEqual([1, 0.25, 1, 1]);
    // The area rule for histograms with unequal class intervals (Freedman, Pisani & Purves,
    // Statistics, ch. 3; from memory): area / count is the same for every bar.
    const ratios = bars.map((b) => (b.width * b.height) / b.count);
    for (const r of ratios) expect(r).toBeCloseTo(ratios[0], 9);
  });

  it('keeps a bin holding a single value visible', () => {
    const bars = histogramBars({ rule: 'sturges', bins: [{ from: 5, to: 5, count: 12 }] }, null);
    expect(bars).toHaveLength(1);
    expect(bars[0].width).toBeGreaterThan(0);
    expect(bars[0].height).toBeCloseTo(plotHeight, 9);
  });

  it('escapes labels and titles in the SVG and names both sides in words', () => {
    const svg = pairedBarsSvg('x1', 'Codes of <b>site</b>', [{ label: '<script>alert(1)</script>', raw: 3, clean: null }]);
    expect(svg).not.toContain('<script>');
    expect(svg).not.toContain('<b>');
    expect(svg).toContain('&lt;script&gt;');
    expect(svg).toContain('raw (dashed)');
    expect(svg).toContain('clean (solid)');
    expect(svg).toContain('clean: none');
    const histogram = histogramSvg('x2', 'Histogram of "w" & <v>', { rule: 'sturges', bins: [{ from: 1, to: 2, count: 1 }] }, null);
    expect(histogram).toContain('Histogram of &quot;w&quot; &amp; &lt;v&gt;');
    expect(histogram).toMatch(/role="img" aria-labelledby="x2-t x2-d"/);
  });
});
