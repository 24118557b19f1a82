/**
 * Test history: GET /api/v1/experiments with the filters (team, metric, decision, dates) and
 * pages of 25; each row shows the primary result's lift ± SE and the flags that qualify it.
 * The filters live in the address (never the token) so that a filtered view can be shared.
 */
import {
  apiJson,
  dataTable,
  el,
  field,
  formatInteger,
  formatSignedPercent,
  inputControl,
  selectControl,
  startPage,
  textFrom,
  withLoading,
} from "./common.ts";
import { historyIndex } from "./history-index.ts";

interface ResultSummary {
  readonly metricKey: string;
  readonly isPrimary: boolean;
  readonly lift: number | null;
  readonly liftSe: number | null;
  readonly srmFlagged: boolean;
}

interface Experiment {
  readonly key: string;
  readonly name: string;
  readonly team: string | null;
  readonly startedOn: string | null;
  readonly endedOn: string | null;
  readonly decision: string;
  readonly stoppedEarly: boolean;
  readonly isAa: boolean;
  readonly results: readonly ResultSummary[];
}

interface ExperimentPage {
  readonly items: readonly Experiment[];
  readonly total: number;
  readonly limit: number;
  readonly offset: number;
}

interface Metric {
  readonly key: string;
  readonly name: string;
}

const pageSize = 25;
const filterNames = ["team", "metric", "decision", "from", "to"] as const;

export const decisionLabels: Readonly<Record<string, string>> = {
  shipped: "shipped",
  not_shipped: "not shipped",
  iterate: "iterate",
  pending: "pending",
};

function flags(experiment: Experiment): HTMLElement[] {
  const badges: HTMLElement[] = [];
  if (experiment.results.some((result) => result.srmFlagged))
    badges.push(
      el(
        "span",
        { class: "flag flag-warning", title: "arm counts failed the allocation check" },
        "sample ratio mismatch",
      ),
    );
  if (experiment.stoppedEarly)
    badges.push(
      el("span", { class: "flag flag-warning", title: "stopped before the planned sample" }, "early stop"),
    );
  if (experiment.isAa)
    badges.push(el("span", { class: "flag", title: "both arms got the same experience" }, "A/A"));
  return badges;
}

function liftCell(experiment: Experiment): string {
  const primary = experiment.results.find((result) => result.isPrimary) ?? experiment.results[0];
  if (!primary || primary.lift === null) return "–";
  const error = primary.liftSe === null ? "" : ` ± ${formatSignedPercent(primary.liftSe).replace("+", "")}`;
  return `${formatSignedPercent(primary.lift)}${error}`;
}

startPage(async (root) => {
  const parameters = new URLSearchParams(location.search);
  const [metrics, index] = await Promise.all([
    apiJson<{ items: Metric[] }>("/api/v1/metrics").then((body) => body.items),
    historyIndex(),
  ]);
  const team = parameters.get("team") ?? "";
  // A select when every team is known; a text box with suggestions when the history is longer.
  const teamControl = index.complete
    ? selectControl("team", [["", "All teams"], ...index.teams.map((name) => [name, name] as const)], team)
    : inputControl("team", { type: "text", list: "team-names", value: team, placeholder: "All teams" });
  const teamNames = el(
    "datalist",
    { id: "team-names" },
    index.teams.map((name) => el("option", { value: name })),
  );
  const form = el(
    "form",
    { class: "filters", "aria-label": "Filters" },
    field("Team", teamControl),
    teamNames,
    field(
      "Metric",
      selectControl(
        "metric",
        [["", "All metrics"], ...metrics.map((metric) => [metric.key, metric.name] as const)],
        parameters.get("metric") ?? "",
      ),
    ),
    field(
      "Decision",
      selectControl(
        "decision",
        [["", "Any decision"], ...Object.entries(decisionLabels)],
        parameters.get("decision") ?? "",
      ),
    ),
    field("Running on or after", inputControl("from", { type: "date", value: parameters.get("from") ?? "" })),
    field("Started on or before", inputControl("to", { type: "date", value: parameters.get("to") ?? "" })),
    el(
      "div",
      { class: "actions" },
      el("button", { type: "submit" }, "Apply filters"),
      el("button", { type: "reset", class: "secondary" }, "Clear"),
    ),
  );
  const results = el("div", { id: "history-results", "aria-live": "polite" });
  root.replaceChildren(form, results);
  let offset = Number(parameters.get("offset") ?? "0") || 0;

  async function load(): Promise<void> {
    const query = new URLSearchParams();
    for (const name of filterNames) {
      const value = textFrom(form, name);
      if (value !== "") query.set(name, value);
    }
    const shown = new URLSearchParams(query);
    if (offset > 0) shown.set("offset", String(offset));
    history.replaceState(null, "", `${location.pathname}${shown.size > 0 ? `?${shown}` : ""}`);
    query.set("limit", String(pageSize));
    query.set("offset", String(offset));
    await withLoading(results, "Loading experiments…", async () => {
      const page = await apiJson<ExperimentPage>(`/api/v1/experiments?${query}`);
      if (page.total === 0) return el("p", { class: "empty" }, "No experiment matches these filters.");
      const first = page.offset + 1;
      const last = page.offset + page.items.length;
      const table = dataTable(
        `Experiments ${formatInteger(first)} to ${formatInteger(last)} of ${formatInteger(page.total)}, by start date`,
        [
          { header: "Key", cell: (row: Experiment) => row.key },
          { header: "Name", wrap: true, cell: (row) => row.name },
          { header: "Team", cell: (row) => row.team ?? "–" },
          { header: "Started", cell: (row) => row.startedOn ?? "–" },
          { header: "Ended", cell: (row) => row.endedOn ?? "running" },
          { header: "Decision", cell: (row) => decisionLabels[row.decision] ?? row.decision },
          {
            header: "Primary metric",
            cell: (row) =>
              (row.results.find((result) => result.isPrimary) ?? row.results[0])?.metricKey ?? "–",
          },
          {
            header: "Lift ± SE",
            numeric: true,
            note: "relative lift of the primary metric and its standard error",
            cell: liftCell,
          },
          { header: "Flags", cell: flags },
        ],
        page.items,
      );
      const pager = el(
        "nav",
        { class: "pager", "aria-label": "Pages of experiments" },
        el(
          "button",
          { type: "button", disabled: page.offset === 0, onclick: () => move(-pageSize) },
          "Previous page",
        ),
        el(
          "span",
          { "data-total": String(page.total) },
          `${formatInteger(first)}–${formatInteger(last)} of ${formatInteger(page.total)}`,
        ),
        el(
          "button",
          { type: "button", disabled: last >= page.total, onclick: () => move(pageSize) },
          "Next page",
        ),
      );
      return [el("div", { class: "table-scroll unbounded" }, table), pager];
    });
  }

  function move(step: number): void {
    offset = Math.max(0, offset + step);
    void load();
  }

  form.addEventListener("submit", (event) => {
    event.preventDefault();
    offset = 0;
    void load();
  });
  form.addEventListener("reset", () => {
    // Reset restores the initial values (from the address); clear them for a real "no filter".
    setTimeout(() => {
      for (const name of filterNames) {
        const control = form.elements.namedItem(name);
        if (control instanceof HTMLInputElement || control instanceof HTMLSelectElement) control.value = "";
      }
      offset = 0;
      void load();
    });
  });
  await load();
});
