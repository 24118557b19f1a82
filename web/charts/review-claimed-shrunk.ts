/**
 * Vega-lite spec: claimed lift against shrunk lift per test, coloured by decision, with the
 * identity line (no shrinkage) for reference. Pure: results in, spec out.
 */
import type { ReviewTestRow } from "../../src/stats/program-review.ts";

export function reviewClaimedShrunkChart(
  rows: readonly ReviewTestRow[],
  maximumPoints = 3000,
): Record<string, unknown> {
  // Thinned evenly for very large histories: the chart shows the shape, the table holds every test.
  const step = Math.max(1, Math.ceil(rows.length / maximumPoints));
  const values = rows
    .filter((_, index) => index % step === 0)
    .map((row) => ({ claimed: row.claimed, shrunk: row.shrunk, decision: row.decision, key: row.key }));
  const extent = values.reduce((most, row) => Math.max(most, Math.abs(row.claimed)), 0) || 0.01;
  return {
    $schema: "https://vega.github.io/schema/vega-lite/v6.json",
    title: step > 1 ? `Claimed vs shrunk lift (every ${step}th test)` : "Claimed vs shrunk lift",
    width: 420,
    height: 320,
    layer: [
      {
        data: {
          values: [
            { x: -extent, y: -extent },
            { x: extent, y: extent },
          ],
        },
        mark: { type: "line", color: "#999", strokeDash: [4, 4] },
        encoding: { x: { field: "x", type: "quantitative" }, y: { field: "y", type: "quantitative" } },
      },
      {
        data: { values },
        mark: { type: "point", filled: true, opacity: 0.6, size: 18 },
        encoding: {
          x: { field: "claimed", type: "quantitative", title: "claimed lift", axis: { format: "%" } },
          y: {
            field: "shrunk",
            type: "quantitative",
            title: "shrunk lift (posterior mean)",
            axis: { format: "%" },
          },
          color: { field: "decision", type: "nominal", title: "decision" },
          tooltip: [
            { field: "key", type: "nominal" },
            { field: "claimed", type: "quantitative", format: ".2%" },
            { field: "shrunk", type: "quantitative", format: ".2%" },
          ],
        },
      },
    ],
  };
}
