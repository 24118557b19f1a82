/**
 * Compares a validated results plan with what the workspace stores and, when asked, writes the
 * difference: new metrics and experiments, changed experiment fields, and one result per
 * experiment x metric. Counts each result as created, updated (its input, derived values, primary
 * mark, experiment or metric changed) or unchanged. Call it inside a transaction to write.
 */
import { and, eq, inArray, sql } from "drizzle-orm";
import { experiments, metrics, results } from "../db/schema.ts";
import type { ExperimentFields, PlannedResult, ResultsPlan } from "./results-plan.ts";
import { chunks, type Executor, upsertRows } from "./upsert-rows.ts";

export { chunks, type Executor } from "./upsert-rows.ts";

export interface WriteCounts {
  readonly created: number;
  readonly updated: number;
  readonly unchanged: number;
}

type ExperimentRow = typeof experiments.$inferSelect;
type StoredExperiment = Pick<ExperimentRow, "id" | "key" | "name"> & Partial<ExperimentRow>;

/** The stored result fields an import compares; `input` is its stored JSON text. */
interface StoredResult extends Omit<typeof results.$inferSelect, "input" | "createdAt" | "updatedAt"> {
  readonly inputText: string;
}

/**
 * Up to this many experiments a file's stored rows are read by key; above it, the whole
 * workspace is read in one query (cheaper than many keyed queries, and bounded by the workspace).
 */
const keyedReadLimit = 500;

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

  const keyed = plan.experiments.length <= keyedReadLimit;
  // Only the columns the file names are compared, so only those are read (reading is most of a
  // re-import's time: the driver builds every cell of every row).
  const givenFields = [
    ...new Set(plan.experiments.flatMap((experiment) => Object.keys(experiment.fields))),
  ] as (keyof ExperimentFields)[];
  const storedExperiments: StoredExperiment[] = await executor
    .select({
      ...Object.fromEntries(givenFields.map((field) => [field, experiments[field]])),
      id: experiments.id,
      key: experiments.key,
      name: experiments.name,
    })
    .from(experiments)
    .where(
      keyed
        ? and(
            eq(experiments.workspaceId, workspaceId),
            inArray(
              experiments.key,
              plan.experiments.map((experiment) => experiment.key),
            ),
          )
        : eq(experiments.workspaceId, workspaceId),
    );
  const experimentByKey = new Map(storedExperiments.map((experiment) => [experiment.key, experiment]));
  const changedExperiments = new Set<string>();
  const experimentIds = new Map<string, number>();
  const experimentWrites: Record<string, unknown>[] = [];
  for (const planned of plan.experiments) {
    const stored = experimentByKey.get(planned.key);
    if (stored) {
      experimentIds.set(planned.key, stored.id);
      if (!experimentDiffers(stored, planned.fields)) continue;
      changedExperiments.add(planned.key);
    }
    experimentWrites.push({
      ...planned.fields,
      workspaceId,
      key: planned.key,
      // A new experiment needs a name; a stored one keeps its name unless the file gives one.
      name: planned.fields.name ?? stored?.name ?? planned.key,
    });
  }
  if (options.write && experimentWrites.length > 0) {
    const written = await upsertRows(executor, experiments, experimentWrites, {
      conflict: ["workspaceId", "key"],
      update: experimentFieldNames,
      updatedAt: options.now,
      returning: ["id", "key"],
    });
    for (const row of written) experimentIds.set(String(row["key"]), Number(row["id"]));
  }

  const storedResults =
    storedExperiments.length === 0
      ? []
      : await readStoredResults(
          executor,
          workspaceId,
          keyed ? storedExperiments.map((experiment) => experiment.id) : undefined,
        );
  const resultByPair = new Map(
    storedResults.map((result) => [`${result.experimentId}:${result.metricId}`, result]),
  );

  let created = 0;
  let updated = 0;
  let unchanged = 0;
  const resultWrites: Record<string, unknown>[] = [];
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
        resultWrites.push({ ...resultValues(planned), experimentId, metricId });
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
        resultWrites.push({
          ...resultValues(planned),
          experimentId: stored.experimentId,
          metricId: stored.metricId,
        });
      }
    } else {
      unchanged += 1;
    }
  }
  if (options.write) {
    await upsertRows(executor, results, resultWrites, {
      conflict: ["experimentId", "metricId"],
      update: resultFieldNames,
      updatedAt: options.now,
    });
    // A stored result of a metric the file does not list keeps its values but not the primary mark.
    const demoted = storedResults
      .filter((stored) => {
        const primaryMetric = primaryByExperiment.get(stored.experimentId);
        return stored.isPrimary && primaryMetric !== undefined && primaryMetric !== stored.metricId;
      })
      .map((stored) => stored.id);
    for (const ids of chunks(demoted, 1_000)) {
      await executor
        .update(results)
        .set({ isPrimary: false, updatedAt: options.now })
        .where(inArray(results.id, ids));
    }
  }
  return { created, updated, unchanged };
}

