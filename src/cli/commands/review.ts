/**
 * `plumbline review --workspace NAME [--family F] [--team T] [--from D --to D] [--quarter 2026Q3]
 * [--delta X] [--practical X] [--alpha A] [--prior-family F] [--json] [--html OUT.html]
 * [--csv OUT.csv] [--save LABEL]`: the program review of a workspace's stored history.
 */
import { writeFileSync } from "node:fs";
import { parseArgs } from "node:util";
import { eq } from "drizzle-orm";
import { workspaces } from "../../db/schema.ts";
import { reviewCsv } from "../../report/review-csv.ts";
import { reviewHtml } from "../../report/review-html.ts";
import { ReviewDataError } from "../../review/read-review-data.ts";
import { type ReviewSummary, runReview } from "../../review/run-review.ts";
import { SavedReviewError, saveReview } from "../../review/saved-reviews.ts";
import { StatsInputError } from "../../stats/errors.ts";
import type { FitFamily } from "../../stats/fit-effect-prior.ts";
import type { CommandIo } from "../io.ts";
import { withDatabase } from "./workspace.ts";

export const summary = "review the program: real and false wins, realized lift, missed wins, pipeline checks";

const help = `Usage:
  plumbline review --workspace NAME [--family F] [--team T] [--from YYYY-MM-DD --to YYYY-MM-DD]
                   [--quarter 2026Q3] [--delta X] [--practical X] [--alpha A]
                   [--prior-family auto|symmetric|skewed|grid] [--bootstrap B] [--seed N]
                   [--json] [--html OUT.html] [--csv OUT.csv] [--save LABEL]

Reviews one metric family (default: the family with the most primary results): of the wins
shipped, how many were real; how much of the claimed lift to expect; what was missed; whether the
pipeline is healthy (A/A tests, p-values, bunching at the threshold). The prior of true effects
is fitted to the whole family; --team, --from/--to and --quarter choose the tests reviewed.

  --delta X          a false win has true effect <= X (default 0)
  --practical X      also report false wins at this practical threshold (e.g. 0.005)
  --alpha A          two-sided level of the launch rule, shipped on the upper tail (default 0.05)
  --bootstrap B      refits of the prior behind the intervals (default 100; 0 = no intervals)
  --seed N           seed of the bootstrap and of Lee & Shen's interval (default 1)
  --html OUT.html    write the self-contained report (charts inline, no network needed)
  --csv OUT.csv      write the per-test table
  --save LABEL       keep this review as an immutable snapshot (see plumbline reviews)
  --json             one JSON document (the review, without the per-test table; use --csv for it)`;

interface Options {
  workspace?: string;
  family?: string;
  team?: string;
  from?: string;
  to?: string;
  quarter?: string;
  delta?: string;
  practical?: string;
  alpha?: string;
  "prior-family"?: string;
  seed?: string;
  bootstrap?: string;
  json?: boolean;
  html?: string;
  csv?: string;
  save?: string;
  help?: boolean;
}

const priorFamilies = ["auto", "symmetric", "skewed", "grid"] as const;

function parseNumber(name: string, text: string | undefined): number | undefined {
  if (text === undefined) return undefined;
  const value = Number(text);
  if (text.trim() === "" || !Number.isFinite(value)) throw new StatsInputError(`--${name}`, "a number", text);
  return value;
}

