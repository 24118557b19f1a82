/**
 * Authentication (a Bearer token names exactly one workspace and one role) and authorisation
 * (roles are ordered read < write < admin; a route asks for the least role it needs).
 */
import type { Context, MiddlewareHandler } from "hono";
import type { Database } from "../db/client.ts";
import type { AppEnv, AuthContext, TokenRole } from "./context.ts";
import { ApiError } from "./errors.ts";
import { resolveToken, touchToken } from "./tokens.ts";

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
    c.set("auth", resolved);
    await touchToken(db, resolved.tokenId);
    await next();
  };
}
