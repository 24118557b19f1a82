/**
 * Compares a validated realized-measurements plan with what the workspace stores and, when asked,
 * writes the difference; one measurement per experiment x metric x method.
 */
import { and, eq, inArray } from "drizzle-orm";
import { experiments, metrics, realizedMeasurements } from "../db/schema.ts";
import type { RealizedPlan } from "./realized-plan.ts";
import type { WriteCounts } from "./store-results.ts";
import { type Executor, upsertRows } from "./upsert-rows.ts";

/** Up to this many keys are looked up by key; above it, the whole workspace is read in one query. */
const keyedReadLimit = 500;

export interface RealizedLookup {
  readonly workspaceId: number;
  readonly experimentIds: ReadonlyMap<string, number>;
  readonly metricIds: ReadonlyMap<string, number>;
}

/** The ids of the workspace's experiments and metrics named by a file, by key. */
export async function lookupKeys(
  executor: Executor,
  workspaceId: number,
  experimentKeys: readonly string[],
  metricKeys: readonly string[],
): Promise<RealizedLookup & { metricDirections: Map<string, "increase" | "decrease"> }> {
  const experimentKeySet = [...new Set(experimentKeys)];
  const experimentIds = new Map<string, number>();
  const experimentRows = await executor
    .select({ id: experiments.id, key: experiments.key })
    .from(experiments)
    .where(
      experimentKeySet.length <= keyedReadLimit
        ? and(eq(experiments.workspaceId, workspaceId), inArray(experiments.key, experimentKeySet))
        : eq(experiments.workspaceId, workspaceId),
    );
  for (const row of experimentRows) experimentIds.set(row.key, row.id);
  // A workspace has few metrics: read them all.
  const metricIds = new Map<string, number>();
  const metricDirections = new Map<string, "increase" | "decrease">();
  const wanted = new Set(metricKeys);
  const metricRows = await executor
    .select({ id: metrics.id, key: metrics.key, direction: metrics.direction })
    .from(metrics)
    .where(eq(metrics.workspaceId, workspaceId));
  for (const row of metricRows) {
    if (!wanted.has(row.key)) continue;
    metricIds.set(row.key, row.id);
    metricDirections.set(row.key, row.direction);
  }
  return { workspaceId, experimentIds, metricIds, metricDirections };
}

export async function storeRealized(
  executor: Executor,
  lookup: RealizedLookup,
  plan: RealizedPlan,
  options: { write: boolean; now: string },
): Promise<WriteCounts> {
  const experimentIdList = [...new Set(lookup.experimentIds.values())];
  const stored =
    experimentIdList.length === 0
      ? []
      : experimentIdList.length <= keyedReadLimit
        ? await executor
            .select()
            .from(realizedMeasurements)
            .where(inArray(realizedMeasurements.experimentId, experimentIdList))
        : (
            await executor
              .select({ measurement: realizedMeasurements })
              .from(realizedMeasurements)
              .innerJoin(experiments, eq(realizedMeasurements.experimentId, experiments.id))
              .where(eq(experiments.workspaceId, lookup.workspaceId))
          ).map((row) => row.measurement);
  const byIdentity = new Map(stored.map((row) => [`${row.experimentId}:${row.metricId}:${row.method}`, row]));
  let created = 0;
  let updated = 0;
  let unchanged = 0;
  const writes: (typeof realizedMeasurements.$inferInsert)[] = [];
  for (const planned of plan.measurements) {
    const experimentId = lookup.experimentIds.get(planned.experimentKey);
    const metricId = lookup.metricIds.get(planned.metricKey);
    if (experimentId === undefined || metricId === undefined) continue;
    const values = {
      experimentId,
      metricId,
      estimate: planned.estimate,
      standardError: planned.standardError,
      method: planned.method,
      measuredOn: planned.measuredOn,
      input: planned.input,
    };
    const existing = byIdentity.get(`${experimentId}:${metricId}:${planned.method}`);
    if (!existing) {
      created += 1;
      writes.push(values);
      continue;
    }
    const same =
      existing.estimate === values.estimate &&
      existing.standardError === values.standardError &&
      existing.measuredOn === values.measuredOn &&
      JSON.stringify(existing.input) === JSON.stringify(values.input);
    if (same) {
      unchanged += 1;
      continue;
    }
    updated += 1;
    writes.push(values);
  }
  if (options.write) {
    await upsertRows(executor, realizedMeasurements, writes, {
      conflict: ["experimentId", "metricId", "method"],
      update: ["estimate", "standardError", "measuredOn", "input"],
      updatedAt: options.now,
    });
  }
  return { created, updated, unchanged };
}
