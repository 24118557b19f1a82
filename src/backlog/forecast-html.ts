/**
 * The forecast as a self-contained HTML page: tables and vega-lite charts rendered to inline SVG
 * on the server (vega-lite compile, then a headless vega View's toSVG), so the page needs no
 * network and no script to view.
 */
import * as vega from "vega";
import { compile, type TopLevelSpec } from "vega-lite";
import type { OutcomeSummary } from "../stats/forecast-backlog.ts";
import type { ForecastReport } from "./forecast-report.ts";

const quantityLabels = {
  claimedLift: "Claimed lift",
  realizedLift: "Realized lift",
  liftGap: "Gap",
} as const;

const countLabels = { shipped: "Shipped", realWins: "Real wins", falseWins: "False wins" } as const;

interface RangeRow {
  readonly rule: string;
  readonly quantity: string;
  readonly p5: number;
  readonly p25: number;
  readonly p50: number;
  readonly p75: number;
  readonly p95: number;
  readonly mean: number;
}

function rangeRow(rule: string, quantity: string, summary: OutcomeSummary): RangeRow {
  return { rule, quantity, ...summary.quantiles, mean: summary.mean };
}

/** Ranges (5-95 % thin, 25-75 % thick, median tick) per rule and quantity. */
export function rangeChartSpec(
  rows: readonly RangeRow[],
  title: string,
  axisTitle: string,
  percent: boolean,
): TopLevelSpec {
  const format = percent ? ".1%" : ".1f";
  return {
    $schema: "https://vega.github.io/schema/vega-lite/v5.json",
    title,
    width: 520,
    data: { values: rows.map((row) => ({ ...row })) },
    encoding: {
      y: { field: "quantity", type: "nominal", title: null, sort: null },
      yOffset: { field: "rule", type: "nominal", sort: null },
      color: { field: "rule", type: "nominal", title: "Rule", sort: null },
    },
    layer: [
      {
        mark: { type: "rule", strokeWidth: 1.5 },
        encoding: {
          x: { field: "p5", type: "quantitative", title: axisTitle, axis: { format } },
          x2: { field: "p95" },
        },
      },
      {
        mark: { type: "bar", height: 8 },
        encoding: { x: { field: "p25", type: "quantitative" }, x2: { field: "p75" } },
      },
      {
        mark: { type: "tick", color: "black", thickness: 2, size: 12 },
        encoding: { x: { field: "p50", type: "quantitative" } },
      },
    ],
  } as TopLevelSpec;
}

/** Mean claimed and realized lift per team (headline rule). */
export function teamChartSpec(report: ForecastReport): TopLevelSpec {
  const values = report.byTeam.flatMap((team) => [
    { team: team.name, measure: "Claimed", value: team.claimedLift.mean },
    { team: team.name, measure: "Realized", value: team.realizedLift.mean },
  ]);
  return {
    $schema: "https://vega.github.io/schema/vega-lite/v5.json",
    title: `Mean lift by team (${report.rule})`,
    width: 520,
    data: { values },
    mark: "bar",
    encoding: {
      y: { field: "team", type: "nominal", title: null },
      yOffset: { field: "measure", type: "nominal" },
      x: { field: "value", type: "quantitative", title: "Total relative lift", axis: { format: ".1%" } },
      color: { field: "measure", type: "nominal", title: null },
    },
  } as TopLevelSpec;
}

export async function renderSvg(spec: TopLevelSpec): Promise<string> {
  const view = new vega.View(vega.parse(compile(spec).spec), { renderer: "none" });
  return view.toSVG();
}

