/**
 * Program review: GET /api/v1/review for a metric family, optionally one team and one quarter;
 * the headline figures with their intervals, the charts (vega-lite specs from web/charts/), the
 * per-test table (GET /api/v1/review/tests), the assumptions and cautions beside them, and the
 * HTML report and CSV as downloads fetched with the token.
 */
import { reviewCaliperChart } from "../charts/review-caliper.ts";
import { reviewClaimedShrunkChart } from "../charts/review-claimed-shrunk.ts";
import { reviewPValuesChart } from "../charts/review-p-values.ts";
import { reviewPitChart, reviewRealizedChart } from "../charts/review-realized.ts";
import { reviewShippedWinsChart } from "../charts/review-shipped-wins.ts";
import {
  ApiFailure,
  apiJson,
  chart,
  dataTable,
  downloadFile,
  el,
  errorBox,
  field,
  figure,
  figureList,
  formatInteger,
  formatInterval,
  formatNumber,
  formatPercent,
  formatSignedPercent,
  type Interval,
  inputControl,
  notesSection,
  selectControl,
  startPage,
  textFrom,
  withLoading,
} from "./common.ts";
import { historyIndex } from "./history-index.ts";

interface Estimate {
  readonly estimate: number | null;
  readonly interval: Interval | null;
}

interface ConfusionCounts {
  readonly shippedRealWin: number;
  readonly shippedNotRealWin: number;
  readonly notShippedRealWin: number;
  readonly notShippedNotRealWin: number;
  readonly tests: number;
}

interface Review {
  readonly cached: boolean;
  readonly metricFamily: string;
  readonly families: readonly { readonly family: string; readonly tests: number }[];
  readonly counts: {
    readonly tests: number;
    readonly included: number;
    readonly shipped: number;
    readonly notShipped: number;
    readonly pending: number;
    readonly leftOut: { readonly total: number; readonly aa: number; readonly sampleRatioMismatch: number };
  };
  readonly shipped: number;
  readonly atPracticalThreshold: {
    readonly threshold: number;
    readonly expectedFalseWins: Estimate;
    readonly falseDiscoveryRate: Estimate;
  } | null;
  readonly expectedRealWins: Estimate;
  readonly expectedFalseWins: Estimate;
  readonly falseDiscoveryRate: Estimate;
  readonly expectedSignErrors: Estimate;
  readonly claimedTotalLift: { readonly sum: number; readonly compounded: number };
  readonly expectedRealizedLift: {
    readonly sum: number | null;
    readonly compounded: number | null;
    readonly interval?: Interval | null;
  };
  readonly realizationRatio: Estimate;
  readonly exaggerationFactor: Estimate;
  readonly winnersCurseBias: {
    readonly frequentist?: {
      readonly bias: number;
      readonly correctedTotal: number;
      readonly interval: Interval | null;
    };
    readonly bayesian?: Estimate;
  };
  readonly missedWins: Estimate & { readonly notShipped: number };
  readonly confusionMatrix: {
    readonly byTeam: readonly (ConfusionCounts & { readonly team: string })[];
    readonly byQuarter: readonly (ConfusionCounts & { readonly quarter: string })[];
  };
  readonly prior: { readonly family: string; readonly nullShare: number; readonly typicalRealWin: number };
  readonly realized: { readonly count: number; readonly pitHistogram: readonly number[] } | null;
  readonly aa: {
    readonly count: number;
    readonly falsePositives: number;
    readonly falsePositiveRate: number | null;
    readonly interval: Interval | null;
    readonly pValueHistogram: readonly { lower: number; upper: number; count: number }[];
  };
  readonly pValueHistogram: readonly { lower: number; upper: number; count: number }[];
  readonly caliper: Record<string, unknown> & { readonly total: number };
  readonly sensitivity: readonly {
    readonly family: string;
    readonly chosen: boolean;
    readonly logLik: number;
    readonly nullShare: number;
    readonly expectedFalseWins: number;
    readonly falseDiscoveryRate: number | null;
    readonly realizationRatio: number | null;
    readonly missedWins: number;
  }[];
  readonly assumptions: { readonly statements: readonly string[] };
  readonly cautions: readonly string[];
}

