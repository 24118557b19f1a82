/**
 * Realized measurements: the lift of a shipped change measured after launch (holdout, retest,
 * or post-launch comparison), on the same sign-flipped relative scale as results.
 */
import { createRoute, OpenAPIHono, z } from "@hono/zod-openapi";
import { and, asc, count, eq, type SQL } from "drizzle-orm";
import type { Database } from "../../db/client.ts";
import { experiments, metrics, realizedMeasurements } from "../../db/schema.ts";
import { requiredRole } from "../auth.ts";
import { authenticatedErrors, errorResponses, PaginationQuerySchema, pageSchema } from "../common-schemas.ts";
import type { ApiRouter, AppDeps, AppEnv } from "../context.ts";

export const RealizedMeasurementSchema = z
  .object({
    id: z.number().int(),
    experimentKey: z.string(),
    metricKey: z.string(),
    estimate: z.number().openapi({ description: "Realized relative lift, positive = good" }),
    standardError: z.number(),
    method: z.enum(["holdout", "retest", "post_launch"]),
    measuredOn: z.string().nullable(),
    input: z.record(z.string(), z.string()).nullable(),
    createdAt: z.string(),
    updatedAt: z.string().nullable(),
  })
  .openapi("RealizedMeasurement");

export type RealizedMeasurementView = z.infer<typeof RealizedMeasurementSchema>;

const RealizedQuerySchema = PaginationQuerySchema.extend({
  metric: z.string().min(1).optional().openapi({ description: "Only this metric (key)" }),
  experiment: z.string().min(1).optional().openapi({ description: "Only this experiment (key)" }),
  method: z.enum(["holdout", "retest", "post_launch"]).optional(),
});

const columns = {
  measurement: realizedMeasurements,
  experimentKey: experiments.key,
  metricKey: metrics.key,
};

function toView(row: {
  measurement: typeof realizedMeasurements.$inferSelect;
  experimentKey: string;
  metricKey: string;
}): RealizedMeasurementView {
  const { measurement } = row;
  return {
    id: measurement.id,
    experimentKey: row.experimentKey,
    metricKey: row.metricKey,
    estimate: measurement.estimate,
    standardError: measurement.standardError,
    method: measurement.method,
    measuredOn: measurement.measuredOn,
    input: measurement.input,
    createdAt: measurement.createdAt,
    updatedAt: measurement.updatedAt,
  };
}

/** The realized measurements of one experiment (used by the experiment detail route too). */
export async function realizedOfExperiment(
  db: Database,
  experimentId: number,
): Promise<RealizedMeasurementView[]> {
  const rows = await db
    .select(columns)
    .from(realizedMeasurements)
    .innerJoin(experiments, eq(experiments.id, realizedMeasurements.experimentId))
    .innerJoin(metrics, eq(metrics.id, realizedMeasurements.metricId))
    .where(eq(realizedMeasurements.experimentId, experimentId))
    .orderBy(asc(metrics.key), asc(realizedMeasurements.method));
  return rows.map(toView);
}

export function realizedRoutes({ db }: AppDeps): ApiRouter {
  return new OpenAPIHono<AppEnv>().openapi(
    createRoute({
      ...requiredRole("read"),
      method: "get",
      path: "/realized-measurements",
      tags: ["realized measurements"],
      summary: "Realized measurements, filtered and paginated",
      request: { query: RealizedQuerySchema },
      responses: {
        200: {
          description: "A page of realized measurements",
          content: { "application/json": { schema: pageSchema(RealizedMeasurementSchema) } },
        },
        ...errorResponses(...authenticatedErrors),
      },
    }),
    async (c) => {
      const query = c.req.valid("query");
      const conditions: SQL[] = [eq(experiments.workspaceId, c.get("auth").workspaceId)];
      if (query.metric !== undefined) conditions.push(eq(metrics.key, query.metric));
      if (query.experiment !== undefined) conditions.push(eq(experiments.key, query.experiment));
      if (query.method !== undefined) conditions.push(eq(realizedMeasurements.method, query.method));
      const where = and(...conditions);
      const [rows, totals] = await Promise.all([
        db
          .select(columns)
          .from(realizedMeasurements)
          .innerJoin(experiments, eq(experiments.id, realizedMeasurements.experimentId))
          .innerJoin(metrics, eq(metrics.id, realizedMeasurements.metricId))
          .where(where)
          .orderBy(asc(experiments.key), asc(metrics.key), asc(realizedMeasurements.method))
          .limit(query.limit)
          .offset(query.offset),
        db
          .select({ n: count() })
          .from(realizedMeasurements)
          .innerJoin(experiments, eq(experiments.id, realizedMeasurements.experimentId))
          .innerJoin(metrics, eq(metrics.id, realizedMeasurements.metricId))
          .where(where),
      ]);
      return c.json(
        { items: rows.map(toView), total: totals[0]?.n ?? 0, limit: query.limit, offset: query.offset },
        200,
      );
    },
  );
}
