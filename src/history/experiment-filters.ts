/**
 * The one meaning of the experiment filters, shared by `GET /api/v1/experiments` and
 * `plumbline experiments list`: team, decision, a metric the experiment has a result on, and a
 * range of start dates (both ends included; ISO dates compare as text, and an experiment
 * without a start date cannot be placed in a range).
 */
import { and, eq, exists, gte, isNotNull, lte, type SQL } from "drizzle-orm";
import type { Database } from "../db/client.ts";
import { experiments, metrics, results } from "../db/schema.ts";

export interface ExperimentFilters {
  readonly team?: string | undefined;
  readonly decision?: (typeof experiments.$inferSelect)["decision"] | undefined;
  /** A metric key: only experiments with a result on it. */
  readonly metric?: string | undefined;
  /** Started on or after this day (YYYY-MM-DD). */
  readonly from?: string | undefined;
  /** Started on or before this day (YYYY-MM-DD). */
  readonly to?: string | undefined;
}

/** The WHERE condition of a workspace's experiments that pass the filters. */
export function experimentFilterCondition(
  db: Database,
  workspaceId: number,
  filters: ExperimentFilters,
): SQL {
  const conditions: SQL[] = [eq(experiments.workspaceId, workspaceId)];
  if (filters.team !== undefined) conditions.push(eq(experiments.team, filters.team));
  if (filters.decision !== undefined) conditions.push(eq(experiments.decision, filters.decision));
  if (filters.metric !== undefined) {
    conditions.push(
      exists(
        db
          .select({ id: results.id })
          .from(results)
          .innerJoin(metrics, eq(results.metricId, metrics.id))
          .where(and(eq(results.experimentId, experiments.id), eq(metrics.key, filters.metric))),
      ),
    );
  }
  if (filters.from !== undefined || filters.to !== undefined)
    conditions.push(isNotNull(experiments.startedOn));
  if (filters.from !== undefined) conditions.push(gte(experiments.startedOn, filters.from));
  if (filters.to !== undefined) conditions.push(lte(experiments.startedOn, filters.to));
  return and(...conditions) as SQL;
}
