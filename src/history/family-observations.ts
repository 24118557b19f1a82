/**
 * The results a metric family's prior of true effects is fitted to: primary results only, A/A
 * tests and results flagged for a sample ratio mismatch left out (statistics.md section 1),
 * and only rows with a usable estimate. Shared by the defaults optimiser and the forecast.
 */
import { and, eq } from "drizzle-orm";
import type { Database } from "../db/client.ts";
import { experiments, metrics, results } from "../db/schema.ts";

export async function familyObservations(
  db: Database,
  workspaceId: number,
  family: string,
): Promise<{ y: number; s: number }[]> {
  const rows = await db
    .select({ y: results.lift, s: results.liftSe })
    .from(results)
    .innerJoin(metrics, eq(results.metricId, metrics.id))
    .innerJoin(experiments, eq(results.experimentId, experiments.id))
    .where(
      and(
        eq(metrics.workspaceId, workspaceId),
        eq(metrics.family, family),
        eq(results.isPrimary, true),
        eq(results.srmFlagged, false),
        eq(experiments.isAa, false),
      ),
    );
  return rows.filter((row) => Number.isFinite(row.y) && row.s > 0);
}
