/**
 * Vega-lite spec for the backlog forecast: quantile bars of each simulated quantity, one bar per
 * rule (5-95 % range as a line, 25-75 % as a bar, the median as a tick, the mean as a dot), and
 * an optional target line. Pure: summaries in, spec out.
 */

export interface QuantileSummary {
  readonly mean: number;
  readonly quantiles: {
    readonly p5: number;
    readonly p25: number;
    readonly p50: number;
    readonly p75: number;
    readonly p95: number;
  };
}

export interface QuantileRow {
  readonly rule: string;
  readonly measure: string;
  readonly summary: QuantileSummary;
}

export function forecastQuantileChart(
  title: string,
  rows: readonly QuantileRow[],
  options: { readonly percent: boolean; readonly target?: number | null },
): Record<string, unknown> {
  const values = rows.map((row) => ({
    rule: row.rule,
    measure: row.measure,
    mean: row.summary.mean,
    ...row.summary.quantiles,
  }));
  const format = options.percent ? ".1%" : ".1f";
  const y = { field: "measure", type: "nominal", title: null, sort: null };
  const yOffset = { field: "rule", type: "nominal", sort: null };
  const color = {
    field: "rule",
    type: "nominal",
    title: "rule",
    sort: null,
    scale: { range: ["#4c78a8", "#2f7d4a", "#c8553d", "#e3b23c"] },
  };
  const xTitle = options.percent ? "relative lift, summed over shipped tests" : "tests";
  const layers: Record<string, unknown>[] = [
    {
      mark: { type: "rule", strokeWidth: 2 },
      encoding: {
        x: {
          field: "p5",
          type: "quantitative",
          title: xTitle,
          axis: { format: options.percent ? "%" : "d" },
        },
        x2: { field: "p95" },
        y,
        yOffset,
        color,
      },
    },
    {
      mark: { type: "bar", height: { band: 0.8 }, opacity: 0.55 },
      encoding: { x: { field: "p25", type: "quantitative" }, x2: { field: "p75" }, y, yOffset, color },
    },
    {
      mark: { type: "tick", thickness: 2, color: "#1d232b" },
      encoding: { x: { field: "p50", type: "quantitative" }, y, yOffset },
    },
    {
      mark: { type: "point", filled: true, size: 45, color: "#1d232b", shape: "diamond" },
      encoding: {
        x: { field: "mean", type: "quantitative" },
        y,
        yOffset,
        tooltip: [
          { field: "rule", type: "nominal" },
          { field: "measure", type: "nominal" },
          { field: "mean", type: "quantitative", format },
          { field: "p5", type: "quantitative", format, title: "5 %" },
          { field: "p25", type: "quantitative", format, title: "25 %" },
          { field: "p50", type: "quantitative", format, title: "median" },
          { field: "p75", type: "quantitative", format, title: "75 %" },
          { field: "p95", type: "quantitative", format, title: "95 %" },
        ],
      },
    },
  ];
  const spec: Record<string, unknown> = {
    $schema: "https://vega.github.io/schema/vega-lite/v6.json",
    title,
    width: 480,
    height: { step: 22 * Math.max(1, new Set(values.map((value) => value.rule)).size) },
    data: { values },
    layer: layers,
  };
  if (options.target !== undefined && options.target !== null)
    layers.push({
      data: { values: [{ target: options.target }] },
      mark: { type: "rule", strokeDash: [5, 4], color: "#9a4a00" },
      encoding: { x: { field: "target", type: "quantitative" } },
    });
  return spec;
}