interface ReviewRow {
  readonly key: string;
  readonly name: string;
  readonly team: string | null;
  readonly quarter: string | null;
  readonly decision: string;
  readonly claimed: number;
  readonly standardError: number;
  readonly shrunk: number;
  readonly shrunkLower: number;
  readonly shrunkUpper: number;
  readonly probabilityRealWin: number;
  readonly power: number;
  readonly exaggeration: number;
  readonly flags: readonly string[];
  readonly realized: number | null;
}

interface ReviewTests {
  readonly count: number;
  readonly tests: readonly ReviewRow[];
  readonly cautions: readonly string[];
}

const flagLabels: Readonly<Record<string, string>> = {
  early_stop: "early stop",
  sample_ratio_mismatch: "sample ratio mismatch",
  underpowered: "underpowered",
  extreme_claim: "extreme claim",
};

function count(value: number | null): string {
  return formatNumber(value, 1);
}

function intervalText(estimate: Estimate, format: (value: number | null) => string): string {
  return formatInterval(estimate.interval, format);
}

function headline(review: Review): HTMLElement {
  const bias = review.winnersCurseBias.frequentist;
  const bayesian = review.winnersCurseBias.bayesian;
  return figureList([
    figure(
      "Shipped",
      formatInteger(review.shipped),
      `of ${formatInteger(review.counts.included)} tests reviewed; ${formatInteger(review.counts.pending)} pending`,
      "shipped",
    ),
    figure(
      "Expected real wins among them",
      count(review.expectedRealWins.estimate),
      intervalText(review.expectedRealWins, count),
      "expected-real-wins",
    ),
    figure(
      "Expected false wins among them",
      count(review.expectedFalseWins.estimate),
      intervalText(review.expectedFalseWins, count),
      "expected-false-wins",
    ),
    figure(
      "False discovery rate",
      formatPercent(review.falseDiscoveryRate.estimate),
      intervalText(review.falseDiscoveryRate, (value) => formatPercent(value)),
      "false-discovery-rate",
    ),
    figure(
      "Claimed lift, summed over shipped tests",
      formatSignedPercent(review.claimedTotalLift.sum, 1),
      `compounded ${formatSignedPercent(review.claimedTotalLift.compounded, 1)}`,
      "claimed-lift",
    ),
    figure(
      "Expected realized lift of the same tests",
      formatSignedPercent(review.expectedRealizedLift.sum, 1),
      formatInterval(review.expectedRealizedLift.interval, (value) => formatSignedPercent(value, 1)),
      "expected-realized-lift",
    ),
    figure(
      "Realization ratio (realized / claimed)",
      formatPercent(review.realizationRatio.estimate, 0),
      intervalText(review.realizationRatio, (value) => formatPercent(value, 0)),
      "realization-ratio",
    ),
    figure(
      "Winner's-curse bias of the claimed total",
      formatSignedPercent(bias?.bias ?? null, 1),
      bias
        ? `Lee & Shen; ${formatInterval(bias.interval, (value) => formatSignedPercent(value, 1))}; posterior estimate ${formatSignedPercent(bayesian?.estimate ?? null, 1)}`
        : "",
      "winners-curse-bias",
    ),
    figure(
      "Missed wins among tests not shipped",
      count(review.missedWins.estimate),
      `${intervalText(review.missedWins, count)}; ${formatInteger(review.missedWins.notShipped)} not shipped`,
      "missed-wins",
    ),
    figure(
      "Exaggeration of shipped lifts",
      `${formatNumber(review.exaggerationFactor.estimate, 2)} ×`,
      intervalText(review.exaggerationFactor, (value) => formatNumber(value, 2)),
      "exaggeration",
    ),
    figure(
      "Shipped with the wrong sign (expected)",
      count(review.expectedSignErrors.estimate),
      intervalText(review.expectedSignErrors, count),
      "sign-errors",
    ),
    figure(
      "A/A tests with a false positive",
      review.aa.count > 0
        ? `${formatInteger(review.aa.falsePositives)} of ${formatInteger(review.aa.count)}`
        : "none run",
      review.aa.count > 0
        ? `${formatPercent(review.aa.falsePositiveRate)}; ${formatInterval(review.aa.interval, (value) => formatPercent(value))}`
        : "",
      "aa",
    ),
    ...practicalFigures(review),
  ]);
}

