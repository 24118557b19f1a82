/**
 * Compares a validated results plan with what the workspace stores and, when asked, writes the
 * difference: new metrics and experiments, changed experiment fields, and one result per
 * experiment x metric. Counts each result as created, updated (its input, derived values, primary
 * mark, experiment or metric changed) or unchanged. Call it inside a transaction to write.
 */
import { and, eq, inArray } from "drizzle-orm";
import type { Database } from "../db/client.ts";
import { experiments, metrics, results } from "../db/schema.ts";
import type { ExperimentFields, PlannedResult, ResultsPlan } from "./results-plan.ts";

export type Executor = Pick<Database, "select" | "insert" | "update">;

export interface WriteCounts {
  readonly created: number;
  readonly updated: number;
  readonly unchanged: number;
}

type ResultRow = typeof results.$inferSelect;
type ExperimentRow = typeof experiments.$inferSelect;

/** Rows a single multi-row insert carries; keeps the statement well under SQLite's variable limit. */
const insertChunkSize = 400;

export async function storeResults(
  executor: Executor,
  workspaceId: number,
  plan: ResultsPlan,
  options: { write: boolean; now: string },
): Promise<WriteCounts> {
  const storedMetrics = await executor.select().from(metrics).where(eq(metrics.workspaceId, workspaceId));
  const metricByKey = new Map(storedMetrics.map((metric) => [metric.key, metric]));
  const changedMetrics = new Set<string>();
  const metricIds = new Map<string, number>();
  for (const planned of plan.metrics) {
    const stored = metricByKey.get(planned.key);
    if (stored) {
      metricIds.set(planned.key, stored.id);
      const name = planned.name ?? stored.name;
      const family = planned.family ?? stored.family;
      if (name !== stored.name || family !== stored.family) {
        changedMetrics.add(planned.key);
        if (options.write) {
          await executor.update(metrics).set({ name, family }).where(eq(metrics.id, stored.id));
        }
      }
    } else if (options.write) {
      const [inserted] = await executor
        .insert(metrics)
        .values({
          workspaceId,
          key: planned.key,
          name: planned.name ?? planned.key,
          kind: planned.kind,
          direction: planned.direction,
          family: planned.family ?? planned.key,
        })
        .returning({ id: metrics.id });
      if (inserted) metricIds.set(planned.key, inserted.id);
    }
  }

  const experimentKeys = plan.experiments.map((experiment) => experiment.key);
  const storedExperiments: ExperimentRow[] = [];
  for (const keys of chunks(experimentKeys, insertChunkSize)) {
    storedExperiments.push(
      ...(await executor
        .select()
        .from(experiments)
        .where(and(eq(experiments.workspaceId, workspaceId), inArray(experiments.key, keys)))),
    );
  }
  const experimentByKey = new Map(storedExperiments.map((experiment) => [experiment.key, experiment]));
  const changedExperiments = new Set<string>();
  const experimentIds = new Map<string, number>();
  const newExperiments: (typeof experiments.$inferInsert)[] = [];
  for (const planned of plan.experiments) {
    const stored = experimentByKey.get(planned.key);
    if (stored) {
      experimentIds.set(planned.key, stored.id);
      if (experimentDiffers(stored, planned.fields)) {
        changedExperiments.add(planned.key);
        if (options.write) {
          await executor
            .update(experiments)
            .set({ ...planned.fields, updatedAt: options.now })
            .where(eq(experiments.id, stored.id));
        }
      }
    } else {
      newExperiments.push({
        ...planned.fields,
        workspaceId,
        key: planned.key,
        name: planned.fields.name ?? planned.key,
      });
    }
  }
  if (options.write) {
    for (const chunk of chunks(newExperiments, insertChunkSize)) {
      const inserted = await executor
        .insert(experiments)
        .values(chunk)
        .returning({ id: experiments.id, key: experiments.key });
      for (const row of inserted) experimentIds.set(row.key, row.id);
    }
  }

  const storedResults: ResultRow[] = [];
  for (const ids of chunks(
    [...experimentByKey.values()].map((experiment) => experiment.id),
    insertChunkSize,
  )) {
    storedResults.push(...(await executor.select().from(results).where(inArray(results.experimentId, ids))));
  }
  const resultByPair = new Map(
    storedResults.map((result) => [`${result.experimentId}:${result.metricId}`, result]),
  );

  let created = 0;
  let updated = 0;
  let unchanged = 0;
  const inserts: (typeof results.$inferInsert)[] = [];
  const primaryByExperiment = new Map<number, number>();
  for (const planned of plan.results) {
    const experimentId = experimentIds.get(planned.experimentKey);
    const metricId = metricIds.get(planned.metricKey);
    const stored =
      experimentId !== undefined && metricId !== undefined
        ? resultByPair.get(`${experimentId}:${metricId}`)
        : undefined;
    if (planned.isPrimary && experimentId !== undefined && metricId !== undefined) {
      primaryByExperiment.set(experimentId, metricId);
    }
    if (!stored) {
      created += 1;
      if (options.write && experimentId !== undefined && metricId !== undefined) {
        inserts.push({ ...resultValues(planned), experimentId, metricId });
      }
      continue;
    }
    const resultChanged = resultDiffers(stored, planned);
    if (
      resultChanged ||
      changedExperiments.has(planned.experimentKey) ||
      changedMetrics.has(planned.metricKey)
    ) {
      updated += 1;
      if (options.write && resultChanged) {
        await executor
          .update(results)
          .set({ ...resultValues(planned), updatedAt: options.now })
          .where(eq(results.id, stored.id));
      }
    } else {
      unchanged += 1;
    }
  }
  if (options.write) {
    for (const chunk of chunks(inserts, insertChunkSize)) await executor.insert(results).values(chunk);
    // A stored result of a metric the file does not list keeps its values but not the primary mark.
    for (const stored of storedResults) {
      const primaryMetric = primaryByExperiment.get(stored.experimentId);
      if (stored.isPrimary && primaryMetric !== undefined && primaryMetric !== stored.metricId) {
        await executor
          .update(results)
          .set({ isPrimary: false, updatedAt: options.now })
          .where(eq(results.id, stored.id));
      }
    }
  }
  return { created, updated, unchanged };
}

