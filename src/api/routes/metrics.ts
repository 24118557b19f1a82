/**
 * The workspace's metrics. Metrics are created by imports (a results row names its metric, kind
 * and direction); `family` is the group whose tests are pooled when the prior is fitted.
 */
import { createRoute, OpenAPIHono, z } from "@hono/zod-openapi";
import { and, asc, count, eq } from "drizzle-orm";
import { metrics, results } from "../../db/schema.ts";
import { requiredRole } from "../auth.ts";
import { authenticatedErrors, errorResponses } from "../common-schemas.ts";
import type { ApiRouter, AppDeps, AppEnv } from "../context.ts";
import { ApiError } from "../errors.ts";

export const MetricSchema = z
  .object({
    id: z.number().int(),
    key: z.string().openapi({ example: "checkout_conversion" }),
    name: z.string(),
    kind: z.enum(["binary", "continuous"]),
    direction: z.enum(["increase", "decrease"]).openapi({ description: "decrease: lower is better" }),
    family: z.string().openapi({ description: "The group whose tests are pooled; defaults to the key" }),
    resultCount: z.number().int().openapi({ description: "Stored results on this metric" }),
    createdAt: z.string(),
  })
  .openapi("Metric");

const MetricKeyParamSchema = z.object({
  key: z
    .string()
    .min(1)
    .openapi({ param: { name: "key", in: "path" }, example: "checkout_conversion" }),
});

export function metricsRoutes({ db }: AppDeps): ApiRouter {
  async function listMetrics(workspaceId: number, key?: string) {
    const rows = await db
      .select({
        id: metrics.id,
        key: metrics.key,
        name: metrics.name,
        kind: metrics.kind,
        direction: metrics.direction,
        family: metrics.family,
        createdAt: metrics.createdAt,
        resultCount: count(results.id),
      })
      .from(metrics)
      .leftJoin(results, eq(results.metricId, metrics.id))
      .where(
        key === undefined
          ? eq(metrics.workspaceId, workspaceId)
          : and(eq(metrics.workspaceId, workspaceId), eq(metrics.key, key)),
      )
      .groupBy(metrics.id)
      .orderBy(asc(metrics.key));
    return rows;
  }

  return new OpenAPIHono<AppEnv>()
    .openapi(
      createRoute({
        ...requiredRole("read"),
        method: "get",
        path: "/metrics",
        tags: ["metrics"],
        summary: "The workspace's metrics, by key",
        responses: {
          200: {
            description: "All metrics",
            content: { "application/json": { schema: z.object({ items: z.array(MetricSchema) }) } },
          },
          ...errorResponses(...authenticatedErrors),
        },
      }),
      async (c) => c.json({ items: await listMetrics(c.get("auth").workspaceId) }, 200),
    )
    .openapi(
      createRoute({
        ...requiredRole("read"),
        method: "get",
        path: "/metrics/{key}",
        tags: ["metrics"],
        summary: "One metric",
        request: { params: MetricKeyParamSchema },
        responses: {
          200: { description: "The metric", content: { "application/json": { schema: MetricSchema } } },
          ...errorResponses(...authenticatedErrors, 404),
        },
      }),
      async (c) => {
        const { key } = c.req.valid("param");
        const [metric] = await listMetrics(c.get("auth").workspaceId, key);
        if (!metric) throw new ApiError(404, "not_found", `no metric "${key}" in this workspace`);
        return c.json(metric, 200);
      },
    );
}