function practicalFigures(review: Review): HTMLElement[] {
  const practical = review.atPracticalThreshold;
  if (!practical) return [];
  const threshold = formatSignedPercent(practical.threshold, 1);
  return [
    figure(
      `Expected false wins at a practical threshold of ${threshold}`,
      count(practical.expectedFalseWins.estimate),
      intervalText(practical.expectedFalseWins, count),
      "practical-false-wins",
    ),
    figure(
      `False discovery rate at ${threshold}`,
      formatPercent(practical.falseDiscoveryRate.estimate),
      intervalText(practical.falseDiscoveryRate, (value) => formatPercent(value)),
      "practical-false-discovery-rate",
    ),
  ];
}

function charts(review: Review, rows: readonly ReviewRow[]): HTMLElement {
  type Groups = Parameters<typeof reviewShippedWinsChart>[0];
  type Rows = Parameters<typeof reviewClaimedShrunkChart>[0];
  type Bins = Parameters<typeof reviewPValuesChart>[0];
  const figures: HTMLElement[] = [];
  if (review.confusionMatrix.byQuarter.length > 0)
    figures.push(
      chart(
        reviewShippedWinsChart(
          review.confusionMatrix.byQuarter.map((group) => ({ ...group, label: group.quarter })) as Groups,
          "quarter",
        ),
        "Expected real wins, false wins and missed wins by quarter.",
      ),
    );
  if (review.confusionMatrix.byTeam.length > 1)
    figures.push(
      chart(
        reviewShippedWinsChart(
          review.confusionMatrix.byTeam.map((group) => ({ ...group, label: group.team })) as Groups,
          "team",
        ),
        "The same expected outcomes by team.",
      ),
    );
  if (rows.length > 0)
    figures.push(
      chart(
        reviewClaimedShrunkChart(rows as unknown as Rows),
        "Each test's claimed lift against its shrunk lift; points below the dashed line were claimed too high.",
      ),
    );
  figures.push(
    chart(
      reviewPValuesChart(review.pValueHistogram as Bins, "p-values of the primary results"),
      "A pile-up just under 0.05 suggests peeking or selective reporting; the dashed line is what uniform p-values would give.",
    ),
  );
  if (review.caliper.total > 0)
    figures.push(
      chart(
        reviewCaliperChart(review.caliper as unknown as Parameters<typeof reviewCaliperChart>[0]),
        "Results just below and just above the significance threshold: many more just above hints at nudged results.",
      ),
    );
  if (review.aa.count > 0)
    figures.push(
      chart(
        reviewPValuesChart(review.aa.pValueHistogram as Bins, "p-values of the A/A tests"),
        "A/A tests should give uniform p-values.",
      ),
    );
  if (review.realized && review.realized.count > 0) {
    figures.push(
      chart(
        reviewRealizedChart(rows as unknown as Rows),
        "Tests measured again after launch: claimed, shrunk and realized lift.",
      ),
    );
    figures.push(
      chart(
        reviewPitChart(review.realized.pitHistogram),
        "Where each realized lift fell in its predicted distribution; flat means the predictions were calibrated.",
      ),
    );
  }
  return el("div", { class: "charts" }, figures);
}

