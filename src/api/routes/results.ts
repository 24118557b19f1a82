/**
 * Results: one per experiment x metric, with the input exactly as imported and what was derived
 * from it (relative lift and its standard error, sign-flipped for decrease metrics so that
 * positive is good; the absolute difference; the sample ratio mismatch test).
 */
import { createRoute, OpenAPIHono, z } from "@hono/zod-openapi";
import { and, asc, count, desc, eq, type SQL } from "drizzle-orm";
import type { Database } from "../../db/client.ts";
import { experiments, metrics, results } from "../../db/schema.ts";
import { requiredRole } from "../auth.ts";
import { authenticatedErrors, errorResponses, PaginationQuerySchema, pageSchema } from "../common-schemas.ts";
import type { ApiRouter, AppDeps, AppEnv } from "../context.ts";
import { ApiError } from "../errors.ts";

export const ResultSchema = z
  .object({
    id: z.number().int(),
    experimentKey: z.string(),
    metricKey: z.string(),
    isPrimary: z.boolean(),
    inputForm: z.string().openapi({ description: "counts | means | interval | p_value | standard_error" }),
    input: z.record(z.string(), z.string()).openapi({ description: "The row's cells exactly as imported" }),
    controlN: z.number().int().nullable(),
    treatmentN: z.number().int().nullable(),
    lift: z.number().openapi({ description: "Relative lift (0.012 = +1.2 %), positive = good" }),
    liftSe: z.number().openapi({ description: "Standard error of lift" }),
    absoluteDifference: z
      .number()
      .nullable()
      .openapi({ description: "Treatment minus control, metric's own scale" }),
    srmPValue: z.number().nullable().openapi({ description: "Sample ratio mismatch chi-square p-value" }),
    srmFlagged: z.boolean().openapi({ description: "Flagged when srmPValue < 0.0005" }),
    notes: z.string().nullable(),
    createdAt: z.string(),
    updatedAt: z.string().nullable(),
  })
  .openapi("Result");

export type ResultView = z.infer<typeof ResultSchema>;

const booleanQuery = z
  .enum(["true", "false"])
  .transform((text) => text === "true")
  .optional();

const ResultsQuerySchema = PaginationQuerySchema.extend({
  metric: z.string().min(1).optional().openapi({ description: "Only this metric (key)" }),
  experiment: z.string().min(1).optional().openapi({ description: "Only this experiment (key)" }),
  primary: booleanQuery.openapi({ description: "true: primary results only; false: secondary only" }),
  srmFlagged: booleanQuery.openapi({ description: "true: only results flagged for sample ratio mismatch" }),
});

const resultColumns = {
  result: results,
  experimentKey: experiments.key,
  metricKey: metrics.key,
};

function toView(row: {
  result: typeof results.$inferSelect;
  experimentKey: string;
  metricKey: string;
}): ResultView {
  const { result } = row;
  return {
    id: result.id,
    experimentKey: row.experimentKey,
    metricKey: row.metricKey,
    isPrimary: result.isPrimary,
    inputForm: result.inputForm,
    input: result.input,
    controlN: result.controlN,
    treatmentN: result.treatmentN,
    lift: result.lift,
    liftSe: result.liftSe,
    absoluteDifference: result.absoluteDifference,
    srmPValue: result.srmPValue,
    srmFlagged: result.srmFlagged,
    notes: result.notes,
    createdAt: result.createdAt,
    updatedAt: result.updatedAt,
  };
}

/** The results of one experiment, primary first (used by the experiment detail route too). */
export async function resultsOfExperiment(db: Database, experimentId: number): Promise<ResultView[]> {
  const rows = await db
    .select(resultColumns)
    .from(results)
    .innerJoin(experiments, eq(experiments.id, results.experimentId))
    .innerJoin(metrics, eq(metrics.id, results.metricId))
    .where(eq(results.experimentId, experimentId))
    .orderBy(desc(results.isPrimary), asc(metrics.key));
  return rows.map(toView);
}

export function resultsRoutes({ db }: AppDeps): ApiRouter {
  return new OpenAPIHono<AppEnv>()
    .openapi(
      createRoute({
        ...requiredRole("read"),
        method: "get",
        path: "/results",
        tags: ["results"],
        summary: "Results across experiments, filtered and paginated",
        request: { query: ResultsQuerySchema },
        responses: {
          200: {
            description: "A page of results",
            content: { "application/json": { schema: pageSchema(ResultSchema) } },
          },
          ...errorResponses(...authenticatedErrors),
        },
      }),
      async (c) => {
        const query = c.req.valid("query");
        const conditions: SQL[] = [eq(experiments.workspaceId, c.get("auth").workspaceId)];
        if (query.metric !== undefined) conditions.push(eq(metrics.key, query.metric));
        if (query.experiment !== undefined) conditions.push(eq(experiments.key, query.experiment));
        if (query.primary !== undefined) conditions.push(eq(results.isPrimary, query.primary));
        if (query.srmFlagged !== undefined) conditions.push(eq(results.srmFlagged, query.srmFlagged));
        const where = and(...conditions);
        const [rows, totals] = await Promise.all([
          db
            .select(resultColumns)
            .from(results)
            .innerJoin(experiments, eq(experiments.id, results.experimentId))
            .innerJoin(metrics, eq(metrics.id, results.metricId))
            .where(where)
            .orderBy(asc(experiments.key), asc(metrics.key))
            .limit(query.limit)
            .offset(query.offset),
          db
            .select({ n: count() })
            .from(results)
            .innerJoin(experiments, eq(experiments.id, results.experimentId))
            .innerJoin(metrics, eq(metrics.id, results.metricId))
            .where(where),
        ]);
        return c.json(
          { items: rows.map(toView), total: totals[0]?.n ?? 0, limit: query.limit, offset: query.offset },
          200,
        );
      },
    )
    .openapi(
      createRoute({
        ...requiredRole("read"),
        method: "get",
        path: "/results/{id}",
        tags: ["results"],
        summary: "One result",
        request: {
          params: z.object({
            id: z.coerce
              .number()
              .int()
              .positive()
              .openapi({ param: { name: "id", in: "path" }, example: 1 }),
          }),
        },
        responses: {
          200: { description: "The result", content: { "application/json": { schema: ResultSchema } } },
          ...errorResponses(...authenticatedErrors, 404),
        },
      }),
      async (c) => {
        const { id } = c.req.valid("param");
        const [row] = await db
          .select(resultColumns)
          .from(results)
          .innerJoin(experiments, eq(experiments.id, results.experimentId))
          .innerJoin(metrics, eq(metrics.id, results.metricId))
          .where(and(eq(results.id, id), eq(experiments.workspaceId, c.get("auth").workspaceId)))
          .limit(1);
        if (!row) throw new ApiError(404, "not_found", `no result ${id} in this workspace`);
        return c.json(toView(row), 200);
      },
    );
}
