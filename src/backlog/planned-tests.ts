/**
 * Storing the backlog: planned tests per workspace, keyed by the team's own key. Used by the
 * API routes, the CLI and the CSV import; every write goes through checkPlannedTest and resolves
 * the metric (and experiment) keys in the workspace, so a stored planned test can be forecast.
 */
import { and, asc, eq, inArray } from "drizzle-orm";
import type { Database } from "../db/client.ts";
import { experiments, metrics, plannedTests } from "../db/schema.ts";
import {
  checkPlannedTest,
  type FieldProblem,
  type PlannedTestFields,
  type PlannedTestStatus,
  plannedTestStandardError,
} from "./planned-test-fields.ts";

/** A database or an open transaction. */
export type Executor = Pick<Database, "select" | "insert" | "update" | "delete">;

export interface PlannedTestView extends PlannedTestFields {
  readonly id: number;
  /** The metric family whose prior the forecast uses. */
  readonly metricFamily: string;
  /** The planned SE of the relative lift (statistics.md section 7). */
  readonly plannedStandardError: number | null;
  readonly createdAt: string;
  readonly updatedAt: string | null;
}

/** Why a planned test was not stored; `problems` name the fields at fault. */
export class BacklogError extends Error {
  readonly reason: "invalid" | "not_found" | "exists";
  readonly problems: readonly FieldProblem[];
  constructor(reason: BacklogError["reason"], message: string, problems: readonly FieldProblem[] = []) {
    super(message);
    this.name = "BacklogError";
    this.reason = reason;
    this.problems = problems;
  }
}

type Row = typeof plannedTests.$inferSelect;

export async function listPlannedTests(
  db: Executor,
  workspaceId: number,
  options: { statuses?: readonly PlannedTestStatus[] } = {},
): Promise<PlannedTestView[]> {
  const statusFilter = options.statuses ? inArray(plannedTests.status, [...options.statuses]) : undefined;
  const rows = await db
    .select({
      test: plannedTests,
      metricKey: metrics.key,
      metricFamily: metrics.family,
      experimentKey: experiments.key,
    })
    .from(plannedTests)
    .innerJoin(metrics, eq(metrics.id, plannedTests.metricId))
    .leftJoin(experiments, eq(experiments.id, plannedTests.experimentId))
    .where(
      statusFilter
        ? and(eq(plannedTests.workspaceId, workspaceId), statusFilter)
        : eq(plannedTests.workspaceId, workspaceId),
    )
    .orderBy(asc(plannedTests.key));
  return rows.map(({ test, metricKey, metricFamily, experimentKey }) =>
    toView(test, metricKey, metricFamily, experimentKey),
  );
}

export async function getPlannedTest(
  db: Executor,
  workspaceId: number,
  key: string,
): Promise<PlannedTestView | undefined> {
  const all = await db
    .select({
      test: plannedTests,
      metricKey: metrics.key,
      metricFamily: metrics.family,
      experimentKey: experiments.key,
    })
    .from(plannedTests)
    .innerJoin(metrics, eq(metrics.id, plannedTests.metricId))
    .leftJoin(experiments, eq(experiments.id, plannedTests.experimentId))
    .where(and(eq(plannedTests.workspaceId, workspaceId), eq(plannedTests.key, key)))
    .limit(1);
  const [found] = all;
  return found ? toView(found.test, found.metricKey, found.metricFamily, found.experimentKey) : undefined;
}

/** The metric and experiment ids for the keys the fields name, or the problems. */
export async function resolveKeys(
  db: Executor,
  workspaceId: number,
  fields: PlannedTestFields,
): Promise<{ metricId: number; experimentId: number | null } | { problems: FieldProblem[] }> {
  const problems: FieldProblem[] = [];
  const [metric] = await db
    .select({ id: metrics.id })
    .from(metrics)
    .where(and(eq(metrics.workspaceId, workspaceId), eq(metrics.key, fields.metric)))
    .limit(1);
  if (!metric)
    problems.push({
      field: "metric",
      message: `no metric "${fields.metric}" in this workspace (metrics come from the history import)`,
    });
  let experimentId: number | null = null;
  if (fields.experiment !== null) {
    const [experiment] = await db
      .select({ id: experiments.id })
      .from(experiments)
      .where(and(eq(experiments.workspaceId, workspaceId), eq(experiments.key, fields.experiment)))
      .limit(1);
    if (!experiment)
      problems.push({
        field: "experiment",
        message: `no experiment "${fields.experiment}" in this workspace`,
      });
    else experimentId = experiment.id;
  }
  if (problems.length > 0 || !metric) return { problems };
  return { metricId: metric.id, experimentId };
}

