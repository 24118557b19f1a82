import { parse } from "csv-parse/sync";
import { describe, expect, it } from "vitest";
import { defaultDemoParameters } from "../../src/demo/demo-parameters.ts";
import {
  type DemoResultTruth,
  generateDemo,
  historyColumns,
  realizedColumns,
} from "../../src/demo/generate-demo.ts";
import { binomialLowerTail, binomialUpperTail } from "../../src/stats/clopper-pearson.ts";
import { normalQuantile } from "../../src/stats/distributions.ts";
import { liftFromCounts } from "../../src/stats/lift-from-counts.ts";
import { liftFromInterval } from "../../src/stats/lift-from-interval.ts";
import { liftFromMeans } from "../../src/stats/lift-from-means.ts";
import { liftFromPValue } from "../../src/stats/lift-from-p-value.ts";
import { sampleRatioMismatch } from "../../src/stats/sample-ratio-mismatch.ts";

const demo = generateDemo();
const truth = demo.truth;
const primaries = truth.experiments.filter((row) => row.isPrimary);
const parameters = defaultDemoParameters;
/** z_{0.975}, the textbook two-sided 5 % critical value (common practice). */
const criticalZ = normalQuantile(0.975);

/**
 * Two-sided exact binomial test (the doubled smaller tail): a count that this rejects at 0.001
 * does not match its stated probability. Used to check shares against the parameters.
 */
function binomialTwoSidedP(count: number, trials: number, probability: number): number {
  return Math.min(
    1,
    2 *
      Math.min(binomialLowerTail(count, trials, probability), binomialUpperTail(count, trials, probability)),
  );
}
const shareTestLevel = 0.001;

function readNumber(text: string): number {
  return text.endsWith("%") ? Number(text.slice(0, -1)) / 100 : Number(text);
}

type CsvRow = Record<string, string>;
/** A few other seeds, generated once and shared by the tests that pool over seeds. */
const otherSeeds = [1, 2, 3].map((seed) => ({ seed, demo: generateDemo({ seed }) }));
const historyRows = parse(demo.historyCsv, { columns: true, skip_empty_lines: true }) as CsvRow[];
const realizedRows = parse(demo.realizedCsv, { columns: true, skip_empty_lines: true }) as CsvRow[];

describe("generateDemo: reproducible", () => {
  it("gives the same files and truth for the same seed, and different files for another", () => {
    const again = generateDemo();
    expect(again.historyCsv).toBe(demo.historyCsv);
    expect(again.realizedCsv).toBe(demo.realizedCsv);
    expect(again.truth).toEqual(truth);
    const other = generateDemo({ seed: 11 });
    expect(other.historyCsv).not.toBe(demo.historyCsv);
    expect(generateDemo({ seed: 11 }).historyCsv).toBe(other.historyCsv);
  });
});