/** Experiment properties an import may overwrite (the key and workspace identify the row). */
const experimentFieldNames: readonly string[] = [
  "name",
  "team",
  "hypothesis",
  "startedOn",
  "endedOn",
  "decision",
  "decidedOn",
  "isAa",
  "stoppedEarly",
  "plannedAlpha",
  "plannedPower",
  "plannedMde",
  "plannedSplit",
  "plannedSampleSize",
] satisfies (keyof ExperimentFields)[];

/** Result properties an import writes (see resultValues). */
const resultFieldNames: readonly string[] = [
  "isPrimary",
  "input",
  "inputForm",
  "controlN",
  "treatmentN",
  "lift",
  "liftSe",
  "absoluteDifference",
  "srmPValue",
  "srmFlagged",
  "notes",
];

/**
 * The stored results of the given experiments, or of the whole workspace, in one query. The input
 * is read as its JSON text: comparing text first spares parsing 20,000 records on a re-import.
 */
async function readStoredResults(
  executor: Executor,
  workspaceId: number,
  experimentIds: readonly number[] | undefined,
): Promise<StoredResult[]> {
  const fields = {
    id: results.id,
    experimentId: results.experimentId,
    metricId: results.metricId,
    isPrimary: results.isPrimary,
    inputText: sql<string>`${results.input}`,
    inputForm: results.inputForm,
    controlN: results.controlN,
    treatmentN: results.treatmentN,
    lift: results.lift,
    liftSe: results.liftSe,
    absoluteDifference: results.absoluteDifference,
    srmPValue: results.srmPValue,
    srmFlagged: results.srmFlagged,
    notes: results.notes,
  };
  if (experimentIds !== undefined) {
    return executor
      .select(fields)
      .from(results)
      .where(inArray(results.experimentId, [...experimentIds]));
  }
  return executor
    .select(fields)
    .from(results)
    .innerJoin(experiments, eq(results.experimentId, experiments.id))
    .where(eq(experiments.workspaceId, workspaceId));
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

function resultDiffers(stored: StoredResult, planned: PlannedResult): boolean {
  const values = resultValues(planned);
  return (
    stored.isPrimary !== values.isPrimary ||
    !sameInput(stored.inputText, values.input) ||
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

function experimentDiffers(stored: StoredExperiment, fields: ExperimentFields): boolean {
  for (const [field, value] of Object.entries(fields)) {
    if (value === undefined) continue;
    const kept = stored[field as keyof ExperimentRow] ?? null;
    if (kept === value) continue;
    // Only the planned split is an array; compare it by value.
    if (typeof value !== "object" || JSON.stringify(kept) !== JSON.stringify(value)) return true;
  }
  return false;
}

/** Whether the stored JSON text holds the same record (key order aside) as `input`. */
function sameInput(storedText: string, input: Record<string, string>): boolean {
  if (storedText === JSON.stringify(input)) return true;
  return sameRecord(JSON.parse(storedText) as Record<string, string>, input);
}

function sameRecord(first: Record<string, string>, second: Record<string, string>): boolean {
  const firstKeys = Object.keys(first);
  if (firstKeys.length !== Object.keys(second).length) return false;
  return firstKeys.every((key) => first[key] === second[key]);
}
