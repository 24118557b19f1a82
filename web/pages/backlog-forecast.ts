/**
 * Backlog forecast: the workspace's planned tests (GET /api/v1/backlog) and a forecast run
 * (POST /api/v1/forecast) under one or more launch rules on the same simulated draws: quantile
 * bars, the chance of reaching a target, the rules side by side, assumptions and cautions.
 */
import {
  apiJson,
  chart,
  dataTable,
  el,
  field,
  figure,
  figureList,
  formatInteger,
  formatNumber,
  formatPercent,
  formatSignedPercent,
  inputControl,
  notesSection,
  numberFrom,
  selectControl,
  startPage,
  textFrom,
  withLoading,
} from "./common.ts";
import { forecastQuantileChart, type QuantileRow, type QuantileSummary } from "./forecast-charts.ts";

interface PlannedTest {
  readonly key: string;
  readonly name: string;
  readonly team: string | null;
  readonly metric: string;
  readonly metricFamily: string;
  readonly plannedStart: string | null;
  readonly nPerArm: number | null;
  readonly dailyTraffic: number | null;
  readonly runDays: number | null;
  readonly arms: number;
  readonly status: string;
  readonly plannedStandardError: number | null;
}

interface Summary extends QuantileSummary {
  readonly monteCarloError: number;
  readonly expected: number | null;
}

const measures = ["shipped", "realWins", "falseWins", "claimedLift", "realizedLift", "liftGap"] as const;
type Measure = (typeof measures)[number];

const measureLabels: Readonly<Record<Measure, string>> = {
  shipped: "shipped",
  realWins: "real wins",
  falseWins: "false wins",
  claimedLift: "claimed lift",
  realizedLift: "realized lift",
  liftGap: "claimed minus realized",
};

type RuleForecast = Record<Measure, Summary> & {
  readonly label: string;
  readonly alpha: number | null;
  readonly description: string;
  readonly probabilityToReachTarget: { readonly estimate: number; readonly monteCarloError: number } | null;
};

interface Comparison {
  readonly label: string;
  readonly baseline: string;
  readonly probabilityRealizedAtLeastBaseline?: {
    readonly estimate: number;
    readonly monteCarloError: number;
  };
}

export interface ForecastReport {
  readonly sims: number;
  readonly seed: number;
  readonly target: number | null;
  readonly plannedTests: number;
  readonly rule: string;
  readonly rules: readonly RuleForecast[];
  readonly comparison: readonly Comparison[];
  readonly probabilityToReachTarget: { readonly estimate: number; readonly monteCarloError: number } | null;
  readonly definitions: Readonly<Record<string, string>>;
  readonly byTeam: readonly (Record<Measure, Summary> & { readonly name: string; readonly tests: number })[];
  readonly assumptions: readonly string[];
  readonly cautions: readonly string[];
}

function isLift(measure: Measure): boolean {
  return measure === "claimedLift" || measure === "realizedLift" || measure === "liftGap";
}

function formatMeasure(measure: Measure, value: number | null): string {
  return isLift(measure) ? formatSignedPercent(value, 2) : formatNumber(value, 2);
}

function backlogTable(tests: readonly PlannedTest[]): HTMLElement {
  return el(
    "div",
    { class: "table-scroll" },
    dataTable(
      `Planned and running tests (${formatInteger(tests.length)})`,
      [
        { header: "Key", cell: (row: PlannedTest) => row.key },
        { header: "Name", wrap: true, cell: (row) => row.name },
        { header: "Team", cell: (row) => row.team ?? "–" },
        { header: "Metric", cell: (row) => row.metric },
        { header: "Family", cell: (row) => row.metricFamily },
        { header: "Status", cell: (row) => row.status },
        { header: "Planned start", cell: (row) => row.plannedStart ?? "–" },
        {
          header: "Size",
          numeric: true,
          cell: (row) =>
            row.nPerArm !== null
              ? `${formatInteger(row.nPerArm)} per arm`
              : row.dailyTraffic !== null && row.runDays !== null
                ? `${formatInteger(row.dailyTraffic)} a day × ${formatNumber(row.runDays, 0)} days`
                : "–",
        },
        { header: "Arms", numeric: true, cell: (row) => formatInteger(row.arms) },
        {
          header: "Planned SE",
          numeric: true,
          note: "the standard error of the relative lift the plan gives",
          cell: (row) => formatPercent(row.plannedStandardError, 2),
        },
      ],
      tests,
    ),
  );
}

