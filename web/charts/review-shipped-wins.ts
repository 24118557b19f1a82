/**
 * Vega-lite spec: the program's confusion matrix in expected counts, per quarter (or per team):
 * shipped real wins, shipped false wins, missed wins and correctly not shipped, stacked.
 * Pure: results in, spec out.
 */
import type { ConfusionMatrix } from "../../src/stats/program-review.ts";

export function reviewShippedWinsChart(
  groups: readonly (ConfusionMatrix & { readonly label: string })[],
  groupTitle: string,
): Record<string, unknown> {
  const values = groups.flatMap((group) => [
    { group: group.label, outcome: "shipped, real win", count: group.shippedRealWin, order: 0 },
    { group: group.label, outcome: "shipped, not a real win", count: group.shippedNotRealWin, order: 1 },
    {
      group: group.label,
      outcome: "not shipped, real win (missed)",
      count: group.notShippedRealWin,
      order: 2,
    },
    {
      group: group.label,
      outcome: "not shipped, not a real win",
      count: group.notShippedNotRealWin,
      order: 3,
    },
  ]);
  return {
    $schema: "https://vega.github.io/schema/vega-lite/v6.json",
    title: `Expected outcomes by ${groupTitle} (expected counts under the fitted prior)`,
    width: 560,
    height: 240,
    data: { values },
    mark: "bar",
    encoding: {
      x: { field: "group", type: "ordinal", title: groupTitle, sort: null },
      y: { field: "count", type: "quantitative", title: "expected tests", stack: "zero" },
      color: {
        field: "outcome",
        type: "nominal",
        title: null,
        sort: [
          "shipped, real win",
          "shipped, not a real win",
          "not shipped, real win (missed)",
          "not shipped, not a real win",
        ],
        scale: { range: ["#2f7d4a", "#c8553d", "#e3b23c", "#b8c4cc"] },
        legend: { labelLimit: 320 },
      },
      order: { field: "order", type: "quantitative" },
      tooltip: [
        { field: "group", type: "ordinal" },
        { field: "outcome", type: "nominal" },
        { field: "count", type: "quantitative", format: ".1f" },
      ],
    },
  };
}
