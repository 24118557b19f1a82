/**
 * The program review as one self-contained HTML page: every chart compiled from vega-lite and
 * rendered to inline SVG on the server (vega's headless View with renderer "none"), no scripts,
 * fonts or styles fetched from anywhere, so the file opens offline and can be mailed or archived.
 */
import { parse, View } from "vega";
import { compile } from "vega-lite";
import { reviewCaliperChart } from "../../web/charts/review-caliper.ts";
import { reviewClaimedShrunkChart } from "../../web/charts/review-claimed-shrunk.ts";
import { reviewPValuesChart } from "../../web/charts/review-p-values.ts";
import { reviewPitChart, reviewRealizedChart } from "../../web/charts/review-realized.ts";
import { reviewShippedWinsChart } from "../../web/charts/review-shipped-wins.ts";
import type { ReviewSummary } from "../review/run-review.ts";
import type { ConfusionMatrix, Estimate, ReviewTestRow } from "../stats/program-review.ts";

/** Renders a vega-lite spec to an SVG string without a browser or network. */
export async function renderChartSvg(spec: Record<string, unknown>): Promise<string> {
  // biome-ignore lint/suspicious/noExplicitAny: vega-lite's TopLevelSpec type is wider than our plain objects
  const vegaSpec = compile(spec as any).spec;
  const view = new View(parse(vegaSpec), { renderer: "none" });
  try {
    return await view.toSVG();
  } finally {
    view.finalize();
  }
}

export function escapeHtml(text: string): string {
  return text
    .replaceAll("&", "&amp;")
    .replaceAll("<", "&lt;")
    .replaceAll(">", "&gt;")
    .replaceAll('"', "&quot;")
    .replaceAll("'", "&#39;");
}

function number(value: number | null | undefined, digits = 2): string {
  return typeof value === "number" && Number.isFinite(value) ? value.toFixed(digits) : "n/a";
}

function percent(value: number | null | undefined, digits = 1): string {
  return typeof value === "number" && Number.isFinite(value) ? `${(value * 100).toFixed(digits)} %` : "n/a";
}

function withInterval(estimate: Estimate, format: (value: number) => string): string {
  const interval = estimate.interval;
  const main = format(estimate.estimate);
  if (!interval) return escapeHtml(main);
  return `${escapeHtml(main)} <span class="interval">(${escapeHtml(format(interval.lower))} to ${escapeHtml(format(interval.upper))})</span>`;
}

function matrixTable(rows: readonly (ConfusionMatrix & { label: string })[], title: string): string {
  const body = rows
    .map(
      (row) =>
        `<tr><td>${escapeHtml(row.label)}</td><td>${row.tests}</td><td>${number(row.shippedRealWin, 1)}</td><td>${number(row.shippedNotRealWin, 1)}</td><td>${number(row.notShippedRealWin, 1)}</td><td>${number(row.notShippedNotRealWin, 1)}</td></tr>`,
    )
    .join("\n");
  return `<table><thead><tr><th>${escapeHtml(title)}</th><th>tests decided</th><th>shipped, real win</th><th>shipped, not real</th><th>not shipped, real win</th><th>not shipped, not real</th></tr></thead><tbody>${body}</tbody></table>`;
}

const htmlTableRowLimit = 300;