describe("generateDemo: counts match the parameters", () => {
  it("has the canonical layouts exactly", () => {
    expect(demo.historyCsv.split("\n")[0]).toBe(historyColumns.join(","));
    expect(demo.realizedCsv.split("\n")[0]).toBe(realizedColumns.join(","));
    expect(historyColumns.join(", ")).toBe(
      "experiment, name, team, metric, metric_kind, direction, started_on, ended_on, decision, is_aa, stopped_early, planned_alpha, planned_power, planned_mde, control_n, treatment_n, control_conversions, treatment_conversions, control_mean, control_sd, treatment_mean, treatment_sd, lift, lift_se, lift_ci_low, lift_ci_high, ci_level, p_value, primary",
    );
    expect(realizedColumns.join(", ")).toBe(
      "experiment, metric, realized_lift, realized_se, method, measured_on",
    );
  });

  it("has 600 experiments, four teams, three primary metric families, one truth row per CSV row", () => {
    expect(truth.counts.experiments).toBe(600);
    expect(historyRows.length).toBe(truth.experiments.length);
    expect(Object.keys(truth.counts.teams).sort()).toEqual(["Chainring", "Kickstand", "Spoke", "Sprocket"]);
    expect(Object.keys(truth.counts.primaryByMetric).sort()).toEqual([
      "order_conversion",
      "return_rate_28d",
      "revenue_per_visitor",
    ]);
    expect(truth.counts.secondaryResults).toBeGreaterThan(150);
    historyRows.forEach((row, index) => {
      const expected = truth.experiments[index]!;
      expect([row.experiment, row.metric]).toEqual([expected.key, expected.metric]);
    });
  });

  it("draws team, A/A and prior shares as the parameters state (exact binomial tests at 0.001)", () => {
    for (const team of parameters.teams) {
      const count = truth.counts.teams[team.name] ?? 0;
      expect(
        binomialTwoSidedP(count, 600, team.share),
        `${team.name}: ${count} of 600 at ${team.share}`,
      ).toBeGreaterThan(shareTestLevel);
    }
    const aa = truth.counts.aaTests;
    expect(aa).toBeGreaterThan(0);
    expect(binomialTwoSidedP(aa, 600, parameters.aaShare)).toBeGreaterThan(shareTestLevel);
    const nonAa = 600 - aa;
    const priorWeights = parameters.metrics.conversion.prior.components.map((entry) => entry.weight);
    expect(binomialTwoSidedP(truth.counts.trueNulls, nonAa, priorWeights[0]!)).toBeGreaterThan(
      shareTestLevel,
    );
    expect(binomialTwoSidedP(truth.counts.trueWins, nonAa, priorWeights[1]!)).toBeGreaterThan(shareTestLevel);
    expect(binomialTwoSidedP(truth.counts.trueLosses, nonAa, priorWeights[2]!)).toBeGreaterThan(
      shareTestLevel,
    );
    // "Real losses somewhat more common than real wins".
    expect(truth.counts.trueLosses).toBeGreaterThan(truth.counts.trueWins);
  });

  it("has exactly the injected sample ratio mismatches flagged, a few early stops, about 40 holdouts", () => {
    expect(truth.counts.sampleRatioMismatches).toBe(parameters.sampleRatioMismatch.tests);
    for (const row of primaries) expect(row.srmFlagged).toBe(row.sampleRatioMismatchInjected);
    expect(truth.counts.stoppedEarly).toBeGreaterThanOrEqual(5);
    expect(truth.counts.stoppedEarly).toBeLessThanOrEqual(40);
    expect(truth.counts.holdouts).toBeGreaterThanOrEqual(35);
    expect(truth.counts.holdouts).toBeLessThanOrEqual(parameters.holdouts.count);
    expect(realizedRows.length).toBe(truth.counts.holdouts);
    expect(truth.counts.decisions.iterate).toBeGreaterThan(0);
    expect(truth.counts.decisions.pending).toBeGreaterThan(0);
    for (const form of ["counts", "means", "interval", "p_value", "standard_error"]) {
      expect(truth.counts.inputForms[form] ?? 0, form).toBeGreaterThan(50);
    }
    expect(truth.counts.percentRows).toBeGreaterThan(50);
  });

  it("keeps the counts across seeds (the model, not one lucky draw)", () => {
    for (const { seed, demo: other } of otherSeeds) {
      const counts = other.truth.counts;
      expect(counts.sampleRatioMismatches, `seed ${seed}`).toBe(parameters.sampleRatioMismatch.tests);
      expect(counts.holdouts, `seed ${seed}`).toBeGreaterThanOrEqual(30);
      expect(counts.trueLosses, `seed ${seed}`).toBeGreaterThan(counts.trueWins);
      expect(counts.stoppedEarly, `seed ${seed}`).toBeGreaterThan(0);
    }
  });

  it("honours the size options", () => {
    const small = generateDemo({ seed: 5, experiments: 120, holdouts: 5, sampleRatioMismatchTests: 2 });
    expect(small.truth.counts.experiments).toBe(120);
    expect(small.truth.counts.sampleRatioMismatches).toBe(2);
    expect(small.truth.counts.holdouts).toBeLessThanOrEqual(5);
  });
});

/** The statistic columns each input form fills (besides control_n and treatment_n). */
const formColumns: Record<DemoResultTruth["inputForm"], string[]> = {
  counts: ["control_conversions", "treatment_conversions"],
  means: ["control_mean", "control_sd", "treatment_mean", "treatment_sd"],
  interval: ["lift", "lift_ci_low", "lift_ci_high", "ci_level"],
  p_value: ["lift", "p_value"],
  standard_error: ["lift", "lift_se"],
};
const statisticColumns = [...new Set(Object.values(formColumns).flat())];