const escapeHtml = (text: string) =>
  text.replace(/&/g, "&amp;").replace(/</g, "&lt;").replace(/>/g, "&gt;").replace(/"/g, "&quot;");

const percent = (value: number) => `${(value * 100).toFixed(2)} %`;
const decimal = (value: number) => value.toFixed(2);

function summaryRow(label: string, summary: OutcomeSummary, format: (value: number) => string): string {
  const q = summary.quantiles;
  const expected = summary.expected === null ? "" : format(summary.expected);
  return `<tr><th>${escapeHtml(label)}</th><td>${format(summary.mean)} &plusmn; ${format(summary.monteCarloError)}</td><td>${expected}</td>${[q.p5, q.p25, q.p50, q.p75, q.p95].map((value) => `<td>${format(value)}</td>`).join("")}</tr>`;
}

export async function renderForecastHtml(report: ForecastReport): Promise<string> {
  const countRows = report.rules.flatMap((rule) =>
    Object.entries(countLabels).map(([key, label]) =>
      rangeRow(rule.label, label, rule[key as keyof typeof countLabels]),
    ),
  );
  const liftRows = report.rules.flatMap((rule) =>
    Object.entries(quantityLabels).map(([key, label]) =>
      rangeRow(rule.label, label, rule[key as keyof typeof quantityLabels]),
    ),
  );
  const charts = await Promise.all([
    renderSvg(
      rangeChartSpec(
        liftRows,
        "Total lift of the quarter: 5-95 % and 25-75 % ranges, median",
        "Total relative lift",
        true,
      ),
    ),
    renderSvg(rangeChartSpec(countRows, "Tests shipped: 5-95 % and 25-75 % ranges, median", "Tests", false)),
    renderSvg(teamChartSpec(report)),
  ]);
  const tables = report.rules
    .map(
      (rule) => `<h2>Rule ${escapeHtml(rule.label)}</h2>
<p>${escapeHtml(rule.description ?? "")}${rule.alpha === null ? "" : ` (alpha ${rule.alpha.toFixed(4)}, z* ${rule.criticalValue?.toFixed(3)})`}</p>
<table><thead><tr><th></th><th>mean &plusmn; MC error</th><th>expected</th><th>5 %</th><th>25 %</th><th>50 %</th><th>75 %</th><th>95 %</th></tr></thead><tbody>
${summaryRow("Shipped", rule.shipped, decimal)}
${summaryRow("Real wins", rule.realWins, decimal)}
${summaryRow("False wins", rule.falseWins, decimal)}
${summaryRow("Claimed lift", rule.claimedLift, percent)}
${summaryRow("Realized lift", rule.realizedLift, percent)}
${summaryRow("Gap", rule.liftGap, percent)}
</tbody></table>
${rule.probabilityToReachTarget === null ? "" : `<p>P(realized lift &ge; ${percent(report.target ?? 0)}) = ${percent(rule.probabilityToReachTarget.estimate)} &plusmn; ${percent(rule.probabilityToReachTarget.monteCarloError)}</p>`}`,
    )
    .join("\n");
  const list = (items: readonly string[]) =>
    `<ul>${items.map((item) => `<li>${escapeHtml(item)}</li>`).join("")}</ul>`;
  return `<!doctype html>
<html lang="en"><head><meta charset="utf-8"><title>plumbline backlog forecast</title>
<style>body{font-family:system-ui,sans-serif;max-width:960px;margin:2em auto;padding:0 1em;color:#222}table{border-collapse:collapse;margin:1em 0}td,th{border-bottom:1px solid #ddd;padding:4px 8px;text-align:right}th:first-child{text-align:left}.caution{background:#fff4e5;padding:0.5em 1em;border-left:4px solid #e69500}</style>
</head><body>
<h1>Backlog forecast${report.workspace ? `: ${escapeHtml(report.workspace)}` : ""}</h1>
<p>${report.plannedTests} planned tests, ${report.sims} simulated quarters, seed ${report.seed}.</p>
<div class="caution">${list(report.cautions)}</div>
${charts.map((svg) => `<figure>${svg}</figure>`).join("\n")}
${tables}
<h2>Definitions</h2>${list(Object.entries(report.definitions).map(([key, text]) => `${key}: ${text}`))}
<h2>Assumptions</h2>${list(report.assumptions)}
</body></html>
`;
}