function headline(report: ForecastReport): HTMLElement {
  const first = report.rules[0];
  if (!first) return el("p", {}, "The forecast has no rule.");
  const detail = (measure: Measure) => {
    const summary = first[measure];
    return `5 to 95 %: ${formatMeasure(measure, summary.quantiles.p5)} to ${formatMeasure(measure, summary.quantiles.p95)}`;
  };
  const figures = [
    figure(
      `Shipped (rule ${first.label})`,
      formatNumber(first.shipped.mean, 1),
      detail("shipped"),
      "shipped",
    ),
    figure("Real wins", formatNumber(first.realWins.mean, 1), detail("realWins"), "real-wins"),
    figure("False wins", formatNumber(first.falseWins.mean, 1), detail("falseWins"), "false-wins"),
    figure(
      "Claimed lift",
      formatSignedPercent(first.claimedLift.mean, 2),
      detail("claimedLift"),
      "claimed-lift",
    ),
    figure(
      "Realized lift",
      formatSignedPercent(first.realizedLift.mean, 2),
      detail("realizedLift"),
      "realized-lift",
    ),
  ];
  if (first.probabilityToReachTarget && report.target !== null)
    figures.push(
      figure(
        `P(realized lift reaches ${formatSignedPercent(report.target, 1)})`,
        formatPercent(first.probabilityToReachTarget.estimate, 1),
        `Monte Carlo error ± ${formatPercent(first.probabilityToReachTarget.monteCarloError, 1)}`,
        "probability-to-reach-target",
      ),
    );
  return figureList(figures);
}

function sideBySide(report: ForecastReport): HTMLElement {
  interface Line {
    readonly label: string;
    readonly value: (rule: RuleForecast) => string;
  }
  const lines: Line[] = [
    {
      label: "alpha (two-sided equivalent)",
      value: (rule) => (rule.alpha === null ? "per family" : formatNumber(rule.alpha, 3)),
    },
    ...measures.map(
      (measure): Line => ({
        label: `${measureLabels[measure]}: mean (5 to 95 %)`,
        value: (rule) =>
          `${formatMeasure(measure, rule[measure].mean)} (${formatMeasure(measure, rule[measure].quantiles.p5)} to ${formatMeasure(measure, rule[measure].quantiles.p95)})`,
      }),
    ),
  ];
  if (report.target !== null)
    lines.push({
      label: `P(realized lift ≥ ${formatSignedPercent(report.target, 1)})`,
      value: (rule) =>
        rule.probabilityToReachTarget
          ? `${formatPercent(rule.probabilityToReachTarget.estimate, 1)} ± ${formatPercent(rule.probabilityToReachTarget.monteCarloError, 1)}`
          : "–",
    });
  const comparisons = new Map(report.comparison.map((entry) => [entry.label, entry]));
  if (report.comparison.length > 0)
    lines.push({
      label: `P(realized lift at least that of ${report.comparison[0]?.baseline ?? "the first rule"})`,
      value: (rule) => {
        const entry = comparisons.get(rule.label)?.probabilityRealizedAtLeastBaseline;
        return entry
          ? `${formatPercent(entry.estimate, 1)} ± ${formatPercent(entry.monteCarloError, 1)}`
          : "–";
      },
    });
  const table = dataTable(
    "The rules side by side, on the same simulated quarters",
    [
      { header: "", cell: (line: Line) => line.label },
      ...report.rules.map((rule) => ({
        header: rule.label,
        numeric: true,
        cell: (line: Line) => line.value(rule),
      })),
    ],
    lines,
  );
  return el(
    "div",
    {},
    el("div", { class: "table-scroll unbounded", id: "rules-side-by-side" }, table),
    el(
      "ul",
      { class: "muted" },
      report.rules.map((rule) => el("li", {}, el("strong", {}, rule.label), `: ${rule.description}`)),
    ),
  );
}

function teamTable(report: ForecastReport): HTMLElement {
  type Team = ForecastReport["byTeam"][number];
  return el(
    "div",
    { class: "table-scroll unbounded" },
    dataTable(
      `By team, under the headline rule (${report.rule}): means over the simulated quarters`,
      [
        { header: "Team", cell: (row: Team) => row.name },
        { header: "Planned tests", numeric: true, cell: (row) => formatInteger(row.tests) },
        ...measures.map((measure) => ({
          header: measureLabels[measure],
          numeric: true,
          cell: (row: Team) => formatMeasure(measure, row[measure].mean),
        })),
      ],
      report.byTeam,
    ),
  );
}

function charts(report: ForecastReport): HTMLElement {
  const rowsOf = (chosen: readonly Measure[]): QuantileRow[] =>
    chosen.flatMap((measure) =>
      report.rules.map((rule) => ({
        rule: rule.label,
        measure: measureLabels[measure],
        summary: rule[measure],
      })),
    );
  return el(
    "div",
    { class: "charts" },
    chart(
      forecastQuantileChart(
        "Tests shipped, real and false wins",
        rowsOf(["shipped", "realWins", "falseWins"]),
        { percent: false },
      ),
      "Line: 5 to 95 % of simulated quarters; bar: 25 to 75 %; tick: median; diamond: mean.",
    ),
    chart(
      forecastQuantileChart("Lift claimed and realized", rowsOf(["claimedLift", "realizedLift", "liftGap"]), {
        percent: true,
        target: report.target,
      }),
      report.target === null
        ? "Lifts summed over the shipped tests."
        : `Lifts summed over the shipped tests; the dashed line is the target of ${formatSignedPercent(report.target, 1)}.`,
    ),
  );
}

function number(name: string, value: string, attributes: Record<string, string> = {}): HTMLInputElement {
  return inputControl(name, { type: "number", value, step: "any", inputmode: "decimal", ...attributes });
}

