/**
 * Vega-lite spec: histogram of two-sided p-values (primary results, or A/A tests), with the
 * count expected per bin under uniformity drawn as a rule. Pure: results in, spec out.
 */
import type { HistogramBin } from "../../src/stats/program-review.ts";

export function reviewPValuesChart(bins: readonly HistogramBin[], title: string): Record<string, unknown> {
  const total = bins.reduce((sum, bin) => sum + bin.count, 0);
  const uniform = bins.length > 0 ? total / bins.length : 0;
  return {
    $schema: "https://vega.github.io/schema/vega-lite/v6.json",
    title,
    width: 420,
    height: 200,
    layer: [
      {
        data: { values: bins.map((bin) => ({ lower: bin.lower, upper: bin.upper, count: bin.count })) },
        mark: { type: "bar", color: "#4c78a8" },
        encoding: {
          x: {
            field: "lower",
            type: "quantitative",
            bin: { binned: true, step: 1 / Math.max(1, bins.length) },
            title: "p-value",
            scale: { domain: [0, 1] },
          },
          x2: { field: "upper" },
          y: { field: "count", type: "quantitative", title: "tests" },
        },
      },
      {
        data: { values: [{ expected: uniform }] },
        mark: { type: "rule", color: "#c8553d", strokeDash: [4, 3] },
        encoding: { y: { field: "expected", type: "quantitative" } },
      },
    ],
  };
}
