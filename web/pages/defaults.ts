/**
 * Defaults: the form for POST /api/v1/calibrate (a prior fitted to a metric family of the
 * workspace, or an assumed one; the metric's scale, traffic, period, backlog and economics) and
 * its answer: recommended, textbook and current designs side by side, the value curves, the
 * sensitivity scenarios with the fragile verdict, assumptions and cautions.
 */
import {
  apiJson,
  chart,
  dataTable,
  el,
  field,
  formatInteger,
  formatNumber,
  formatPercent,
  formatSignedPercent,
  formatSignificant,
  inputControl,
  notesSection,
  numberFrom,
  selectControl,
  startPage,
  textFrom,
  withLoading,
} from "./common.ts";
import { type DesignMark, valueVsAlphaChart, valueVsSampleSizeChart } from "./defaults-charts.ts";

interface Design {
  readonly alpha: number;
  readonly threshold: number;
  readonly liftThreshold: number;
  readonly nPerArm: number;
  readonly days: number;
  readonly testsPerPeriod: number;
  readonly power: number;
  readonly mde: number;
  readonly falsePositiveRisk: number;
  readonly exaggeration: number;
  readonly expectedShipped: number;
  readonly expectedRealWins: number;
  readonly expectedFalseWins: number;
  readonly expectedRealizedLift: number;
  readonly expectedClaimedLift: number;
  readonly expectedValue: number;
  readonly valueLeftOnTable: number;
  readonly source?: string;
}

interface Scenario {
  readonly label: string;
  readonly winRateFactor: number;
  readonly effectScaleFactor: number;
  readonly recommended: { alpha: number; nPerArm: number; days: number; expectedValue: number };
  readonly baseRecommendationValue: number;
  readonly shareOfValueForgone: number | null;
}

export interface CalibrationReport {
  readonly recommended: Design;
  readonly textbook: Design;
  readonly current: Design | null;
  readonly curves: {
    readonly valueVsAlpha: readonly { alpha: number; expectedValue: number }[];
    readonly valueVsN: readonly { nPerArm: number; expectedValue: number }[];
  };
  readonly sensitivity: {
    readonly scenarios: readonly Scenario[];
    readonly fragile: boolean;
    readonly fragileRule: string;
  };
  readonly assumptions: readonly string[];
  readonly cautions: readonly string[];
}

const scenarioLabels: Readonly<Record<string, string>> = {
  winRateHalved: "share of real effects halved",
  winRateDoubled: "share of real effects doubled",
  effectScaleHalved: "effect sizes halved",
  effectScaleDoubled: "effect sizes doubled",
};

function money(value: number | null | undefined): string {
  return formatInteger(value);
}

type Row = readonly [label: string, format: (design: Design) => string, note?: string];

const designRows: readonly Row[] = [
  ["alpha (two-sided)", (design) => formatSignificant(design.alpha)],
  [
    "Ship when the lift exceeds",
    (design) => formatSignedPercent(design.liftThreshold),
    "the lift threshold y > z* s",
  ],
  ["n per arm", (design) => formatInteger(design.nPerArm)],
  ["Run length (days)", (design) => formatNumber(design.days, 1)],
  ["Tests in the period", (design) => formatNumber(design.testsPerPeriod, 1)],
  ["Power at the typical real win", (design) => formatPercent(design.power, 0)],
  ["False positive risk of a shipped test", (design) => formatPercent(design.falsePositiveRisk, 0)],
  ["Exaggeration of shipped lifts", (design) => `${formatNumber(design.exaggeration, 2)} ×`],
  ["Expected shipped", (design) => formatNumber(design.expectedShipped, 1)],
  ["Expected real wins", (design) => formatNumber(design.expectedRealWins, 1)],
  ["Expected false wins", (design) => formatNumber(design.expectedFalseWins, 1)],
  ["Expected claimed lift", (design) => formatSignedPercent(design.expectedClaimedLift, 1)],
  ["Expected realized lift", (design) => formatSignedPercent(design.expectedRealizedLift, 1)],
  ["Expected value of the period", (design) => money(design.expectedValue)],
  ["Value left on the table", (design) => money(design.valueLeftOnTable), "against the recommended design"],
];

function comparison(report: CalibrationReport): HTMLElement {
  const designs: [string, Design][] = [
    ["Recommended", report.recommended],
    ["Textbook (alpha 0.05, power 0.8)", report.textbook],
  ];
  if (report.current) designs.push(["Current (from the history)", report.current]);
  const table = dataTable(
    "Recommended, textbook and current designs",
    [
      { header: "", cell: (row: Row) => row[0] },
      ...designs.map(([title, design]) => ({
        header: title,
        numeric: true,
        cell: (row: Row) => row[1](design),
      })),
    ],
    designRows,
  );
  return el(
    "div",
    {},
    el("div", { class: "table-scroll unbounded" }, table),
    report.current
      ? el("p", { class: "muted" }, `Current design: ${report.current.source ?? "from the history"}.`)
      : el(
          "p",
          { class: "muted" },
          "No current design: the history does not state planned alpha and sample sizes.",
        ),
  );
}