function sensitivityTable(review: Review): HTMLElement {
  return dataTable(
    "The same figures under each prior family (the chosen one has the best fit)",
    [
      {
        header: "Prior family",
        cell: (row: Review["sensitivity"][number]) => `${row.family}${row.chosen ? " (chosen)" : ""}`,
      },
      { header: "Log-likelihood", numeric: true, cell: (row) => formatNumber(row.logLik, 1) },
      { header: "Share of nulls", numeric: true, cell: (row) => formatPercent(row.nullShare) },
      { header: "Expected false wins", numeric: true, cell: (row) => count(row.expectedFalseWins) },
      { header: "False discovery rate", numeric: true, cell: (row) => formatPercent(row.falseDiscoveryRate) },
      { header: "Realization ratio", numeric: true, cell: (row) => formatPercent(row.realizationRatio, 0) },
      { header: "Missed wins", numeric: true, cell: (row) => count(row.missedWins) },
    ],
    review.sensitivity,
  );
}

/** Rows of the per-test table drawn at first, and at each "Show more". */
const testsTablePageSize = 1000;

function testsTable(rows: readonly ReviewRow[]): HTMLElement {
  const table = dataTable(
    `Every reviewed test (${formatInteger(rows.length)}); the column buttons sort`,
    [
      { header: "Key", cell: (row: ReviewRow) => row.key, sortValue: (row: ReviewRow) => row.key },
      { header: "Name", wrap: true, cell: (row) => row.name },
      { header: "Team", cell: (row) => row.team ?? "–", sortValue: (row) => row.team },
      { header: "Quarter", cell: (row) => row.quarter ?? "–", sortValue: (row) => row.quarter },
      { header: "Decision", cell: (row) => row.decision.replace("_", " "), sortValue: (row) => row.decision },
      {
        header: "Claimed ± SE",
        numeric: true,
        sortValue: (row) => row.claimed,
        cell: (row) => `${formatSignedPercent(row.claimed)} ± ${formatPercent(row.standardError, 2)}`,
      },
      {
        header: "Shrunk (95 % interval)",
        numeric: true,
        sortValue: (row) => row.shrunk,
        note: "posterior mean of the true lift under the fitted prior, and its 95 % credible interval",
        cell: (row) =>
          `${formatSignedPercent(row.shrunk)} (${formatSignedPercent(row.shrunkLower)} to ${formatSignedPercent(row.shrunkUpper)})`,
      },
      {
        header: "P(real win)",
        numeric: true,
        cell: (row) => formatPercent(row.probabilityRealWin, 0),
        sortValue: (row) => row.probabilityRealWin,
      },
      {
        header: "Power",
        numeric: true,
        sortValue: (row) => row.power,
        note: "power at the typical real win",
        cell: (row) => formatPercent(row.power, 0),
      },
      {
        header: "Exaggeration",
        numeric: true,
        cell: (row) => `${formatNumber(row.exaggeration, 2)} ×`,
        sortValue: (row) => row.exaggeration,
      },
      {
        header: "Realized",
        numeric: true,
        sortValue: (row) => row.realized,
        cell: (row) => (row.realized === null ? "–" : formatSignedPercent(row.realized)),
      },
      {
        header: "Flags",
        sortValue: (row) => row.flags.length,
        cell: (row) =>
          row.flags.map((flag) =>
            el(
              "span",
              { class: flag === "underpowered" ? "flag" : "flag flag-warning" },
              flagLabels[flag] ?? flag,
            ),
          ),
      },
    ],
    rows,
    // A large history's table is drawn a page at a time; the CSV download has every row.
    { pageSize: testsTablePageSize },
  );
  return el(
    "div",
    { class: "table-scroll", tabindex: "0", "aria-label": "Per-test table, scrollable" },
    table,
  );
}

function fileStem(query: URLSearchParams): string {
  const parts = ["plumbline-review", query.get("family"), query.get("team"), query.get("quarter")].filter(
    (part): part is string => Boolean(part),
  );
  return parts.join("-").replace(/[^A-Za-z0-9_-]+/g, "_");
}

