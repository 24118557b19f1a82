/**
 * Vega-lite specs for realized measurements: claimed vs shrunk vs realized per test, and the
 * histogram of PIT values (flat when the posterior predictive is calibrated). Pure.
 */
import type { ReviewTestRow } from "../../src/stats/program-review.ts";

export function reviewRealizedChart(rows: readonly ReviewTestRow[]): Record<string, unknown> {
  const values = rows
    .filter((row) => row.realized !== null)
    .flatMap((row) => [
      { key: row.key, kind: "claimed", lift: row.claimed },
      { key: row.key, kind: "shrunk", lift: row.shrunk },
      { key: row.key, kind: "realized", lift: row.realized },
    ]);
  return {
    $schema: "https://vega.github.io/schema/vega-lite/v6.json",
    title: "Claimed, shrunk and realized lift of tests with a realized measurement",
    width: 560,
    height: 260,
    data: { values },
    mark: { type: "point", filled: true, size: 40 },
    encoding: {
      x: { field: "key", type: "nominal", title: "test", sort: null, axis: { labels: values.length <= 120 } },
      y: { field: "lift", type: "quantitative", title: "lift", axis: { format: "%" } },
      color: {
        field: "kind",
        type: "nominal",
        title: null,
        sort: ["claimed", "shrunk", "realized"],
        scale: { range: ["#c8553d", "#4c78a8", "#2f7d4a"] },
      },
    },
  };
}

export function reviewPitChart(histogram: readonly number[]): Record<string, unknown> {
  const values = histogram.map((count, index) => ({
    lower: index / histogram.length,
    upper: (index + 1) / histogram.length,
    count,
  }));
  return {
    $schema: "https://vega.github.io/schema/vega-lite/v6.json",
    title: "PIT of realized measurements under the posterior predictive",
    width: 300,
    height: 180,
    data: { values },
    mark: { type: "bar", color: "#4c78a8" },
    encoding: {
      x: {
        field: "lower",
        type: "quantitative",
        bin: { binned: true, step: 0.1 },
        title: "PIT",
        scale: { domain: [0, 1] },
      },
      x2: { field: "upper" },
      y: { field: "count", type: "quantitative", title: "tests" },
    },
  };
}