function sensitivity(report: CalibrationReport): HTMLElement[] {
  const verdict = report.sensitivity.fragile
    ? el(
        "p",
        { class: "verdict fragile", role: "status", "data-fragile": "true" },
        el("strong", {}, "Fragile: "),
        "the recommendation loses much of its value if the prior is off. Rule: ",
        report.sensitivity.fragileRule,
        ".",
      )
    : el(
        "p",
        { class: "verdict", role: "status", "data-fragile": "false" },
        el("strong", {}, "Not fragile: "),
        "the recommendation holds up when the prior is off by a factor of two. Rule: ",
        report.sensitivity.fragileRule,
        ".",
      );
  const table = dataTable(
    "The optimum if the prior were off",
    [
      { header: "Scenario", cell: (row: Scenario) => scenarioLabels[row.label] ?? row.label },
      { header: "Its alpha", numeric: true, cell: (row) => formatSignificant(row.recommended.alpha) },
      { header: "Its n per arm", numeric: true, cell: (row) => formatInteger(row.recommended.nPerArm) },
      { header: "Its expected value", numeric: true, cell: (row) => money(row.recommended.expectedValue) },
      {
        header: "Value of our recommendation there",
        numeric: true,
        cell: (row) => money(row.baseRecommendationValue),
      },
      { header: "Share forgone", numeric: true, cell: (row) => formatPercent(row.shareOfValueForgone, 1) },
    ],
    report.sensitivity.scenarios,
  );
  return [verdict, el("div", { class: "table-scroll unbounded" }, table)];
}

function curves(report: CalibrationReport): HTMLElement {
  const designs: [string, Design | null][] = [
    ["recommended", report.recommended],
    ["textbook", report.textbook],
    ["current", report.current],
  ];
  const alphaMarks: DesignMark[] = [];
  const sizeMarks: DesignMark[] = [];
  for (const [label, design] of designs) {
    if (!design) continue;
    alphaMarks.push({ label, x: design.alpha, expectedValue: design.expectedValue });
    sizeMarks.push({ label, x: design.nPerArm, expectedValue: design.expectedValue });
  }
  return el(
    "div",
    { class: "charts" },
    chart(
      valueVsAlphaChart(report.curves.valueVsAlpha, alphaMarks),
      "Expected value of the period as alpha changes, n per arm held at the recommendation; the dots are the three designs (each at its own n).",
    ),
    chart(
      valueVsSampleSizeChart(report.curves.valueVsN, sizeMarks),
      "Expected value as n per arm changes, the threshold held at the recommendation; longer tests mean fewer tests in the period.",
    ),
  );
}

function number(name: string, value: string, attributes: Record<string, string> = {}): HTMLInputElement {
  return inputControl(name, { type: "number", value, step: "any", inputmode: "decimal", ...attributes });
}