/** The downloads ask with the review's own settings (so they read its cache); `named` names the files. */
function downloads(query: URLSearchParams, named: URLSearchParams): HTMLElement {
  const status = el("span", { "aria-live": "polite", class: "muted" });
  const button = (label: string, path: string, name: string) =>
    el(
      "button",
      {
        type: "button",
        class: "secondary",
        onclick: async (event: Event) => {
          const target = event.currentTarget as HTMLButtonElement;
          target.disabled = true;
          status.replaceChildren("Preparing the file…");
          try {
            await downloadFile(path, name);
            status.replaceChildren(`Saved ${name}.`);
          } catch (error) {
            status.replaceChildren(errorBox(error));
          } finally {
            target.disabled = false;
          }
        },
      },
      label,
    );
  const csvQuery = new URLSearchParams(query);
  csvQuery.set("format", "csv");
  return el(
    "div",
    { class: "downloads" },
    button("Download the report (HTML)", `/api/v1/review/report?${query}`, `${fileStem(named)}.html`),
    button("Download the per-test table (CSV)", `/api/v1/review/tests?${csvQuery}`, `${fileStem(named)}.csv`),
    status,
  );
}

interface ReviewRun {
  readonly state: "running" | "ready" | "failed";
  readonly stage: string | null;
  readonly elapsedSeconds: number;
  readonly poll: string;
  readonly review: Review | null;
  readonly error: { readonly status: number; readonly code: string; readonly message: string } | null;
}

/**
 * The review through a run of the server: started (with its per-test table, so that the table
 * the page reads next is cached), then polled, each stage shown, until it is ready or failed.
 */
async function reviewByRun(query: URLSearchParams, show: (text: string) => void): Promise<Review> {
  let run = await apiJson<ReviewRun>("/api/v1/review/runs", {
    method: "POST",
    body: JSON.stringify({ settings: Object.fromEntries(query), tests: true }),
  });
  while (run.state === "running") {
    show(
      `Computing the review: ${run.stage ?? "starting"} (${run.elapsedSeconds.toFixed(1)} s so far). A review not computed before on this data takes a few seconds; it is cached for the next time.`,
    );
    await new Promise((resolve) => setTimeout(resolve, 400));
    run = await apiJson<ReviewRun>(run.poll);
  }
  if (run.state === "failed" || !run.review) {
    const error = run.error ?? {
      status: 500,
      code: "internal",
      message: "the review run ended without a review",
    };
    throw new ApiFailure(error.status, error.code, error.message);
  }
  return run.review;
}