/** What statistics.md section 1 derives from a row, read back from the parsed CSV text. */
function deriveFromRow(row: CsvRow, form: DemoResultTruth["inputForm"]): { lift: number; se: number } {
  const controlN = Number(row.control_n);
  const treatmentN = Number(row.treatment_n);
  switch (form) {
    case "counts": {
      const estimate = liftFromCounts({
        controlN,
        treatmentN,
        controlConversions: Number(row.control_conversions),
        treatmentConversions: Number(row.treatment_conversions),
      });
      return { lift: estimate.lift, se: estimate.standardError };
    }
    case "means": {
      const estimate = liftFromMeans({
        controlN,
        treatmentN,
        controlMean: Number(row.control_mean),
        controlSd: Number(row.control_sd),
        treatmentMean: Number(row.treatment_mean),
        treatmentSd: Number(row.treatment_sd),
      });
      return { lift: estimate.lift, se: estimate.standardError };
    }
    case "interval": {
      const estimate = liftFromInterval({
        lift: readNumber(row.lift!),
        low: readNumber(row.lift_ci_low!),
        high: readNumber(row.lift_ci_high!),
        level: readNumber(row.ci_level!),
      });
      expect(estimate.scale).toBe("linear");
      return { lift: estimate.lift, se: estimate.standardError };
    }
    case "p_value": {
      const estimate = liftFromPValue({ lift: readNumber(row.lift!), pValue: Number(row.p_value) });
      return { lift: estimate.lift, se: estimate.standardError };
    }
    case "standard_error":
      return { lift: readNumber(row.lift!), se: readNumber(row.lift_se!) };
  }
}

describe("generateDemo: every row is self-consistent", () => {
  it("fills exactly one input form per row, with valid values", () => {
    historyRows.forEach((row, index) => {
      const expected = truth.experiments[index]!;
      const filled = statisticColumns.filter((column) => row[column] !== "");
      expect(filled.sort(), `row ${index + 2} (${expected.key})`).toEqual(
        [...formColumns[expected.inputForm]].sort(),
      );
      const controlN = Number(row.control_n);
      const treatmentN = Number(row.treatment_n);
      expect(Number.isInteger(controlN) && controlN >= 2).toBe(true);
      expect(Number.isInteger(treatmentN) && treatmentN >= 2).toBe(true);
      if (expected.inputForm === "counts") {
        expect(Number(row.control_conversions)).toBeLessThanOrEqual(controlN);
        expect(Number(row.treatment_conversions)).toBeLessThanOrEqual(treatmentN);
      }
      if (expected.inputForm === "p_value") {
        const p = Number(row.p_value);
        expect(p > 0 && p < 1, `p ${p}`).toBe(true);
      }
      if (expected.inputForm === "interval") {
        const [low, lift, high] = [row.lift_ci_low!, row.lift!, row.lift_ci_high!].map(readNumber);
        expect(low! < lift! && lift! < high!).toBe(true);
      }
      expect(["true", "false"]).toContain(row.primary);
      expect(row.direction).toBe("increase");
    });
  });

  it("derives back to the truth's observed lift and SE (statistics.md section 1 on the parsed text)", () => {
    historyRows.forEach((row, index) => {
      const expected = truth.experiments[index]!;
      const derived = deriveFromRow(row, expected.inputForm);
      // The same formulas on the same text: only parse-order rounding may differ.
      expect(Math.abs(derived.lift - expected.observedLift), `row ${index + 2} lift`).toBeLessThan(1e-12);
      expect(Math.abs(derived.se / expected.observedSe - 1), `row ${index + 2} se`).toBeLessThan(1e-9);
    });
  });

  it("decides by the textbook rule on the derived primary result", () => {
    for (const row of primaries) {
      const z = row.observedLift / row.observedSe;
      const context = `${row.key} z ${z} decision ${row.decision}`;
      if (row.decision === "shipped") expect(z, context).toBeGreaterThan(criticalZ);
      if (row.decision === "iterate") expect(z > 1 && z <= criticalZ, context).toBe(true);
      if (row.decision === "not_shipped" && !row.isAa) expect(z, context).toBeLessThanOrEqual(criticalZ);
      if (row.isAa) expect(["not_shipped", "pending"]).toContain(row.decision);
      if (row.decision === "pending") expect(row.endedOn > "2026-09-16").toBe(true);
      if (row.stoppedEarly) {
        expect(row.peeked).toBe(true);
        expect(Math.abs(z), context).toBeGreaterThan(criticalZ);
        expect(row.sampleFraction).toBeLessThan(1);
      }
    }
  });

  it("keeps experiment-level columns equal across an experiment's rows, one primary each, dates in range", () => {
    const experimentColumns = historyColumns
      .slice(0, 14)
      .filter((column) => !["metric", "metric_kind"].includes(column));
    const byKey = new Map<string, CsvRow[]>();
    for (const row of historyRows) byKey.set(row.experiment!, [...(byKey.get(row.experiment!) ?? []), row]);
    expect(byKey.size).toBe(600);
    for (const [key, rows] of byKey) {
      expect(rows.filter((row) => row.primary === "true").length, key).toBe(1);
      expect(new Set(rows.map((row) => row.metric)).size, key).toBe(rows.length);
      for (const column of experimentColumns)
        expect(new Set(rows.map((row) => row[column])).size, `${key} ${column}`).toBe(1);
      const first = rows[0]!;
      expect(first.started_on! >= "2023-10-01" && first.started_on! <= first.ended_on!, key).toBe(true);
      expect(first.ended_on! <= "2026-09-30", key).toBe(true);
    }
    const dates = historyRows.map((row) => row.started_on!).sort();
    expect(dates[0]! < "2023-11-01" && dates[dates.length - 1]! > "2026-08-01").toBe(true);
  });

  it("gives the sample ratio mismatch p-value of each row's arm counts against 50/50", () => {
    for (const row of primaries) {
      expect(row.srmPValue).toBe(sampleRatioMismatch([row.controlN, row.treatmentN], [0.5, 0.5]).pValue);
      if (row.sampleRatioMismatchInjected) expect(row.srmPValue).toBeLessThan(0.0005);
    }
  });

  it("links secondary effects as documented: revenue moves with conversion, conversion never with revenue", () => {
    const byKey = new Map(primaries.map((row) => [row.key, row]));
    for (const row of truth.experiments.filter((candidate) => !candidate.isPrimary)) {
      const primary = byKey.get(row.key)!;
      if (primary.family === "conversion") expect(row.trueEffect).toBe(primary.trueEffect);
      else expect(row.trueEffect).toBe(0);
    }
    for (const row of truth.experiments.filter((candidate) => candidate.isAa)) expect(row.trueEffect).toBe(0);
  });
});