function buildForm(families: readonly string[]): HTMLFormElement {
  const source = selectControl("source", [
    ["workspace", "Fitted to this workspace's history"],
    ["assumed", "Assumed"],
  ]);
  const fitted = el(
    "div",
    { class: "prior-fitted", style: "display: contents" },
    field(
      "Metric family",
      selectControl(
        "family",
        families.map((family) => [family, family] as const),
      ),
    ),
    field(
      "Prior family",
      selectControl("fitFamily", [
        ["", "best fit"],
        ["symmetric", "symmetric"],
        ["skewed", "skewed"],
        ["grid", "grid"],
      ]),
    ),
  );
  const assumed = el(
    "div",
    { class: "prior-assumed", style: "display: none" },
    field("Win rate", number("winRate", "0.1", { min: "0", max: "1" }), "P(a test is a real win), 0 to 1"),
    field(
      "Loss rate",
      number("lossRate", "", { min: "0", max: "1" }),
      "P(a real loss); empty = the win rate",
    ),
    field(
      "Effect scale",
      number("effectScale", "0.02", { min: "0" }),
      "typical size of a real effect, relative lift",
    ),
    field(
      "Shape",
      selectControl("shape", [
        ["normal", "normal"],
        ["fat", "fat-tailed"],
      ]),
    ),
  );
  const kind = selectControl("kind", [
    ["rate", "a rate (conversion)"],
    ["mean", "a mean (revenue)"],
  ]);
  const rate = el(
    "div",
    { style: "display: contents" },
    field("Baseline rate", number("baselineRate", "0.05", { min: "0", max: "1" }), "e.g. 0.05 = 5 %"),
  );
  const mean = el(
    "div",
    { style: "display: none" },
    field("Baseline mean", number("mean", "2.4")),
    field("Standard deviation", number("sd", "11.5", { min: "0" })),
  );
  source.addEventListener("change", () => {
    const isAssumed = source.value === "assumed";
    fitted.style.display = isAssumed ? "none" : "contents";
    assumed.style.display = isAssumed ? "contents" : "none";
  });
  kind.addEventListener("change", () => {
    rate.style.display = kind.value === "rate" ? "contents" : "none";
    mean.style.display = kind.value === "mean" ? "contents" : "none";
  });
  return el(
    "form",
    { class: "settings", "aria-label": "Calibration inputs", novalidate: true },
    el("fieldset", {}, el("legend", {}, "Prior of true effects"), field("Source", source), fitted, assumed),
    el("fieldset", {}, el("legend", {}, "Metric"), field("Kind", kind), rate, mean),
    el(
      "fieldset",
      {},
      el("legend", {}, "Traffic and period"),
      field("Eligible users a day", number("dailyTraffic", "50000", { min: "1" })),
      field("Period (days)", number("periodDays", "90", { min: "1" })),
      field("Ideas in the backlog", number("backlog", "40", { min: "1" })),
      field("Longest run (days)", number("maxDays", "", { min: "1" }), "empty = the period"),
    ),
    el(
      "fieldset",
      {},
      el("legend", {}, "Economics"),
      field(
        "Value of a lift of 1 (100 %)",
        number("valuePerLift", "20000000", { min: "0" }),
        "over the period, in your currency",
      ),
      field("Cost of one launch", number("launchCost", "5000", { min: "0" })),
      field("Extra cost of a shipped loss", number("lossPenalty", "", { min: "0" }), "empty = none"),
    ),
    el("div", { class: "actions" }, el("button", { type: "submit" }, "Recommend defaults")),
  );
}

export function calibrationRequest(form: HTMLFormElement): Record<string, unknown> {
  const prior =
    textFrom(form, "source") === "assumed"
      ? {
          source: "assumed",
          winRate: numberFrom(form, "winRate"),
          lossRate: numberFrom(form, "lossRate"),
          effectScale: numberFrom(form, "effectScale"),
          shape: textFrom(form, "shape") || undefined,
        }
      : {
          source: "workspace",
          family: textFrom(form, "family"),
          fitFamily: textFrom(form, "fitFamily") || undefined,
        };
  const metric =
    textFrom(form, "kind") === "mean"
      ? { kind: "mean", mean: numberFrom(form, "mean"), sd: numberFrom(form, "sd") }
      : { kind: "rate", baselineRate: numberFrom(form, "baselineRate") };
  return {
    prior,
    metric,
    dailyTraffic: numberFrom(form, "dailyTraffic"),
    periodDays: numberFrom(form, "periodDays"),
    backlog: numberFrom(form, "backlog"),
    valuePerLift: numberFrom(form, "valuePerLift"),
    launchCost: numberFrom(form, "launchCost"),
    lossPenalty: numberFrom(form, "lossPenalty"),
    maxDays: numberFrom(form, "maxDays"),
  };
}

startPage(async (root) => {
  const metrics = await apiJson<{ items: { family: string }[] }>("/api/v1/metrics");
  const families = [...new Set(metrics.items.map((metric) => metric.family))].sort();
  const form = buildForm(families);
  const output = el("div", { id: "defaults-output", "aria-live": "polite" });
  root.replaceChildren(form, output);

  async function load(): Promise<void> {
    await withLoading(output, "Searching for the best alpha and n per arm…", async () => {
      // JSON drops the undefined fields: an empty optional input is left out, not sent as null.
      const report = await apiJson<CalibrationReport>("/api/v1/calibrate", {
        method: "POST",
        body: JSON.stringify(calibrationRequest(form)),
      });
      const recommended = report.recommended;
      return el(
        "div",
        {},
        el("h2", {}, "Recommendation"),
        el(
          "p",
          { class: "lead", "data-recommended-alpha": String(recommended.alpha) },
          `Test at alpha ${formatSignificant(recommended.alpha)} with ${formatInteger(recommended.nPerArm)} users per arm (${formatNumber(recommended.days, 1)} days a test, ${formatNumber(recommended.testsPerPeriod, 1)} tests in the period). Expected value ${money(recommended.expectedValue)}, against ${money(report.textbook.expectedValue)} for the textbook design${report.current ? ` and ${money(report.current.expectedValue)} for the current one` : ""}.`,
        ),
        notesSection(report.assumptions, report.cautions),
        comparison(report),
        el("h2", {}, "Value curves"),
        curves(report),
        el("h2", {}, "Sensitivity to the prior"),
        ...sensitivity(report),
      );
    });
  }

  form.addEventListener("submit", (event) => {
    event.preventDefault();
    void load();
  });
  await load();
});