startPage(async (root) => {
  const parameters = new URLSearchParams(location.search);
  const index = await historyIndex();
  const askedFamily = parameters.get("family");
  // The family in the address is offered until the server lists the families it knows.
  const familySelect = selectControl(
    "family",
    [["", "The family with most tests"], ...(askedFamily ? [[askedFamily, askedFamily] as const] : [])],
    askedFamily ?? "",
  );
  // The lists start from the history index and grow with every review's teams and quarters
  // (the index reads a bounded part of a long history).
  const teams = new Set(index.teams);
  const quarters = new Set(index.quarters);
  const teamSelect = selectControl("team", [], parameters.get("team") ?? "");
  const quarterSelect = selectControl("quarter", [], parameters.get("quarter") ?? "");
  function fillChoices(): void {
    const keep = (select: HTMLSelectElement, values: readonly string[], all: string) => {
      const selected =
        select.value ||
        (select.id === "field-team" ? parameters.get("team") : parameters.get("quarter")) ||
        "";
      const shown = selected && !values.includes(selected) ? [...values, selected] : values;
      select.replaceChildren(
        el("option", { value: "" }, all),
        ...shown.map((value) => {
          const option = el("option", { value }, value);
          option.selected = value === selected;
          return option;
        }),
      );
    };
    keep(
      teamSelect,
      [...teams].sort((left, right) => left.localeCompare(right)),
      "All teams",
    );
    keep(quarterSelect, [...quarters].sort().reverse(), "All quarters");
  }
  fillChoices();
  const form = el(
    "form",
    { class: "filters", "aria-label": "Review settings" },
    field("Metric family", familySelect),
    field("Team", teamSelect),
    field("Quarter", quarterSelect),
    field(
      "Launch alpha",
      inputControl("alpha", {
        type: "number",
        step: "any",
        min: "0",
        max: "1",
        value: parameters.get("alpha") ?? "",
        placeholder: "0.05",
      }),
      "two-sided; empty = 0.05",
    ),
    field(
      "Practical threshold",
      inputControl("practical", {
        type: "number",
        step: "any",
        min: "0",
        value: parameters.get("practical") ?? "",
        placeholder: "none",
      }),
      "also count wins below this lift as false, e.g. 0.01",
    ),
    field(
      "Prior family",
      selectControl(
        "priorFamily",
        [
          ["", "best fit"],
          ["symmetric", "symmetric"],
          ["skewed", "skewed"],
          ["grid", "grid"],
        ],
        parameters.get("priorFamily") ?? "",
      ),
    ),
    el("div", { class: "actions" }, el("button", { type: "submit" }, "Review")),
  );
  const output = el("div", { id: "review-output", "aria-live": "polite" });
  root.replaceChildren(form, output);

  function fillFamilies(review: Review): void {
    const chosen = review.metricFamily;
    familySelect.replaceChildren(
      ...review.families.map((entry) => {
        const option = el(
          "option",
          { value: entry.family },
          `${entry.family} (${formatInteger(entry.tests)} tests)`,
        );
        option.selected = entry.family === chosen;
        return option;
      }),
    );
  }

  async function load(): Promise<void> {
    const query = new URLSearchParams();
    for (const name of ["family", "team", "quarter", "alpha", "practical", "priorFamily"]) {
      const value = textFrom(form, name);
      if (value !== "") query.set(name, value);
    }
    history.replaceState(null, "", `${location.pathname}${query.size > 0 ? `?${query}` : ""}`);
    await withLoading(
      output,
      "Computing the review… a review not computed before on this data takes a few seconds (the prior is refitted to bootstrap resamples).",
      async () => {
        const review = await reviewByRun(query, (text) => {
          const status = output.querySelector(".loading");
          if (status) status.textContent = text;
        });
        fillFamilies(review);
        // "(no team)" and "(no date)" label groups; they are not values the filters take.
        for (const group of review.confusionMatrix.byTeam)
          if (!group.team.startsWith("(")) teams.add(group.team);
        for (const group of review.confusionMatrix.byQuarter)
          if (/^\d{4}Q[1-4]$/.test(group.quarter)) quarters.add(group.quarter);
        fillChoices();
        // The table with the run's own settings: the run cached it under them.
        const tests = await apiJson<ReviewTests>(`/api/v1/review/tests?${query}`);
        // The files are named after the family the server chose.
        const named = new URLSearchParams(query);
        if (!named.has("family")) named.set("family", review.metricFamily);
        const scope = [
          `Metric family ${review.metricFamily}`,
          query.get("team") ? `team ${query.get("team")}` : "all teams",
          query.get("quarter") ? `quarter ${query.get("quarter")}` : "all quarters",
        ].join(", ");
        return el(
          "div",
          { class: "review-layout" },
          el(
            "div",
            {},
            el("h2", { id: "headline-heading" }, "Headline figures"),
            el(
              "p",
              { class: "muted" },
              `${scope}. Prior: ${review.prior.family} family, ${formatPercent(review.prior.nullShare)} of true effects at zero, typical real win ${formatSignedPercent(review.prior.typicalRealWin)}. ${formatInteger(review.counts.leftOut.total)} tests left out (${formatInteger(review.counts.leftOut.aa)} A/A, ${formatInteger(review.counts.leftOut.sampleRatioMismatch)} sample ratio mismatch).`,
            ),
            headline(review),
            downloads(query, named),
            el("h2", {}, "Charts"),
            charts(review, tests.tests),
            el("h2", {}, "How much the prior family matters"),
            el("div", { class: "table-scroll unbounded" }, sensitivityTable(review)),
            el("h2", {}, "Per-test table"),
            testsTable(tests.tests),
          ),
          el(
            "aside",
            { "aria-label": "Cautions and assumptions" },
            notesSection(review.assumptions.statements, review.cautions),
          ),
        );
      },
    );
  }

  form.addEventListener("submit", (event) => {
    event.preventDefault();
    void load();
  });
  await load();
});
