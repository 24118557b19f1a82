/**
 * The forecast as a self-contained HTML page: tables and vega-lite charts rendered to inline SVG
 * on the server (vega-lite compile, then a headless vega View's toSVG), so the page needs no
 * network and no script to view.
 */
import * as vega from "vega";
import { compile, type TopLevelSpec } from "vega-lite";
import type { GroupForecast, OutcomeSummaries, OutcomeSummary } from "../stats/forecast-backlog.ts";
import { summarizePrior } from "../stats/prior-summary.ts";
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
          x: {
            field: "p5",
            type: "quantitative",
            title: axisTitle,
            axis: percent ? { format } : { format: "d", tickMinStep: 1 },
          },
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
/** Quantiles of a count are whole numbers except where type-7 interpolation falls between two. */
const count = (value: number) => String(Number(value.toFixed(1)));
const whole = (value: number) => value.toLocaleString("en-US");

function summaryRow(
  label: string,
  summary: OutcomeSummary,
  format: (value: number) => string,
  quantileFormat: (value: number) => string = format,
): string {
  const q = summary.quantiles;
  const expected = summary.expected === null ? "" : format(summary.expected);
  return `<tr><th>${escapeHtml(label)}</th><td>${format(summary.mean)} &plusmn; ${format(summary.monteCarloError)}</td><td>${expected}</td>${[q.p5, q.p25, q.p50, q.p75, q.p95].map((value) => `<td>${quantileFormat(value)}</td>`).join("")}</tr>`;
}

const summaryHead =
  "<thead><tr><th></th><th>mean &plusmn; MC error</th><th>expected</th><th>5 %</th><th>25 %</th><th>50 %</th><th>75 %</th><th>95 %</th></tr></thead>";

function summaryTable(summaries: OutcomeSummaries): string {
  return `<table>${summaryHead}<tbody>
${summaryRow("Shipped", summaries.shipped, decimal, count)}
${summaryRow("Real wins", summaries.realWins, decimal, count)}
${summaryRow("False wins", summaries.falseWins, decimal, count)}
${summaryRow("Claimed lift", summaries.claimedLift, percent)}
${summaryRow("Realized lift", summaries.realizedLift, percent)}
${summaryRow("Gap", summaries.liftGap, percent)}
</tbody></table>`;
}

/** One sentence a reader can quote: the headline rule's outcome in words. */
function headlineSentence(report: ForecastReport): string {
  const rule = report.rules[0]!;
  const reach =
    rule.probabilityToReachTarget === null
      ? ""
      : ` The chance that the realized lift reaches the target of ${percent(report.target ?? 0)} is ${percent(rule.probabilityToReachTarget.estimate)}.`;
  return `Under the ${escapeHtml(rule.label)} rule the ${report.plannedTests} planned tests ship ${decimal(rule.shipped.mean)} on average (90 % of simulated quarters: ${count(rule.shipped.quantiles.p5)} to ${count(rule.shipped.quantiles.p95)}), ${decimal(rule.falseWins.mean)} of them false wins. Their estimates claim ${percent(rule.claimedLift.mean)} of total lift; their true effects deliver ${percent(rule.realizedLift.mean)}: ${percent(rule.liftGap.mean)} of the claim is the winner's curse of the shipped set.${reach}`;
}

function groupTable(title: string, groups: readonly GroupForecast[]): string {
  const rows = groups
    .map(
      (group) =>
        `<tr><th>${escapeHtml(group.name)}</th><td>${group.tests}</td><td>${decimal(group.shipped.mean)}</td><td>${decimal(group.falseWins.mean)}</td><td>${percent(group.claimedLift.mean)}</td><td>${percent(group.realizedLift.mean)}</td><td>${percent(group.realizedLift.quantiles.p5)} to ${percent(group.realizedLift.quantiles.p95)}</td><td>${percent(group.liftGap.mean)}</td></tr>`,
    )
    .join("\n");
  return `<table><thead><tr><th>${escapeHtml(title)}</th><th>tests</th><th>shipped</th><th>false wins</th><th>claimed lift</th><th>realized lift</th><th>realized 5-95 %</th><th>gap</th></tr></thead><tbody>
${rows}
</tbody></table>`;
}

function plannedTestTable(report: ForecastReport): string {
  const first = report.rules[0]!;
  const head = report.rules
    .map((rule) => `<th>${escapeHtml(rule.label)}: P(ship)</th><th>z* s</th>`)
    .join("");
  const rows = first.tests
    .map((test, index) => {
      const cells = report.rules
        .map((rule) => {
          const planned = rule.tests[index]!;
          const probability = planned.probabilityOfShipping ?? planned.simulatedShipShare;
          return `<td>${percent(probability)}</td><td>${percent(planned.threshold)}</td>`;
        })
        .join("");
      return `<tr><th>${escapeHtml(test.name)}</th><td class="text">${escapeHtml(test.team)}</td><td>${percent(test.standardError)}</td>${cells}</tr>`;
    })
    .join("\n");
  return `<table><thead><tr><th>planned test</th><th class="text">team</th><th>SE</th>${head}</tr></thead><tbody>
${rows}
</tbody></table>`;
}

