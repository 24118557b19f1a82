/**
 * Token management (admin tokens only): list without secrets, create (the secret is in the
 * response once and never again), revoke. A revoked token answers 401 from then on.
 */
import { createRoute, OpenAPIHono, z } from "@hono/zod-openapi";
import { requiredRole } from "../auth.ts";
import { authenticatedErrors, errorResponses } from "../common-schemas.ts";
import type { ApiRouter, AppDeps, AppEnv } from "../context.ts";
import { ApiError } from "../errors.ts";
import { issueToken, listTokens, revokeToken } from "../tokens.ts";

const RoleSchema = z.enum(["read", "write", "admin"]).openapi({
  description: "read: look; write: also import and edit; admin: also manage tokens",
});

export const TokenSummarySchema = z
  .object({
    id: z.number().int(),
    label: z.string().nullable(),
    prefix: z.string().openapi({ description: "The first characters of the token, to tell tokens apart" }),
    role: RoleSchema,
    createdAt: z.string(),
    lastUsedAt: z.string().nullable(),
    revokedAt: z.string().nullable(),
  })
  .openapi("TokenSummary");

const CreateTokenSchema = z
  .object({
    role: RoleSchema,
    label: z.string().trim().min(1).max(200).optional().openapi({ example: "analytics notebook" }),
  })
  .openapi("CreateToken");

const CreatedTokenSchema = z
  .object({
    token: z.string().openapi({ description: "The secret. Shown this once; only its hash is stored." }),
    summary: TokenSummarySchema,
  })
  .openapi("CreatedToken");

const TokenIdParamSchema = z.object({
  id: z.coerce
    .number()
    .int()
    .positive()
    .openapi({ param: { name: "id", in: "path" }, example: 3 }),
});

function publicSummary(summary: Awaited<ReturnType<typeof listTokens>>[number]) {
  const { workspaceId: _workspaceId, ...rest } = summary;
  return rest;
}

export function tokensRoutes({ db }: AppDeps): ApiRouter {
  return new OpenAPIHono<AppEnv>()
    .openapi(
      createRoute({
        ...requiredRole("admin"),
        method: "get",
        path: "/tokens",
        tags: ["tokens"],
        summary: "The workspace's tokens (admin), without their secrets",
        responses: {
          200: {
            description: "All tokens of the workspace, newest first, revoked ones included",
            content: { "application/json": { schema: z.object({ items: z.array(TokenSummarySchema) }) } },
          },
          ...errorResponses(...authenticatedErrors),
        },
      }),
      async (c) => {
        const auth = c.get("auth");
        const tokens = await listTokens(db, auth.workspaceId);
        return c.json({ items: tokens.map(publicSummary) }, 200);
      },
    )
    .openapi(
      createRoute({
        ...requiredRole("admin"),
        method: "post",
        path: "/tokens",
        tags: ["tokens"],
        summary: "Create a token (admin); the response is the only time its secret is shown",
        request: { body: { required: true, content: { "application/json": { schema: CreateTokenSchema } } } },
        responses: {
          201: {
            description: "The new token",
            content: { "application/json": { schema: CreatedTokenSchema } },
          },
          ...errorResponses(...authenticatedErrors, 413),
        },
      }),
      async (c) => {
        const auth = c.get("auth");
        const body = c.req.valid("json");
        const issued = await issueToken(db, {
          workspaceId: auth.workspaceId,
          role: body.role,
          label: body.label ?? null,
        });
        return c.json({ token: issued.token, summary: publicSummary(issued.summary) }, 201);
      },
    )
    .openapi(
      createRoute({
        ...requiredRole("admin"),
        method: "delete",
        path: "/tokens/{id}",
        tags: ["tokens"],
        summary: "Revoke a token (admin); it answers 401 from now on",
        request: { params: TokenIdParamSchema },
        responses: {
          200: {
            description: "The revoked token",
            content: { "application/json": { schema: TokenSummarySchema } },
          },
          ...errorResponses(...authenticatedErrors, 404),
        },
      }),
      async (c) => {
        const auth = c.get("auth");
        const { id } = c.req.valid("param");
        const revoked = await revokeToken(db, auth.workspaceId, id);
        if (!revoked) throw new ApiError(404, "not_found", `no token ${id} in this workspace`);
        return c.json(publicSummary(revoked), 200);
      },
    );
}
