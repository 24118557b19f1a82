/**
 * Vega-lite specs for the defaults page: expected value of the period against alpha (at the
 * recommended n) and against n per arm (at the recommended threshold), each with the three
 * designs marked. Pure: curve points in, spec out.
 */

export interface DesignMark {
  readonly label: string;
  readonly x: number;
  readonly expectedValue: number;
}

const designColours = {
  domain: ["recommended", "textbook", "current"],
  range: ["#2f7d4a", "#4c78a8", "#c8553d"],
};

function curveChart(
  title: string,
  xField: string,
  xTitle: string,
  points: readonly Record<string, number>[],
  marks: readonly DesignMark[],
): Record<string, unknown> {
  return {
    $schema: "https://vega.github.io/schema/vega-lite/v6.json",
    title,
    width: 340,
    height: 220,
    layer: [
      {
        data: { values: points.map((point) => ({ x: point[xField], expectedValue: point.expectedValue })) },
        mark: { type: "line", color: "#5a6470" },
        encoding: {
          x: { field: "x", type: "quantitative", title: xTitle, scale: { type: "log" } },
          y: {
            field: "expectedValue",
            type: "quantitative",
            title: "expected value of the period",
            axis: { format: "~s" },
          },
        },
      },
      {
        data: {
          values: marks.map((mark) => ({ design: mark.label, x: mark.x, expectedValue: mark.expectedValue })),
        },
        mark: { type: "point", filled: true, size: 90, opacity: 1 },
        encoding: {
          x: { field: "x", type: "quantitative" },
          y: { field: "expectedValue", type: "quantitative" },
          color: { field: "design", type: "nominal", title: "design", scale: designColours },
          shape: {
            field: "design",
            type: "nominal",
            scale: { domain: designColours.domain, range: ["circle", "square", "triangle-up"] },
          },
          tooltip: [
            { field: "design", type: "nominal" },
            { field: "x", type: "quantitative", title: xTitle, format: ".3~g" },
            { field: "expectedValue", type: "quantitative", format: ",.0f" },
          ],
        },
      },
    ],
  };
}

export function valueVsAlphaChart(
  points: readonly { alpha: number; expectedValue: number }[],
  marks: readonly DesignMark[],
): Record<string, unknown> {
  return curveChart(
    "Expected value against alpha (at the recommended n per arm)",
    "alpha",
    "alpha",
    points,
    marks,
  );
}

export function valueVsSampleSizeChart(
  points: readonly { nPerArm: number; expectedValue: number }[],
  marks: readonly DesignMark[],
): Record<string, unknown> {
  return curveChart(
    "Expected value against n per arm (at the recommended threshold)",
    "nPerArm",
    "n per arm",
    points,
    marks,
  );
}