function priorTable(report: ForecastReport): string {
  if (report.priors.length === 0) return "";
  const rows = report.priors
    .map((source) => {
      const summary = summarizePrior(source.prior, { densityPoints: 2 });
      const size = (value: number | null) => (value === null ? "" : percent(value));
      return `<tr><th>${escapeHtml(source.family)}</th><td class="text">${source.source === "fitted" ? `fitted to ${whole(source.observations)} results${source.bootstrapReplicates > 0 ? `, drawn from ${source.bootstrapReplicates} bootstrap refits` : ""}` : "assumed"}</td><td>${percent(summary.nullShare)}</td><td>${percent(summary.winRate)}</td><td>${percent(summary.lossRate)}</td><td>${size(summary.meanWinSize)}</td><td>${size(summary.meanLossSize)}</td></tr>`;
    })
    .join("\n");
  return `<h2>Priors of true effects</h2>
<table><thead><tr><th>family</th><th class="text">source</th><th>null share</th><th>win rate</th><th>loss rate</th><th>mean win</th><th>mean loss</th></tr></thead><tbody>
${rows}
</tbody></table>`;
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
${summaryTable(rule)}
${rule.probabilityToReachTarget === null ? "" : `<p>P(realized lift &ge; ${percent(report.target ?? 0)}) = ${percent(rule.probabilityToReachTarget.estimate)} &plusmn; ${percent(rule.probabilityToReachTarget.monteCarloError)}</p>`}`,
    )
    .join("\n");
  const comparisons = report.comparison
    .map(
      (
        difference,
      ) => `<h2>Rule ${escapeHtml(difference.label)} against rule ${escapeHtml(difference.baseline)}, on the same simulated quarters</h2>
<p>Each figure is ${escapeHtml(difference.label)} minus ${escapeHtml(difference.baseline)} in the same quarter (the same true effects and the same noise), so its range is the effect of the rule, not simulation noise. In ${percent(difference.probabilityRealizedAtLeastBaseline.estimate)} of quarters ${escapeHtml(difference.label)} realizes at least as much lift as ${escapeHtml(difference.baseline)}.</p>
${summaryTable(difference)}`,
    )
    .join("\n");
  const headline = report.rules[0]!;
  const list = (items: readonly string[]) =>
    `<ul>${items.map((item) => `<li>${escapeHtml(item)}</li>`).join("")}</ul>`;
  return `<!doctype html>
<html lang="en"><head><meta charset="utf-8"><title>plumbline backlog forecast</title>
<style>body{font-family:system-ui,sans-serif;max-width:1000px;margin:2em auto;padding:0 1em;color:#222}table{border-collapse:collapse;margin:1em 0}td,th{border-bottom:1px solid #ddd;padding:4px 8px;text-align:right;white-space:nowrap}th:first-child,.text{text-align:left}.caution{background:#fff4e5;padding:0.5em 1em;border-left:4px solid #e69500}.headline{font-size:1.1em;line-height:1.5}</style>
</head><body>
<h1>Backlog forecast${report.workspace ? `: ${escapeHtml(report.workspace)}` : ""}</h1>
<p>${report.plannedTests} planned tests, ${whole(report.sims)} simulated quarters, seed ${report.seed}${report.target === null ? "" : `, target realized lift ${percent(report.target)}`}.</p>
<p class="headline">${headlineSentence(report)}</p>
<div class="caution">${list(report.cautions)}</div>
${charts.map((svg) => `<figure>${svg}</figure>`).join("\n")}
${tables}
${comparisons}
<h2>By team (rule ${escapeHtml(headline.label)})</h2>
${groupTable("team", headline.byTeam)}
<h2>By metric family (rule ${escapeHtml(headline.label)})</h2>
${groupTable("family", headline.byFamily)}
<p>Means over the simulated quarters; every rule's groups, with quantiles, are in the JSON output.</p>
<h2>Planned tests</h2>
<p>The exact probability that each planned test ships under each rule, and the estimated lift it must exceed to ship (z* times its SE).</p>
${plannedTestTable(report)}
${priorTable(report)}
<h2>Definitions</h2>${list(Object.entries(report.definitions).map(([key, text]) => `${key}: ${text}`))}
<h2>Assumptions</h2>${list(report.assumptions)}
</body></html>
`;
}