function testTable(rows: readonly ReviewTestRow[]): string {
  // Shipped first, largest claims first: the rows a reviewer reads; the CSV export has every test.
  const ordered = [...rows].sort(
    (a, b) => Number(b.decision === "shipped") - Number(a.decision === "shipped") || b.claimed - a.claimed,
  );
  const shown = ordered.slice(0, htmlTableRowLimit);
  const body = shown
    .map(
      (row) =>
        `<tr><td>${escapeHtml(row.key)}</td><td>${escapeHtml(row.name)}</td><td>${escapeHtml(row.team ?? "")}</td><td>${escapeHtml(row.decision)}</td><td>${percent(row.claimed, 2)}</td><td>${percent(row.shrunk, 2)} <span class="interval">(${percent(row.shrunkLower, 2)} to ${percent(row.shrunkUpper, 2)})</span></td><td>${number(row.probabilityRealWin, 3)}</td><td>${number(row.lfsr, 3)}</td><td>${number(row.power, 2)}</td><td>${number(row.exaggeration, 2)}</td><td>${escapeHtml(row.flags.join(", "))}</td></tr>`,
    )
    .join("\n");
  const note =
    ordered.length > shown.length
      ? `<p class="note">Showing ${shown.length} of ${ordered.length} tests (shipped first, by claimed lift); export the CSV for all of them.</p>`
      : "";
  return `${note}<table><thead><tr><th>test</th><th>name</th><th>team</th><th>decision</th><th>claimed</th><th>shrunk (interval)</th><th>P(real win)</th><th>lfsr</th><th>power at typical win</th><th>exaggeration</th><th>flags</th></tr></thead><tbody>${body}</tbody></table>`;
}

export interface ReviewReportContext {
  readonly workspaceName: string;
  /** When the report was generated (ISO), passed in so rendering stays deterministic. */
  readonly generatedAt: string;
}

