/**
 * Experiments: listed with filters (team, metric, decision, a date range) and pagination; one
 * experiment with all its results and realized measurements. A key belongs to one workspace:
 * asking for another workspace's experiment answers 404, exactly as for a key that never existed.
 */
import { createRoute, OpenAPIHono, z } from "@hono/zod-openapi";
import { and, asc, count, desc, eq, inArray } from "drizzle-orm";
import { experiments, metrics, results } from "../../db/schema.ts";
import { experimentFilterCondition } from "../../history/experiment-filters.ts";
import { requiredRole } from "../auth.ts";
import {
  authenticatedErrors,
  errorResponses,
  IsoDateSchema,
  PaginationQuerySchema,
  pageSchema,
} from "../common-schemas.ts";
import type { ApiRouter, AppDeps, AppEnv } from "../context.ts";
import { ApiError } from "../errors.ts";
import { RealizedMeasurementSchema, realizedOfExperiment } from "./realized.ts";
import { ResultSchema, resultsOfExperiment } from "./results.ts";

const DecisionSchema = z.enum(["shipped", "not_shipped", "iterate", "pending"]);

export const ExperimentSchema = z
  .object({
    id: z.number().int(),
    key: z
      .string()
      .openapi({ description: "The team's own id, unique in the workspace", example: "chk-0142" }),
    name: z.string(),
    team: z.string().nullable(),
    hypothesis: z.string().nullable(),
    startedOn: z.string().nullable(),
    endedOn: z.string().nullable(),
    plannedSplit: z
      .array(z.number())
      .nullable()
      .openapi({ description: "Share of traffic per arm, control first" }),
    plannedAlpha: z.number().nullable(),
    plannedPower: z.number().nullable(),
    plannedMde: z
      .number()
      .nullable()
      .openapi({ description: "Planned minimum detectable effect (relative)" }),
    plannedSampleSize: z.number().int().nullable(),
    stoppedEarly: z.boolean(),
    isAa: z.boolean().openapi({ description: "An A/A test (both arms identical)" }),
    decision: DecisionSchema,
    decidedOn: z.string().nullable(),
    createdAt: z.string(),
    updatedAt: z.string().nullable(),
  })
  .openapi("Experiment");

const ResultSummarySchema = z
  .object({
    metricKey: z.string(),
    isPrimary: z.boolean(),
    lift: z.number().openapi({ description: "Relative lift, positive = good" }),
    liftSe: z.number(),
    srmFlagged: z.boolean(),
  })
  .openapi("ResultSummary");

const ExperimentListItemSchema = ExperimentSchema.extend({
  results: z.array(ResultSummarySchema).openapi({ description: "Each metric's derived lift, primary first" }),
}).openapi("ExperimentListItem");

const ExperimentDetailSchema = ExperimentSchema.extend({
  results: z.array(ResultSchema),
  realizedMeasurements: z.array(RealizedMeasurementSchema),
}).openapi("ExperimentDetail");

const ExperimentsQuerySchema = PaginationQuerySchema.extend({
  team: z.string().min(1).optional().openapi({ description: "Only this team" }),
  metric: z
    .string()
    .min(1)
    .optional()
    .openapi({ description: "Only experiments with a result on this metric (key)" }),
  decision: DecisionSchema.optional(),
  from: IsoDateSchema.optional().openapi({
    description: "Only experiments started on or after this date",
  }),
  to: IsoDateSchema.optional().openapi({ description: "Only experiments started on or before this date" }),
}).refine((query) => !query.from || !query.to || query.from <= query.to, {
  path: ["to"],
  message: "must be on or after from",
});

const ExperimentKeyParamSchema = z.object({
  key: z
    .string()
    .min(1)
    .openapi({ param: { name: "key", in: "path" }, example: "chk-0142" }),
});

function toView(row: typeof experiments.$inferSelect): z.infer<typeof ExperimentSchema> {
  return {
    id: row.id,
    key: row.key,
    name: row.name,
    team: row.team,
    hypothesis: row.hypothesis,
    startedOn: row.startedOn,
    endedOn: row.endedOn,
    plannedSplit: row.plannedSplit,
    plannedAlpha: row.plannedAlpha,
    plannedPower: row.plannedPower,
    plannedMde: row.plannedMde,
    plannedSampleSize: row.plannedSampleSize,
    stoppedEarly: row.stoppedEarly,
    isAa: row.isAa,
    decision: row.decision,
    decidedOn: row.decidedOn,
    createdAt: row.createdAt,
    updatedAt: row.updatedAt,
  };
}