describe("generateDemo: program truth for later features", () => {
  it("exposes the true figures of the shipped set: false wins, claimed and true total lift", () => {
    const shipped = primaries.filter((row) => row.decision === "shipped");
    expect(truth.counts.decisions.shipped).toBe(shipped.length);
    expect(truth.counts.falseWins).toBe(shipped.filter((row) => row.trueEffect <= 0).length);
    expect(truth.counts.shippedTrueLift).toBeCloseTo(
      shipped.reduce((sum, row) => sum + row.trueEffect, 0),
      12,
    );
    // The winner's curse: the claimed total of what shipped exceeds its true total.
    expect(truth.counts.shippedClaimedLift).toBeGreaterThan(truth.counts.shippedTrueLift);
    expect(truth.parameters).toEqual(defaultDemoParameters);
  });
});

describe("generateDemo: holdouts", () => {
  it("measures shipped primaries about two months after they ended", () => {
    const byKey = new Map(primaries.map((row) => [row.key, row]));
    for (const row of realizedRows) {
      const experiment = byKey.get(row.experiment!)!;
      expect(experiment.decision).toBe("shipped");
      expect(row.metric).toBe(experiment.metric);
      expect(row.method).toBe("holdout");
      const days = (Date.parse(row.measured_on!) - Date.parse(experiment.endedOn)) / 86400000;
      expect(days >= 50 && days <= 70, `${row.experiment} after ${days} days`).toBe(true);
      expect(row.measured_on! <= "2026-09-30").toBe(true);
      expect(readNumber(row.realized_lift!)).toBeCloseTo(experiment.holdout!.realizedLift, 12);
      expect(readNumber(row.realized_se!)).toBeCloseTo(experiment.holdout!.realizedSe, 12);
    }
  });

  it("scatters realized lifts around the true effects with their stated SEs (z ~ N(0, 1), pooled over seeds)", () => {
    const zs: number[] = [];
    for (const { demo: other } of [...otherSeeds, { demo }]) {
      for (const row of other.truth.experiments) {
        if (row.holdout) zs.push((row.holdout.realizedLift - row.trueEffect) / row.holdout.realizedSe);
      }
    }
    const mean = zs.reduce((sum, z) => sum + z, 0) / zs.length;
    const variance = zs.reduce((sum, z) => sum + (z - mean) ** 2, 0) / (zs.length - 1);
    // Four standard errors of a mean of n standard normals; the variance of n draws has SE sqrt(2/n).
    expect(Math.abs(mean), `mean of ${zs.length} z`).toBeLessThan(4 / Math.sqrt(zs.length));
    expect(Math.abs(variance - 1), `variance of ${zs.length} z`).toBeLessThan(4 * Math.sqrt(2 / zs.length));
  });
});