function checkbox(name: string, label: string, checked: boolean): HTMLElement {
  const input = inputControl(name, { type: "checkbox", checked });
  return el("div", { class: "field inline" }, input, el("label", { for: input.id }, label));
}

export function forecastRequest(form: HTMLFormElement): Record<string, unknown> {
  const checked = (name: string) =>
    (form.elements.namedItem(name) as HTMLInputElement | null)?.checked ?? false;
  const rules: string[] = [];
  if (checked("ruleCurrent")) rules.push("current");
  if (checked("ruleRecommended")) rules.push("recommended");
  const alpha = textFrom(form, "ruleAlpha");
  if (alpha !== "") rules.push(`alpha=${alpha}`);
  const valuePerLift = numberFrom(form, "valuePerLift");
  const launchCost = numberFrom(form, "launchCost");
  const winRate = numberFrom(form, "fallbackWinRate");
  const effectScale = numberFrom(form, "fallbackEffectScale");
  return {
    rules,
    target: numberFrom(form, "target") ?? null,
    sims: numberFrom(form, "sims"),
    seed: numberFrom(form, "seed"),
    economics: valuePerLift !== undefined ? { valuePerLift, launchCost: launchCost ?? 0 } : null,
    fallbackPrior:
      winRate !== undefined && effectScale !== undefined
        ? { winRate, effectScale, shape: textFrom(form, "fallbackShape") || undefined }
        : null,
  };
}

startPage(async (root) => {
  const backlog = await apiJson<{ items: PlannedTest[] }>("/api/v1/backlog");
  const active = backlog.items.filter((test) => test.status !== "done");
  const backlogSection = el(
    "section",
    { "aria-labelledby": "backlog-heading" },
    el("h2", { id: "backlog-heading" }, "The backlog"),
    active.length === 0
      ? el(
          "p",
          { class: "empty" },
          "The workspace has no planned or running tests. Someone with a write token adds them with POST /api/v1/backlog or plumbline backlog import (layout: templates/backlog-template.csv).",
        )
      : backlogTable(active),
  );
  const form = el(
    "form",
    { class: "settings", "aria-label": "Forecast settings", novalidate: true },
    el(
      "fieldset",
      {},
      el("legend", {}, "Launch rules to compare"),
      checkbox("ruleCurrent", "current (the alpha the teams plan with)", true),
      checkbox("ruleRecommended", "recommended (needs the economics)", true),
      field("Another alpha", number("ruleAlpha", "", { min: "0", max: "1" }), "e.g. 0.1; empty = none"),
    ),
    el(
      "fieldset",
      {},
      el("legend", {}, "Target and simulation"),
      field(
        "Target realized lift",
        number("target", "0.05"),
        "summed relative lift, e.g. 0.05 = +5 %; empty = none",
      ),
      field("Simulated quarters", number("sims", "10000", { min: "2", max: "1000000", step: "1" })),
      field("Seed", number("seed", "1", { step: "1" })),
    ),
    el(
      "fieldset",
      {},
      el("legend", {}, "Economics (for the recommended rule)"),
      field("Value of a lift of 1 (100 %)", number("valuePerLift", "20000000", { min: "0" })),
      field("Cost of one launch", number("launchCost", "5000", { min: "0" })),
    ),
    el(
      "fieldset",
      {},
      el("legend", {}, "Assumed prior (families with too little history)"),
      field(
        "Win rate",
        number("fallbackWinRate", "", { min: "0", max: "1" }),
        "P(real win); empty = no assumed prior",
      ),
      field(
        "Effect scale",
        number("fallbackEffectScale", "", { min: "0" }),
        "typical size of a real effect, e.g. 0.02",
      ),
      field(
        "Shape",
        selectControl("fallbackShape", [
          ["normal", "normal"],
          ["fat", "fat-tailed"],
        ]),
      ),
    ),
    el(
      "div",
      { class: "actions" },
      el("button", { type: "submit", disabled: active.length === 0 }, "Run the forecast"),
    ),
  );
  const output = el("div", { id: "forecast-output", "aria-live": "polite" });
  root.replaceChildren(backlogSection, el("h2", {}, "Forecast"), form, output);

  async function run(): Promise<void> {
    await withLoading(output, "Simulating the quarters…", async () => {
      const report = await apiJson<ForecastReport>("/api/v1/forecast", {
        method: "POST",
        body: JSON.stringify(forecastRequest(form)),
      });
      return el(
        "div",
        {},
        el(
          "p",
          { class: "muted" },
          `${formatInteger(report.plannedTests)} planned tests, ${formatInteger(report.sims)} simulated quarters, seed ${report.seed}. Headline rule: ${report.rule}.`,
        ),
        headline(report),
        notesSection(report.assumptions, report.cautions),
        el("h2", {}, "Ranges"),
        charts(report),
        el("h2", {}, "Current and recommended side by side"),
        sideBySide(report),
        el("h2", {}, "By team"),
        teamTable(report),
      );
    });
  }

  form.addEventListener("submit", (event) => {
    event.preventDefault();
    void run();
  });
  if (active.length > 0) await run();
  else output.replaceChildren();
});
