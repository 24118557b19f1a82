/**
 * Creating and finding workspaces. A workspace holds one company's (or one program's) history;
 * creating one is an operator's act (CLI or demo loader), not an API call, because a token is
 * scoped to its workspace and there is nothing above it to authorise the creation.
 */
import { eq } from "drizzle-orm";
import { issueToken, type TokenSummary } from "./api/tokens.ts";
import type { Database } from "./db/client.ts";
import { workspaces } from "./db/schema.ts";

export type Workspace = typeof workspaces.$inferSelect;

/** Why a workspace could not be created or found; `reason` lets callers pick an exit code or status. */
export class WorkspaceError extends Error {
  readonly reason: "invalid_name" | "exists" | "not_found";
  constructor(reason: WorkspaceError["reason"], message: string) {
    super(message);
    this.name = "WorkspaceError";
    this.reason = reason;
  }
}

const maximumNameLength = 100;

/** Names are shown in listings and typed on the command line: printable, trimmed, short. */
export function validateWorkspaceName(name: string): string {
  const trimmed = name.trim();
  if (trimmed === "") throw new WorkspaceError("invalid_name", "workspace name must not be empty");
  if (trimmed.length > maximumNameLength)
    throw new WorkspaceError(
      "invalid_name",
      `workspace name must be at most ${maximumNameLength} characters; got ${trimmed.length}`,
    );
  // biome-ignore lint/suspicious/noControlCharactersInRegex: rejecting control characters is the point
  if (/[\u0000-\u001f\u007f]/.test(trimmed))
    throw new WorkspaceError("invalid_name", "workspace name must not contain control characters");
  return trimmed;
}

/**
 * Creates a workspace and its first admin token. The token is returned once and only its hash is
 * stored, so the caller must show it to the operator now.
 */
export async function createWorkspace(
  db: Database,
  name: string,
  options: { description?: string | null; tokenLabel?: string } = {},
): Promise<{ workspace: Workspace; token: string; tokenSummary: TokenSummary }> {
  const validName = validateWorkspaceName(name);
  return db.transaction(async (tx) => {
    const [existing] = await tx.select().from(workspaces).where(eq(workspaces.name, validName)).limit(1);
    if (existing) throw new WorkspaceError("exists", `workspace "${validName}" already exists`);
    const [workspace] = await tx
      .insert(workspaces)
      .values({ name: validName, description: options.description ?? null })
      .returning();
    if (!workspace) throw new Error("workspace insert returned no row");
    const issued = await issueToken(tx, {
      workspaceId: workspace.id,
      role: "admin",
      label: options.tokenLabel ?? "created with the workspace",
    });
    return { workspace, token: issued.token, tokenSummary: issued.summary };
  });
}

export async function findWorkspaceByName(db: Database, name: string): Promise<Workspace | undefined> {
  const [row] = await db.select().from(workspaces).where(eq(workspaces.name, name.trim())).limit(1);
  return row;
}

/** Like findWorkspaceByName, but a missing workspace is an error naming it. */
export async function requireWorkspaceByName(db: Database, name: string): Promise<Workspace> {
  const workspace = await findWorkspaceByName(db, name);
  if (!workspace) throw new WorkspaceError("not_found", `no workspace named "${name.trim()}"`);
  return workspace;
}