export async function run(args: string[], io: CommandIo): Promise<number> {
  let values: Options;
  try {
    ({ values } = parseArgs({
      args,
      strict: true,
      allowPositionals: false,
      options: {
        workspace: { type: "string" },
        family: { type: "string" },
        team: { type: "string" },
        from: { type: "string" },
        to: { type: "string" },
        quarter: { type: "string" },
        delta: { type: "string" },
        practical: { type: "string" },
        alpha: { type: "string" },
        "prior-family": { type: "string" },
        seed: { type: "string" },
        bootstrap: { type: "string" },
        json: { type: "boolean" },
        html: { type: "string" },
        csv: { type: "string" },
        save: { type: "string" },
        help: { type: "boolean", short: "h" },
      },
    }));
  } catch (error) {
    io.err(`plumbline review: ${(error as Error).message}\n\n${help}`);
    return 2;
  }
  if (values.help) {
    io.out(help);
    return 0;
  }
  if (!values.workspace) {
    io.err(`plumbline review: --workspace NAME is required\n\n${help}`);
    return 2;
  }
  const priorFamily = values["prior-family"] ?? "auto";
  if (!(priorFamilies as readonly string[]).includes(priorFamily)) {
    io.err(
      `plumbline review: --prior-family must be one of ${priorFamilies.join(", ")}; got "${priorFamily}"`,
    );
    return 2;
  }
  let request: Parameters<typeof runReview>[2];
  try {
    const seed = parseNumber("seed", values.seed);
    if (seed !== undefined && !Number.isInteger(seed))
      throw new StatsInputError("--seed", "an integer", values.seed);
    request = {
      filters: {
        ...(values.family ? { family: values.family } : {}),
        ...(values.team ? { team: values.team } : {}),
        ...(values.from ? { from: values.from } : {}),
        ...(values.to ? { to: values.to } : {}),
        ...(values.quarter ? { quarter: values.quarter } : {}),
      },
      ...(values.delta !== undefined ? { delta: parseNumber("delta", values.delta) as number } : {}),
      ...(values.practical !== undefined
        ? { practicalThreshold: parseNumber("practical", values.practical) as number }
        : {}),
      ...(values.alpha !== undefined ? { alpha: parseNumber("alpha", values.alpha) as number } : {}),
      priorFamily: priorFamily as FitFamily | "auto",
      ...(seed !== undefined ? { seed } : {}),
      ...(values.bootstrap !== undefined
        ? { bootstrap: parseNumber("bootstrap", values.bootstrap) as number }
        : {}),
    };
  } catch (error) {
    io.err(`plumbline review: ${(error as Error).message}`);
    return 2;
  }
  const workspaceName = values.workspace;
  return withDatabase(
    io,
    async (db) => {
      const [workspace] = await db.select().from(workspaces).where(eq(workspaces.name, workspaceName));
      if (!workspace) {
        io.err(`plumbline review: no workspace named "${workspaceName}" (see plumbline workspace list)`);
        return 1;
      }
      const needTests = Boolean(values.html || values.csv || values.save);
      let outcome: Awaited<ReturnType<typeof runReview>>;
      try {
        outcome = await runReview(db, workspace.id, request, {
          includeTests: needTests,
          onProgress: io.progress,
        });
      } catch (error) {
        if (error instanceof StatsInputError) {
          io.err(`plumbline review: ${error.message}`);
          return 2;
        }
        if (error instanceof ReviewDataError || error instanceof RangeError) {
          io.err(`plumbline review: ${error.message}`);
          return 1;
        }
        throw error;
      }
      const tests = outcome.tests ?? [];
      if (values.csv) writeFileSync(values.csv, reviewCsv(tests));
      if (values.html) {
        writeFileSync(
          values.html,
          await reviewHtml(outcome.summary, tests, {
            workspaceName: workspace.name,
            generatedAt: new Date().toISOString(),
          }),
        );
      }
      let saved: { id: number; label: string } | null = null;
      if (values.save) {
        try {
          const snapshot = await saveReview(db, workspace.id, values.save, outcome.summary, tests);
          saved = { id: snapshot.id, label: snapshot.label };
        } catch (error) {
          if (error instanceof SavedReviewError) {
            io.err(`plumbline review: ${error.message}`);
            return 1;
          }
          throw error;
        }
      }
      if (values.json) {
        io.out(
          JSON.stringify({ workspace: workspace.name, cached: outcome.cached, saved, ...outcome.summary }),
        );
        return 0;
      }
      io.out(describeReview(workspace.name, outcome.summary));
      if (values.csv) io.out(`Per-test table written to ${values.csv}`);
      if (values.html) io.out(`Report written to ${values.html}`);
      if (saved) io.out(`Saved as "${saved.label}" (id ${saved.id}).`);
      return 0;
    },
    "plumbline review",
  );
}

function formatPercent(value: number | null | undefined, digits = 1): string {
  return typeof value === "number" && Number.isFinite(value) ? `${(value * 100).toFixed(digits)} %` : "n/a";
}

function formatNumber(value: number | null | undefined, digits = 1): string {
  return typeof value === "number" && Number.isFinite(value) ? value.toFixed(digits) : "n/a";
}

function describeInterval(
  interval: { lower: number; upper: number } | null,
  format: (value: number) => string,
): string {
  return interval ? ` (${format(interval.lower)} to ${format(interval.upper)})` : "";
}