export type SaveOutcome = "created" | "updated" | "unchanged";

/**
 * Creates the planned test, or replaces the one with the same key (`mode: "upsert"`); "create"
 * refuses an existing key. Throws BacklogError("invalid") with the problems when the fields do
 * not pass.
 */
export async function savePlannedTest(
  db: Executor,
  workspaceId: number,
  fields: PlannedTestFields,
  options: { mode: "create" | "upsert" | "update"; now: string },
): Promise<{ outcome: SaveOutcome; view: PlannedTestView }> {
  const problems = checkPlannedTest(fields);
  if (problems.length > 0) throw new BacklogError("invalid", "the planned test is not valid", problems);
  const resolved = await resolveKeys(db, workspaceId, fields);
  if ("problems" in resolved)
    throw new BacklogError("invalid", "the planned test is not valid", resolved.problems);
  const values = {
    workspaceId,
    key: fields.key,
    name: fields.name,
    team: fields.team,
    metricId: resolved.metricId,
    plannedStart: fields.plannedStart,
    dailyTraffic: fields.dailyTraffic,
    nPerArm: fields.nPerArm,
    runDays: fields.runDays,
    arms: fields.arms,
    baselineRate: fields.baselineRate,
    baselineMean: fields.baselineMean,
    baselineSd: fields.baselineSd,
    standardError: fields.standardError,
    priorOverride: fields.priorOverride === null ? null : { ...fields.priorOverride },
    status: fields.status,
    experimentId: resolved.experimentId,
  };
  const [existing] = await db
    .select()
    .from(plannedTests)
    .where(and(eq(plannedTests.workspaceId, workspaceId), eq(plannedTests.key, fields.key)))
    .limit(1);
  let outcome: SaveOutcome;
  if (!existing) {
    if (options.mode === "update")
      throw new BacklogError("not_found", `no planned test "${fields.key}" in this workspace`);
    await db.insert(plannedTests).values(values);
    outcome = "created";
  } else {
    if (options.mode === "create")
      throw new BacklogError("exists", `a planned test "${fields.key}" already exists in this workspace`);
    if (sameStored(existing, values)) outcome = "unchanged";
    else {
      await db
        .update(plannedTests)
        .set({ ...values, updatedAt: options.now })
        .where(eq(plannedTests.id, existing.id));
      outcome = "updated";
    }
  }
  const view = await getPlannedTest(db, workspaceId, fields.key);
  if (!view) throw new Error("the planned test just written could not be read back");
  return { outcome, view };
}

export async function deletePlannedTest(db: Executor, workspaceId: number, key: string): Promise<boolean> {
  const deleted = await db
    .delete(plannedTests)
    .where(and(eq(plannedTests.workspaceId, workspaceId), eq(plannedTests.key, key)))
    .returning({ id: plannedTests.id });
  return deleted.length > 0;
}

/** The editable fields of a stored planned test (for partial updates). */
export function fieldsOf(view: PlannedTestView): PlannedTestFields {
  return {
    key: view.key,
    name: view.name,
    team: view.team,
    metric: view.metric,
    plannedStart: view.plannedStart,
    dailyTraffic: view.dailyTraffic,
    nPerArm: view.nPerArm,
    runDays: view.runDays,
    arms: view.arms,
    baselineRate: view.baselineRate,
    baselineMean: view.baselineMean,
    baselineSd: view.baselineSd,
    standardError: view.standardError,
    priorOverride: view.priorOverride,
    status: view.status,
    experiment: view.experiment,
  };
}

function sameStored(existing: Row, values: Omit<Row, "id" | "createdAt" | "updatedAt">): boolean {
  return (Object.keys(values) as (keyof typeof values)[]).every(
    (column) => JSON.stringify(existing[column] ?? null) === JSON.stringify(values[column] ?? null),
  );
}

function toView(
  test: Row,
  metricKey: string,
  metricFamily: string,
  experimentKey: string | null,
): PlannedTestView {
  const fields: PlannedTestFields = {
    key: test.key,
    name: test.name,
    team: test.team,
    metric: metricKey,
    plannedStart: test.plannedStart,
    dailyTraffic: test.dailyTraffic,
    nPerArm: test.nPerArm,
    runDays: test.runDays,
    arms: test.arms,
    baselineRate: test.baselineRate,
    baselineMean: test.baselineMean,
    baselineSd: test.baselineSd,
    standardError: test.standardError,
    priorOverride: test.priorOverride ?? null,
    status: test.status,
    experiment: experimentKey,
  };
  return {
    id: test.id,
    ...fields,
    metricFamily,
    plannedStandardError: plannedTestStandardError(fields),
    createdAt: test.createdAt,
    updatedAt: test.updatedAt,
  };
}
