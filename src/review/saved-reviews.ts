/**
 * Saved program reviews: immutable snapshots (table reviews) of a review's settings, the
 * fingerprint of the data it read, and its results (summary and per-test table). A label names
 * one snapshot per workspace and is never reused or overwritten; there is no update or delete.
 * Two snapshots can be compared figure by figure (what changed quarter over quarter).
 */
import { and, desc, eq } from "drizzle-orm";
import type { Database } from "../db/client.ts";
import { reviews } from "../db/schema.ts";
import type { ReviewTestRow } from "../stats/program-review.ts";
import type { ReviewSummary } from "./run-review.ts";

export class SavedReviewError extends Error {
  readonly reason: "exists" | "not_found" | "invalid";
  constructor(reason: SavedReviewError["reason"], message: string) {
    super(message);
    this.name = "SavedReviewError";
    this.reason = reason;
  }
}

export interface SavedReview {
  readonly id: number;
  readonly label: string;
  readonly createdAt: string;
  readonly settings: Record<string, unknown>;
  readonly dataFingerprint: string;
  readonly summary: ReviewSummary;
  readonly tests: readonly ReviewTestRow[];
}

export interface SavedReviewListing {
  readonly id: number;
  readonly label: string;
  readonly createdAt: string;
  /** The metric family reviewed. */
  readonly family: string;
  readonly priorFamily: string;
  readonly dataFingerprint: string;
  readonly shipped: number;
  readonly falseDiscoveryRate: number | null;
  readonly realizationRatio: number | null;
}

const labelPattern = /^[A-Za-z0-9][A-Za-z0-9 ._:-]{0,79}$/;

export async function saveReview(
  db: Database,
  workspaceId: number,
  label: string,
  summary: ReviewSummary,
  tests: readonly ReviewTestRow[],
): Promise<SavedReview> {
  if (!labelPattern.test(label)) {
    throw new SavedReviewError(
      "invalid",
      `label must be 1-80 characters of letters, digits, space, . _ : - (starting with a letter or digit); got ${JSON.stringify(label)}`,
    );
  }
  const [existing] = await db
    .select({ id: reviews.id })
    .from(reviews)
    .where(and(eq(reviews.workspaceId, workspaceId), eq(reviews.label, label)));
  if (existing) {
    throw new SavedReviewError(
      "exists",
      `a review labelled "${label}" is already saved; saved reviews are immutable, choose another label`,
    );
  }
  const [row] = await db
    .insert(reviews)
    .values({
      workspaceId,
      label,
      settings: summary.settings as unknown as Record<string, unknown>,
      dataFingerprint: summary.dataFingerprint,
      result: { summary, tests } as unknown as Record<string, unknown>,
    })
    .returning();
  if (!row) throw new SavedReviewError("invalid", "the review could not be saved");
  return toSaved(row);
}

function toSaved(row: typeof reviews.$inferSelect): SavedReview {
  const result = row.result as unknown as { summary: ReviewSummary; tests: ReviewTestRow[] };
  return {
    id: row.id,
    label: row.label,
    createdAt: row.createdAt,
    settings: row.settings,
    dataFingerprint: row.dataFingerprint,
    summary: result.summary,
    tests: result.tests,
  };
}

export async function listReviews(db: Database, workspaceId: number): Promise<SavedReviewListing[]> {
  const rows = await db
    .select()
    .from(reviews)
    .where(eq(reviews.workspaceId, workspaceId))
    .orderBy(desc(reviews.id));
  return rows.map((row) => {
    const { summary } = toSaved(row);
    return {
      id: row.id,
      label: row.label,
      createdAt: row.createdAt,
      family: summary.metricFamily,
      priorFamily: summary.priorFamily,
      dataFingerprint: row.dataFingerprint,
      shipped: summary.shipped,
      falseDiscoveryRate: summary.falseDiscoveryRate.estimate,
      realizationRatio: summary.realizationRatio.estimate,
    };
  });
}

/** A saved review by label, or by numeric id given as a string. */
export async function showReview(db: Database, workspaceId: number, labelOrId: string): Promise<SavedReview> {
  const byLabel = await db
    .select()
    .from(reviews)
    .where(and(eq(reviews.workspaceId, workspaceId), eq(reviews.label, labelOrId)));
  let row = byLabel[0];
  if (!row && /^\d+$/.test(labelOrId)) {
    [row] = await db
      .select()
      .from(reviews)
      .where(and(eq(reviews.workspaceId, workspaceId), eq(reviews.id, Number(labelOrId))));
  }
  if (!row) throw new SavedReviewError("not_found", `no saved review "${labelOrId}" in this workspace`);
  return toSaved(row);
}

export interface FigureChange {
  readonly figure: string;
  readonly before: number | null;
  readonly after: number | null;
  readonly change: number | null;
}

export interface ReviewComparison {
  readonly before: { readonly label: string; readonly createdAt: string; readonly dataFingerprint: string };
  readonly after: { readonly label: string; readonly createdAt: string; readonly dataFingerprint: string };
  readonly sameData: boolean;
  readonly settingsChanged: readonly string[];
  readonly figures: readonly FigureChange[];
}

const comparedFigures: readonly [string, (summary: ReviewSummary) => number | null | undefined][] = [
  ["tests", (s) => s.counts.tests],
  ["shipped", (s) => s.shipped],
  ["expectedRealWins", (s) => s.expectedRealWins.estimate],
  ["expectedFalseWins", (s) => s.expectedFalseWins.estimate],
  ["falseDiscoveryRate", (s) => s.falseDiscoveryRate.estimate],
  ["expectedSignErrors", (s) => s.expectedSignErrors.estimate],
  ["claimedTotalLift.sum", (s) => s.claimedTotalLift.sum],
  ["claimedTotalLift.compounded", (s) => s.claimedTotalLift.compounded],
  ["expectedRealizedLift.sum", (s) => s.expectedRealizedLift.sum],
  ["realizationRatio", (s) => s.realizationRatio.estimate],
  ["exaggerationFactor", (s) => s.exaggerationFactor.estimate],
  ["winnersCurseBias.frequentist", (s) => s.winnersCurseBias.frequentist.bias],
  ["winnersCurseBias.bayesian", (s) => s.winnersCurseBias.bayesian.estimate],
  ["missedWins", (s) => s.missedWins.estimate],
  ["prior.nullShare", (s) => s.prior.nullShare],
  ["aa.falsePositiveRate", (s) => s.aa.falsePositiveRate],
  ["caliper.shareAbove", (s) => s.caliper.shareAbove],
];

function finiteOrNull(value: number | null | undefined): number | null {
  return typeof value === "number" && Number.isFinite(value) ? value : null;
}

export function compareReviews(before: SavedReview, after: SavedReview): ReviewComparison {
  const settingsChanged = [
    ...new Set([...Object.keys(before.settings), ...Object.keys(after.settings)]),
  ].filter((key) => JSON.stringify(before.settings[key]) !== JSON.stringify(after.settings[key]));
  return {
    before: { label: before.label, createdAt: before.createdAt, dataFingerprint: before.dataFingerprint },
    after: { label: after.label, createdAt: after.createdAt, dataFingerprint: after.dataFingerprint },
    sameData: before.dataFingerprint === after.dataFingerprint,
    settingsChanged,
    figures: comparedFigures.map(([figure, read]) => {
      const a = finiteOrNull(read(before.summary));
      const b = finiteOrNull(read(after.summary));
      return { figure, before: a, after: b, change: a !== null && b !== null ? b - a : null };
    }),
  };
}