/** The whole report as one HTML document. */
export async function reviewHtml(
  summary: ReviewSummary,
  tests: readonly ReviewTestRow[],
  context: ReviewReportContext,
): Promise<string> {
  const quarterRows = summary.confusionMatrix.byQuarter.map((row) => ({ ...row, label: row.quarter }));
  const teamRows = summary.confusionMatrix.byTeam.map((row) => ({ ...row, label: row.team }));
  const charts = {
    byQuarter: await renderChartSvg(reviewShippedWinsChart(quarterRows, "quarter")),
    byTeam: await renderChartSvg(reviewShippedWinsChart(teamRows, "team")),
    claimedShrunk: await renderChartSvg(reviewClaimedShrunkChart(tests)),
    pValues: await renderChartSvg(reviewPValuesChart(summary.pValueHistogram, "p-values of primary results")),
    aaPValues:
      summary.aa.count > 0
        ? await renderChartSvg(reviewPValuesChart(summary.aa.pValueHistogram, "p-values of A/A tests"))
        : "",
    caliper: await renderChartSvg(reviewCaliperChart(summary.caliper)),
    realized: summary.realized ? await renderChartSvg(reviewRealizedChart(tests)) : "",
    pit: summary.realized ? await renderChartSvg(reviewPitChart(summary.realized.pitHistogram)) : "",
  };
  const filters = summary.settings.filters;
  const filterText =
    [
      filters.team ? `team ${filters.team}` : null,
      filters.quarter ? `quarter ${filters.quarter}` : null,
      !filters.quarter && (filters.from || filters.to)
        ? `${filters.from ?? "start"} to ${filters.to ?? "today"}`
        : null,
    ]
      .filter(Boolean)
      .join(", ") || "all tests";
  const leftOut = summary.counts.leftOut;
  const wcb = summary.winnersCurseBias.frequentist;
  const practical = summary.atPracticalThreshold;
  const realized = summary.realized;
  const aa = summary.aa;
  const sensitivityRows = summary.sensitivity
    .map(
      (row) =>
        `<tr><td>${escapeHtml(row.family)}${row.chosen ? " (chosen)" : ""}</td><td>${number(row.logLik, 1)}</td><td>${percent(row.nullShare)}</td><td>${number(row.expectedFalseWins, 1)}</td><td>${percent(row.falseDiscoveryRate)}</td><td>${number(row.realizationRatio, 3)}</td><td>${number(row.missedWins, 1)}</td></tr>`,
    )
    .join("\n");
  return `<!doctype html>
<html lang="en">
<head>
<meta charset="utf-8">
<title>Program review: ${escapeHtml(context.workspaceName)}, ${escapeHtml(summary.metricFamily)}</title>
<style>
body { font-family: system-ui, -apple-system, "Segoe UI", sans-serif; max-width: 1100px; margin: 2em auto; padding: 0 1em; color: #1d2a33; }
h1 { font-size: 1.6em; } h2 { border-bottom: 1px solid #d5dde2; padding-bottom: .2em; margin-top: 2em; }
table { border-collapse: collapse; margin: .8em 0; font-size: .9em; }
th, td { border: 1px solid #d5dde2; padding: .25em .5em; text-align: left; vertical-align: top; }
th { background: #f1f4f6; }
.interval { color: #5a6b77; font-size: .9em; }
.note { color: #5a6b77; }
.cautions { background: #fff6e5; border: 1px solid #e3b23c; padding: .6em 1em; }
.figures td:first-child { font-weight: 600; }
figure { margin: 1em 0; }
</style>
</head>
<body>
<h1>Program review: ${escapeHtml(context.workspaceName)}</h1>
<p>Metric family <strong>${escapeHtml(summary.metricFamily)}</strong> (${escapeHtml(filterText)}); prior family <strong>${escapeHtml(summary.prior.family)}</strong>. Generated ${escapeHtml(context.generatedAt)}; data fingerprint <code>${escapeHtml(summary.dataFingerprint)}</code>.</p>
<div class="cautions"><strong>Cautions.</strong><ul>${summary.cautions.map((text) => `<li>${escapeHtml(text)}</li>`).join("")}</ul></div>

<h2>Counts</h2>
<table><tbody>
<tr><td>tests read</td><td>${summary.counts.tests}</td></tr>
<tr><td>included</td><td>${summary.counts.included}</td></tr>
<tr><td>shipped / not shipped / pending</td><td>${summary.counts.shipped} / ${summary.counts.notShipped} / ${summary.counts.pending}</td></tr>
<tr><td>left out</td><td>${leftOut.total}: ${leftOut.aa} A/A, ${leftOut.sampleRatioMismatch} sample ratio mismatch, ${leftOut.missingStandardError} missing standard error</td></tr>
</tbody></table>

<h2>Shipped wins</h2>
<table class="figures"><tbody>
<tr><td>shipped</td><td>${summary.shipped}</td></tr>
<tr><td>expected real wins</td><td>${withInterval(summary.expectedRealWins, (v) => number(v, 1))}</td></tr>
<tr><td>expected false wins (true effect &le; ${escapeHtml(String(summary.assumptions.delta))})</td><td>${withInterval(summary.expectedFalseWins, (v) => number(v, 1))}</td></tr>
<tr><td>false discovery rate of shipped wins</td><td>${withInterval(summary.falseDiscoveryRate, (v) => percent(v))}</td></tr>
${practical ? `<tr><td>false discovery rate at the practical threshold ${escapeHtml(percent(practical.threshold, 2))}</td><td>${withInterval(practical.falseDiscoveryRate, (v) => percent(v))}</td></tr>` : ""}
<tr><td>expected sign errors (shipped losses)</td><td>${withInterval(summary.expectedSignErrors, (v) => number(v, 1))}</td></tr>
</tbody></table>

<h2>Claimed and realized lift</h2>
<table class="figures"><tbody>
<tr><td>claimed total (sum / compounded)</td><td>${percent(summary.claimedTotalLift.sum, 2)} / ${percent(summary.claimedTotalLift.compounded, 2)}</td></tr>
<tr><td>expected realized total (sum / compounded)</td><td>${percent(summary.expectedRealizedLift.sum, 2)} / ${percent(summary.expectedRealizedLift.compounded, 2)}${summary.expectedRealizedLift.interval ? ` <span class="interval">(${percent(summary.expectedRealizedLift.interval.lower, 2)} to ${percent(summary.expectedRealizedLift.interval.upper, 2)})</span>` : ""}</td></tr>
<tr><td>realization ratio</td><td>${withInterval(summary.realizationRatio, (v) => number(v, 3))}</td></tr>
<tr><td>exaggeration factor</td><td>${withInterval(summary.exaggerationFactor, (v) => number(v, 3))}</td></tr>
<tr><td>winner's-curse bias of the total, Bayesian (claimed - expected realized)</td><td>${withInterval(summary.winnersCurseBias.bayesian, (v) => percent(v, 2))}</td></tr>
<tr><td>winner's-curse bias of the total, Lee &amp; Shen (2018)</td><td>${percent(wcb.bias, 2)}${wcb.interval ? ` <span class="interval">(${percent(wcb.interval.lower, 2)} to ${percent(wcb.interval.upper, 2)})</span>` : ""}; ${wcb.launchedCount} tests pass the launch threshold, their total ${percent(wcb.launchedTotal, 2)}, corrected ${percent(wcb.correctedTotal, 2)}</td></tr>
<tr><td>missed wins among ${summary.missedWins.notShipped} not shipped</td><td>${withInterval(summary.missedWins, (v) => number(v, 1))}</td></tr>
</tbody></table>
<figure>${charts.claimedShrunk}</figure>

<h2>Confusion matrix (expected counts)</h2>
${matrixTable([{ ...summary.confusionMatrix.overall, label: "program" }], "")}
<figure>${charts.byQuarter}</figure>
${matrixTable(quarterRows, "quarter")}
<figure>${charts.byTeam}</figure>
${matrixTable(teamRows, "team")}

<h2>Realized measurements</h2>
${
  realized
    ? `<p>${realized.count} tests have a realized measurement. Coverage of the 80 % predictive interval: ${realized.coverage80.covered} of ${realized.count} (${percent(realized.coverage80.share)}); of the 95 % interval: ${realized.coverage95.covered} (${percent(realized.coverage95.share)}). Fitted realization ratio ${number(realized.realizationRatio.estimate, 3)} <span class="interval">(${number(realized.realizationRatio.interval.lower, 3)} to ${number(realized.realizationRatio.interval.upper, 3)})</span>; the posterior predicts ${number(realized.predictedRealizationRatio, 3)}.</p><figure>${charts.realized}</figure><figure>${charts.pit}</figure>`
    : "<p>No realized measurements (holdouts, re-tests) are stored for these tests.</p>"
}

<h2>Pipeline checks</h2>
<p>A/A tests: ${aa.count}; false positives (two-sided p &lt; ${aa.alpha}): ${aa.falsePositives} (${percent(aa.falsePositiveRate)})${aa.interval ? `, exact Clopper-Pearson interval ${percent(aa.interval.lower)} to ${percent(aa.interval.upper)}` : ""}, against alpha ${percent(aa.alpha)}.${aa.uniformity ? ` Kolmogorov-Smirnov test of uniform A/A p-values: D = ${number(aa.uniformity.statistic, 3)}, p = ${number(aa.uniformity.pValue, 3)} (${escapeHtml(aa.uniformity.method)}).` : ""}</p>
<figure>${charts.pValues}</figure>
${charts.aaPValues ? `<figure>${charts.aaPValues}</figure>` : ""}
<p>Caliper test (Gerber &amp; Malhotra 2008): ${summary.caliper.above} results just above and ${summary.caliper.below} just below the critical z ${number(summary.caliper.criticalZ, 3)} with a ${Math.round(summary.caliper.width * 100)} % caliper; one-sided exact binomial p = ${number(summary.caliper.pValue, 4)}. An excess above suggests peeking or stopping when significant.</p>
<figure>${charts.caliper}</figure>

<h2>Sensitivity to the prior family</h2>
<table><thead><tr><th>family</th><th>log-likelihood</th><th>null share</th><th>expected false wins</th><th>false discovery rate</th><th>realization ratio</th><th>missed wins</th></tr></thead><tbody>${sensitivityRows}</tbody></table>

<h2>Tests</h2>
${testTable(tests)}

<h2>Assumptions</h2>
<ul>${summary.assumptions.statements.map((text) => `<li>${escapeHtml(text)}</li>`).join("\n")}</ul>
</body>
</html>
`;
}