export function experimentsRoutes({ db, onHistoryWrite }: AppDeps): ApiRouter {
  async function findExperiment(workspaceId: number, key: string) {
    const [row] = await db
      .select()
      .from(experiments)
      .where(and(eq(experiments.workspaceId, workspaceId), eq(experiments.key, key)))
      .limit(1);
    if (!row) throw new ApiError(404, "not_found", `no experiment "${key}" in this workspace`);
    return row;
  }

  async function resultSummaries(experimentIds: number[]) {
    const byExperiment = new Map<number, z.infer<typeof ResultSummarySchema>[]>();
    if (experimentIds.length === 0) return byExperiment;
    const rows = await db
      .select({
        experimentId: results.experimentId,
        metricKey: metrics.key,
        isPrimary: results.isPrimary,
        lift: results.lift,
        liftSe: results.liftSe,
        srmFlagged: results.srmFlagged,
      })
      .from(results)
      .innerJoin(metrics, eq(metrics.id, results.metricId))
      .where(inArray(results.experimentId, experimentIds))
      .orderBy(desc(results.isPrimary), asc(metrics.key));
    for (const { experimentId, ...summary } of rows)
      byExperiment.set(experimentId, [...(byExperiment.get(experimentId) ?? []), summary]);
    return byExperiment;
  }

  return new OpenAPIHono<AppEnv>()
    .openapi(
      createRoute({
        ...requiredRole("read"),
        method: "get",
        path: "/experiments",
        tags: ["experiments"],
        summary: "Experiments, filtered and paginated, in order of start date",
        request: { query: ExperimentsQuerySchema },
        responses: {
          200: {
            description: "A page of experiments",
            content: { "application/json": { schema: pageSchema(ExperimentListItemSchema) } },
          },
          ...errorResponses(...authenticatedErrors),
        },
      }),
      async (c) => {
        const query = c.req.valid("query");
        const where = experimentFilterCondition(db, c.get("auth").workspaceId, query);
        const [rows, totals] = await Promise.all([
          db
            .select()
            .from(experiments)
            .where(where)
            .orderBy(asc(experiments.startedOn), asc(experiments.key))
            .limit(query.limit)
            .offset(query.offset),
          db.select({ n: count() }).from(experiments).where(where),
        ]);
        const summaries = await resultSummaries(rows.map((row) => row.id));
        const items = rows.map((row) => ({ ...toView(row), results: summaries.get(row.id) ?? [] }));
        return c.json({ items, total: totals[0]?.n ?? 0, limit: query.limit, offset: query.offset }, 200);
      },
    )
    .openapi(
      createRoute({
        ...requiredRole("read"),
        method: "get",
        path: "/experiments/{key}",
        tags: ["experiments"],
        summary: "One experiment with its results and realized measurements",
        request: { params: ExperimentKeyParamSchema },
        responses: {
          200: {
            description: "The experiment",
            content: { "application/json": { schema: ExperimentDetailSchema } },
          },
          ...errorResponses(...authenticatedErrors, 404),
        },
      }),
      async (c) => {
        const { key } = c.req.valid("param");
        const experiment = await findExperiment(c.get("auth").workspaceId, key);
        const [experimentResults, realized] = await Promise.all([
          resultsOfExperiment(db, experiment.id),
          realizedOfExperiment(db, experiment.id),
        ]);
        return c.json(
          { ...toView(experiment), results: experimentResults, realizedMeasurements: realized },
          200,
        );
      },
    )
    .openapi(
      createRoute({
        ...requiredRole("write"),
        method: "delete",
        path: "/experiments/{key}",
        tags: ["experiments"],
        summary: "Delete an experiment with its results and realized measurements (write)",
        description: "For an experiment imported by mistake; importing it again brings it back.",
        request: { params: ExperimentKeyParamSchema },
        responses: {
          200: {
            description: "The experiment as it was",
            content: { "application/json": { schema: ExperimentSchema } },
          },
          ...errorResponses(...authenticatedErrors, 404),
        },
      }),
      async (c) => {
        const auth = c.get("auth");
        const { key } = c.req.valid("param");
        const experiment = await findExperiment(auth.workspaceId, key);
        // Results and realized measurements go with it (foreign keys cascade).
        await db.delete(experiments).where(eq(experiments.id, experiment.id));
        onHistoryWrite?.(auth.workspaceId);
        return c.json(toView(experiment), 200);
      },
    );
}
