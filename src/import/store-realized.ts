/**
 * Compares a validated realized-measurements plan with what the workspace stores and, when asked,
 * writes the difference; one measurement per experiment x metric x method.
 */
import { and, eq, inArray } from "drizzle-orm";
import { experiments, metrics, realizedMeasurements } from "../db/schema.ts";
import type { RealizedPlan } from "./realized-plan.ts";
import { chunks, type Executor, type WriteCounts } from "./store-results.ts";

export interface RealizedLookup {
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
  const experimentIds = new Map<string, number>();
  for (const keys of chunks([...new Set(experimentKeys)], 400)) {
    const rows = await executor
      .select({ id: experiments.id, key: experiments.key })
      .from(experiments)
      .where(and(eq(experiments.workspaceId, workspaceId), inArray(experiments.key, keys)));
    for (const row of rows) experimentIds.set(row.key, row.id);
  }
  const metricIds = new Map<string, number>();
  const metricDirections = new Map<string, "increase" | "decrease">();
  for (const keys of chunks([...new Set(metricKeys)], 400)) {
    const rows = await executor
      .select({ id: metrics.id, key: metrics.key, direction: metrics.direction })
      .from(metrics)
      .where(and(eq(metrics.workspaceId, workspaceId), inArray(metrics.key, keys)));
    for (const row of rows) {
      metricIds.set(row.key, row.id);
      metricDirections.set(row.key, row.direction);
    }
  }
  return { experimentIds, metricIds, metricDirections };
}

export async function storeRealized(
  executor: Executor,
  lookup: RealizedLookup,
  plan: RealizedPlan,
  options: { write: boolean; now: string },
): Promise<WriteCounts> {
  const stored: (typeof realizedMeasurements.$inferSelect)[] = [];
  for (const ids of chunks([...new Set(lookup.experimentIds.values())], 400)) {
    stored.push(
      ...(await executor
        .select()
        .from(realizedMeasurements)
        .where(inArray(realizedMeasurements.experimentId, ids))),
    );
  }
  const byIdentity = new Map(stored.map((row) => [`${row.experimentId}:${row.metricId}:${row.method}`, row]));
  let created = 0;
  let updated = 0;
  let unchanged = 0;
  const inserts: (typeof realizedMeasurements.$inferInsert)[] = [];
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
      inserts.push(values);
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
    if (options.write) {
      await executor
        .update(realizedMeasurements)
        .set({ ...values, updatedAt: options.now })
        .where(eq(realizedMeasurements.id, existing.id));
    }
  }
  if (options.write) {
    for (const chunk of chunks(inserts, 400)) await executor.insert(realizedMeasurements).values(chunk);
  }
  return { created, updated, unchanged };
}