/** The review for people: headline figures, then assumptions and cautions. */
export function describeReview(workspaceName: string, review: ReviewSummary): string {
  const leftOut = review.counts.leftOut;
  const lines = [
    `Program review of "${workspaceName}", metric family ${review.metricFamily} (prior family ${review.prior.family})`,
    `Tests: ${review.counts.tests} read, ${review.counts.included} included (${review.counts.shipped} shipped, ${review.counts.notShipped} not shipped, ${review.counts.pending} pending); left out ${leftOut.total}: ${leftOut.aa} A/A, ${leftOut.sampleRatioMismatch} sample ratio mismatch, ${leftOut.missingStandardError} missing SE`,
    `Shipped wins: ${review.shipped}; expected real ${formatNumber(review.expectedRealWins.estimate)}, expected false ${formatNumber(review.expectedFalseWins.estimate)}; false discovery rate ${formatPercent(review.falseDiscoveryRate.estimate)}${describeInterval(review.falseDiscoveryRate.interval, (v) => formatPercent(v))}; expected sign errors ${formatNumber(review.expectedSignErrors.estimate)}`,
    ...(review.atPracticalThreshold
      ? [
          `At the practical threshold ${formatPercent(review.atPracticalThreshold.threshold, 2)}: expected false wins ${formatNumber(review.atPracticalThreshold.expectedFalseWins.estimate)}, false discovery rate ${formatPercent(review.atPracticalThreshold.falseDiscoveryRate.estimate)}`,
        ]
      : []),
    `Claimed total lift ${formatPercent(review.claimedTotalLift.sum, 2)} (compounded ${formatPercent(review.claimedTotalLift.compounded, 2)}); expected realized ${formatPercent(review.expectedRealizedLift.sum, 2)} (compounded ${formatPercent(review.expectedRealizedLift.compounded, 2)})`,
    `Realization ratio ${formatNumber(review.realizationRatio.estimate, 3)}; exaggeration factor ${formatNumber(review.exaggerationFactor.estimate, 3)}`,
    `Winner's-curse bias of the total: Bayesian ${formatPercent(review.winnersCurseBias.bayesian.estimate, 2)}; Lee & Shen ${formatPercent(review.winnersCurseBias.frequentist.bias, 2)}${describeInterval(review.winnersCurseBias.frequentist.interval, (v) => formatPercent(v, 2))}`,
    `Missed wins among ${review.missedWins.notShipped} not shipped: ${formatNumber(review.missedWins.estimate)}`,
    `A/A tests: ${review.aa.count}, false positives ${review.aa.falsePositives} (${formatPercent(review.aa.falsePositiveRate)}${describeInterval(review.aa.interval, (v) => formatPercent(v))}) against alpha ${formatPercent(review.aa.alpha)}${review.aa.uniformity ? `; KS uniformity p = ${formatNumber(review.aa.uniformity.pValue, 3)}` : ""}`,
    `Caliper test: ${review.caliper.above} just above vs ${review.caliper.below} just below z = ${formatNumber(review.caliper.criticalZ, 3)} (${Math.round(review.caliper.width * 100)} % caliper), one-sided p = ${formatNumber(review.caliper.pValue, 4)}`,
    ...(review.realized
      ? [
          `Realized measurements: ${review.realized.count}; 80 % predictive coverage ${formatPercent(review.realized.coverage80.share)}, 95 % coverage ${formatPercent(review.realized.coverage95.share)}; fitted realization ratio ${formatNumber(review.realized.realizationRatio.estimate, 3)}${describeInterval(review.realized.realizationRatio.interval, (v) => formatNumber(v, 3))}`,
        ]
      : []),
    "Sensitivity (headline figures under each prior family):",
    ...review.sensitivity.map(
      (row) =>
        `  ${row.family}${row.chosen ? " (chosen)" : ""}: false discovery rate ${formatPercent(row.falseDiscoveryRate)}, realization ratio ${formatNumber(row.realizationRatio, 3)}, missed wins ${formatNumber(row.missedWins)}`,
    ),
    "Assumptions:",
    ...review.assumptions.statements.map((text) => `  - ${text}`),
    "Cautions:",
    ...review.cautions.map((text) => `  - ${text}`),
  ];
  return lines.join("\n");
}
