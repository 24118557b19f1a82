/**
 * Authentication (a Bearer token names exactly one workspace and one role) and authorisation
 * (roles are ordered read < write < admin; a route asks for the least role it needs).
 */
import type { Context, MiddlewareHandler } from "hono";
import type { Database } from "../db/client.ts";
import type { AppEnv, AuthContext, TokenRole } from "./context.ts";
import { ApiError } from "./errors.ts";
import { lastUsedIsStale, resolveToken, touchToken } from "./tokens.ts";

const roleRank: Record<TokenRole, number> = { read: 0, write: 1, admin: 2 };

/** Whether a token of role `held` may do what needs role `needed`. */
export function roleAllows(held: TokenRole, needed: TokenRole): boolean {
  return roleRank[held] >= roleRank[needed];
}

/** Throws 403 unless the caller's token has at least `role`; returns the caller. */
export function requireRole(c: Context<AppEnv>, role: TokenRole): AuthContext {
  const auth = c.get("auth");
  if (!roleAllows(auth.role, role))
    throw new ApiError(
      403,
      "forbidden",
      `this needs a ${role} token; the token used has the ${auth.role} role`,
    );
  return auth;
}

/** Middleware form of requireRole: refuses with 403 before the request is even validated. */
export function roleGuard(role: TokenRole): MiddlewareHandler<AppEnv> {
  return async (c, next) => {
    requireRole(c, role);
    await next();
  };
}

/**
 * The least role a route needs, for its createRoute config: `createRoute({ ...requiredRole("write"), ... })`.
 * It guards the route (403 before validation, so a read token learns nothing from a write route's
 * answers) and states the role in the OpenAPI document as `x-required-role`, where the reference
 * page and the authorization matrix test read it.
 */
export function requiredRole<Role extends TokenRole>(role: Role) {
  return { "x-required-role": role, middleware: roleGuard(role) };
}

/**
 * Resolves `Authorization: Bearer <token>` into c.get("auth"). Unknown, revoked, missing and
 * malformed tokens all get the same 401 so that the answer reveals nothing about which tokens exist.
 */
export function authenticate(db: Database): MiddlewareHandler<AppEnv> {
  return async (c, next) => {
    const header = c.req.header("authorization");
    if (!header)
      throw new ApiError(
        401,
        "unauthorized",
        "missing Authorization header; send Authorization: Bearer <token>",
      );
    const match = /^Bearer\s+(\S+)\s*$/i.exec(header);
    if (!match?.[1])
      throw new ApiError(
        401,
        "unauthorized",
        "malformed Authorization header; send Authorization: Bearer <token>",
      );
    const resolved = await resolveToken(db, match[1]);
    if (!resolved) throw new ApiError(401, "unauthorized", "unknown or revoked token");
    const { lastUsedAt, ...auth } = resolved;
    c.set("auth", auth);
    const now = new Date();
    if (lastUsedIsStale(lastUsedAt, now)) {
      // Bookkeeping must not fail a read: if the database is busy (e.g. a long import holds the
      // write lock), the last-used time is simply recorded on a later request.
      await touchToken(db, resolved.tokenId, now).catch(() => undefined);
    }
    await next();
  };
}
