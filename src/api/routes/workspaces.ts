/**
 * The caller's own workspace. There is no route to create or list workspaces: a token belongs to
 * exactly one workspace, so creation is an operator's act (`plumbline workspace create NAME`).
 */
import { createRoute, OpenAPIHono, z } from "@hono/zod-openapi";
import { count, eq } from "drizzle-orm";
import { experiments, imports, metrics, realizedMeasurements, results, workspaces } from "../../db/schema.ts";
import { requiredRole } from "../auth.ts";
import { authenticatedErrors, errorResponses } from "../common-schemas.ts";
import type { ApiRouter, AppDeps, AppEnv } from "../context.ts";
import { ApiError } from "../errors.ts";

export const WorkspaceSchema = z
  .object({
    id: z.number().int(),
    name: z.string(),
    description: z.string().nullable(),
    createdAt: z.string(),
    counts: z.object({
      metrics: z.number().int(),
      experiments: z.number().int(),
      results: z.number().int(),
      realizedMeasurements: z.number().int(),
      imports: z.number().int(),
    }),
    caller: z.object({
      tokenId: z.number().int(),
      role: z.enum(["read", "write", "admin"]),
    }),
  })
  .openapi("Workspace");

export function workspacesRoutes({ db }: AppDeps): ApiRouter {
  return new OpenAPIHono<AppEnv>().openapi(
    createRoute({
      ...requiredRole("read"),
      method: "get",
      path: "/workspace",
      tags: ["workspace"],
      summary: "The token's own workspace, with how much it holds",
      description:
        "Workspaces are created by an operator on the command line (`plumbline workspace create NAME`), " +
        "not through the API; the command prints the new workspace's first admin token once.",
      responses: {
        200: { description: "The workspace", content: { "application/json": { schema: WorkspaceSchema } } },
        ...errorResponses(...authenticatedErrors),
      },
    }),
    async (c) => {
      const auth = c.get("auth");
      const [workspace] = await db
        .select()
        .from(workspaces)
        .where(eq(workspaces.id, auth.workspaceId))
        .limit(1);
      if (!workspace) throw new ApiError(404, "not_found", "the token's workspace no longer exists");
      const [metricCount, experimentCount, resultCount, realizedCount, importCount] = await Promise.all([
        db.select({ n: count() }).from(metrics).where(eq(metrics.workspaceId, workspace.id)),
        db.select({ n: count() }).from(experiments).where(eq(experiments.workspaceId, workspace.id)),
        db
          .select({ n: count() })
          .from(results)
          .innerJoin(experiments, eq(experiments.id, results.experimentId))
          .where(eq(experiments.workspaceId, workspace.id)),
        db
          .select({ n: count() })
          .from(realizedMeasurements)
          .innerJoin(experiments, eq(experiments.id, realizedMeasurements.experimentId))
          .where(eq(experiments.workspaceId, workspace.id)),
        db.select({ n: count() }).from(imports).where(eq(imports.workspaceId, workspace.id)),
      ]);
      return c.json(
        {
          id: workspace.id,
          name: workspace.name,
          description: workspace.description,
          createdAt: workspace.createdAt,
          counts: {
            metrics: metricCount[0]?.n ?? 0,
            experiments: experimentCount[0]?.n ?? 0,
            results: resultCount[0]?.n ?? 0,
            realizedMeasurements: realizedCount[0]?.n ?? 0,
            imports: importCount[0]?.n ?? 0,
          },
          caller: { tokenId: auth.tokenId, role: auth.role },
        },
        200,
      );
    },
  );
}