function resultValues(planned: PlannedResult) {
  return {
    isPrimary: planned.isPrimary,
    input: planned.input,
    inputForm: planned.inputForm,
    controlN: planned.controlN,
    treatmentN: planned.treatmentN,
    lift: planned.lift,
    liftSe: planned.liftSe,
    absoluteDifference: planned.absoluteDifference,
    srmPValue: planned.srmPValue,
    srmFlagged: planned.srmFlagged,
    notes: planned.notes,
  };
}

function resultDiffers(stored: ResultRow, planned: PlannedResult): boolean {
  const values = resultValues(planned);
  return (
    stored.isPrimary !== values.isPrimary ||
    !sameRecord(stored.input, values.input) ||
    stored.inputForm !== values.inputForm ||
    stored.controlN !== values.controlN ||
    stored.treatmentN !== values.treatmentN ||
    stored.lift !== values.lift ||
    stored.liftSe !== values.liftSe ||
    stored.absoluteDifference !== values.absoluteDifference ||
    stored.srmPValue !== values.srmPValue ||
    stored.srmFlagged !== values.srmFlagged ||
    stored.notes !== values.notes
  );
}

function experimentDiffers(stored: ExperimentRow, fields: ExperimentFields): boolean {
  return Object.entries(fields).some(([field, value]) => {
    if (value === undefined) return false;
    return JSON.stringify(stored[field as keyof ExperimentRow] ?? null) !== JSON.stringify(value);
  });
}

function sameRecord(first: Record<string, string>, second: Record<string, string>): boolean {
  const firstKeys = Object.keys(first);
  if (firstKeys.length !== Object.keys(second).length) return false;
  return firstKeys.every((key) => first[key] === second[key]);
}

export function chunks<Item>(items: readonly Item[], size: number): Item[][] {
  const list: Item[][] = [];
  for (let start = 0; start < items.length; start += size) list.push(items.slice(start, start + size));
  return list;
}
