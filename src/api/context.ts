import type { OpenAPIHono } from "@hono/zod-openapi";
import type { Database } from "../db/client.ts";

export type TokenRole = "read" | "write" | "admin";

/** Who is calling: set by the auth middleware on every /api/v1 route. */
export interface AuthContext {
  readonly workspaceId: number;
  readonly workspaceName: string;
  readonly tokenId: number;
  readonly role: TokenRole;
}

export interface AppEnv {
  Variables: {
    auth: AuthContext;
    requestId: string;
  };
}

/** What createApp is given; passed on to every route module. */
export interface AppDeps {
  readonly db: Database;
  /**
   * Called by the routes that write a workspace's history (an applied import, an experiment
   * deleted) once the write is committed; the server's review preparer then prepares it soon.
   */
  readonly onHistoryWrite?: (workspaceId: number) => void;
}

export type ApiRouter = OpenAPIHono<AppEnv>;
