/**
 * Vega-lite spec: the caliper test's counts, z just below vs just above the critical value
 * (Gerber & Malhotra 2008). Pure: results in, spec out.
 */
import type { CaliperTestResult } from "../../src/stats/caliper-test.ts";

export function reviewCaliperChart(caliper: CaliperTestResult): Record<string, unknown> {
  const values = [
    {
      band: `just below: [${caliper.bandBelow.lower.toFixed(2)}, ${caliper.criticalZ.toFixed(2)})`,
      count: caliper.below,
      order: 0,
    },
    {
      band: `just above: [${caliper.criticalZ.toFixed(2)}, ${caliper.bandAbove.upper.toFixed(2)}]`,
      count: caliper.above,
      order: 1,
    },
  ];
  return {
    $schema: "https://vega.github.io/schema/vega-lite/v6.json",
    title: `Results around the threshold (${Math.round(caliper.width * 100)} % caliper)`,
    width: 300,
    height: 180,
    data: { values },
    mark: "bar",
    encoding: {
      x: { field: "band", type: "nominal", title: "z = lift / SE", sort: null, axis: { labelAngle: 0 } },
      y: { field: "count", type: "quantitative", title: "tests" },
      color: { field: "order", type: "nominal", legend: null, scale: { range: ["#b8c4cc", "#c8553d"] } },
    },
  };
}
